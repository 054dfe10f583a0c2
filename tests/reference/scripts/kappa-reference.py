"""Reference kappa values from scikit-learn's cohen_kappa_score for Lamina's
conformance suite. Usage: /usr/bin/python3 kappa-reference.py <in.json> <out.json>
Input: a list of {"a": [...], "b": [...], "weights": null|"linear"|"quadratic", "labels": null|[...]}.
"""
import json
import sys

import sklearn
from sklearn.metrics import cohen_kappa_score

with open(sys.argv[1]) as f:
    cases = json.load(f)
out = []
for c in cases:
    k = cohen_kappa_score(c["a"], c["b"], weights=c["weights"], labels=c["labels"])
    out.append({"kappa": float(k)})
with open(sys.argv[2], "w") as f:
    json.dump({"version": "scikit-learn " + sklearn.__version__, "results": out}, f)
