#!/usr/bin/env bash
# Times, in one run on the same files, `sluice index` against outside tools doing the same job:
# scikit-learn's CountVectorizer (the analyzer sluice's default reproduces) and Xapian (stemmed terms
# without positions, written to disk), with `sluice index --dry-run` (read, parse, analyse; no index)
# as the floor; and `sluice pick` with a new 1,000-row target against Xapian's BM25 query of the same
# rows, end to end. Every figure is a whole process timed by GNU time (wall, user+sys CPU, peak RSS),
# on the T0 sentiment split pool, ROUNDS times in a row; the ratios' ranges are printed at the end.
# Then, unless BIG=0: the merge's seconds against the number of spilled runs on a 1 GB pool (T0 × 17,
# `BenchmarkMerge`), and a 4 GB build (T0 × 68) at the default --mem with its peak RSS and its floor.
#
#   bash testdata/bench/build-vs-refs.sh [SHARED_DIR]     (default ../shared beside the checkout)
#
# Needs Go, GNU time, bc, and Debian's python3-sklearn and python3-xapian for /usr/bin/python3
# (apt-get install python3-sklearn python3-xapian); the 4 GB part needs about 6 GB free in $TMPDIR.
# The references are run by build_refs.py beside this script.
set -euo pipefail
rounds=${ROUNDS:-3}
py=/usr/bin/python3
"$py" -c 'import sklearn, xapian' 2>/dev/null || {
	echo "needs Debian's python3-sklearn and python3-xapian: apt-get install python3-sklearn python3-xapian" >&2
	exit 1
}
source "$(dirname "$0")/lib.sh"
bench_setup "${1:-}"
refs=$root/testdata/bench/build_refs.py
python3 "$shared/scripts/t0-split.py" sentiment "$work/split" --target-rows 1000 >/dev/null
pool=$work/split/pool.jsonl
target=$work/split/target.jsonl
fields=prompt,completion

# run CMD...: prints "wall cpu rss_MB" of the whole process.
run() {
	/usr/bin/time -f '%e %U %S %M' -o "$work/time" "$@" >"$work/out" 2>"$work/err" || { cat "$work/err" >&2; exit 1; }
	read -r e u s m <"$work/time"
	echo "$e $(echo "$u + $s" | bc) $((m / 1024))"
}
ratio() { echo "scale=2; $1 / $2" | bc | sed 's/^\./0./'; }
pct() { echo "scale=0; 100 * $1 / $2" | bc; }
range() { sort -n | sed -n '1p;$p' | paste -sd' ' | awk '{ if ($1 == $2 || $2 == "") print $1; else print $1 "–" $2 }'; }

echo "pool: T0 sentiment split, $(wc -l <"$pool") rows, $(($(stat -c %s "$pool") / 1000000)) MB; target: $(wc -l <"$target") rows; $(nproc) cores"
printf '%-5s %9s %9s %9s %9s %9s %9s | %9s %9s %8s %9s\n' round index_s dry_s sklearn_s xapian_s pick_s xquery_s sk/index xap/index dry/idx pick/xq
: >"$work/ratios"
for r in $(seq 1 "$rounds"); do
	read -r bw bc brss < <(run "$S" index --quiet --out "$work/idx" "$pool")
	read -r dw _ _ < <(run "$S" index --quiet --dry-run "$pool")
	read -r sw _ srss < <(run "$py" "$refs" sklearn "$pool" "$fields")
	read -r xw _ xrss < <(run "$py" "$refs" xapian-index "$pool" "$fields" "$work/xdb")
	read -r pw _ prss < <(run "$S" pick --quiet --index "$work/idx" --target "$target" --budget 1e16 --train-params 1e9 --out "$work/run")
	read -r qw _ qrss < <(run "$py" "$refs" xapian-query "$work/xdb" "$target" "$fields")
	printf '%-5s %9s %9s %9s %9s %9s %9s | %9s %9s %7s%% %9s\n' "$r" "$bw" "$dw" "$sw" "$xw" "$pw" "$qw" \
		"$(ratio "$sw" "$bw")" "$(ratio "$xw" "$bw")" "$(pct "$dw" "$bw")" "$(ratio "$pw" "$qw")"
	echo "$(ratio "$sw" "$bw") $(ratio "$xw" "$bw") $(pct "$dw" "$bw") $(ratio "$pw" "$qw") $brss $srss $xrss $prss $qrss" >>"$work/ratios"
