#!/usr/bin/env bash
# Indexes shard K of N of a pool: the K-th of N contiguous runs of the files listed in $FILES (one
# absolute path a line, in pool order, since jobs run in other folders), into the segment
# $WORK/seg-KKKK.idx. Contiguous runs in order keep the segments' rows in the pool's order, so a set
# of them scores exactly as one index would.
# Used by the Slurm array job and the Kubernetes indexed job beside this script.
#
#   FILES=files.txt WORK=/shared/pool TEXT=prompt,completion index-shard.sh K N
set -euo pipefail
k=${1:?shard number K}
n=${2:?shard count N}
: "${FILES:?FILES names the list of pool files}" "${WORK:?WORK names the shared folder}"
total=$(grep -c . "$FILES")
from=$((k * total / n))
to=$(((k + 1) * total / n))
mapfile -t mine < <(grep . "$FILES" | sed -n "$((from + 1)),${to}p")
if [ "${#mine[@]}" -eq 0 ]; then
	echo "shard $k of $n: no files (more shards than files); no segment made"
	exit 0
fi
args=(index --quiet --out "$WORK/seg-$(printf %04d "$k").idx")
[ -n "${TEXT:-}" ] && args+=(--text "$TEXT")
[ -n "${CPUS:-}" ] && args+=(--workers "$CPUS")
echo "shard $k of $n: ${#mine[@]} files, ${mine[0]} to ${mine[-1]}"
exec "${SLUICE:-sluice}" "${args[@]}" "${mine[@]}"
