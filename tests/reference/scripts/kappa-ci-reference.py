"""Reference weighted kappa with its standard error and 95% interval from statsmodels'
cohens_kappa (Fleiss, Cohen & Everitt 1969 large-sample variance), for Lamina's kappa interval.
Usage: /usr/bin/python3 kappa-ci-reference.py <in.json> <out.json>
Input: a list of {"table": k x k counts, "wt": null|"linear"|"quadratic"}.
"""
import json
import sys

import numpy as np
import statsmodels
from statsmodels.stats.inter_rater import cohens_kappa

with open(sys.argv[1]) as f:
    cases = json.load(f)
out = []
for c in cases:
    table = np.asarray(c["table"], float)
    if c["wt"] is None:
        r = cohens_kappa(table)
    else:
        r = cohens_kappa(table, wt=c["wt"])
    out.append({"kappa": float(r.kappa), "se": float(r.std_kappa), "lower": float(r.kappa_low), "upper": float(r.kappa_upp)})
with open(sys.argv[2], "w") as f:
    json.dump({"version": "statsmodels " + statsmodels.__version__, "results": out}, f)
