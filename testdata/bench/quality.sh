#!/usr/bin/env bash
# Selection quality of every method, and of every analyzer, on labelled shared data. For each split
# of a labelled corpus into a target set of one class and a pool, build an index per analyzer, pick
# with bm25/tfidf x sum/max (and, with the english analyzer, ngram, vectors sum/max and scores),
# --max-rows K, a budget no pick reaches, duplicates kept, and report precision@K: the share of the K
# best-scored rows (scores.jsonl, kept) that are of the target's class, a row a pick does not keep
# counting as a miss; and each pick's selection FLOPs from its ledger.json. Beside them: the class's
# share of the pool (a random pick's precision) and a reference computed apart from sluice by
# quality_ref.py (scikit-learn's tokens and TF-IDF, BM25 in NumPy; it should equal the sklearn column
# up to ties), with other ways of adding up the target rows' BM25 scores and a k1 x b grid.
#
# The vectors and scores methods take their inputs from quality_ref.py (--external), made with
# scikit-learn from the same counts: LSA embeddings (TF-IDF, TruncatedSVD to 128 dimensions) as .npy,
# and a logistic regression's decision function (target rows against as many pool rows) as JSONL.
# Each is declared to the ledger with --selection-flops, the multiply-adds of its matrix work x 2 as
# quality_ref.py counts them from the shapes.
#
# Splits:
#   t0        each of the 8 T0 task clusters (../shared/scripts/t0-split.py: whole templates held out,
#             200 target rows), pool about 50,000 rows; K = the cluster's rows in the pool (at K = 200
#             most clusters are at 100 % for every method).
#   debian    each Debian archive section with at least DEBIAN_MIN rows (default 1500: 15 of 58
#             sections) of ../shared/scripts/debian-sections.py (needs `apt-get update` first): 40
#             rows of the section as target, every other row as pool (about 63,000 one-line
#             descriptions); K = 200.
#   gpteacher each of the three GPTeacher files (JSON arrays, made JSONL here): 40 rows as target,
#             the rest of all three as pool (about 14,000 rows); K = 200.
#
#   bash testdata/bench/quality.sh [SHARED_DIR] > tables.md
# prints the README's tables (markdown) on stdout, progress on stderr. Every draw is seeded, so a
# run on the same data prints the same tables. Environment: ANALYZERS (default: english plain
# english-nostem sklearn; the methods beyond bm25 and tfidf run with english only), DEBIAN_MIN,
# SETS (default: t0 debian gpteacher), PY (default /usr/bin/python3, Debian's, with python3-sklearn
# and python3-scipy), KEEP (a folder to keep the results file in).
set -euo pipefail
root=$(cd "$(dirname "$0")/../.." && pwd)
shared=$(cd "${1:-$root/../shared}" && pwd)
analyzers=${ANALYZERS:-english plain english-nostem sklearn}
sets=${SETS:-t0 debian gpteacher}
debian_min=${DEBIAN_MIN:-1500}
py=${PY:-/usr/bin/python3}
ref=$root/testdata/bench/quality_ref.py
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$root"
go build -o "$work/sluice" ./cmd/sluice
S=$work/sluice
results=$work/results.tsv
start=$SECONDS

# measure NAME DIR TEXT LABEL CLASS K: one result line for the split in DIR (pool.jsonl, target.jsonl).
measure() {
	local name=$1 dir=$2 text=$3 label=$4 class=$5 K=$6 runs=() an m ag r lsa lr
	r=$("$py" "$ref" reference "$dir/pool.jsonl" "$dir/target.jsonl" "$text" "$label" "$class" "$K" --external "$dir/ext")
	lsa=$(grep -o 'lsa\.flops=[^ ]*' <<<"$r" | cut -d= -f2)
	lr=$(grep -o 'lr\.flops=[^ ]*' <<<"$r" | cut -d= -f2)
	for an in $analyzers; do
		"$S" index --quiet --id id --text "$text" --analyzer "$an" --out "$dir/idx-$an" "$dir/pool.jsonl"
		pick() { # pick RUNNAME FLAGS...
			local run=$1
			shift
			"$S" pick --quiet --index "$dir/idx-$an" --target "$dir/target.jsonl" --attribute=false \
				--keep-duplicates --budget 1e30 --train-params 1B --max-rows "$K" --b 0.75 --out "$dir/run-$run" "$@"
			runs+=("$run=$dir/run-$run")
		}
		for m in bm25 tfidf; do
			for ag in sum max; do
				pick "$an.$m.$ag" --method $m --aggregate $ag
			done
		done
		if [ "$an" = english ]; then
			pick "$an.ngram" --method ngram
			for ag in sum max; do
				pick "$an.vectors.$ag" --method vectors --aggregate $ag --pool-vectors "$dir/ext/pool.npy" \
					--target-vectors "$dir/ext/target.npy" --selection-flops "$lsa"
			done
			pick "$an.scores" --method scores --scores "$dir/ext/scores.jsonl" --selection-flops "$lr"
		fi
		rm -rf "$dir/idx-$an"
	done
	local p
	p=$("$py" "$ref" precision "$dir/pool.jsonl" "$label" "$class" "$K" "${runs[@]}")
	printf '%s\t%s\t%s\t%s %s\n' "$name" "$(wc -l <"$dir/pool.jsonl")" "$K" "$p" "$r" >>"$results"
	rm -rf "$dir"
	echo "$name done at $((SECONDS - start)) s" >&2
}

for set in $sets; do
	case $set in
	t0)
		for c in $(cut -f3 "$shared/data/t0-train-50k-per-template/files.tsv" | tail -n +2 | sort -u); do
			"$py" "$shared/scripts/t0-split.py" "$c" "$work/split" --target-rows 200 >/dev/null
			measure "t0 $c" "$work/split" prompt,completion cluster "$c" \
				"$("$py" "$ref" count "$work/split/pool.jsonl" cluster "$c")"
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
			measure "debian $s" "$work/split" text section "$s" 200
		done
		;;
	gpteacher)
		for c in codegen roleplay toolformer; do
			"$py" "$ref" split-gpteacher "$shared/data/gpteacher" "$c" "$work/split"
			measure "gpteacher $c" "$work/split" instruction,input,response category "$c" 200
		done
		;;
	*)
		echo "quality.sh: unknown set $set (t0, debian or gpteacher)" >&2
		exit 2
		;;
	esac
done

[ -n "${KEEP:-}" ] && cp "$results" "$KEEP/quality-results.tsv"
"$py" "$ref" tables "$results" $analyzers
echo "total $((SECONDS - start)) s" >&2
