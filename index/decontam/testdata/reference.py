#!/usr/bin/python3
"""Reference decontamination: reference.json, by brute-force n-gram set intersection on rows.json.

Written from the rules stated in the package documentation, independently of the Go code:
  words   runs of letters, marks and decimal digits (unicodedata categories L*, M*, Nd),
          lowercased (str.lower; the fixture has no character whose lower case is longer than
          one character: asserted)
  grams   an evaluation row of at least N words gives each run of N consecutive words (as a tuple
          of words, no hashing); a row of 1 to N−1 words gives itself whole; the first
          (file, line) to give a tuple is kept
  check   a pool row of at least N words hits at its first run of N words in the set; a row of
          1 to N−1 words hits when the whole row is in the set (so only a short evaluation row
          of the same words matches); a row without words never hits
for N = 13 (the package default), 8 and 3.
Run with Debian's python3: /usr/bin/python3 reference.py
"""
import json
import pathlib
import platform
import unicodedata

here = pathlib.Path(__file__).resolve().parent
fixture = json.loads((here / "rows.json").read_text(encoding="utf-8"))


def words(text):
    out, cur = [], []
    for c in text:
        cat = unicodedata.category(c)
        if cat[0] in "LM" or cat == "Nd":
            assert len(c.lower()) == 1, c
            cur.append(c.lower())
        elif cur:
            out.append("".join(cur))
            cur = []
    if cur:
        out.append("".join(cur))
    return out


def grams(ws, n):
    if not ws:
        return []
    if len(ws) < n:
        return [(0, tuple(ws))]
    return [(i, tuple(ws[i : i + n])) for i in range(len(ws) - n + 1)]


eval_words = [words(e["text"]) for e in fixture["eval"]]
pool_words = [words(p["text"]) for p in fixture["pool"]]
results = {}
for n in (13, 8, 3):
    first = {}
    for e, ws in zip(fixture["eval"], eval_words):
        for _, g in grams(ws, n):
            first.setdefault(g, (e["file"], e["line"]))
    res = []
    for ws in pool_words:
        hit = None
        for at, g in grams(ws, n):
            if g in first:
                hit = {"hit": True, "file": first[g][0], "line": first[g][1], "at": at, "words": list(g)}
                break
        res.append(hit or {"hit": False})
    results[str(n)] = {"distinct": len(first), "rows": res}
    print("N =", n, ":", sum(r["hit"] for r in res), "of", len(res), "pool rows hit;", len(first), "distinct n-grams")

out = {
    "generator": "reference.py",
    "versions": {"python": platform.python_version(), "unicode": unicodedata.unidata_version},
    "eval_words": eval_words,
    "pool_words": pool_words,
    "results": results,
}
(here / "reference.json").write_text(json.dumps(out, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
