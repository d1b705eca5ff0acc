"""The outside references that testdata/bench/build-vs-refs.sh times against sluice, each run as a
whole process on the same files as sluice (Debian's python3-sklearn and python3-xapian).

  build_refs.py sklearn POOL FIELDS           CountVectorizer(stop_words='english').fit_transform over
                                              the rows' text fields joined by newlines (the analyzer
                                              sluice's default, `sklearn`, reproduces), streamed from
                                              the file; prints rows and distinct terms.
  build_refs.py xapian-index POOL FIELDS DB   a Xapian database of the same text: English stemmer,
                                              terms without positions, committed to disk.
  build_refs.py xapian-query DB TARGET FIELDS a BM25 query (Xapian's BM25Weight defaults) of every
                                              term of the target rows, each with its count in the
                                              target as its within-query frequency, OR'd, every
                                              matching row scored; prints the matches, writes nothing.

FIELDS is comma-separated (prompt,completion). Rows missing a field take "" for it.
"""
import json
import sys


def texts(path, fields):
    with open(path, encoding="utf-8") as f:
        for line in f:
            if not line.strip():
                continue
            row = json.loads(line)
            yield "\n".join(str(row.get(k, "")) for k in fields)


def sklearn_build(pool, fields):
    from sklearn.feature_extraction.text import CountVectorizer

    cv = CountVectorizer(stop_words="english")
    m = cv.fit_transform(texts(pool, fields))
    print(f"sklearn: {m.shape[0]} rows, {m.shape[1]} terms, {m.nnz} postings")


def xapian_index(pool, fields, db_path):
    import xapian

    db = xapian.WritableDatabase(db_path, xapian.DB_CREATE_OR_OVERWRITE)
    tg = xapian.TermGenerator()
    tg.set_stemmer(xapian.Stem("english"))
    n = 0
    for text in texts(pool, fields):
        doc = xapian.Document()
        tg.set_document(doc)
        tg.index_text_without_positions(text)
        db.add_document(doc)
        n += 1
    db.commit()
    db.close()
    print(f"xapian: {n} rows")


def xapian_query(db_path, target, fields):
    import xapian

    db = xapian.Database(db_path)
    tg = xapian.TermGenerator()
    tg.set_stemmer(xapian.Stem("english"))
    q = xapian.Document()
    tg.set_document(q)
    for text in texts(target, fields):
        tg.index_text_without_positions(text)
    terms = [xapian.Query(t.term, t.wdf) for t in q.termlist()]
    enq = xapian.Enquire(db)
    enq.set_query(xapian.Query(xapian.Query.OP_OR, terms))
    enq.set_weighting_scheme(xapian.BM25Weight())
    mset = enq.get_mset(0, db.get_doccount())
    total = sum(m.weight for m in mset)
    print(f"xapian query: {len(terms)} terms, {mset.size()} rows matched, weight sum {total:.6g}")


def main(argv):
    cmd, args = argv[1], argv[2:]
    if cmd == "sklearn":
        sklearn_build(args[0], args[1].split(","))
    elif cmd == "xapian-index":
        xapian_index(args[0], args[1].split(","), args[2])
    elif cmd == "xapian-query":
        xapian_query(args[0], args[1], args[2].split(","))
    else:
        sys.exit(f"unknown command {cmd}")


if __name__ == "__main__":
    main(sys.argv)
