#!/usr/bin/env bash
# Submits a sharded pick over the segments in $WORK (seg-*.idx): the set, an array of N score
# tasks, an array of N dups tasks (the search for duplicates, each over a part of the keys), the
# cut, an array of N write tasks and the join, each waiting for the one before (and the first for
# job $AFTER when given, the index array), and prints their job ids, the join's last.
#
#   WORK=/shared/pool SLUICE=/shared/bin/sluice AFTER=1234 \
#     bash shards.sh N --target /shared/support.jsonl --budget 1e19 --train-params 1B
set -euo pipefail
n=${1:?N, the number of segments}
shift
here=$(cd "$(dirname "$0")" && pwd)
: "${WORK:?WORK names the shared folder}"
cd "$WORK"
after=()
[ -z "${AFTER:-}" ] || after=(--dependency=afterok:"$AFTER" --kill-on-invalid-dep=yes)
set_job=$(sbatch --parsable "${after[@]}" "$here/shard.sbatch" set)
score=$(sbatch --parsable --array=0-$((n - 1)) --dependency=afterok:"$set_job" --kill-on-invalid-dep=yes "$here/shard.sbatch" score "$@")
dups=$(sbatch --parsable --array=0-$((n - 1)) --dependency=afterok:"$score" --kill-on-invalid-dep=yes "$here/shard.sbatch" dups "$@")
cut=$(sbatch --parsable --dependency=afterok:"$dups" --kill-on-invalid-dep=yes "$here/shard.sbatch" cut "$@")
write=$(sbatch --parsable --array=0-$((n - 1)) --dependency=afterok:"$cut" --kill-on-invalid-dep=yes "$here/shard.sbatch" write "$@")
join=$(sbatch --parsable --dependency=afterok:"$write" --kill-on-invalid-dep=yes "$here/shard.sbatch" join "$@")
echo "$set_job $score $dups $cut $write $join"
