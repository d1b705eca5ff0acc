#!/usr/bin/python3
"""Reference BM25 scores computed with numpy.

BM25 as in Robertson and Zaragoza (2009), "The Probabilistic Relevance
Framework: BM25 and Beyond":
  idf(t)   = ln(1 + (N - df + 0.5) / (df + 0.5))
  w(t, d)  = tf (k1 + 1) / (tf + k1 (1 - b + b len(d) / avglen))
  s(q, d)  = sum over distinct terms t of q of idf(t) w(t, d)   (binary query)
Texts come from texts.json, tokenised like scikit-learn's default analyzer
(lowercase, token pattern (?u)\\b\\w\\w+\\b). For each (k1, b) it writes the
target x pool score matrix, the per pool row sum and max over targets, and the
argmax target (lowest index on ties, -1 when no target shares a term) to
bm25_ref.json. Run with Debian's python3-numpy: /usr/bin/python3 bm25_ref.py
"""
import json
import pathlib
import platform
import re

import numpy

here = pathlib.Path(__file__).resolve().parent
texts = json.loads((here / "texts.json").read_text(encoding="utf-8"))
token = re.compile(r"(?u)\b\w\w+\b")
pool = [token.findall(d["text"].lower()) for d in texts["pool"]]
targets = [token.findall(d["text"].lower()) for d in texts["targets"]]

vocab = sorted({t for doc in pool for t in doc})
col = {t: i for i, t in enumerate(vocab)}
N = len(pool)
tf = numpy.zeros((N, len(vocab)))
for r, doc in enumerate(pool):
    for t in doc:
        tf[r, col[t]] += 1
lens = tf.sum(axis=1)
avglen = lens.mean()
df = (tf > 0).sum(axis=0)
idf = numpy.log1p((N - df + 0.5) / (df + 0.5))

Q = numpy.zeros((len(targets), len(vocab)))  # binary query vectors
for j, doc in enumerate(targets):
    for t in set(doc):
        if t in col:
            Q[j, col[t]] = 1
shares = (Q @ (tf > 0).T) > 0  # targets x pool

runs = []
for k1, b in [(1.2, 0.75), (2.0, 0.3), (0.9, 1.0), (1.5, 0.0), (0.0, 0.5)]:
    K = k1 * (1 - b + b * lens / avglen)
    # Zero where tf == 0 (with k1 = 0 the quotient there would be 0/0).
    W = numpy.divide(tf * (k1 + 1), tf + K[:, None], out=numpy.zeros_like(tf), where=tf > 0)
    S = Q @ (W * idf).T                     # targets x pool
    best = numpy.where(shares.any(axis=0), S.argmax(axis=0), -1)
    runs.append({
        "k1": k1, "b": b,
        "scores": S.tolist(),
        "sum": S.sum(axis=0).tolist(),
        "max": S.max(axis=0).tolist(),
        "best": best.tolist(),
    })

out = {
    "generator": "bm25_ref.py",
    "versions": {"python": platform.python_version(), "numpy": numpy.__version__},
    "pool_tokens": pool,
    "target_tokens": targets,
    "avglen": float(avglen),
    "idf": {t: float(v) for t, v in zip(vocab, idf)},
    "runs": runs,
}
(here / "bm25_ref.json").write_text(json.dumps(out, indent=1) + "\n", encoding="utf-8")
print("numpy", numpy.__version__)
