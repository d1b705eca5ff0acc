#!/usr/bin/env bash
# Runs the Slurm example for real and checks it: on a one-node cluster (one-node.sh), the index
# array and the dependent pick of submit.sh, over shared T0 files split 3 and 7 ways, must give the
# bytes of one machine's `sluice index` and `sluice pick` of the same files: scores.jsonl, kept.jsonl
# and ledger.json with duplicates kept and with them dropped (the default; the set's pick finds
# them across its segments from their stored sketches, as one index would). Then the
# sharded pick of shards.sh over the same segments (an array scoring a segment a task, an array
# searching a part of the keys for duplicates, the cut, an array writing, the join) must give one
# machine's scores.jsonl, kept.jsonl, ledger.json and rejected.jsonl, with duplicates kept and
# dropped.
#
#   bash cmd/sluice/cluster/slurm/test.sh [SHARED_DIR]
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
root=$(cd "$here/../../../.." && pwd)
shared=$(cd "${1:-$root/../shared}" 2>/dev/null && pwd || echo "${1:-$root/../shared}")
files=$(ls "$shared"/data/t0-train-50k-per-template/data_per_template/*.jsonl 2>/dev/null | head -n 21 || true)
if [ -z "$files" ]; then
	echo "slurm test: $shared/data is absent; skipped"
	exit 0
fi
sudo=""
[ "$(id -u)" -eq 0 ] || sudo=sudo
$sudo bash "$here/one-node.sh"
work=$(mktemp -d /tmp/sluice-slurm.XXXXXX)
trap 'rm -rf "$work"' EXIT
export PATH="$PATH:/usr/local/go/bin"
(cd "$root" && go build -o "$work/sluice" ./cmd/sluice)
export SLUICE=$work/sluice TEXT=prompt,completion FILES=$work/files.txt
echo "$files" > "$FILES"
target=$work/target.jsonl
head -n 80 "$(ls "$shared"/data/t0-train-50k-per-template/data_per_template/*.jsonl | sed -n 40p)" > "$target"
flags=(--target "$target" --budget 2e16 --train-params 1e9)

# wait_done JOB: waits until Slurm no longer lists JOB, then fails unless it completed.
wait_done() {
	for _ in $(seq 1 600); do
		state=$(scontrol show job "$1" 2>/dev/null | grep -o 'JobState=[A-Z_]*' | head -n 1 | cut -d= -f2)
		case "$state" in
		COMPLETED) return 0 ;;
		FAILED | CANCELLED | TIMEOUT | NODE_FAIL | OUT_OF_MEMORY)
			echo "slurm job $1: $state" >&2
			cat "$WORK"/sluice-*.out >&2 || true
			return 1
			;;
		esac
		sleep 1
	done
	echo "slurm job $1: not done after 600 s" >&2
	return 1
}

# The single machine's index and picks, to compare with.
mapfile -t list < "$FILES"
"$SLUICE" index --quiet --text "$TEXT" --out "$work/one.idx" "${list[@]}"
"$SLUICE" pick --quiet --index "$work/one.idx" "${flags[@]}" --keep-duplicates --out "$work/one-keep"
"$SLUICE" pick --quiet --index "$work/one.idx" "${flags[@]}" --out "$work/one-drop"

fail=0
for n in 3 7; do
	export WORK=$work/cluster-$n
	read -r ix pk < <(bash "$here/submit.sh" "$n" "${flags[@]}" --keep-duplicates --out "$WORK/run-keep")
	wait_done "$ix" && wait_done "$pk"
	pk2=$(cd "$WORK" && sbatch --parsable "$here/pick.sbatch" "${flags[@]}" --out "$WORK/run-drop")
	wait_done "$pk2"
	for dups in "keep kept" "drop dropped"; do
		read -r run said <<<"$dups"
		for f in scores.jsonl kept.jsonl ledger.json; do
			if cmp -s "$work/one-$run/$f" "$WORK/run-$run/$f"; then
				echo "slurm, $n shards: $f with duplicates $said: same bytes as one machine"
			else
				echo "slurm, $n shards: $f with duplicates $said DIFFERS from one machine" >&2
				fail=1
			fi
		done
	done
	ls "$WORK"/seg-*.idx -d | wc -l | xargs echo "  segments made:"
	# The sharded picks: wait for the last job, the join, which a failed step before it cancels.
	for dups in "keep kept --keep-duplicates" "drop dropped"; do
		read -r run said keep <<<"$dups"
		read -r -a jobs < <(bash "$here/shards.sh" "$n" "${flags[@]}" ${keep:+"$keep"} --out "$WORK/run-shard-$run")
		wait_done "${jobs[-1]}"
		for f in scores.jsonl kept.jsonl ledger.json rejected.jsonl; do
			if cmp -s "$work/one-$run/$f" "$WORK/run-shard-$run/$f"; then
				echo "slurm, $n shards, sharded pick, duplicates $said: $f: same bytes as one machine"
			else
				echo "slurm, $n shards, sharded pick, duplicates $said: $f DIFFERS from one machine" >&2
				fail=1
			fi
		done
		"$SLUICE" verify "$WORK/run-shard-$run" || fail=1
	done
done
exit $fail
