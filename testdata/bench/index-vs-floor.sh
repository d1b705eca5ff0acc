#!/usr/bin/env bash
# Times, in one run on the same files, `sluice index` against its floor (`sluice index --dry-run`:
# read + parse + analyse with the same analyzer, no index), then picks with a new 1,000-row target on
# the built index (the default pick three times, keeping about a tenth of the pool) beside their
# floors (write + fsync of the outputs; one read of the postings), and the same on a pool of about
# 1 GB, with the peak memory of its build at the default --mem; beside them the analyzer alone and
# one read of the postings the pick needs (testdata/bench/floors).
#
#   bash testdata/bench/index-vs-floor.sh [SHARED_DIR]     (default ../shared beside the checkout)
#
# Needs python3 (for the shared split script and to turn the JSON arrays into JSONL) and GNU time.
set -euo pipefail
source "$(dirname "$0")/lib.sh"
bench_setup "${1:-}"
gpt=$shared/data/gpteacher
python3 - "$gpt" "$work/gpteacher.jsonl" <<'PY'
import json, sys, glob, os
with open(sys.argv[2], "w") as out:
    for p in sorted(glob.glob(os.path.join(sys.argv[1], "*.json"))):
        for row in json.load(open(p)):
            out.write(json.dumps(row, ensure_ascii=False) + "\n")
