#!/usr/bin/python3
"""Reference files and values for package vectors, written by NumPy.

Run with Debian's python3-numpy: /usr/bin/python3 make_fixtures.py
It rewrites every fixture in this folder; the Go tests read them and need no
Python.

Inputs are seeded random matrices (numpy.random.default_rng, standard
normal), not hand-made values; every expected value below is what NumPy
computes or writes:

  npy/*.npy          files written by numpy.save / numpy.lib.format.write_array
                     (versions 1.0, 2.0 and 3.0 headers), good ones and ones
                     the reader must refuse (big-endian, Fortran order,
                     float64, int32, 1-D, 3-D, NaN, inf, truncated, two
                     arrays in one file, structured dtype);
  npy_values.json    for each good file its shape, dtype and every value as
                     float.hex of the float32 NumPy holds (exact);
  half.json          SHA-256 of the 65,536 float32 values NumPy gives for
                     every float16 bit pattern (astype(float32)), in bit
                     pattern order, little-endian;
  cos_targets.npy,   target and pool vectors; cosine_ref.json holds, per pool
  cos_pool.npy,      row, NumPy's float64 cosine to the nearest target row
  cos_pool_f16.npy,  (max over targets, argmax: first of equal maxima) and
  cos_pool.jsonl     to the centroid (mean of the unit-length target rows);
                     the same for the float16 pool;
  words.vec,         a word-vector text file ("count dim" header) and the mean
  words_ref.json     (plain and weighted) of its vectors over a few rows of
                     words, computed by NumPy in float64 and rounded to
                     float32.
"""
import hashlib
import io
import json
import pathlib

import numpy as np

here = pathlib.Path(__file__).resolve().parent
npy = here / "npy"
npy.mkdir(exist_ok=True)
rng = np.random.default_rng(20240611)


def save(name, a, version=None):
    with open(npy / name, "wb") as f:
        if version is None:
            np.save(f, a)
        else:
            np.lib.format.write_array(f, a, version=version)


def hexes(a):
    return [[float(x).hex() for x in row] for row in a.astype(np.float64)]


values = {}

# Good files.
f32 = rng.standard_normal((6, 5)).astype("<f4")
f32[1, 2] = -0.0
f32[2, 3] = np.float32(1.4e-45)  # smallest float32 subnormal
f32[3, 4] = np.finfo(np.float32).max
f32[4, 0] = np.finfo(np.float32).tiny  # smallest normal
for name, version in [("f32_v1.npy", None), ("f32_v2.npy", (2, 0)), ("f32_v3.npy", (3, 0))]:
    save(name, f32, version)
    values[name] = {"shape": list(f32.shape), "descr": "<f4", "hex": hexes(f32)}

f16 = rng.standard_normal((5, 8)).astype("<f2")
f16[0, 0] = np.float16(2.0**-24)  # smallest float16 subnormal
f16[0, 1] = np.float16(-(2.0**-24) * 1023)  # largest subnormal, negative
f16[0, 2] = np.float16(65504)  # largest float16
f16[0, 3] = -0.0
f16[0, 4] = np.finfo(np.float16).tiny  # smallest normal
save("f16_v1.npy", f16)
values["f16_v1.npy"] = {"shape": list(f16.shape), "descr": "<f2", "hex": hexes(f16.astype(np.float32))}
save("f16_v2.npy", f16, (2, 0))
values["f16_v2.npy"] = values["f16_v1.npy"]

empty = np.zeros((0, 4), dtype="<f4")
save("f32_empty.npy", empty)
values["f32_empty.npy"] = {"shape": [0, 4], "descr": "<f4", "hex": []}

# A Fortran-order array of one column has C-order bytes too.
col = np.asfortranarray(rng.standard_normal((3, 1)).astype("<f4"))
buf = io.BytesIO()
np.lib.format.write_array_header_1_0(buf, {"descr": "<f4", "fortran_order": True, "shape": (3, 1)})
with open(npy / "f32_fortran_column.npy", "wb") as f:
    f.write(buf.getvalue())
    f.write(col.tobytes(order="F"))
assert np.array_equal(np.load(npy / "f32_fortran_column.npy"), col)
values["f32_fortran_column.npy"] = {"shape": [3, 1], "descr": "<f4", "hex": hexes(col)}

# Files to refuse.
save("bad_big_endian.npy", f32.astype(">f4"))
save("bad_fortran.npy", np.asfortranarray(f32))
save("bad_float64.npy", f32.astype("<f8"))
save("bad_int32.npy", np.arange(12, dtype="<i4").reshape(3, 4))
save("bad_1d.npy", f32[0])
save("bad_3d.npy", f32.reshape(3, 2, 5))
save("bad_structured.npy", np.zeros((2,), dtype=[("x", "<f4"), ("y", "<f4")]))
nan32 = f32.copy()
nan32[2, 1] = np.nan
save("bad_nan_f32.npy", nan32)
inf32 = f32.copy()
inf32[5, 4] = -np.inf
save("bad_inf_f32.npy", inf32)
nan16 = f16.copy()
nan16[3, 6] = np.nan
save("bad_nan_f16.npy", nan16)
inf16 = f16.copy()
inf16[1, 0] = np.inf
save("bad_inf_f16.npy", inf16)
save("bad_zero_dim.npy", np.zeros((4, 0), dtype="<f4"))
whole = (npy / "f32_v1.npy").read_bytes()
(npy / "bad_truncated.npy").write_bytes(whole[:-3])
with open(npy / "bad_two_arrays.npy", "wb") as f:
    np.save(f, f32)
    np.save(f, f32)
