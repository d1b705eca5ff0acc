#!/usr/bin/python3
"""Helpers of quality.sh, its reference columns and the inputs of its model-based methods, with
Debian's python3-sklearn 1.2.1, python3-scipy and python3-numpy.

  quality_ref.py split-debian SECTIONS.jsonl SECTION OUTDIR [--target-rows 40]
  quality_ref.py split-gpteacher GPTEACHER_DIR CATEGORY OUTDIR [--target-rows 40]
      write OUTDIR/pool.jsonl and OUTDIR/target.jsonl: TARGET_ROWS rows of the class, drawn with
      random.Random(1), are the target; every other row is the pool. GPTeacher's JSON arrays become
      JSONL rows with an "id" (file:index) and a "category" field (the file's first word).
  quality_ref.py count POOL LABEL CLASS
      print the number of pool rows of the class.
  quality_ref.py precision POOL LABEL CLASS K NAME=RUN...
      print base=SHARE (the class's share of the pool, a random pick's precision), then for each
      sluice run folder NAME=P NAME.flops=F: the share of its kept rows (scores.jsonl, kept, at most
      K) of the class, counted over K, and the selection FLOPs of its ledger.json.
  quality_ref.py tables RESULTS ANALYZER...
      print quality.sh's tables (the README's) in markdown from its results file: a line per split,
      name TAB pool rows TAB K TAB the NAME=VALUE fields of precision and reference.
  quality_ref.py reference POOL TARGET FIELDS LABEL CLASS K [--external DIR]
      print NAME=P for precision@K computed here, on scikit-learn's tokens
      (CountVectorizer(stop_words='english').build_analyzer(), the fields joined by newlines):
        ref.bm25.sum, ref.bm25.max, ref.tfidf.sum, ref.tfidf.max
          TF-IDF by scikit-learn's TfidfTransformer (smooth idf, raw tf, l2 norm, fitted on the
          pool), cosine to each target row; BM25 written with NumPy as score/testdata/bm25_ref.py
          does (Robertson and Zaragoza 2009, k1 = 1.2, b = 0.75, each target row a binary query);
          sum adds the target rows' scores (the set as one query), max takes the best.
        alt.bm25.rowmax, alt.bm25.bound, alt.bm25.z
          other ways to add up the target rows' BM25 scores, so that no target row outweighs the
          rest: each target row's scores divided by its best score over the pool (rowmax), by the
          score no pool row can exceed, (k1 + 1) x the sum of its terms' idf (bound), or
          standardised over the pool, (s - mean) / sd (z). Averaging instead of adding ranks as sum.
        grid.K1.B.sum, grid.K1.B.max
          BM25 sum and max for k1 in 0.6, 1.2, 2.0 and b in 0.3, 0.75, 1.0.
      Ranked by score, ties in pool order; rows sharing no term with the target are never picked.
      With --external DIR, also write the inputs of sluice's vectors and scores methods there,
      made from the same counts, and print their declared selection FLOPs (FLOPs = 2 x multiply-adds
      of the matrix products and factorizations, counted from the shapes; making the counts and the
      TF-IDF weights is not counted):
        DIR/pool.npy, DIR/target.npy: LSA embeddings, float32, one per row in input order:
          TfidfTransformer(sublinear_tf=True) fitted on the pool, then TruncatedSVD(128 components,
          randomized, n_iter=5, 10 oversamples, random_state=0) fitted on the pool; lsa.flops=F
          counts the SVD's 12 sparse products, its LU and QR steps and the dense SVD of the small
          matrix, and projecting pool and target rows. A row with no term (empty, or stop words
          only) gets the unit vector of the last component instead of zeros, which sluice refuses.
        DIR/scores.jsonl: {"id", "score"} per pool row, the decision function of a
          LogisticRegression (C = 1, lbfgs) on the same TF-IDF, trained on the target rows against
          as many pool rows drawn with numpy.random.default_rng(1); lr.flops=F counts one loss and
          gradient evaluation (two sparse products) per lbfgs iteration and the scoring product.
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


def count(pool, label, cls):
    print(sum(l == cls for l in labels(pool, label)[1]))


def precision(pool, label, cls, k, runs):
    ids, labs = labels(pool, label)
    of = dict(zip(ids, labs))
    out = [f"base={sum(l == cls for l in labs) / len(labs):.6f}"]
    for arg in runs:
        name, run = arg.split("=", 1)
        hits = kept = 0
        for line in open(os.path.join(run, "scores.jsonl"), encoding="utf-8"):
            r = json.loads(line)
            if r["kept"]:
                kept += 1
                hits += of[r["id"]] == cls
        if kept > k:
            raise SystemExit(f"{run}: {kept} rows kept, want at most {k}")
        flops = json.load(open(os.path.join(run, "ledger.json"), encoding="utf-8"))["selection_flops"]
        out.append(f"{name}={hits / k:.6f} {name}.flops={flops:.6g}")
    print(" ".join(out))


def bm25_weights(tf, k1, b):
    """Each (row, term) cell's BM25 weight: idf x tf (k1 + 1) / (tf + k1 (1 - b + b len/avglen))."""
    import numpy

    n = tf.shape[0]
    df = numpy.bincount(tf.indices, minlength=tf.shape[1])
    idf = numpy.log1p((n - df + 0.5) / (df + 0.5))
    lens = numpy.asarray(tf.sum(axis=1)).ravel()
    norm = k1 * (1 - b + b * lens / lens.mean())
    w = tf.copy()
    rowof = numpy.repeat(numpy.arange(n), numpy.diff(tf.indptr))
    w.data = tf.data * (k1 + 1) / (tf.data + norm[rowof]) * idf[tf.indices]
    return w, idf


