#!/usr/bin/python3
"""Python's character properties behind scikit-learn's default analyzer, for every code point.

Writes sklearn_unicode.json with, as [first, last] ranges of code points:
  assigned  general category other than Cn (unassigned) in this Python's Unicode version;
  word      what re's \\w matches in a str pattern (the token pattern (?u)\\b\\w\\w+\\b);
  skip      what str.lower() skips when it looks for the Final_Sigma context (case-ignorable);
  cased     what ends that look and counts as cased (cased and not case-ignorable);
and lower: [code point, [its str.lower() as code points]] wherever that differs from the code point.
The two Final_Sigma sets are read off str.lower() itself: in "AΣ" + c + "B" the sigma stays σ when c is
skipped or cased; in c + "Σ" it becomes ς only when c is cased and not skipped.

  /usr/bin/python3 index/analysis/testdata/sklearn_unicode.py      (Debian's Python 3.11)
"""
import json
import pathlib
import platform
import re
import sys
import unicodedata

here = pathlib.Path(__file__).resolve().parent
word = re.compile(r"\w")


def ranges(pred):
    out, start = [], None
    for cp in range(sys.maxunicode + 2):
        on = cp <= sys.maxunicode and pred(cp)
        if on and start is None:
            start = cp
        elif not on and start is not None:
            out.append([start, cp - 1])
            start = None
    return out


def skip_or_cased(cp):
    return ("AΣ" + chr(cp) + "B").lower()[1] == "σ"


def cased_stop(cp):
    return (chr(cp) + "Σ").lower()[-1] == "ς"


out = {
    "generator": "sklearn_unicode.py",
    "versions": {"python": platform.python_version(), "unicode": unicodedata.unidata_version},
    "assigned": ranges(lambda cp: unicodedata.category(chr(cp)) != "Cn"),
    "word": ranges(lambda cp: word.fullmatch(chr(cp)) is not None),
    "skip": ranges(lambda cp: skip_or_cased(cp) and not cased_stop(cp)),
    "cased": ranges(cased_stop),
    "lower": [[cp, [ord(c) for c in chr(cp).lower()]]
              for cp in range(sys.maxunicode + 1) if chr(cp).lower() != chr(cp)],
}
(here / "sklearn_unicode.json").write_text(json.dumps(out, separators=(",", ":")) + "\n", encoding="utf-8")
print({k: len(v) for k, v in out.items() if isinstance(v, list)})
