#!/usr/bin/env bash
# Times, in one run on the same files, `sluice index` with duplicate detection (the default) against
# `sluice index --no-dups`, each as a whole process under GNU time (wall seconds, user CPU seconds and
# peak RSS), and prints the ratios; then a pick on each index, where the one without finds the
# duplicates itself. On a machine shared with other work, the user CPU ratio is the steadier figure.
#
#   bash testdata/bench/dups-vs-none.sh [SHARED_DIR] [COPIES]
#
# SHARED_DIR defaults to ../shared beside the checkout; the pool is the T0 files concatenated COPIES
# times (default 1, about 60 MB; 17 makes the 1 GB pool of index-vs-floor.sh). Needs GNU time, bc.
set -euo pipefail
copies=${2:-1}
source "$(dirname "$0")/lib.sh"
bench_setup "${1:-}"
t0_pool "$copies" "$work/pool.jsonl"
mb=$(echo "scale=1; $(stat -c %s "$work/pool.jsonl") / 1000000" | bc)

# run prints "wall user rss_kb" of one process.
run() { /usr/bin/time -f '%e %U %M' -o "$work/time" "$@" >/dev/null 2>"$work/err" || { cat "$work/err" >&2; exit 1; }; cat "$work/time"; }

read -r nw nu nr < <(run "$S" index --quiet --no-dups --text prompt,completion --out "$work/none.idx" "$work/pool.jsonl")
read -r dw du dr < <(run "$S" index --quiet --text prompt,completion --out "$work/dups.idx" "$work/pool.jsonl")
echo "pool: T0 x $copies, $mb MB, $(nproc) cores"
printf '%-22s %8s %8s %8s\n' build wall_s user_s RSS_MB
printf '%-22s %8s %8s %8s\n' "--no-dups" "$nw" "$nu" "$((nr / 1024))"
printf '%-22s %8s %8s %8s\n' "duplicates (default)" "$dw" "$du" "$((dr / 1024))"
echo "ratio with/without: wall $(echo "scale=2; $dw / $nw" | bc), user CPU $(echo "scale=2; $du / $nu" | bc), peak RSS $(echo "scale=2; $dr / $nr" | bc)"

# A pick on each: on the index with duplicates it reads no pool rows for them.
head -n 1000 "$work/pool.jsonl" > "$work/target.jsonl"
for idx in dups none; do
	read -r pw pu pr < <(run "$S" pick --quiet --index "$work/$idx.idx" --target "$work/target.jsonl" \
		--budget 1e17 --train-params 1B --out "$work/run-$idx")
	echo "pick, 1000 target rows, on the index $([ $idx = dups ] && echo with || echo without) duplicates: ${pw}s wall, ${pu}s user, peak RSS $((pr / 1024)) MB"
done