done
kept=$(wc -l <"$work/run/kept.jsonl")
echo
echo "over $rounds rounds (ranges):"
echo "  build ÷ scikit-learn CountVectorizer: sluice is $(cut -d' ' -f1 "$work/ratios" | range)× faster (target ≥ 10×)"
echo "  build ÷ Xapian indexing:              sluice is $(cut -d' ' -f2 "$work/ratios" | range)× faster"
echo "  the floor (--dry-run) takes $(cut -d' ' -f3 "$work/ratios" | range)% of the build's time"
echo "  pick ($kept rows kept) ÷ Xapian BM25 query, end to end: $(cut -d' ' -f4 "$work/ratios" | range)× the query's time"
echo "  peak RSS MB: index $(cut -d' ' -f5 "$work/ratios" | range), sklearn $(cut -d' ' -f6 "$work/ratios" | range), xapian index $(cut -d' ' -f7 "$work/ratios" | range), pick $(cut -d' ' -f8 "$work/ratios" | range), xapian query $(cut -d' ' -f9 "$work/ratios" | range)"
rm -rf "$work/xdb" "$work/idx" "$work/run"

[ "${BIG:-1}" = 0 ] && exit 0
free_kb=$(df -Pk "$work" | awk 'NR == 2 { print $4 }')
if [ "$free_kb" -lt $((6 * 1024 * 1024)) ]; then
	echo "skipping the 1 GB and 4 GB parts: $((free_kb / 1024)) MB free in $work, 6 GB needed" >&2
	exit 0
fi
cat "$t0"/*.jsonl >"$work/t0.jsonl"
for i in $(seq 1 17); do cat "$work/t0.jsonl"; done >"$work/big.jsonl"
echo
echo "merge on the 1 GB pool ($(($(stat -c %s "$work/big.jsonl") / 1000000)) MB, --no-dups) against the runs spilled (BenchmarkMerge):"
SLUICE_BENCH_POOL=$work/big.jsonl go test -run '^$' -bench BenchmarkMerge -benchtime 1x ./index |
	awk '/^BenchmarkMerge/ { for (i = 1; i <= NF; i++) { if ($(i+1) == "runs") r = $i; if ($(i+1) == "merge-s/op") m = $i; if ($(i+1) == "merge-%") p = $i; if ($(i+1) == "ns/op") t = $i / 1e9 }
		sub(/BenchmarkMerge\//, "", $1); sub(/-[0-9]+$/, "", $1); printf "  %-12s runs %4d  merge %6.2f s  build %6.1f s  merge %4.1f%% of the build\n", $1, r, m, t, p }'
rm -f "$work/big.jsonl"
for i in $(seq 1 68); do cat "$work/t0.jsonl"; done >"$work/big4.jsonl"
rm -f "$work/t0.jsonl"
mb=$(($(stat -c %s "$work/big4.jsonl") / 1000000))
read -r gw gc grss < <(run "$S" index --quiet --out "$work/big4.idx" "$work/big4.jsonl")
read -r fw _ frss < <(run "$S" index --quiet --dry-run "$work/big4.jsonl")
echo
echo "4 GB pool ($mb MB, T0 × 68) at the default --mem: build ${gw}s ($(echo "$mb / $gw" | bc) MB/s, ${gc}s CPU), peak RSS $grss MB (target < 1024);"
echo "  its floor (--dry-run) ${fw}s = $(pct "$fw" "$gw")% of the build, peak RSS $frss MB"
