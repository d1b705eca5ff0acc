#!/usr/bin/python3
"""Invented inputs for the README's examples of --method vectors and --method scores, made from
the demo data (cmd/sluice/demodata), which is invented too. Nothing here is a check value.

  /usr/bin/python3 testdata/methods/make.py OUTDIR    (Debian's python3-numpy)

Writes into OUTDIR:
  words.vec          word vectors in the text format ("count dim", then "word v1 ... vdim"): each
                     word's vector is its share of occurrences in each of the demo pool's topics, a
                     stand-in for a real embedding model's vectors
  pool.npy           one float32 vector per pool row, in input order: the mean of its words' vectors
  target.npy         the same for the target rows
  scores.jsonl       {"id", "score"} per pool row from an invented keyword classifier: the share of a
                     row's words that are dispatch-desk words
"""
import json
import pathlib
import re
import sys

import numpy

here = pathlib.Path(__file__).resolve().parent
demo = here.parent.parent / "cmd" / "sluice" / "demodata"
out = pathlib.Path(sys.argv[1])
out.mkdir(parents=True, exist_ok=True)
word = re.compile(r"[^\W_]+")


def rows(name):
    return [json.loads(l) for l in (demo / name).read_text(encoding="utf-8").splitlines() if l.strip()]


def words(r):
    text = "\n".join(r[f] for f in ("instruction", "input", "output") if r.get(f))
    return [w.lower() for w in word.findall(text)]


pool, target = rows("pool.jsonl"), rows("target.jsonl")
topics = sorted({t for r in pool for t in r["topic"].split("+")})
counts = {}
for r in pool:
    for w in words(r):
        c = counts.setdefault(w, numpy.zeros(len(topics)))
        for t in r["topic"].split("+"):
            c[topics.index(t)] += 1
vocab = sorted(counts)
with open(out / "words.vec", "w", encoding="utf-8") as f:
    f.write(f"{len(vocab)} {len(topics)}\n")
    for w in vocab:
        v = counts[w] / counts[w].sum()
        f.write(w + " " + " ".join(f"{x:.6g}" for x in v) + "\n")


def mean(r):
    vs = [counts[w] / counts[w].sum() for w in words(r) if w in counts]
    return numpy.mean(vs, axis=0) if vs else numpy.zeros(len(topics))


numpy.save(out / "pool.npy", numpy.array([mean(r) for r in pool], dtype=numpy.float32))
numpy.save(out / "target.npy", numpy.array([mean(r) for r in target], dtype=numpy.float32))
desk = {"sailing", "sailings", "fare", "fares", "booking", "ticket", "timetable", "delay", "quay",
        "passenger", "passengers", "dispatcher", "crossing", "pier", "ferry", "return", "group"}
with open(out / "scores.jsonl", "w", encoding="utf-8") as f:
    for r in pool:
        w = words(r)
        f.write(json.dumps({"id": r["id"], "score": round(sum(x in desk for x in w) / max(len(w), 1), 6)}) + "\n")
