#!/usr/bin/env python3
"""Reference values for outturn's `smoothing` family (additive-error ETS).

Generator: statsmodels 0.14.4 (numpy 2.1.3, pandas 2.x, scipy 1.14),
`statsmodels.tsa.exponential_smoothing.ets.ETSModel(error="add", ...)`.

Data sets (all shipped inside the statsmodels wheel, no download):
  * nile         statsmodels.datasets.nile, annual Nile flow 1871-1970 (100 obs), m = 1
  * realgdp      statsmodels.datasets.macrodata, US real GDP 1959Q1-2009Q3
                 (203 obs, seasonally adjusted: fitted as non-seasonal), m = 1
  * co2_q        statsmodels.datasets.co2 (weekly Mauna Loa CO2, gaps linearly
                 interpolated), quarterly means 1960Q1-1989Q4 (120 obs), m = 4
  * co2_m        same, monthly means 1980-01..1994-12 (180 obs), m = 12
  * elnino_m     statsmodels.datasets.elnino, monthly sea surface temperature,
                 1996-01..2010-12 (180 obs), m = 12
  * co2_w        same co2, weekly, first 312 weeks from 1990-01-06, m = 52
                 (ETS(A,N,A) only: a speed/size check)

Each model is fitted from several starting points:
  * "default":   statsmodels' own start (alpha .1, beta .01, gamma .01, phi .98,
                 initial states from its simple/heuristic initialisation)
  * "mid", "high": other smoothing-parameter starts with the same initial states
  * "heuristic": a fit with initialization_method="heuristic" (initial states
                 fixed), whose parameters then seed an "estimated" fit
  * "polished":  L-BFGS restarted from the best of these with tight tolerances
                 (factr 10, pgtol 1e-12)
For every start we record the in-sample MSE (SSE/n of the one-step errors),
the parameters, and forecasts + forecast variances for h = 1..8
(`get_prediction(...).var_pred_mean`; exact formulas for the linear models,
simulation with 20000 repetitions and a fixed seed for the multiplicative-
season ones, which statsmodels can only simulate).

`sharp` is true when at least two starts reach the best MSE (relative 1e-5)
and their forecasts agree within 1e-3 of the series' standard deviation:
only then is the forecast comparison a test of the optimum and not of where
an optimiser stopped.

Run:  python3 generate_smoothing.py   (writes smoothing_reference.json beside it)
"""
import json
import os
import warnings

import numpy as np
import pandas as pd
import statsmodels
import statsmodels.api as sm
from statsmodels.tsa.exponential_smoothing.ets import ETSModel

warnings.simplefilter("ignore")

H = 8
SIM_REPS = 20000


def datasets():
    out = {}
    nile = sm.datasets.nile.load_pandas().data["volume"].to_numpy(float)
    out["nile"] = ("annual", 1, nile)
    md = sm.datasets.macrodata.load_pandas().data
    out["realgdp"] = ("quarterly", 1, md["realgdp"].to_numpy(float))
    co2 = sm.datasets.co2.load_pandas().data["co2"].interpolate()
    q = co2.resample("QS").mean()
    q = q[(q.index >= "1960-01-01") & (q.index <= "1989-12-31")]
    out["co2_q"] = ("quarterly", 4, q.to_numpy(float))
    mth = co2.resample("MS").mean()
    mth = mth[(mth.index >= "1980-01-01") & (mth.index <= "1994-12-31")]
    out["co2_m"] = ("monthly", 12, mth.to_numpy(float))
    el = sm.datasets.elnino.load_pandas().data
    el = el[(el["YEAR"] >= 1996) & (el["YEAR"] <= 2010)]
    out["elnino_m"] = ("monthly", 12, el.drop(columns="YEAR").to_numpy(float).ravel())
    w = co2[co2.index >= "1990-01-01"].iloc[:312]
    out["co2_w"] = ("weekly", 52, w.to_numpy(float))
    return out


MODELS = [
    # (trend, season) in outturn's vocabulary
    ("none", "none"), ("additive", "none"), ("damped", "none"),
    ("none", "additive"), ("additive", "additive"), ("damped", "additive"),
    ("none", "multiplicative"), ("additive", "multiplicative"),
    ("damped", "multiplicative"),
]


def sm_kwargs(trend, season, m):
    return dict(
        error="add",
        trend=None if trend == "none" else "add",
        damped_trend=trend == "damped",
        seasonal={"none": None, "additive": "add", "multiplicative": "mul"}[season],
        seasonal_periods=m if season != "none" else None,
    )


def record(res, y, label):
    p = dict(zip(res.model.param_names, np.asarray(res.params, float)))
    out = {
        "label": label,
        "mse": float(np.mean(np.asarray(res.resid) ** 2)),
        "llf": float(res.llf),
        "alpha": float(p["smoothing_level"]),
        "beta": float(p.get("smoothing_trend", 0.0)),
        "gamma": float(p.get("smoothing_seasonal", 0.0)),
        "phi": float(p.get("damping_trend", 1.0)),
        "initial_level": float(res.initial_level),
    }
    if res.model.has_trend:
        out["initial_trend"] = float(res.initial_trend)
    if res.model.has_seasonal:
        # ETSResults.initial_seasonal is already oldest first (it reverses the
        # internal [s_{-1}, ..., s_{-m}], see statsmodels GH 7893); outturn
        # stores them oldest first too: s_{1-m}, ..., s_0 (s_0 the most recent)
        out["initial_seasonal"] = [float(v) for v in np.asarray(res.initial_seasonal)]
    n = len(y)
    pred = res.get_prediction(start=n, end=n + H - 1, simulate_repetitions=SIM_REPS,
                              random_state=12345)
    out["forecast"] = [float(v) for v in np.asarray(pred.predicted_mean)]
    out["variance"] = [float(v) for v in np.asarray(pred.var_pred_mean)]
    out["variance_method"] = pred.method
    out["_params"] = np.asarray(res.params, float)
    return out


