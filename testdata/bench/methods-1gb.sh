#!/usr/bin/env bash
# Throughput and peak memory of every method on a pool of about 1 GB, each against BM25 in the same
# run. Builds the pool index-vs-floor.sh builds (the shared T0 files concatenated, 17 times: 1,023 MB,
# 859,945 rows), indexes it once, then picks with a 1,000-row target (T0 sentiment, held-out
# templates, ../shared/scripts/t0-split.py --target-rows 1000) by each method, timing each pick as a
# whole process with its peak RSS (GNU time, '%e %M'), and prints pool rows per second, peak memory
# and both as a ratio to `bm25 sum` measured in the same round. Each pick keeps at most 10,000 rows
# under an unreachable budget, so every method writes the same amount; duplicates are dropped (the
# default: the pool is 17 copies) except in the one row that says --keep-duplicates.
#
# The vectors and scores inputs here are SYNTHETIC (seeded NumPy normal draws: 128 float32 dimensions
# per pool and target row as .npy, one score per row as JSONL joined by row), since only speed and
# memory are measured; their quality is measured by quality.sh on real data.
#
#   bash testdata/bench/methods-1gb.sh [SHARED_DIR]     (default ../shared beside the checkout)
# Environment: ROUNDS (default 1): the methods run in turn this many times, each round its own ratios.
# Needs /usr/bin/python3 with python3-numpy, GNU time, about 3.5 GB of free disk.
set -euo pipefail
rounds=${ROUNDS:-1}
py=${PY:-/usr/bin/python3}
source "$(dirname "$0")/lib.sh"
bench_setup "${1:-}"
t0_pool 17 "$work/big.jsonl"
"$py" "$shared/scripts/t0-split.py" sentiment "$work/split" --target-rows 1000 >/dev/null
/usr/bin/time -f '%e %M' -o "$work/time" "$S" index --analyzer english --quiet --text prompt,completion --out "$work/big.idx" "$work/big.jsonl"
read -r bs brss <"$work/time"
rows=$("$py" -c 'import json, sys; print(json.load(open(sys.argv[1]))["rows"])' "$work/big.idx/meta.json")
"$py" - "$rows" "$work" <<'PY'
import json, sys, numpy
n, out = int(sys.argv[1]), sys.argv[2]
rng = numpy.random.default_rng(1)
numpy.save(f"{out}/pool.npy", rng.standard_normal((n, 128), dtype=numpy.float32))
numpy.save(f"{out}/target.npy", rng.standard_normal((1000, 128), dtype=numpy.float32))
with open(f"{out}/scores.jsonl", "w") as f:
    for i, s in enumerate(rng.standard_normal(n)):
        f.write(json.dumps({"row": i, "score": float(s)}) + "\n")
PY
echo "pool $(($(stat -c %s "$work/big.jsonl") / 1000000)) MB, $rows rows; index built in ${bs} s, peak RSS $((brss / 1024)) MB" >&2

methods=(
	"bm25 sum|--method bm25 --aggregate sum"
	"bm25 sum --keep-duplicates|--method bm25 --aggregate sum --keep-duplicates"
	"bm25 max|--method bm25 --aggregate max"
	"tfidf sum|--method tfidf --aggregate sum"
	"tfidf max|--method tfidf --aggregate max"
	"ngram (order 3, difference)|--method ngram"
	"vectors sum (synthetic .npy)|--method vectors --aggregate sum --pool-vectors $work/pool.npy --target-vectors $work/target.npy --selector-params 22M"
	"vectors max (synthetic .npy)|--method vectors --aggregate max --pool-vectors $work/pool.npy --target-vectors $work/target.npy --selector-params 22M"
	"scores (synthetic JSONL)|--method scores --scores $work/scores.jsonl --join row --selector-params 125M"
)
for r in $(seq 1 "$rounds"); do
	echo
	echo "round $r of $rounds, $(date -u +%Y-%m-%d), $(nproc) cores"
	echo
	echo "| method | pick time | rows/s | peak RSS | time ÷ bm25 sum | RSS ÷ bm25 sum |"
	echo "|---|---|---|---|---|---|"
	base_s= base_m=
	for entry in "${methods[@]}"; do
		name=${entry%%|*}
		# shellcheck disable=SC2086
		/usr/bin/time -f '%e %M' -o "$work/time" "$S" pick --quiet --index "$work/big.idx" \
			--target "$work/split/target.jsonl" --budget 1e30 --train-params 1B --max-rows 10000 \
			--out "$work/run" ${entry#*|} >/dev/null 2>"$work/err" || { cat "$work/err" >&2; exit 1; }
		read -r s m <"$work/time"
		[ -z "$base_s" ] && base_s=$s base_m=$m
		awk -v n="$name" -v s="$s" -v m="$m" -v rows="$rows" -v bs="$base_s" -v bm="$base_m" 'BEGIN {
			printf "| %s | %.1f s | %.0f | %.0f MB | %.2f | %.2f |\n", n, s, rows / s, m / 1024, s / bs, m / bm }'
		rm -rf "$work/run"
	done
done
