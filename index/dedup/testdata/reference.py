#!/usr/bin/python3
"""Reference values for the dedup tests, computed by brute force from rows.json.

Written from the rules stated in the package documentation, independently of the Go code:

  normalised  simple case folding of each character (str.casefold, which is Unicode's full case
              folding; the fixture has no character whose folding is longer than one character,
              where full and simple folding differ: asserted), white space runs (str.isspace)
              replaced by one space, trimmed
  key         the first 16 bytes of SHA-256 of the normalised text, in hex
  groups      rows grouped by key (a plain hash-and-group), groups of two rows or more, each in row
              order, ordered by first row
  words       runs of letters, marks and decimal digits (Unicode categories L*, M*, Nd), folded
  jaccard     the exact Jaccard similarity |A∩B| / |A∪B| of every pair of rows' sets of 5-word
              shingles (a row of 1 to 4 words is one shingle of all its words), by a NumPy
              incidence-matrix product; pairs with similarity 0 are left out

Run with Debian's python3 and python3-numpy: /usr/bin/python3 reference.py
"""
import hashlib
import json
import pathlib
import platform
import unicodedata

import numpy

SHINGLE = 5

here = pathlib.Path(__file__).resolve().parent
rows = [r["text"] for r in json.loads((here / "rows.json").read_text(encoding="utf-8"))["rows"]]

for t in rows:
    for c in t:
        assert len(c.casefold()) == 1, "full and simple folding differ for %r" % c
        assert c not in "\x1c\x1d\x1e\x1f", "str.isspace and Go's unicode.IsSpace differ for %r" % c


def fold(text):
    return "".join(c.casefold() for c in text)


def normalise(text):
    return " ".join(fold(text).split())


def is_word_char(c):
    cat = unicodedata.category(c)
    return cat[0] in "LM" or cat == "Nd"


def words(text):
    out, cur = [], []
    for c in text:
        if is_word_char(c):
            cur.append(c.casefold())
        elif cur:
            out.append("".join(cur))
            cur = []
    if cur:
        out.append("".join(cur))
    return out


def shingles(ws):
    if not ws:
        return set()
    if len(ws) < SHINGLE:
        return {tuple(ws)}
    return {tuple(ws[i : i + SHINGLE]) for i in range(len(ws) - SHINGLE + 1)}


norm = [normalise(t) for t in rows]
keys = [hashlib.sha256(n.encode("utf-8")).digest()[:16].hex() for n in norm]
by_key = {}
for i, k in enumerate(keys):
    by_key.setdefault(k, []).append(i)
groups = sorted((g for g in by_key.values() if len(g) > 1), key=lambda g: g[0])

row_words = [words(t) for t in rows]
sets = [shingles(w) for w in row_words]
vocab = {s: j for j, s in enumerate(sorted(set().union(*sets)))}
X = numpy.zeros((len(rows), len(vocab)), dtype=numpy.int64)
for i, s in enumerate(sets):
    for sh in s:
        X[i, vocab[sh]] = 1
inter = X @ X.T
size = X.sum(axis=1)
union = size[:, None] + size[None, :] - inter
pairs = []
for i in range(len(rows)):
    for j in range(i + 1, len(rows)):
        if inter[i, j] > 0:
            pairs.append([i, j, float(inter[i, j] / union[i, j]), int(inter[i, j]), int(union[i, j])])

out = {
    "generator": "reference.py",
    "versions": {"python": platform.python_version(), "numpy": numpy.__version__, "unicode": unicodedata.unidata_version},
    "shingle": SHINGLE,
    "normalised": norm,
    "keys": keys,
    "distinct_keys": len(by_key),
    "groups": groups,
    "words": row_words,
    "shingles": [len(s) for s in sets],
    "jaccard": pairs,
}
(here / "reference.json").write_text(json.dumps(out, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
print(len(rows), "rows,", len(by_key), "distinct keys,", len(groups), "groups,", len(pairs), "pairs with J > 0")
