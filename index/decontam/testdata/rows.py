#!/usr/bin/python3
"""Makes rows.json, the decontamination fixture, from the outside texts of score/testdata/texts.json.

Evaluation files: file 0 is the seven target texts (lines 1 to 7); file 1 is the pool texts at
odd places (lines 1 to 7), then the fourth target text again (line 8), so that one short row is
in both files and the first must be reported.

Pool rows to check, each made by a fixed rule (no word is invented; inserted words come from
other texts):
  pool        every pool text as it is (those at odd places are evaluation rows)
  embedded    an evaluation text between two pool texts at even places
  every6th    an evaluation text with every sixth word replaced by a word of another text, so that
              no run of 13 of its words survives
  middle      an evaluation text with its middle word replaced
  shouted     an evaluation text upper-cased, with its punctuation doubled
  head5       the first five words of an evaluation text
  dropfirst   a short evaluation text without its first word
  nowords     punctuation only
Run with Debian's python3: /usr/bin/python3 rows.py
"""
import json
import pathlib
import platform

here = pathlib.Path(__file__).resolve().parent
texts = json.loads((here / "../../../score/testdata/texts.json").read_text(encoding="utf-8"))
pool = [d["text"] for d in texts["pool"]]
targets = [d["text"] for d in texts["targets"]]

evals = [{"file": 0, "line": i + 1, "text": t} for i, t in enumerate(targets)]
odd = [t for i, t in enumerate(pool) if i % 2 == 1]
evals += [{"file": 1, "line": i + 1, "text": t} for i, t in enumerate(odd)]
evals.append({"file": 1, "line": len(odd) + 1, "text": targets[3]})

even = [t for i, t in enumerate(pool) if i % 2 == 0]
rows = [{"how": "pool", "text": t} for t in pool]
for k, e in enumerate(evals):
    t = e["text"]
    words = t.split()
    other = even[k % len(even)].split()
    rows.append({"how": "embedded", "text": even[k % len(even)] + " " + t + " " + even[(k + 3) % len(even)]})
    r = list(words)
    for i in range(5, len(r), 6):
        r[i] = other[i % len(other)]
    rows.append({"how": "every6th", "text": " ".join(r)})
    r = list(words)
    r[len(r) // 2] = other[0]
    rows.append({"how": "middle", "text": " ".join(r)})
    rows.append({"how": "shouted", "text": t.upper().replace(",", ",,").replace(".", "..")})
    if len(words) > 5:
        rows.append({"how": "head5", "text": " ".join(words[:5])})
    if len(words) < 13:
        rows.append({"how": "dropfirst", "text": " ".join(words[1:])})
rows.append({"how": "nowords", "text": "— … ?!"})

out = {
    "generator": "rows.py",
    "python": platform.python_version(),
    "about": "Evaluation and pool rows made from score/testdata/texts.json by fixed rules; see rows.py.",
    "eval": evals,
    "pool": rows,
}
(here / "rows.json").write_text(json.dumps(out, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
print(len(evals), "evaluation rows,", len(rows), "pool rows")