(npy / "bad_header.npy").write_bytes(whole.replace(b"'shape'", b"'shope'"))
(npy / "bad_magic.npy").write_bytes(b"\x93NUMPX" + whole[6:])

with open(here / "npy_values.json", "w") as f:
    json.dump({"numpy": np.__version__, "files": values}, f, indent=1)
    f.write("\n")

# Every float16 bit pattern to float32.
halves = np.arange(65536, dtype="<u2").view("<f2").astype("<f4")
with open(here / "half.json", "w") as f:
    json.dump(
        {
            "numpy": np.__version__,
            "sha256": hashlib.sha256(halves.tobytes()).hexdigest(),
            "nan_0x7c01": int(halves.view("<u4")[0x7C01]),
            "subnormal_0x0001": float(halves[1]).hex(),
            "subnormal_0x83ff": float(halves[0x83FF]).hex(),
        },
        f,
        indent=1,
    )
    f.write("\n")

# Cosines: 7 targets (row 5 repeats row 2, so row 2 must win ties), 300 pool
# rows (more than one block of 256), pool row 10 equal to target 2, pool row
# 20 three times target 4.
dim = 16
targets = rng.standard_normal((7, dim)).astype("<f4")
targets[5] = targets[2]
pool = rng.standard_normal((300, dim)).astype("<f4")
pool[10] = targets[2]
pool[20] = targets[4] * np.float32(3)
pool16 = pool.astype("<f2")
np.save(here / "cos_targets.npy", targets)
np.save(here / "cos_pool.npy", pool)
np.save(here / "cos_pool_f16.npy", pool16)
with open(here / "cos_pool.jsonl", "w") as f:
    for i, row in enumerate(pool):
        rid = f"row-{i}" if i % 2 == 0 else i
        f.write(json.dumps({"id": rid, "vector": [float(x) for x in row]}) + "\n")


def cosines(p, t):
    p = p.astype(np.float64)
    t = t.astype(np.float64)
    pn = p / np.linalg.norm(p, axis=1, keepdims=True)
    tn = t / np.linalg.norm(t, axis=1, keepdims=True)
    c = pn @ tn.T
    centroid = tn.mean(axis=0)
    cen = pn @ (centroid / np.linalg.norm(centroid))
    return {
        "max": [float(x).hex() for x in c.max(axis=1)],
        "argmax": [int(x) for x in c.argmax(axis=1)],
        "centroid": [float(x).hex() for x in cen],
    }


with open(here / "cosine_ref.json", "w") as f:
    json.dump({"numpy": np.__version__, "f32": cosines(pool, targets), "f16": cosines(pool16, targets)}, f, indent=1)
    f.write("\n")

# Word vectors: 12 words, 6 dimensions, values printed as NumPy's shortest
# round-trip decimal for float32.
words = ["the", "cat", "sat", "on", "mat", "dog", "ran", "fast", "über", "naïve", "x", "42"]
wv = rng.standard_normal((len(words), 6)).astype("<f4")
with open(here / "words.vec", "w", encoding="utf-8") as f:
    f.write(f"{len(words)} 6\n")
    for w, v in zip(words, wv):
        text = [np.format_float_positional(x, unique=True, trim="-") for x in v]
        assert all(np.float32(float(s)) == x for s, x in zip(text, v))
        f.write(w + " " + " ".join(text) + " \n")  # a trailing space, as many writers leave
index = {w: i for i, w in enumerate(words)}
idf = {w: float(np.float64(1 + (i % 5) * 0.37)) for i, w in enumerate(words)}
rows = [
    ["the", "cat", "sat", "on", "the", "mat"],
    ["dog", "ran", "fast", "unknown", "words", "dog"],
    ["über", "naïve", "42"],
    ["x"],
    ["none", "of", "these"],
]
ref = []
for row in rows:
    known = [w for w in row if w in index]
    entry = {"words": row, "known": len(known)}
    if known:
        v = wv[[index[w] for w in known]].astype(np.float64)
        mean = np.zeros(6)
        for r in v:  # sum in word order, as the Go code does
            mean = mean + r
        mean = mean / len(known)
        wts = np.array([idf[w] for w in known])
        wsum = np.zeros(6)
        for wt, r in zip(wts, v):
            wsum = wsum + wt * r
        tot = 0.0
        for wt in wts:
            tot += wt
        entry["mean"] = [float(x).hex() for x in mean.astype(np.float32)]
        entry["weighted"] = [float(x).hex() for x in (wsum / tot).astype(np.float32)]
    ref.append(entry)
with open(here / "words_ref.json", "w", encoding="utf-8") as f:
    json.dump({"numpy": np.__version__, "idf": idf, "rows": ref}, f, indent=1, ensure_ascii=False)
    f.write("\n")
