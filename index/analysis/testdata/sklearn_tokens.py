#!/usr/bin/python3
"""Reference tokens of scikit-learn's default analyzer with stop_words='english'.

Takes texts nobody on the project wrote: the texts of score/testdata/texts.json (from scikit-learn's
and others' documentation), every 25th non-blank line of Isaac Newton's Opticks as Go ships it
(/usr/local/go/src/testdata/Isaac.Newton-Opticks.txt), and the lines holding non-ASCII characters of
a few of Go's own test files (Unicode test strings: Greek capital sigma, Turkish dotted I, CJK, ...).
Runs CountVectorizer(stop_words='english').build_analyzer() on each and writes
sklearn_tokens.json: versions, the stop list, and per text its source, the text and its tokens.

  /usr/bin/python3 index/analysis/testdata/sklearn_tokens.py      (Debian's python3-sklearn)

With --shared DATA OUT it writes instead, to OUT (JSONL, not committed: it copies the shared data),
{"text", "tokens"} for every text field of every row of the shared corpora under DATA, the fields
TestSklearnShared compares when SLUICE_SKLEARN_SHARED=OUT is set.
"""
import glob
import json
import os
import pathlib
import platform
import sys
import unicodedata

import sklearn
from sklearn.feature_extraction.text import ENGLISH_STOP_WORDS, CountVectorizer

here = pathlib.Path(__file__).resolve().parent
root = here.parent.parent.parent
goroot = pathlib.Path("/usr/local/go")
analyze = CountVectorizer(stop_words="english").build_analyzer()


def shared(data, out):
    fields = ("prompt", "completion", "instruction", "input", "response")
    n = 0
    with open(out, "w", encoding="utf-8") as w:
        def emit(row):
            nonlocal n
            texts = [row.get(f) for f in fields]
            texts += [x.get(k) for x in row.get("instances") or [] for k in ("input", "output")]
            for t in texts:
                if isinstance(t, str) and t:
                    w.write(json.dumps({"text": t, "tokens": analyze(t)}, ensure_ascii=False) + "\n")
                    n += 1
        for pattern in ("t0-train-50k-per-template/data_per_template/*.jsonl", "self-instruct-human-eval/*.jsonl"):
            for name in sorted(glob.glob(os.path.join(data, pattern))):
                for line in open(name, encoding="utf-8"):
                    if line.strip():
                        emit(json.loads(line))
        for name in sorted(glob.glob(os.path.join(data, "gpteacher", "*.json"))):
            for row in json.load(open(name, encoding="utf-8")):
                emit(row)
    print(f"{n} fields written to {out}")


if len(sys.argv) == 4 and sys.argv[1] == "--shared":
    shared(sys.argv[2], sys.argv[3])
    sys.exit(0)

texts = []
docs = json.loads((root / "score" / "testdata" / "texts.json").read_text(encoding="utf-8"))
for d in docs["pool"] + docs["targets"]:
    texts.append(("score/testdata/texts.json: " + d["source"], d["text"]))
opticks = goroot / "src" / "testdata" / "Isaac.Newton-Opticks.txt"
lines = [l for l in opticks.read_text(encoding="utf-8").splitlines() if l.strip()]
for i in range(0, len(lines), 25):
    texts.append((f"go/src/testdata/Isaac.Newton-Opticks.txt (non-blank line {i + 1})", lines[i]))
for rel in ("src/strings/strings_test.go", "src/bytes/bytes_test.go", "src/unicode/letter_test.go",
            "src/unicode/utf8/utf8_test.go", "src/encoding/json/fold_test.go", "src/fmt/fmt_test.go",
            "src/regexp/find_test.go", "src/runtime/print_quoted_test.go"):
    for n, line in enumerate((goroot / rel).read_text(encoding="utf-8").splitlines(), 1):
        if not line.isascii():
            texts.append((f"go/{rel}:{n}", line.strip()))

out = {
    "generator": "sklearn_tokens.py",
    "versions": {"python": platform.python_version(), "sklearn": sklearn.__version__,
                 "unicode": unicodedata.unidata_version},
    "analyzer": "CountVectorizer(stop_words='english').build_analyzer()",
    "stop_words": sorted(ENGLISH_STOP_WORDS),
    "texts": [{"source": s, "text": t, "tokens": analyze(t)} for s, t in texts],
}
(here / "sklearn_tokens.json").write_text(json.dumps(out, ensure_ascii=False, indent=1) + "\n", encoding="utf-8")
print(len(texts), "texts; sklearn", sklearn.__version__)
