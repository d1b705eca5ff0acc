#!/usr/bin/python3
"""Reference case folding: casefold.json, Unicode's simple case folding taken from Debian's copy of
the Unicode Character Database (package unicode-data, /usr/share/unicode/CaseFolding.txt).

"fold" lists every code point that simple case folding changes, with its folding: the entries
of status C (common) and S (simple); F (full) and T (Turkic) entries are left out. Code points
not listed fold to themselves. The file's version line is recorded; Go's unicode tables must be
of the same version for the check to be exact.
Run with Debian's python3 and unicode-data: /usr/bin/python3 casefold.py
"""
import json
import pathlib
import platform

here = pathlib.Path(__file__).resolve().parent
src = pathlib.Path("/usr/share/unicode/CaseFolding.txt")
lines = src.read_text(encoding="utf-8").splitlines()
version = lines[0].lstrip("# ").strip()
fold = {}
for line in lines:
    line = line.split("#", 1)[0].strip()
    if not line:
        continue
    code, status, mapping = [f.strip() for f in line.split(";")[:3]]
    if status in ("C", "S"):
        assert int(code, 16) not in fold
        fold[int(code, 16)] = int(mapping, 16)

out = {
    "generator": "casefold.py",
    "python": platform.python_version(),
    "source": str(src),
    "version": version,
    "fold": [[k, v] for k, v in sorted(fold.items())],
}
(here / "casefold.json").write_text(json.dumps(out, separators=(",", ":")) + "\n", encoding="utf-8")
print(len(fold), "simple foldings from", version)
