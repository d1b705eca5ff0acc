#!/bin/sh
# Writes the compressed fixtures for TestReadCompressedFixtures with Debian's
# gzip and zstd tools, which serve as encoders independent of the Go decoders
# under test. rows.jsonl is the first 5 rows of common_gen_Example_prompt.jsonl
# from the shared t0-train-50k-per-template data, with a UTF-8 BOM put in
# front, CRLF endings on rows 2-3 and no newline after the last row.
# Run: sh gen_compressed.sh
set -eu
src=/work/shared/data/t0-train-50k-per-template/data_per_template/common_gen_Example_prompt.jsonl
{
	printf '\357\273\277'
	head -n 1 "$src"
	head -n 3 "$src" | tail -n 2 | sed 's/$/\r/'
	head -n 4 "$src" | tail -n 1
	head -n 5 "$src" | tail -n 1 | tr -d '\n'
} >rows.jsonl
gzip -9 -n -c rows.jsonl >rows.jsonl.gz
zstd -q -19 -f -c rows.jsonl >rows.jsonl.zst
# Two members / two frames: readers must go on to the end of the stream.
head -c 300 rows.jsonl | gzip -n -c >two.gz
tail -c +301 rows.jsonl | gzip -n -c >>two.gz
head -c 300 rows.jsonl | zstd -q -c >two.zst
tail -c +301 rows.jsonl | zstd -q -c >>two.zst
# Named as plain text to show that detection ignores the file name.
cp rows.jsonl.zst misnamed.jsonl
