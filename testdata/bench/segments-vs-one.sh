#!/usr/bin/env bash
# A pick over 4 segments (an index set) against a pick over one index of the same rows, in the same
# run, each a whole process timed with its peak RSS (GNU time). The pool is the shared T0 files
# concatenated COPIES times (default 1, about 60 MB; 17 makes the 1 GB pool of index-vs-floor.sh),
# cut by lines into 4 files; one index reads all 4, and each segment one. Picks use a 1,000-row
# target (the pool's first 1,000 rows), keep at most a tenth of the pool, and alternate one index
# and the set for ROUNDS rounds (default 3); the ratio set ÷ one is printed per round, with
# duplicates kept (the set then reads as one index) and dropped (the default, where the set finds
# them across its segments from their stored keys and sketches), and for tfidf, whose norms the set
# recomputes. kept.jsonl, scores.jsonl and ledger.json are compared after every pair. SHARDED=0
# skips the sharded steps at the end.
#
#   bash testdata/bench/segments-vs-one.sh [SHARED_DIR] [COPIES]
set -euo pipefail
copies=${2:-1}
rounds=${ROUNDS:-3}
source "$(dirname "$0")/lib.sh"
bench_setup "${1:-}"
t0_pool "$copies" "$work/pool.jsonl"
rows=$(wc -l <"$work/pool.jsonl")
split -d -n l/4 --additional-suffix=.jsonl "$work/pool.jsonl" "$work/part-"
head -n 1000 "$work/pool.jsonl" >"$work/target.jsonl"
rm "$work/pool.jsonl"
parts=("$work"/part-0*.jsonl)
run() { /usr/bin/time -f '%e %M' -o "$work/time" "$@" >/dev/null 2>"$work/err" || { cat "$work/err" >&2; exit 1; }; cat "$work/time"; }

read -r ow om < <(run "$S" index --quiet --text prompt,completion --out "$work/one.idx" "${parts[@]}")
segs=()
sw=0
for i in 0 1 2 3; do
	read -r w _ < <(run "$S" index --quiet --text prompt,completion --out "$work/seg$i.idx" "${parts[$i]}")
	sw=$(echo "$sw + $w" | bc)
	segs+=("$work/seg$i.idx")
done
"$S" segments --out "$work/pool.set" "${segs[@]}" >/dev/null
echo "pool: T0 x $copies, $rows rows in 4 files; $(nproc) cores; one index built in ${ow}s (peak ${om} KB), 4 segments in ${sw}s one after another"
max=$((rows / 10))
printf '%-28s %6s %10s %10s %8s %10s\n' pick round one_s set_s ratio RSS_ratio
for r in $(seq 1 "$rounds"); do
	for v in "bm25 --keep-duplicates" "bm25" "tfidf --keep-duplicates"; do
		read -r -a extra <<<"--method $v"
		read -r a am < <(run "$S" pick --quiet --index "$work/one.idx" --target "$work/target.jsonl" --budget 1e30 --train-params 1B --max-rows "$max" "${extra[@]}" --out "$work/run-one")
		read -r b bm < <(run "$S" pick --quiet --index "$work/pool.set" --target "$work/target.jsonl" --budget 1e30 --train-params 1B --max-rows "$max" "${extra[@]}" --out "$work/run-set")
		for f in kept.jsonl scores.jsonl ledger.json; do
			cmp -s "$work/run-one/$f" "$work/run-set/$f" || echo "$f differs for $v" >&2
		done
		printf '%-28s %6s %10s %10s %8s %10s\n' "$v" "$r" "$a" "$b" "$(echo "scale=2; $b / $a" | bc)" "$(echo "scale=2; $bm / $am" | bc)"
	done
done

# The same picks as shards (sluice shard), the four score, the four dups and the four write steps
# one after another on this machine: the sum of every step's time against the one-index pick, and
# the most memory any one step held against the one pick's; then the dups steps' and the cut's own
# time and peak RSS (KB), the largest of the four dups steps.
[ "${SHARDED:-1}" = 0 ] && exit 0
printf '%-28s %6s %10s %10s %8s %10s %8s %9s %8s %9s\n' "sharded, steps in a row" round one_s steps_s ratio RSS_ratio dups_s dups_KB cut_s cut_KB
for r in $(seq 1 "$rounds"); do
	for v in "bm25 --keep-duplicates" "bm25" "tfidf --keep-duplicates"; do
		read -r -a extra <<<"--method $v"
		flags=(--index "$work/pool.set" --target "$work/target.jsonl" --budget 1e30 --train-params 1B --max-rows "$max" "${extra[@]}" --out "$work/run-shard")
		read -r a am < <(run "$S" pick --quiet --index "$work/one.idx" --target "$work/target.jsonl" --budget 1e30 --train-params 1B --max-rows "$max" "${extra[@]}" --out "$work/run-one")
		rm -rf "$work/shards"
		total=0
		peak=0
		dw=0
		dk=0
		for step in "score 0" "score 1" "score 2" "score 3" "dups 0" "dups 1" "dups 2" "dups 3" "cut" "write 0" "write 1" "write 2" "write 3" "join"; do
			read -r s i <<<"$step"
			shard=()
			[ -z "${i:-}" ] || shard=(--shard "$i")
			read -r w k < <(run "$S" shard "$s" "${shard[@]}" --quiet --work "$work/shards" "${flags[@]}")
			total=$(echo "$total + $w" | bc)
			[ "$k" -gt "$peak" ] && peak=$k
			if [ "$s" = dups ]; then
				[ "$(echo "$w > $dw" | bc)" = 1 ] && dw=$w
				[ "$k" -gt "$dk" ] && dk=$k
			fi
			[ "$s" = cut ] && cw=$w && ck=$k
		done
		for f in kept.jsonl scores.jsonl ledger.json; do
			cmp -s "$work/run-one/$f" "$work/run-shard/$f" || echo "$f differs for sharded $v" >&2
		done
		printf '%-28s %6s %10s %10s %8s %10s %8s %9s %8s %9s\n' "$v" "$r" "$a" "$total" "$(echo "scale=2; $total / $a" | bc)" "$(echo "scale=2; $peak / $am" | bc)" "$dw" "$dk" "$cw" "$ck"
	done
done