def fit_case(y, trend, season, m):
    kw = sm_kwargs(trend, season, m)
    y = pd.Series(np.asarray(y, float))  # a RangeIndex: get_prediction needs pandas
    starts = []
    base = ETSModel(y, initialization_method="estimated", **kw)
    res0 = base.fit(disp=False, maxiter=5000)
    starts.append(record(res0, y, "default"))
    sp = np.asarray(base.start_params, float).copy()
    names = base.param_names
    for label, a, b, g, ph in [("mid", 0.5, 0.1, 0.1, 0.9), ("high", 0.9, 0.3, 0.05, 0.85)]:
        s = sp.copy()
        for i, nme in enumerate(names):
            if nme == "smoothing_level":
                s[i] = a
            elif nme == "smoothing_trend":
                s[i] = b * a
            elif nme == "smoothing_seasonal":
                s[i] = g * (1 - a)
            elif nme == "damping_trend":
                s[i] = ph
        mod = ETSModel(y, initialization_method="estimated", **kw)
        try:
            r = mod.fit(start_params=s, disp=False, maxiter=5000)
            starts.append(record(r, y, label))
        except Exception as e:  # noqa: BLE001
            print("  start", label, "failed:", e)
    try:
        heur = ETSModel(y, initialization_method="heuristic", **kw).fit(disp=False, maxiter=5000)
        s = []
        for nme in names:
            if nme.startswith("initial_seasonal"):
                continue
            if nme == "initial_level":
                s.append(float(heur.initial_level))
            elif nme == "initial_trend":
                s.append(float(heur.initial_trend))
            else:
                s.append(float(heur.params[list(heur.model.param_names).index(nme)]))
        if base.has_seasonal:
            # results hold them oldest first; start_params want s_{-1}..s_{-m}
            seas = np.asarray(heur.initial_seasonal, float)[::-1]
            if season == "multiplicative":
                lvl_i = names.index("initial_level")
                s[lvl_i] *= seas[-1]
                seas = seas / seas[-1]
            else:
                lvl_i = names.index("initial_level")
                s[lvl_i] += seas[-1]
                seas = seas - seas[-1]
            s += seas.tolist()
        mod = ETSModel(y, initialization_method="estimated", **kw)
        r = mod.fit(start_params=np.asarray(s), disp=False, maxiter=5000)
        starts.append(record(r, y, "heuristic"))
    except Exception as e:  # noqa: BLE001
        print("  heuristic start failed:", e)
    # "polished": restart L-BFGS from the best start with tight tolerances
    # (statsmodels' defaults stop early when the initial states are large)
    best = min(range(len(starts)), key=lambda i: starts[i]["mse"])
    sp_best = starts[best]["_params"]
    try:
        mod = ETSModel(y, initialization_method="estimated", **kw)
        r = mod.fit(start_params=sp_best, disp=False, maxiter=20000, factr=10.0, pgtol=1e-12)
        starts.append(record(r, y, "polished"))
    except Exception as e:  # noqa: BLE001
        print("  polish failed:", e)
    for s in starts:
        s.pop("_params", None)
    return starts


def main():
    cases = []
    sets = datasets()
    for name, (freq, m, y) in sets.items():
        sd = float(np.std(y, ddof=1))
        for trend, season in MODELS:
            if season != "none" and m == 1:
                continue
            if name == "co2_w" and (trend, season) != ("none", "additive"):
                continue
            if season == "multiplicative" and np.any(y <= 0):
                continue
            print(name, trend, season, flush=True)
            starts = fit_case(y, trend, season, m)
            best = min(range(len(starts)), key=lambda i: starts[i]["mse"])
            bmse = starts[best]["mse"]
            near = [s for s in starts if s["mse"] <= bmse * (1 + 1e-5)]
            spread = 0.0
            for s in near:
                for a, b in zip(s["forecast"], starts[best]["forecast"]):
                    spread = max(spread, abs(a - b))
            sharp = len(near) >= 2 and spread <= 1e-3 * sd
            cases.append({
                "name": f"{name}:{trend},{season}",
                "dataset": name,
                "frequency": freq,
                "period": m,
                "trend": trend,
                "season": season,
                "sd": sd,
                "y": [float(v) for v in y],
                "best": best,
                "best_mse": bmse,
                "sharp": sharp,
                "forecast_spread_near_best": spread,
                "starts": starts,
            })
            print(f"   best {starts[best]['label']} mse={bmse:.6g} sharp={sharp} "
                  f"mses={[round(s['mse'], 6) for s in starts]}", flush=True)
    out = {
        "generator": "generate_smoothing.py",
        "statsmodels": statsmodels.__version__,
        "numpy": np.__version__,
        "pandas": pd.__version__,
        "horizons": H,
        "simulate_repetitions": SIM_REPS,
        "cases": cases,
    }
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "smoothing_reference.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=1)
    print("wrote", path)


if __name__ == "__main__":
    main()
