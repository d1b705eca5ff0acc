#!/usr/bin/env bash
# Selection quality on the shared T0 corpus: for each task cluster, hold out whole templates as the
# target (../shared/scripts/t0-split.py, 200 target rows), index the rest as the pool, keep as many
# rows as the cluster has in the pool (--max-rows, budget unbounded), and report the share of kept rows
# that belong to the target's cluster (precision, here equal to recall) against the cluster's share
# of the pool, for both methods and both aggregations.
#
#   bash testdata/bench/t0-precision.sh [SHARED_DIR]
set -euo pipefail
root=$(cd "$(dirname "$0")/../.." && pwd)
shared=${1:-$root/../shared}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$root"
go build -o "$work/sluice" ./cmd/sluice
S=$work/sluice
pct() { awk -v a="$1" -v b="$2" 'BEGIN { printf "%.1f %%", 100 * a / b }'; }
clusters=$(cut -f3 "$shared/data/t0-train-50k-per-template/files.tsv" | tail -n +2 | sort -u)
printf '| cluster | pool rows | cluster share | bm25 sum | bm25 max | tfidf sum | tfidf max |\n|---|---|---|---|---|---|---|\n'
for c in $clusters; do
	python3 "$shared/scripts/t0-split.py" "$c" "$work/$c" --target-rows 200 >/dev/null
	n=$(wc -l < "$work/$c/labels.tsv")
	k=$(awk -F'\t' -v c="$c" '$2 == c' "$work/$c/labels.tsv" | wc -l)
	"$S" index --analyzer english --quiet --id id --text prompt,completion --out "$work/$c/idx" "$work/$c/pool.jsonl"
	row="| $c | $n | $(pct "$k" "$n") |"
	for m in bm25 tfidf; do
		for a in sum max; do
			"$S" pick --quiet --b 0.75 --index "$work/$c/idx" --target "$work/$c/target.jsonl" --method $m --aggregate $a \
				--budget 1e30 --train-params 1B --max-rows "$k" --out "$work/$c/run-$m-$a"
			hit=$(grep -c "\"cluster\": \"$c\"" "$work/$c/run-$m-$a/kept.jsonl" || true)
			kept=$(wc -l < "$work/$c/run-$m-$a/kept.jsonl")
			row="$row $(pct "$hit" "$kept") |"
		done
	done
	echo "$row"
done