def reference(pool, target, fields, label, cls, k, external):
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

    qb = q.copy().astype(numpy.float64)
    qb.data[:] = 1.0
    shares = ((qb @ (tf > 0).astype(numpy.float64).T).toarray() > 0).any(axis=0)

    def prec(s):
        order = numpy.argsort(-s, kind="stable")
        top = order[shares[order]][:k]
        return labs[top].sum() / k

    out = {}
    for k1 in (0.6, 1.2, 2.0):
        for b in (0.3, 0.75, 1.0):
            w, idf = bm25_weights(tf, k1, b)
            bm = (qb @ w.T).toarray()                                          # target x pool
            out[f"grid.{k1}/{b}.sum"] = prec(bm.sum(axis=0))
            out[f"grid.{k1}/{b}.max"] = prec(bm.max(axis=0))
            if (k1, b) != (1.2, 0.75):
                continue
            out["ref.bm25.sum"] = out[f"grid.{k1}/{b}.sum"]
            out["ref.bm25.max"] = out[f"grid.{k1}/{b}.max"]
            best = bm.max(axis=1, keepdims=True)
            out["alt.bm25.rowmax"] = prec((bm / numpy.where(best > 0, best, 1)).sum(axis=0))
            bound = (k1 + 1) * (qb @ idf)[:, None]
            out["alt.bm25.bound"] = prec((bm / numpy.where(bound > 0, bound, 1)).sum(axis=0))
            sd = bm.std(axis=1, keepdims=True)
            z = (bm - bm.mean(axis=1, keepdims=True)) / numpy.where(sd > 0, sd, 1)
            out["alt.bm25.z"] = prec(z.sum(axis=0))
    out["ref.tfidf.sum"] = prec(cos.sum(axis=0))
    out["ref.tfidf.max"] = prec(cos.max(axis=0))
    line = " ".join(f"{n}={v:.6f}" for n, v in out.items())
    if external:
        line += " " + make_external(tf, q, [r["id"] for r in prow], external)
    print(line)


