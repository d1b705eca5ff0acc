#!/usr/bin/python3
"""Score files as Python's own writers make them, for package external.

Run with Debian's python3: /usr/bin/python3 make_fixtures.py
It rewrites every fixture in this folder; the Go tests need no Python.

The scores are seeded random floats (random.Random(seed)), spread over many
magnitudes, with -0.0, a subnormal and values near float64's end set in.
The files are written by Python's json module (json.dumps: shortest
round-trip reprs, NaN and Infinity for non-finite floats) and csv module
(csv.writer: "\\r\\n" line ends, quoting of cells holding commas and quotes,
str(float), which writes 'nan' and 'inf'), and one CSV of float.hex
strings. expected.json holds the pool's ids, in row order, and the score
each pool row must get, as float.hex (exact), or null when the file gives
that row none.

  scores.jsonl        by id, string and number ids, rows 3 and 11 left out
  scores_rows.jsonl   by row number, every row
  scores.csv          by id (csv.writer), ids with commas and quotes
  scores_hex.csv      by row, float.hex scores
  bad_nan.jsonl, bad_inf.jsonl, bad_nan.csv, bad_inf.csv: non-finite scores
"""
import csv
import json
import pathlib
import random

here = pathlib.Path(__file__).resolve().parent
rng = random.Random(20240611)

ids = [f"doc-{i}" for i in range(12)]
ids[4] = 'say "hi", then go'
ids[7] = "42"  # written as the JSON number 42 in scores.jsonl
scores = [rng.gauss(0, 1) * 10 ** rng.randint(-8, 8) for _ in ids]
scores[0] = -0.0
scores[1] = 5e-324  # the smallest subnormal
scores[2] = -1.7e308  # near the end: below it only the next float down is finite
scores[5] = 0.1

left_out = {3, 11}
with open(here / "scores.jsonl", "w") as f:
    for i in reversed(range(len(ids))):  # any order
        if i in left_out:
            continue
        rid = 42 if ids[i] == "42" else ids[i]
        f.write(json.dumps({"id": rid, "score": scores[i], "model": "m"}) + "\n")
with open(here / "scores_rows.jsonl", "w") as f:
    for i, s in enumerate(scores):
        f.write(json.dumps({"row": i, "score": s}) + "\n")
with open(here / "scores.csv", "w", newline="") as f:
    w = csv.writer(f)
    w.writerow(["n", "id", "score"])
    for i, (rid, s) in enumerate(zip(ids, scores)):
        if i not in left_out:
            w.writerow([i, rid, s])
with open(here / "scores_hex.csv", "w", newline="") as f:
    w = csv.writer(f)
    w.writerow(["row", "score"])
    for i, s in enumerate(scores):
        w.writerow([i, s.hex()])

for name, bad in [("bad_nan", float("nan")), ("bad_inf", float("-inf"))]:
    with open(here / f"{name}.jsonl", "w") as f:
        for i, s in enumerate(scores):
            f.write(json.dumps({"row": i, "score": bad if i == 6 else s}) + "\n")
    with open(here / f"{name}.csv", "w", newline="") as f:
        w = csv.writer(f)
        w.writerow(["row", "score"])
        for i, s in enumerate(scores):
            w.writerow([i, bad if i == 6 else s])

with open(here / "expected.json", "w") as f:
    json.dump(
        {
            "ids": ids,
            "scores": [s.hex() for s in scores],
            "left_out": sorted(left_out),
        },
        f,
        indent=1,
    )
    f.write("\n")
