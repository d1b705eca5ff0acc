#!/bin/sh
# Makes the damaged compressed fixtures from pool.jsonl with Debian's gzip and zstd tools, so the
# damage is the kind real tools leave: a stream cut short, and a frame with a flipped byte.
set -eu
cd "$(dirname "$0")"
gzip -9 -n -c pool.jsonl | head -c 60 > truncated.jsonl.gz
zstd -q -19 -c pool.jsonl | head -c 40 > truncated.jsonl.zst
zstd -q -19 -c pool.jsonl > corrupt.jsonl.zst
# Flip one byte in the middle of the compressed block: the frame checksum no longer matches.
python3 -c 'import sys; p="corrupt.jsonl.zst"; b=bytearray(open(p,"rb").read()); b[len(b)//2]^=0x55; open(p,"wb").write(b)'
