#!/usr/bin/python3
"""Reference n-gram probabilities from NLTK's KneserNeyInterpolated.

NLTK 3.8 (Debian's python3-nltk) implements interpolated Kneser-Ney with one
fixed discount d for every count (nltk/lm/smoothing.py, class KneserNey), not
the modified Kneser-Ney of Chen and Goodman (1998). The Go package's
NLTKKneserNey smoothing reproduces it; this script records what NLTK says.

Training: the pool rows of ../../testdata/texts.json, tokenised like
scikit-learn's default analyzer (lowercase, token pattern (?u)\\b\\w\\w+\\b),
fed through nltk.lm.preprocessing.padded_everygram_pipeline(order, rows), which
pads every row with order-1 "<s>" on the left and order-1 "</s>" on the right
and counts every n-gram of length 1..order; its vocabulary is every padded word
plus "<UNK>".

Scoring: each target row and each pool row is padded with order-1 "<s>" and
one "</s>"; every token and the final "</s>" is scored with
lm.score(word, context) where context is the order-1 symbols before it
(lm.score maps words outside the vocabulary to "<UNK>", in the word and in
the context).

NLTK gives probability 0 to a word outside its vocabulary (its unigram
distribution has no mass for "<UNK>"), so a row holding one has log-probability
-inf and infinite perplexity. The JSON keeps every per-token probability (0
included); the row's natural-log probability and lm.perplexity are written
only for rows where every probability is above 0, and are null otherwise.

Run with Debian's python3-nltk: /usr/bin/python3 nltk_ref.py
"""
import json
import math
import pathlib
import platform
import re

import nltk
from nltk.lm import KneserNeyInterpolated
from nltk.lm.preprocessing import padded_everygram_pipeline

here = pathlib.Path(__file__).resolve().parent
texts = json.loads((here / ".." / ".." / "testdata" / "texts.json").read_text(encoding="utf-8"))
token = re.compile(r"(?u)\b\w\w+\b")
pool = [token.findall(d["text"].lower()) for d in texts["pool"]]
targets = [token.findall(d["text"].lower()) for d in texts["targets"]]

rows = [("target", i, toks) for i, toks in enumerate(targets)] + \
       [("pool", i, toks) for i, toks in enumerate(pool)]

runs = []
for order in (2, 3, 4, 5):
    for discount in (0.1, 0.75, 1.0):
        train, vocab = padded_everygram_pipeline(order, pool)
        lm = KneserNeyInterpolated(order, discount=discount)
        lm.fit(train, vocab)
        out_rows = []
        for kind, i, toks in rows:
            padded = ["<s>"] * (order - 1) + toks + ["</s>"]
            grams = [tuple(padded[j - order + 1 : j + 1]) for j in range(order - 1, len(padded))]
            probs = [lm.score(g[-1], g[:-1]) for g in grams]
            defined = all(p > 0 for p in probs)
            out_rows.append({
                "set": kind,
                "row": i,
                "probs": probs,
                "ln_prob": sum(math.log(p) for p in probs) if defined else None,
                "perplexity": lm.perplexity(grams) if defined else None,
            })
        runs.append({"order": order, "discount": discount, "rows": out_rows})

out = {
    "generator": "nltk_ref.py",
    "versions": {"python": platform.python_version(), "nltk": nltk.__version__},
    "pool_tokens": pool,
    "target_tokens": targets,
    "runs": runs,
}
(here / "nltk_ref.json").write_text(json.dumps(out, indent=1) + "\n", encoding="utf-8")
print("nltk", nltk.__version__)
