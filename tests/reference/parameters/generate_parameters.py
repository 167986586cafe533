#!/usr/bin/env python3
"""Expected rows of parameters.csv for the least-squares families and the
arima family, from statsmodels 0.14.4 (pins: tests/reference/requirements.txt).

1. ar / ardl (direct and iterated) on statsmodels.datasets.macrodata, for
   the reference experiments gdp_direct and gdp_iterated of
   tests/reference/generate.py (whose independent implementation of the
   backtest's regressions this reuses): every estimation's coefficients and
   classical standard errors from ``sm.OLS(...).fit()`` (``params``,
   ``bse``; sigma2 = ``scale``), written to ``expected_<name>.csv``.
2. arima on macrodata: ``statsmodels.tsa.arima.model.ARIMA`` (SARIMAX
   underneath, the mean and the regression coefficients as parameters),
   with the standard errors of ``cov_type='approx'`` (the numerical Hessian
   of the exact log-likelihood at the optimum) and of ``cov_type='oim'``
   (Harvey's information formula), written to ``arima_oim.json`` with the
   series, so that a unit test estimates the same model.

Run from the repository root: python3 tests/reference/parameters/generate_parameters.py
"""

import csv
import io
import json
import sys
from pathlib import Path

import numpy as np
import statsmodels
import statsmodels.api as sm
import yaml
from statsmodels.tsa.arima.model import ARIMA

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))
import generate as g  # noqa: E402  (the reference backtest's building blocks)

HEADER = ["target", "candidate", "scheme", "horizon", "origin", "parameter", "estimate", "std_error"]


def names(spec):
    out = {"none": [], "constant": ["constant"], "linear": ["constant", "trend"]}[spec["trend"]]
    out += ["ar%d" % i for i in range(1, spec["p"] + 1)]
    if spec["kind"] == "ardl":
        for col in spec["predictors"]:
            out += ["%s_%d" % (col, i) for i in range(1, spec["q"] + 1)]
    return out


def direct_rows(S, spec, h, E, window):
    rows, ys = [], []
    for s in range(1, E - h + 1):
        r = g.direct_regressors(S, spec, s, h)
        if r is not None:
            rows.append(r)
            ys.append(S.y(s + h))
    if window is not None and len(rows) > window:
        rows, ys = rows[-window:], ys[-window:]
    return ys, rows


def iterated_rows(S, spec, E, window):
    p = spec["p"]
    rows = [g.trend_terms(spec["trend"], t) + [S.y(t - i) for i in range(1, p + 1)]
            for t in range(p + 1, E + 1)]
    ys = [S.y(t) for t in range(p + 1, E + 1)]
    if window is not None and len(rows) > window:
        rows, ys = rows[-window:], ys[-window:]
    return ys, rows


def least_squares(name):
    text = (g.DATA / ("%s.yaml" % name)).read_text()
    exp = yaml.safe_load(text)
    targets = exp["target"] if isinstance(exp["target"], list) else [exp["target"]]
    horizons = sorted(int(h) for h in exp["backtest"]["horizons"])
    iterated = exp["backtest"].get("multi_step", "direct") == "iterated"
    out = []
    for target in targets:
        S = g.Series(exp, target, g.DATA)
        for cid, spec in g.expand_candidates(exp["candidates"]):
            if spec["kind"] not in ("ar", "ardl"):
                continue
            it = iterated and spec["kind"] == "ar"
            for sch in exp["backtest"]["schemes"]:
                (kind, sspec), = sch.items()
                sid = g.scheme_id(kind, sspec)
                T0 = g.t0_of(sspec, S)
                window = int(sspec["window"]) if kind == "rolling" else None
                first_only = sspec.get("origins", "all") == "first"
                groups = [None] if it else horizons
                for h in groups:
                    last = T0 if first_only else S.N - (horizons[0] if h is None else h)
                    ends = []
                    for T in range(T0, last + 1):
                        E = g.estimation_end(kind, sspec, T0, T)
                        if E not in ends:
                            ends.append(E)
                    for E in ends:
                        ys, X = iterated_rows(S, spec, E, window) if it else direct_rows(S, spec, h, E, window)
                        res = g.ols(ys, X)
                        hz = "" if h is None else str(h)
                        for nm, b, se in zip(names(spec), res.params, res.bse):
                            out.append([target, cid, sid, hz, S.label(E), nm, g.fmt(b), g.fmt(se)])
                        out.append([target, cid, sid, hz, S.label(E), "sigma2", g.fmt(res.scale), ""])
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(HEADER)
    w.writerows(out)
    g.write_text(HERE / ("expected_%s.csv" % name), buf.getvalue())
    return len(out)


def arima_cases():
    d = sm.datasets.macrodata.load_pandas().data
    infl = d["infl"].to_numpy(float)
    unemp = d["unemp"].to_numpy(float)
    lgdp = np.log(d["realgdp"].to_numpy(float))
    w = np.diff(lgdp) * 100.0
    cases = [
        ("infl_arma11_mean", infl, None, (1, 0, 1), "c", ["ar1", "ma1", "constant"]),
        ("gdp_growth_ar2_mean", w, None, (2, 0, 0), "c", ["ar1", "ar2", "constant"]),
        ("infl_ma2_unemp", infl, unemp, (0, 0, 2), "c", ["ma1", "ma2", "constant", "unemp"]),
    ]
    out = []
    for name, y, x, order, trend, ours in cases:
        model = ARIMA(y, exog=x, order=order, trend=trend)
        res = model.fit()
        # Two covariances at statsmodels' optimum: "approx" is the numerical
        # (complex-step) Hessian of the exact log-likelihood, what outturn
        # computes; "oim" is Harvey's (1989, §3.4.5) information formula from
        # the derivatives of the innovations and their variances.
        approx = model.smooth(res.params, cov_type="approx")
        oim = model.smooth(res.params, cov_type="oim")
        # statsmodels' order: const, exog, ar, ma, sigma2; ours: ar, ma, constant, exog, sigma2.
        sm_names = list(res.model.param_names)
        lookup = {"const": "constant", "x1": "unemp", "sigma2": "sigma2"}
        for i in range(1, 5):
            lookup["ar.L%d" % i] = "ar%d" % i
            lookup["ma.L%d" % i] = "ma%d" % i
        params = {lookup[n]: (float(v), float(a), float(b))
                  for n, v, a, b in zip(sm_names, res.params, approx.bse, oim.bse)}
        assert set(params) == set(ours + ["sigma2"]), (sm_names, ours)
        out.append({
            "name": name,
            "order": list(order),
            "y": [float(v) for v in y],
            "x": None if x is None else [float(v) for v in x],
            "parameters": [[n, *params[n]] for n in ours + ["sigma2"]],
            "loglik": float(res.llf),
            "aic": float(res.aic),
            "aicc": float(res.aicc),
            "bic": float(res.bic),
        })
    g.write_json(HERE / "arima_oim.json", {
        "generator": "tests/reference/parameters/generate_parameters.py",
        "statsmodels": statsmodels.__version__,
        "data": "statsmodels.datasets.macrodata (infl, unemp, realgdp)",
        "parameters": "[name, estimate, s.e. cov_type='approx', s.e. cov_type='oim']",
        "cases": out,
    })
    return len(out)


def main():
    for name in ("gdp_direct", "gdp_iterated"):
        print("%-14s %7d expected parameter rows" % (name, least_squares(name)))
    print("arima cases: %d" % arima_cases())


if __name__ == "__main__":
    main()
