#!/usr/bin/env bash
# Submits the index array (N tasks) and the pick that waits for all of them, and prints the two
# job ids. Every variable the scripts read is passed on (sbatch exports the environment). With
# SHARDED=1 the pick is a sharded one instead (shards.sh: no machine scores the whole pool), and
# the ids printed are the index array's and then the six steps'.
#
#   FILES=files.txt WORK=/shared/pool TEXT=prompt,completion SLUICE=/shared/bin/sluice \
#     bash submit.sh N --target /shared/support.jsonl --budget 1e19 --train-params 1B
set -euo pipefail
n=${1:?N, the number of shards}
shift
here=$(cd "$(dirname "$0")" && pwd)
export SLUICE_CLUSTER=${SLUICE_CLUSTER:-$(dirname "$here")}
: "${WORK:?WORK names the shared folder}"
mkdir -p "$WORK"
cd "$WORK"
ix=$(sbatch --parsable --array=0-$((n - 1)) "$here/index.sbatch")
if [ -n "${SHARDED:-}" ]; then
	echo "$ix $(AFTER=$ix bash "$here/shards.sh" "$n" "$@")"
	exit 0
fi
pk=$(sbatch --parsable --dependency=afterok:"$ix" --kill-on-invalid-dep=yes "$here/pick.sbatch" "$@")
echo "$ix $pk"
