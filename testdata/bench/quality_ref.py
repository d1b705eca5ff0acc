#!/usr/bin/python3
"""Helpers of quality.sh, and its reference column, with Debian's python3-sklearn and python3-numpy.

  quality_ref.py split-debian SECTIONS.jsonl SECTION OUTDIR [--target-rows 40]
  quality_ref.py split-gpteacher GPTEACHER_DIR CATEGORY OUTDIR [--target-rows 40]
      write OUTDIR/pool.jsonl and OUTDIR/target.jsonl: TARGET_ROWS rows of the class, drawn with
      random.Random(1), are the target; every other row is the pool. GPTeacher's JSON arrays become
      JSONL rows with an "id" (file:index) and a "category" field (the file's first word).
  quality_ref.py precision POOL LABEL CLASS K RUN...
      print the class's share of the pool (the precision of a random pick), then for each sluice run
      folder the share of its kept rows (scores.jsonl, kept, at most K) of that class, counted over K.
  quality_ref.py reference POOL TARGET FIELDS LABEL CLASS K
      print precision@K as above for bm25 sum, bm25 max, tfidf sum, tfidf max computed here, on
      scikit-learn's tokens (CountVectorizer(stop_words='english').build_analyzer(), the fields joined
      by newlines): TF-IDF by scikit-learn's TfidfTransformer (smooth idf, raw tf, l2 norm, fitted on
      the pool), cosine to each target row; BM25 written with NumPy as score/testdata/bm25_ref.py does
      (Robertson and Zaragoza 2009, k1 = 1.2, b = 0.75, each target row a binary query). Ranked by
      score, ties in pool order; rows sharing no term with the target are never picked.
"""
import json
import os
import random
import sys


def split_debian(src, section, out, n):
    rows = [json.loads(l) for l in open(src, encoding="utf-8") if l.strip()]
    write_split(rows, lambda r: r["section"] == section, out, n)


def split_gpteacher(src, category, out, n):
    rows = []
    for name in sorted(os.listdir(src)):
        if not name.endswith(".json"):
            continue
        cat = name.split("-")[0]
        for i, r in enumerate(json.load(open(os.path.join(src, name), encoding="utf-8"))):
            r["id"] = f"{name}:{i}"
            r["category"] = cat
            rows.append(r)
    if category not in {r["category"] for r in rows}:
        raise SystemExit(f"unknown category {category!r}")
    write_split(rows, lambda r: r["category"] == category, out, n)


def write_split(rows, mine, out, n):
    idx = [i for i, r in enumerate(rows) if mine(r)]
    target = set(random.Random(1).sample(idx, n))
    os.makedirs(out, exist_ok=True)
    with open(os.path.join(out, "pool.jsonl"), "w", encoding="utf-8") as p, \
            open(os.path.join(out, "target.jsonl"), "w", encoding="utf-8") as t:
        for i, r in enumerate(rows):
            (t if i in target else p).write(json.dumps(r, ensure_ascii=False) + "\n")


def labels(pool, label):
    ids, labs = [], []
    for line in open(pool, encoding="utf-8"):
        r = json.loads(line)
        ids.append(r["id"])
        labs.append(r[label])
    return ids, labs


def precision(pool, label, cls, k, runs):
    ids, labs = labels(pool, label)
    of = dict(zip(ids, labs))
    out = [sum(l == cls for l in labs) / len(labs)]
    for run in runs:
        hits = kept = 0
        for line in open(os.path.join(run, "scores.jsonl"), encoding="utf-8"):
            r = json.loads(line)
            if r["kept"]:
                kept += 1
                hits += of[r["id"]] == cls
        if kept > k:
            raise SystemExit(f"{run}: {kept} rows kept, want at most {k}")
        out.append(hits / k)
    print(" ".join(f"{x:.4f}" for x in out))


def reference(pool, target, fields, label, cls, k):
    import numpy
    from sklearn.feature_extraction.text import CountVectorizer, TfidfTransformer

    fields = fields.split(",")
    text = lambda r: "\n".join(str(r.get(f) or "") for f in fields)
    prow = [json.loads(l) for l in open(pool, encoding="utf-8")]
    trow = [json.loads(l) for l in open(target, encoding="utf-8")]
    labs = numpy.array([r[label] == cls for r in prow])
    cv = CountVectorizer(stop_words="english")
    tf = cv.fit_transform(text(r) for r in prow).tocsr().astype(numpy.float64)  # pool x vocab
    q = cv.transform(text(r) for r in trow).tocsr()                            # target x vocab
    tfidf = TfidfTransformer(smooth_idf=True, sublinear_tf=False, norm="l2").fit(tf)
    cos = (tfidf.transform(q) @ tfidf.transform(tf).T).toarray()               # target x pool

    n = tf.shape[0]
    df = numpy.bincount(tf.indices, minlength=tf.shape[1])
    idf = numpy.log1p((n - df + 0.5) / (df + 0.5))
    lens = numpy.asarray(tf.sum(axis=1)).ravel()
    k1, b = 1.2, 0.75
    norm = k1 * (1 - b + b * lens / lens.mean())
    w = tf.copy()
    rowof = numpy.repeat(numpy.arange(n), numpy.diff(tf.indptr))
    w.data = tf.data * (k1 + 1) / (tf.data + norm[rowof]) * idf[tf.indices]
    qb = q.copy()
    qb.data[:] = 1.0
    bm = (qb @ w.T).toarray()                                                  # target x pool
    shares = ((qb @ (tf > 0).astype(numpy.float64).T).toarray() > 0).any(axis=0)

    out = []
    for s in (bm.sum(axis=0), bm.max(axis=0), cos.sum(axis=0), cos.max(axis=0)):
        order = numpy.argsort(-s, kind="stable")
        top = order[shares[order]][:k]
        out.append(labs[top].sum() / k)
    print(" ".join(f"{x:.4f}" for x in out))


def main(argv):
    def opt(name, default):
        if name in argv:
            i = argv.index(name)
            v = argv[i + 1]
            del argv[i : i + 2]
            return int(v)
        return default

    if not argv:
        raise SystemExit(__doc__)
    n = opt("--target-rows", 40)
    cmd, args = argv[0], argv[1:]
    if cmd == "split-debian":
        split_debian(*args[:3], n)
    elif cmd == "split-gpteacher":
        split_gpteacher(*args[:3], n)
    elif cmd == "precision":
        precision(args[0], args[1], args[2], int(args[3]), args[4:])
    elif cmd == "reference":
        reference(*args[:5], int(args[5]))
    else:
        raise SystemExit(__doc__)


main(sys.argv[1:])
