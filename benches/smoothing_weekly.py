#!/usr/bin/env python3
"""Weekly seasonal smoothing (m = 52): outturn against a statsmodels loop.

Series: statsmodels.datasets.co2 (weekly Mauna Loa CO2, gaps linearly
interpolated), the weeks from 1992-01-04 to 2001-12-29 (522 weeks; open
data shipped inside the statsmodels wheel).

Both sides fit ETS(A,N,A) with m = 52 on expanding windows, refitting every
4 weeks over the last 104 weeks (26 refits), and forecast h = 1 from every
origin:
  * outturn: one `smoothing` candidate with `season: [additive]`, an
    `expanding` scheme from the first of the last 104 origins with
    `refit_every: 4`, `outturn run --jobs 1 --no-cache` (whole process, report
    included);
  * statsmodels 0.14.4: `ETSModel(error="add", seasonal="add",
    seasonal_periods=52, initialization_method="estimated").fit()` at each
    of the 26 estimation ends (its own default start, cold), timed around
    the fits only.
The fit comparison is the in-sample MSE at each refit (outturn's `is_mse`
column of forecasts.csv, statsmodels' mean squared residual).

usage: python3 benches/smoothing_weekly.py [--outturn target/release/outturn]
           [--rounds 1] [--refits 26] [--work DIR]
The machine may be shared: quote medians over rounds and say so.
"""
import argparse
import os
import statistics
import subprocess
import tempfile
import time
import warnings

import numpy as np
import statsmodels.api as sm
from statsmodels.tsa.exponential_smoothing.ets import ETSModel

warnings.simplefilter("ignore")
LAST = 104
EVERY = 4


def series():
    co2 = sm.datasets.co2.load_pandas().data["co2"].interpolate()
    w = co2[co2.index >= "1992-01-01"]
    return [d.strftime("%Y-%m-%d") for d in w.index], w.to_numpy(float)


def write_experiment(work, labels, y):
    with open(os.path.join(work, "co2w.csv"), "w") as f:
        f.write("week,co2\n")
        for lab, v in zip(labels, y):
            f.write(f"{lab},{float(v)!r}\n")
    first = labels[len(y) - LAST - 1]
    yaml = f"""version: 1
experiment: weekly_smoothing
data: {{file: co2w.csv, time: week, frequency: weekly}}
target: co2
candidates:
  - family: naive
  - family: smoothing
    season: [additive]
backtest:
  schemes: [{{expanding: {{first_origin: {first}, refit_every: {EVERY}}}}}]
  horizons: [1]
scoring: {{metrics: [rmse], benchmark: naive}}
"""
    path = os.path.join(work, "weekly.yaml")
    with open(path, "w") as f:
        f.write(yaml)
    return path


def run_outturn(binary, exp, out):
    t = time.perf_counter()
    subprocess.run([binary, "run", exp, "--out", out, "--quiet", "--jobs", "1", "--no-cache"], check=True)
    return time.perf_counter() - t


def outturn_is_mse(out):
    mses = {}
    with open(os.path.join(out, "forecasts.csv")) as f:
        header = f.readline().rstrip("\n").split(",")
        for line in f:
            if "smoothing(none,additive)" not in line:
                continue
            cells = line.replace('"smoothing(none,additive)"', "ID").rstrip("\n").split(",")
            mses.setdefault(float(cells[header.index("is_mse")]), None)
    return list(mses)


def run_statsmodels(y, refits):
    n = len(y)
    ends = [n - LAST - 1 + EVERY * k for k in range(refits)]
    t = time.perf_counter()
    mses = []
    for e in ends:
        r = ETSModel(y[:e], error="add", seasonal="add", seasonal_periods=52,
                     initialization_method="estimated").fit(disp=False, maxiter=5000)
        mses.append(float(np.mean(np.asarray(r.resid) ** 2)))
    return time.perf_counter() - t, mses


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--outturn", default="target/release/outturn")
    ap.add_argument("--rounds", type=int, default=1)
    ap.add_argument("--refits", type=int, default=LAST // EVERY)
    ap.add_argument("--work")
    a = ap.parse_args()
    work = a.work or tempfile.mkdtemp(prefix="smoothing-weekly-")
    os.makedirs(work, exist_ok=True)
    labels, y = series()
    exp = write_experiment(work, labels, y)
    ours, theirs = [], []
    for r in range(a.rounds):
        out = os.path.join(work, f"res{r}")
        ours.append(run_outturn(a.outturn, exp, out))
        dt, sm_mses = run_statsmodels(y, a.refits)
        theirs.append(dt * (LAST // EVERY) / a.refits)
    our_mses = outturn_is_mse(os.path.join(work, "res0"))
    print(f"series: {len(y)} weeks; refits: {LAST // EVERY} (statsmodels timed on {a.refits}, scaled)")
    print(f"outturn run --jobs 1: median {statistics.median(ours):.2f} s over {a.rounds} round(s)")
    print(f"statsmodels ETSModel loop: median {statistics.median(theirs):.2f} s")
    print(f"ratio (statsmodels / outturn): {statistics.median(theirs) / statistics.median(ours):.1f}x")
    worse = 0
    for k, (o, s) in enumerate(zip(our_mses, sm_mses)):
        flag = "" if o <= s * (1 + 1e-9) else "  <- outturn worse"
        worse += bool(flag)
        print(f"  refit {k + 1:2}: is_mse outturn {o:.8f} statsmodels {s:.8f}{flag}")
    print(f"refits where outturn's fit is worse: {worse} of {min(len(our_mses), len(sm_mses))}")


if __name__ == "__main__":
    main()
