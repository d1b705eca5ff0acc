#!/usr/bin/env bash
# Memory by rows: writes a pool of ROWS short rows (testdata/bench/manyrows: two sentences of the
# shared T0 files each, seeded; 40 million rows by default, 9.2 GB), indexes it at the default --mem
# with duplicates found, then picks with a new 1,000-row target (T0 sentiment, held-out templates)
# at default flags, keeping about a tenth of the pool; for each process its wall time and peak RSS
# (GNU time), and the RSS a pool row; then why of one row of that run.
#
#   bash testdata/bench/many-rows.sh [SHARED_DIR]     (default ../shared beside the checkout)
# Environment: ROWS (default 40000000). Needs python3, GNU time and about 25 GB of free disk
# (the pool, its index and the runs folder while it builds); 40 million rows take about 15 minutes.
set -euo pipefail
rows=${ROWS:-40000000}
source "$(dirname "$0")/lib.sh"
bench_setup "${1:-}"
go run ./testdata/bench/manyrows -rows "$rows" "$t0"/*.jsonl >"$work/pool.jsonl"
python3 "$shared/scripts/t0-split.py" sentiment "$work/split" --target-rows 1000 >/dev/null
secs() { /usr/bin/time -f '%e %M' -o "$work/time" "$@" >/dev/null 2>"$work/err" || { cat "$work/err" >&2; exit 1; }; cat "$work/time"; }
read -r bs brss < <(secs "$S" index --quiet --analyzer english --id id --out "$work/pool.idx" "$work/pool.jsonl")
echo "index $rows rows ($(($(stat -c %s "$work/pool.jsonl") / 1000000)) MB): ${bs}s, peak RSS $((brss / 1024)) MB = $((brss * 1024 / rows)) B a row"
# 3e10 FLOPs a pool row at 1e9 parameters is 5 tokens a row: about a tenth of the rows kept.
budget=$(echo "$rows * 30000000000" | bc)
read -r ps prss < <(secs "$S" pick --quiet --index "$work/pool.idx" --target "$work/split/target.jsonl" \
	--target-text prompt,completion --other-target-text --budget "$budget" --train-params 1B --out "$work/run")
echo "pick (defaults), 1000 target rows: ${ps}s, peak RSS $((prss / 1024)) MB = $((prss * 1024 / rows)) B a row, kept $(wc -l <"$work/run/kept.jsonl") rows"
# Explaining one row of that run: its line found in scores.jsonl, the index read where the row and
# the target's terms need it.
row=m$((rows / 3 * 2 + 1))
read -r ws wrss < <(secs "$S" why --run "$work/run" "$row")
echo "why of one row ($row): ${ws}s, peak RSS $((wrss / 1024)) MB"
