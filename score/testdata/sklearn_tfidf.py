#!/usr/bin/python3
"""Reference TF-IDF cosines from scikit-learn's TfidfVectorizer.

Fits the vectorizer on the pool texts of texts.json, transforms the target
texts, and writes sklearn_tfidf.json: the analysed tokens, the idf per term,
the target x pool cosine matrix, and per pool row the mean and max over targets.
Run with Debian's python3-sklearn: /usr/bin/python3 sklearn_tfidf.py
"""
import json
import pathlib
import platform

import numpy
import scipy
import sklearn
from sklearn.feature_extraction.text import TfidfVectorizer

here = pathlib.Path(__file__).resolve().parent
texts = json.loads((here / "texts.json").read_text(encoding="utf-8"))
pool = [d["text"] for d in texts["pool"]]
targets = [d["text"] for d in texts["targets"]]

options = dict(
    lowercase=True,
    token_pattern=r"(?u)\b\w\w+\b",  # sklearn's default: word tokens of >= 2 chars
    use_idf=True,
    smooth_idf=True,
    sublinear_tf=False,
    norm="l2",
)
vec = TfidfVectorizer(**options)
X = vec.fit_transform(pool)  # pool x vocab, rows l2-normalised
Y = vec.transform(targets)   # targets x vocab, out-of-vocabulary terms dropped
cos = (Y @ X.T).toarray()    # unit rows, so the dot product is the cosine

analyze = vec.build_analyzer()
out = {
    "generator": "sklearn_tfidf.py",
    "versions": {
        "python": platform.python_version(),
        "sklearn": sklearn.__version__,
        "numpy": numpy.__version__,
        "scipy": scipy.__version__,
    },
    "options": options,
    "pool_tokens": [analyze(t) for t in pool],
    "target_tokens": [analyze(t) for t in targets],
    "idf": {t: float(v) for t, v in zip(vec.get_feature_names_out(), vec.idf_)},
    "cosine": cos.tolist(),
    "mean": cos.mean(axis=0).tolist(),
    "max": cos.max(axis=0).tolist(),
}
(here / "sklearn_tfidf.json").write_text(json.dumps(out, indent=1) + "\n", encoding="utf-8")
print("sklearn", sklearn.__version__, "numpy", numpy.__version__, "scipy", scipy.__version__)
