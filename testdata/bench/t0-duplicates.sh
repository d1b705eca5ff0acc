#!/usr/bin/env bash
# Duplicates in the shared T0 corpus and what they cost a pick: for each task cluster (split as
# quality.sh does: ../shared/scripts/t0-split.py, 200 target rows), pick as many rows as the cluster has in the pool with tfidf/max, once
# keeping every copy (--keep-duplicates) and once keeping one row per cluster of exact or near
# duplicates (the default). Reports the rows that have a better-scored copy in the pool, the share
# of the first pick's kept tokens such copies took, and the precision (kept rows of the target's
# cluster) of both picks.
#
#   bash testdata/bench/t0-duplicates.sh [SHARED_DIR]
set -euo pipefail
source "$(dirname "$0")/lib.sh"
bench_setup "${1:-}"
pct() { awk -v a="$1" -v b="$2" 'BEGIN { printf "%.1f %%", 100 * a / b }'; }
clusters=$(cut -f3 "$shared/data/t0-train-50k-per-template/files.tsv" | tail -n +2 | sort -u)
printf '| cluster | pool rows | rows with a better copy | their share of kept tokens without dedup | precision without dedup | precision with dedup |\n|---|---|---|---|---|---|\n'
for c in $clusters; do
	python3 "$shared/scripts/t0-split.py" "$c" "$work/$c" --target-rows 200 >/dev/null
	n=$(wc -l < "$work/$c/labels.tsv")
	k=$(awk -F'\t' -v c="$c" '$2 == c' "$work/$c/labels.tsv" | wc -l)
	"$S" index --analyzer english --quiet --id id --text prompt,completion --out "$work/$c/idx" "$work/$c/pool.jsonl"
	common=(--index "$work/$c/idx" --target "$work/$c/target.jsonl" --method tfidf --aggregate max --budget 1e30 --train-params 1B --max-rows "$k")
	"$S" pick --quiet "${common[@]}" --keep-duplicates --out "$work/$c/all"
	"$S" pick --quiet "${common[@]}" --out "$work/$c/dedup"
	dups=$(grep -c '"reason":"duplicate"' "$work/$c/dedup/scores.jsonl" || true)
	# Kept tokens, without dedup, of rows the dedup pick dropped as a copy of a better one.
	share=$(python3 - "$work/$c" <<'PY'
import json, sys
d = sys.argv[1]
dup = {json.loads(l)["id"] for l in open(d + "/dedup/scores.jsonl") if '"reason":"duplicate"' in l}
kept = [json.loads(l) for l in open(d + "/all/scores.jsonl") if '"kept":true' in l]
tot = sum(r["tokens"] for r in kept)
print("%.1f %%" % (100 * sum(r["tokens"] for r in kept if r["id"] in dup) / tot))
PY
)
	row="| $c | $n | $dups | $share |"
	for r in all dedup; do
		hit=$(grep -c "\"cluster\": \"$c\"" "$work/$c/$r/kept.jsonl" || true)
		kept=$(wc -l < "$work/$c/$r/kept.jsonl")
		row="$row $(pct "$hit" "$kept") |"
	done
	echo "$row"
done
