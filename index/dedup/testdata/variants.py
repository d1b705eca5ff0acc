#!/usr/bin/python3
"""Makes rows.json, the dedup fixture, from the outside texts of score/testdata/texts.json.

Every text of texts.json (pool and targets) gives the row itself and six variants made by fixed
rules, so that the fixture holds exact duplicates under Normalize, rows with the same words, and
near duplicates at many similarities, all from outside text (no word is invented; replaced words
come from the next text):

  respaced     words joined by assorted white space (tabs, newlines, no-break and ideographic
               spaces), padded at both ends, every third word upper-cased: an exact duplicate
  unpunctuated every punctuation character (Unicode category P*) replaced by a space: the same
               words, not an exact duplicate
  drop1        the middle word dropped
  replace10    every tenth word (or the middle one, in texts under ten words) replaced by the word
               at the same place in the next text
  drop4        every fourth word dropped
  head60       the first 60% of the words

The rows are shuffled with a fixed seed so that originals do not always come first.
Run with Debian's python3: /usr/bin/python3 variants.py
"""
import json
import pathlib
import platform
import random
import unicodedata

here = pathlib.Path(__file__).resolve().parent
texts = json.loads((here / "../../../score/testdata/texts.json").read_text(encoding="utf-8"))
bases = [d for d in texts["pool"]] + [d for d in texts["targets"]]

SEPARATORS = [" ", "  ", "\t", "\n", "\u00a0", " \u3000 ", "\r\n"]


def respaced(words):
    out = []
    for i, w in enumerate(words):
        out.append(w.upper() if i % 3 == 2 else w)
        if i < len(words) - 1:
            out.append(SEPARATORS[i % len(SEPARATORS)])
    return "  " + "".join(out) + "\n "


def unpunctuated(text):
    return "".join(" " if unicodedata.category(c).startswith("P") else c for c in text)


rows = []
for b, base in enumerate(bases):
    text = base["text"]
    words = text.split()
    other = bases[(b + 1) % len(bases)]["text"].split()

    def add(kind, t):
        rows.append({"base": b, "variant": kind, "text": t})

    add("original", text)
    add("respaced", respaced(words))
    add("unpunctuated", unpunctuated(text))
    if len(words) >= 2:
        m = len(words) // 2
        add("drop1", " ".join(words[:m] + words[m + 1:]))
    r = list(words)
    places = range(9, len(r), 10) if len(r) >= 10 else [len(r) // 2]
    for i in places:
        r[i] = other[min(i, len(other) - 1)]
    add("replace10", " ".join(r))
    if len(words) >= 4:
        add("drop4", " ".join(w for i, w in enumerate(words) if i % 4 != 3))
        add("head60", " ".join(words[: max(1, len(words) * 6 // 10)]))

random.Random(1997).shuffle(rows)
out = {
    "generator": "variants.py",
    "python": platform.python_version(),
    "about": "Rows made from score/testdata/texts.json by fixed rules; see variants.py.",
    "rows": rows,
}
(here / "rows.json").write_text(json.dumps(out, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
print(len(rows), "rows")
