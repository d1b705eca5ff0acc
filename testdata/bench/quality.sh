#!/usr/bin/env bash
# Selection quality by analyzer, on labelled shared data. For each split of a labelled corpus into a
# target set of one class and a pool, build an index per analyzer, pick with bm25/tfidf x sum/max
# (--max-rows K, a budget no pick reaches, duplicates kept), and report precision@K: the share of the
# K best-scored rows (scores.jsonl, kept) that are of the target's class, a row sharing no term with
# the target counting as a miss. Beside it: the class's share of the pool (a random pick's precision)
# and a reference computed apart from sluice by quality_ref.py (scikit-learn's tokens and TF-IDF, BM25
# in NumPy), which should equal the sklearn column up to ties.
#
# Splits:
#   t0        each of the 8 T0 task clusters (../shared/scripts/t0-split.py: whole templates held out,
#             200 target rows), pool about 50,000 rows; K = 200.
#   debian    each Debian archive section with at least DEBIAN_MIN rows (default 1500: 15 of 58
#             sections, which keeps the run under 20 minutes on 2 cores) of
#             ../shared/scripts/debian-sections.py (needs `apt-get update` first): 40 rows of the
#             section as target, every other row as pool (about 63,000 one-line descriptions); K = 200.
#   gpteacher each of the three GPTeacher files (JSON arrays, made JSONL here): 40 rows as target,
#             the rest of all three as pool (about 14,000 rows); K = 200.
#
#   bash testdata/bench/quality.sh [SHARED_DIR]
# Environment: ANALYZERS (default: english plain english-nostem sklearn), DEBIAN_MIN, SETS (default:
# t0 debian gpteacher), PY (default /usr/bin/python3, Debian's, with python3-sklearn).
set -euo pipefail
root=$(cd "$(dirname "$0")/../.." && pwd)
shared=$(cd "${1:-$root/../shared}" && pwd)
analyzers=${ANALYZERS:-english plain english-nostem sklearn}
sets=${SETS:-t0 debian gpteacher}
debian_min=${DEBIAN_MIN:-1500}
py=${PY:-/usr/bin/python3}
ref=$root/testdata/bench/quality_ref.py
K=200
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$root"
go build -o "$work/sluice" ./cmd/sluice
S=$work/sluice
results=$work/results.tsv
start=$SECONDS

# measure NAME DIR TEXT LABEL CLASS: one result line for the split in DIR (pool.jsonl, target.jsonl).
measure() {
	local name=$1 dir=$2 text=$3 label=$4 class=$5 runs=() an m ag
	for an in $analyzers; do
		"$S" index --quiet --id id --text "$text" --analyzer "$an" --out "$dir/idx-$an" "$dir/pool.jsonl"
		for m in bm25 tfidf; do
			for ag in sum max; do
				"$S" pick --quiet --index "$dir/idx-$an" --target "$dir/target.jsonl" --method $m --aggregate $ag \
					--attribute=false --keep-duplicates --budget 1e30 --train-params 1B --max-rows $K \
					--out "$dir/run-$an-$m-$ag"
				runs+=("$dir/run-$an-$m-$ag")
			done
		done
		rm -rf "$dir/idx-$an"
	done
	local p r
	p=$("$py" "$ref" precision "$dir/pool.jsonl" "$label" "$class" $K "${runs[@]}")
	r=$("$py" "$ref" reference "$dir/pool.jsonl" "$dir/target.jsonl" "$text" "$label" "$class" $K)
	printf '%s\t%s\t%s %s\n' "$name" "$(wc -l <"$dir/pool.jsonl")" "$p" "$r" >>"$results"
	rm -rf "$dir"
	echo "$name done at $((SECONDS - start)) s" >&2
}

for set in $sets; do
	case $set in
	t0)
		for c in $(cut -f3 "$shared/data/t0-train-50k-per-template/files.tsv" | tail -n +2 | sort -u); do
			"$py" "$shared/scripts/t0-split.py" "$c" "$work/split" --target-rows 200 >/dev/null
			measure "t0 $c" "$work/split" prompt,completion cluster "$c"
		done
		;;
	debian)
		"$py" "$shared/scripts/debian-sections.py" >"$work/sections.jsonl"
		if [ ! -s "$work/sections.jsonl" ]; then
			echo "quality.sh: debian-sections.py wrote nothing; run apt-get update first" >&2
			exit 1
		fi
		for s in $("$py" -c '
import collections, json, sys
c = collections.Counter(json.loads(l)["section"] for l in open(sys.argv[1]))
print(" ".join(s for s, n in sorted(c.items(), key=lambda x: (-x[1], x[0])) if n >= int(sys.argv[2])))
' "$work/sections.jsonl" "$debian_min"); do
			"$py" "$ref" split-debian "$work/sections.jsonl" "$s" "$work/split"
			measure "debian $s" "$work/split" text section "$s"
		done
		;;
	gpteacher)
		for c in codegen roleplay toolformer; do
			"$py" "$ref" split-gpteacher "$shared/data/gpteacher" "$c" "$work/split"
			measure "gpteacher $c" "$work/split" instruction,input,response category "$c"
		done
		;;
	*)
		echo "quality.sh: unknown set $set (t0, debian or gpteacher)" >&2
		exit 2
		;;
	esac
done

# One table per method and aggregation: a row per split, then the mean of each corpus and of all.
# Fields of a result line: name, pool rows, base, then per analyzer bm25 sum, bm25 max, tfidf sum,
# tfidf max, then the reference's four in the same order.
"$py" - "$results" $analyzers <<'EOF'
import sys
rows = []
for line in open(sys.argv[1]):
    name, pool, nums = line.rstrip("\n").split("\t")
    rows.append((name, int(pool), [float(x) for x in nums.split()]))
ans = sys.argv[2:]
combos = ["bm25 sum", "bm25 max", "tfidf sum", "tfidf max"]
pct = lambda x: f"{100 * x:.1f} %"
means = {}
for ci, combo in enumerate(combos):
    print(f"\n### {combo} (precision@200)\n")
    print("| split | pool rows | base rate | " + " | ".join(ans) + " | reference (sklearn tokens, NumPy) |")
    print("|---|---|---|" + "---|" * (len(ans) + 1))
    groups = {}
    for name, pool, v in rows:
        cols = [v[1 + 4 * a + ci] for a in range(len(ans))] + [v[1 + 4 * len(ans) + ci]]
        print(f"| {name} | {pool} | {pct(v[0])} | " + " | ".join(pct(x) for x in cols) + " |")
        for g in (name.split()[0], "all"):
            groups.setdefault(g, []).append([v[0]] + cols)
    for g, vs in groups.items():
        m = [sum(c) / len(vs) for c in zip(*vs)]
        means[(combo, g)] = m
        print(f"| **mean {g}** ({len(vs)}) | | {pct(m[0])} | " + " | ".join(pct(x) for x in m[1:]) + " |")
print("\n### mean precision@200 over all splits\n")
print("| method | base rate | " + " | ".join(ans) + " | reference |")
print("|---|---|" + "---|" * (len(ans) + 1))
for combo in combos:
    m = means[(combo, "all")]
    print(f"| {combo} | " + " | ".join(pct(x) for x in m) + " |")
EOF
echo "total $((SECONDS - start)) s" >&2
