#!/usr/bin/env bash
# Starts a one-node Slurm cluster on this machine from Debian's packages (slurm-wlm, munge), for
# test.sh: the controller and the node daemon run here, jobs run as the submitting user. Needs root.
# Installs the packages when they are missing; writes /etc/slurm/slurm.conf.
set -euo pipefail
if ! command -v slurmctld >/dev/null || ! command -v munged >/dev/null; then
	apt-get update -q
	DEBIAN_FRONTEND=noninteractive apt-get install -y -q --no-install-recommends slurm-wlm munge
fi
[ -s /etc/munge/munge.key ] || { dd if=/dev/urandom of=/etc/munge/munge.key bs=1024 count=1 2>/dev/null; chown munge:munge /etc/munge/munge.key; chmod 400 /etc/munge/munge.key; }
host=$(hostname -s)
mem=$(awk '/MemTotal/ {print int($2/1024*0.8)}' /proc/meminfo)
mkdir -p /var/spool/slurmctld /var/spool/slurmd /var/log/slurm /run/munge /var/lib/munge /var/log/munge
chown munge:munge /run/munge /var/lib/munge /var/log/munge 2>/dev/null || true
cat > /etc/slurm/slurm.conf <<CONF
ClusterName=ci
SlurmctldHost=$host
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
StateSaveLocation=/var/spool/slurmctld
SlurmdSpoolDir=/var/spool/slurmd
SlurmctldPidFile=/run/slurmctld.pid
SlurmdPidFile=/run/slurmd.pid
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
SchedulerType=sched/backfill
SelectType=select/cons_tres
SelectTypeParameters=CR_Core_Memory
ReturnToService=2
SlurmctldLogFile=/var/log/slurm/slurmctld.log
SlurmdLogFile=/var/log/slurm/slurmd.log
JobAcctGatherType=jobacct_gather/none
MpiDefault=none
NodeName=$host CPUs=$(nproc) RealMemory=$mem State=UNKNOWN
PartitionName=debug Nodes=$host Default=YES MaxTime=INFINITE State=UP
CONF
pgrep -x munged >/dev/null || su -s /bin/sh munge -c '/usr/sbin/munged' || /usr/sbin/munged --force
pgrep -x slurmctld >/dev/null || slurmctld
pgrep -x slurmd >/dev/null || slurmd
for _ in $(seq 1 30); do sinfo -h -o %T 2>/dev/null | grep -qE 'idle|mixed' && exit 0; sleep 1; done
sinfo >&2; tail /var/log/slurm/slurmctld.log /var/log/slurm/slurmd.log >&2; exit 1
