#!/usr/bin/env python3
"""Writes rows.lines for TestScannerMatchesPython: for each line of
rows.jsonl, its 1-based number, byte offset and length including the "\n",
as found by CPython's binary readline (io.BufferedReader), an independent
line splitter. Run after gen_compressed.sh: python3 gen_lines.py
"""
with open("rows.jsonl", "rb") as f, open("rows.lines", "w") as out:
    off = 0
    for n, line in enumerate(iter(f.readline, b""), 1):
        out.write(f"{n} {off} {len(line)}\n")
        off += len(line)