PY
cat "$t0"/*.jsonl > "$work/t0.jsonl"

secs() { /usr/bin/time -f '%e %M' -o "$work/time" "$@" >/dev/null 2>"$work/err" || { cat "$work/err" >&2; exit 1; }; cat "$work/time"; }
mb() { echo "scale=1; $(stat -c %s "$1") / 1000000" | bc; }

printf '%-14s %8s %10s %10s %8s %10s %8s\n' corpus MB floor_s index_s ratio index_MB/s RSS_MB
for corpus in t0 gpteacher; do
	f=$work/$corpus.jsonl
	text=prompt,completion
	[ "$corpus" = gpteacher ] && text=instruction,input,response
	read -r fs _ < <(secs "$S" index --analyzer english --dry-run --quiet --text "$text" "$f")
	read -r is rss < <(secs "$S" index --analyzer english --quiet --text "$text" --out "$work/$corpus.idx" "$f")
	printf '%-14s %8s %10s %10s %8s %10s %8s\n' "$corpus" "$(mb "$f")" "$fs" "$is" \
		"$(echo "scale=2; $fs / $is" | bc)" "$(echo "scale=1; $(mb "$f") / $is" | bc)" "$((rss / 1024))"
done

# A new 1,000-row target on a built index: pick time against build time.
python3 "$shared/scripts/t0-split.py" sentiment "$work/split" --target-rows 1000 >/dev/null
read -r bs _ < <(secs "$S" index --analyzer english --quiet --id id --out "$work/split.idx" "$work/split/pool.jsonl")
head -n 1 "$work/split/target.jsonl" > "$work/one.jsonl"
read -r ps _ < <(secs "$S" pick --quiet --index "$work/split.idx" --target "$work/one.jsonl" --budget 1e16 --train-params 1B --out "$work/run")
echo "pick bm25 --aggregate sum, 1 target row: ${ps}s against build ${bs}s = $(echo "scale=1; 100 * $ps / $bs" | bc)%"
for method in bm25 tfidf; do
	for agg in "sum" "sum --attribute=false" "max"; do
		read -r ps _ < <(secs "$S" pick --quiet --index "$work/split.idx" --target "$work/split/target.jsonl" \
			--method $method --aggregate $agg --budget 1e16 --train-params 1B --out "$work/run")
		echo "pick $method --aggregate $agg, 1000 target rows: ${ps}s against build ${bs}s = $(echo "scale=1; 100 * $ps / $bs" | bc)%"
	done
done

# Floors under any pick, nothing computed: writing the default pick's kept rows and scores to new
# files and syncing them to disk; and one read of the whole postings file (a pick reads only its
# query terms' lists, so this is more than it needs).
floors() { # RUN IDX BUILD_SECONDS
	read -r cs _ < <(secs sh -c "cat '$1/kept.jsonl' > '$work/copy1' && cat '$1/scores.jsonl' > '$work/copy2' && sync -d '$work/copy1' '$work/copy2'")
	echo "  floor: write + fsync of its kept.jsonl and scores.jsonl ($(( ($(stat -c %s "$1/kept.jsonl") + $(stat -c %s "$1/scores.jsonl")) / 1000000 )) MB): ${cs}s = $(echo "scale=1; 100 * $cs / $3" | bc)% of the build"
	read -r rs _ < <(secs cat "$2/postings")
	echo "  floor: one read of the postings file ($(( $(stat -c %s "$2/postings") / 1000000 )) MB, page cache): ${rs}s = $(echo "scale=1; 100 * $rs / $3" | bc)% of the build"
	rm -f "$work/copy1" "$work/copy2"
}
# The pick of goal 1, default flags: three in a row.
for i in 1 2 3; do
	read -r ps prss < <(secs "$S" pick --quiet --index "$work/split.idx" --target "$work/split/target.jsonl" --budget 1e16 --train-params 1B --out "$work/run")
	echo "pick bm25 sum (defaults), 1000 target rows, run $i: ${ps}s = $(echo "scale=1; 100 * $ps / $bs" | bc)% of the build (${bs}s), peak RSS $((prss / 1024)) MB, kept $(wc -l < "$work/run/kept.jsonl") of $(wc -l < "$work/run/scores.jsonl") rows"
done
floors "$work/run" "$work/split.idx" "$bs"
# The analyzer alone over the pool's text and one read of the postings the target needs (floors/,
# every core each): beside the build and the default pick (the last of the three above).
read -r _ as _ fps < <(go run ./testdata/bench/floors -pool "$work/split/pool.jsonl" -text prompt,completion \
	-index "$work/split.idx" -target "$work/split/target.jsonl")
echo "  floor: the analyzer alone over the pool's text: ${as}s = $(echo "scale=1; 100 * $as / $bs" | bc)% of the build"
echo "  floor: one read of the postings the target's terms need: ${fps}s = $(echo "scale=1; 100 * $fps / $ps" | bc)% of the pick"

# Peak memory for a pool of about 1 GB at the default --mem.
for i in $(seq 1 17); do cat "$work/t0.jsonl"; done > "$work/big.jsonl"
read -r gs grss < <(secs "$S" index --analyzer english --quiet --text prompt,completion --out "$work/big.idx" "$work/big.jsonl")
echo "1 GB pool ($(mb "$work/big.jsonl") MB): build ${gs}s, $(echo "scale=1; $(mb "$work/big.jsonl") / $gs" | bc) MB/s, peak RSS $((grss / 1024)) MB"
for i in 1 2 3; do
	read -r ps prss < <(secs "$S" pick --quiet --index "$work/big.idx" --target "$work/split/target.jsonl" \
		--budget 1e17 --train-params 1B --out "$work/bigrun")
	echo "pick on the 1 GB pool, bm25 sum (defaults), 1000 target rows, run $i: ${ps}s = $(echo "scale=1; 100 * $ps / $gs" | bc)% of its build, peak RSS $((prss / 1024)) MB, kept $(wc -l < "$work/bigrun/kept.jsonl") rows"
done
read -r as arss < <(secs "$S" pick --quiet --index "$work/big.idx" --target "$work/split/target.jsonl" \
	--attribute=false --budget 1e17 --train-params 1B --out "$work/bigrun")
echo "pick on the 1 GB pool, bm25 sum --attribute=false: ${as}s = $(echo "scale=1; 100 * $as / $gs" | bc)% of its build, peak RSS $((arss / 1024)) MB"
floors "$work/bigrun" "$work/big.idx" "$gs"
read -r _ as _ fps < <(go run ./testdata/bench/floors -pool "$work/big.jsonl" -text prompt,completion \
	-index "$work/big.idx" -target "$work/split/target.jsonl")
echo "  floor: the analyzer alone over the pool's text: ${as}s = $(echo "scale=1; 100 * $as / $gs" | bc)% of the build"
echo "  floor: one read of the postings the target's terms need: ${fps}s = $(echo "scale=1; 100 * $fps / $ps" | bc)% of the pick"