def make_external(tf, q, ids, out):
    """LSA vectors and logistic-regression scores for sluice's vectors and scores methods."""
    import numpy
    from sklearn.decomposition import TruncatedSVD
    from sklearn.feature_extraction.text import TfidfTransformer
    from sklearn.linear_model import LogisticRegression

    os.makedirs(out, exist_ok=True)
    tt = TfidfTransformer(sublinear_tf=True).fit(tf)
    xp, xt = tt.transform(tf), tt.transform(q.astype(numpy.float64))
    n, v = xp.shape
    dims, over, iters = 128, 10, 5
    svd = TruncatedSVD(n_components=dims, algorithm="randomized", n_iter=iters, n_oversamples=over,
                       random_state=0).fit(xp)
    for name, x in (("pool", xp), ("target", xt)):
        e = svd.transform(x).astype(numpy.float32)
        e[~e.any(axis=1), -1] = 1  # no term: sluice refuses a zero vector; the last, weakest axis
        numpy.save(os.path.join(out, name + ".npy"), e)
    l = dims + over
    # sklearn's randomized_svd: M @ Q once, then per power iteration LU, M.T @ Q, LU, M @ Q; QR;
    # B = Q.T @ M; the SVD of B (l x v); then U of B back through Q. Multiply-adds:
    macs = (2 + 2 * iters) * xp.nnz * l                      # sparse products
    macs += iters * (n * l * l + v * l * l)                  # LU of n x l and v x l, about m l^2 each
    macs += 2 * n * l * l                                    # QR of n x l (Householder, 2 m l^2)
    macs += 2 * v * l * l + 11 * l ** 3                      # SVD of the l x v matrix B
    macs += n * l * l                                        # Q @ U
    macs += (xp.nnz + xt.nnz) * dims                         # transform pool and target
    lsa = 2 * macs

    rng = numpy.random.default_rng(1)
    neg = rng.choice(n, size=xt.shape[0], replace=False)
    import scipy.sparse
    x = scipy.sparse.vstack([xt, xp[neg]]).tocsr()
    y = numpy.r_[numpy.ones(xt.shape[0]), numpy.zeros(len(neg))]
    lr = LogisticRegression(C=1.0, solver="lbfgs", max_iter=1000).fit(x, y)
    s = lr.decision_function(xp)
    with open(os.path.join(out, "scores.jsonl"), "w", encoding="utf-8") as f:
        for i, v_ in zip(ids, s):
            f.write(json.dumps({"id": i, "score": float(v_)}) + "\n")
    lrf = 2 * (2 * x.nnz * int(lr.n_iter_[0]) + xp.nnz)
    return f"lsa.flops={lsa:.6g} lr.flops={lrf:.6g}"


def tables(results, analyzers):
    """The README's tables, in markdown, from quality.sh's results file."""
    rows = []
    for line in open(results, encoding="utf-8"):
        name, pool, k, kv = line.rstrip("\n").split("\t")
        v = dict(x.split("=", 1) for x in kv.split())
        rows.append((name, int(pool), int(k), {a: float(b) for a, b in v.items()}))
    corpora = list(dict.fromkeys(n.split()[0] for n, _, _, _ in rows))
    groups = [(c, [r for r in rows if r[0].split()[0] == c]) for c in corpora] + [("all", rows)]
    pct = lambda x: f"{100 * x:.1f} %"
    mean = lambda xs: sum(xs) / len(xs)
    sup = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")

    def flops(x):
        e = len(str(int(x))) - 1
        m = x / 10 ** e
        if round(m, 1) >= 10:
            m, e = m / 10, e + 1
        return f"{m:.1f} × 10{str(e).translate(sup)}"

    methods = [("bm25 sum", "english.bm25.sum"), ("bm25 max", "english.bm25.max"),
               ("tfidf sum", "english.tfidf.sum"), ("tfidf max", "english.tfidf.max"),
               ("ngram", "english.ngram"), ("LSA vectors sum", "english.vectors.sum"),
               ("LSA vectors max", "english.vectors.max"), ("LR scores", "english.scores")]
    methods = [(t, m) for t, m in methods if m in rows[0][3]]
    refs = [("ref. bm25 sum", "ref.bm25.sum"), ("ref. tfidf sum", "ref.tfidf.sum")]
    cols = methods + refs

    print("#### Every method, split by split (precision@K, english analyzer)\n")
    print("| split | pool rows | K | base rate | " + " | ".join(t for t, _ in cols) + " |")
    print("|---|---|---|---|" + "---|" * len(cols))
    for name, pool, k, v in rows:
        print(f"| {name} | {pool} | {k} | {pct(v['base'])} | " + " | ".join(pct(v[m]) for _, m in cols) + " |")
    for g, rs in groups:
        print(f"| **mean {g}** ({len(rs)}) | | | {pct(mean([r[3]['base'] for r in rs]))} | "
              + " | ".join(pct(mean([r[3][m] for r in rs])) for _, m in cols) + " |")
    for g, rs in groups[:-1]:
        print(f"| splits of {g} at or below the base rate | | | | "
              + " | ".join(str(sum(r[3][m] <= r[3]["base"] for r in rs)) for _, m in cols) + " |")

    print("\n#### Selection cost against quality (means over each corpus's splits)\n")
    print("| method | " + " | ".join(f"{g} precision | {g} selection FLOPs" for g, _ in groups[:-1]) + " |")
    print("|---|" + "---|---|" * (len(groups) - 1))
    for t, m in methods:
        print(f"| {t} | " + " | ".join(f"{pct(mean([r[3][m] for r in rs]))} | {flops(mean([r[3][m + '.flops'] for r in rs]))}"
                                       for _, rs in groups[:-1]) + " |")

    print("\n#### Analyzers (bm25 and tfidf, means over each corpus's splits)\n")
    print("| method | corpus | " + " | ".join(analyzers) + " | reference |")
    print("|---|---|" + "---|" * (len(analyzers) + 1))
    for combo in ("bm25.sum", "bm25.max", "tfidf.sum", "tfidf.max"):
        for g, rs in groups:
            ms = [mean([r[3][f"{a}.{combo}"] for r in rs]) for a in analyzers] + [mean([r[3][f"ref.{combo}"] for r in rs])]
            best = max(ms[:-1])
            cells = [f"**{pct(x)}**" if round(x, 3) == round(best, 3) else pct(x) for x in ms[:-1]] + [pct(ms[-1])]
            print(f"| {combo.replace('.', ' ')} | {g} | " + " | ".join(cells) + " |")

    alts = [("sum", "ref.bm25.sum"), ("rowmax", "alt.bm25.rowmax"), ("bound", "alt.bm25.bound"),
            ("z", "alt.bm25.z"), ("max", "ref.bm25.max")]
    print("\n#### Adding up the target rows' BM25 scores (reference, scikit-learn tokens)\n")
    print("| corpus | " + " | ".join(t for t, _ in alts) + " |")
    print("|---|" + "---|" * len(alts))
    for g, rs in groups:
        print(f"| mean {g} | " + " | ".join(pct(mean([r[3][m] for r in rs])) for _, m in alts) + " |")
    for g, rs in groups[:-1]:
        print(f"| {g}: splits better / worse than sum | " + " | ".join(
            f"{sum(r[3][m] > r[3]['ref.bm25.sum'] + 1e-9 for r in rs)} / {sum(r[3][m] < r[3]['ref.bm25.sum'] - 1e-9 for r in rs)}"
            for _, m in alts) + " |")
    for g, rs in groups[:-1]:
        print(f"| {g}: splits at or below the base rate | " + " | ".join(
            str(sum(r[3][m] <= r[3]["base"] for r in rs)) for _, m in alts) + " |")

    print("\n#### BM25's k1 and b (reference, scikit-learn tokens; means over each corpus's splits)\n")
    print("| k1 | b | " + " | ".join(f"sum {g}" for g, _ in groups) + " | " + " | ".join(f"max {g}" for g, _ in groups) + " |")
    print("|---|---|" + "---|" * (2 * len(groups)))
    for k1 in ("0.6", "1.2", "2.0"):
        for b in ("0.3", "0.75", "1.0"):
            cells = [pct(mean([r[3][f"grid.{k1}/{b}.{ag}"] for r in rs])) for ag in ("sum", "max") for _, rs in groups]
            mark = " (default)" if (k1, b) == ("1.2", "1.0") else ""
            print(f"| {k1}{mark} | {b} | " + " | ".join(cells) + " |")


def main(argv):
    def opt(name, default, conv=int):
        if name in argv:
            i = argv.index(name)
            v = argv[i + 1]
            del argv[i : i + 2]
            return conv(v)
        return default

    if not argv:
        raise SystemExit(__doc__)
    n = opt("--target-rows", 40)
    ext = opt("--external", None, str)
    cmd, args = argv[0], argv[1:]
    if cmd == "split-debian":
        split_debian(*args[:3], n)
    elif cmd == "split-gpteacher":
        split_gpteacher(*args[:3], n)
    elif cmd == "count":
        count(*args[:3])
    elif cmd == "precision":
        precision(args[0], args[1], args[2], int(args[3]), args[4:])
    elif cmd == "tables":
        tables(args[0], args[1:])
    elif cmd == "reference":
        reference(*args[:5], int(args[5]), ext)
    else:
        raise SystemExit(__doc__)


main(sys.argv[1:])
