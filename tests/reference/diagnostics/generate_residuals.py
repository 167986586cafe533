#!/usr/bin/env python3
"""Ljung-Box on the residuals the docs name, for outturn's diagnostics.csv.

Run from anywhere (statsmodels 0.14.4, numpy 2.1.3, pandas 2.2.3, PyYAML):

    python3 tests/reference/diagnostics/generate_residuals.py

Writes residuals_ljung_box.json next to this script (deterministic; CI never
runs it).  tests/reference_forecasts.rs runs the same experiments with outturn
and compares every ar / ardl row of diagnostics.csv with it.

Where every expected value comes from
-------------------------------------
* Data: statsmodels.datasets.macrodata (tests/reference/data/macro.csv, written
  by tests/reference/generate.py), in the experiments gdp_direct,
  gdp_iterated and infl_unemp_direct of that script, and gdp_direct with
  horizons [2, 4] only (``gdp_direct_h24``: no h = 1 forecast, yet the
  residuals are still those of the h = 1 regression).
* The residuals: the least-squares fit of the cell's *last* estimation (the
  estimation end of its last origin, with the scheme's window; for a fixed
  scheme the only one, at the first origin) -- the iterated ar's one-step
  regression, and for direct models their h = 1 regression -- done here with
  statsmodels ``sm.OLS`` on regressors built by generate.py's independent
  implementation of SPEC section 4 (``Series``, ``direct_regressors``,
  ``estimation_end``).  ``res.resid`` in time order.
* Q and p: ``statsmodels.stats.diagnostic.acorr_ljungbox(resid, lags=[L],
  model_df=p)`` with L = min(2m, n/5) for seasonal data of season m and
  min(10, n/5) otherwise (Hyndman & Athanasopoulos's rule, which outturn
  documents), model_df the ar/ardl order p.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np
import statsmodels
import statsmodels.api as sm
import yaml
from statsmodels.stats.diagnostic import acorr_ljungbox

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))
import generate as g  # noqa: E402  (the independent SPEC implementation)

assert statsmodels.__version__ == "0.14.4", statsmodels.__version__
assert np.__version__ == "2.1.3", np.__version__


def residuals(S, spec, multi, E, window):
    """Residuals of the one-step regression estimated on positions <= E."""
    rows, ys = [], []
    if spec["kind"] == "ar" and multi == "iterated":
        p = spec["p"]
        for t in range(p + 1, E + 1):
            rows.append(g.trend_terms(spec["trend"], t) + [S.y(t - i) for i in range(1, p + 1)])
            ys.append(S.y(t))
    else:
        for s in range(1, E):  # s + 1 <= E
            r = g.direct_regressors(S, spec, s, 1)
            if r is None:
                continue
            rows.append(r)
            ys.append(S.y(s + 1))
    if window is not None and len(rows) > window:
        rows, ys = rows[-window:], ys[-window:]
    res = sm.OLS(np.asarray(ys, float), np.asarray(rows, float)).fit()
    return np.asarray(res.resid, float)


# gdp_direct without horizon 1: a direct model then estimates its h = 1
# regression for the residuals alone (the test writes this variant).
H24 = ("  horizons: [1, 2, 4]\n", "  horizons: [2, 4]\n")


def experiment_text(name):
    if name == "gdp_direct_h24":
        text = g.EXPERIMENTS["gdp_direct"]
        assert H24[0] in text
        return text.replace(*H24)
    return g.EXPERIMENTS[name]


def cases():
    out = []
    for name in ("gdp_direct", "gdp_iterated", "infl_unemp_direct", "gdp_direct_h24"):
        exp = yaml.safe_load(experiment_text(name))
        multi = exp["backtest"].get("multi_step", "direct")
        targets = exp["target"] if isinstance(exp["target"], list) else [exp["target"]]
        horizons = sorted(int(h) for h in exp["backtest"]["horizons"])
        for target in targets:
            S = g.Series(exp, target, g.DATA)
            season = S.m if S.m > 1 else None
            for cid, spec in g.expand_candidates(exp["candidates"]):
                if spec["kind"] not in ("ar", "ardl"):
                    continue
                for sch in exp["backtest"]["schemes"]:
                    (kind, sspec), = sch.items()
                    T0 = g.t0_of(sspec, S)
                    window = int(sspec["window"]) if kind == "rolling" else None
                    first_only = sspec.get("origins", "all") == "first"
                    last_origin = T0 if first_only else S.N - horizons[0]
                    E = g.estimation_end(kind, sspec, T0, last_origin)
                    e = residuals(S, spec, multi, E, window)
                    n = len(e)
                    lags = min(2 * season, n // 5) if season else min(10, n // 5)
                    df = acorr_ljungbox(e, lags=[lags], model_df=spec["p"])
                    p = float(df["lb_pvalue"].iloc[0])
                    out.append({
                        "experiment": name,
                        "subject": "%s/%s/%s" % (target, cid, g.scheme_id(kind, sspec)),
                        "estimation_end": S.label(E),
                        "residuals": n,
                        "lags": int(lags),
                        "model_df": int(spec["p"]),
                        "q": float(df["lb_stat"].iloc[0]),
                        "p": None if np.isnan(p) else p,
                    })
    return out


def main():
    obj = {
        "generator": "generate_residuals.py",
        "source": "statsmodels 0.14.4 acorr_ljungbox on sm.OLS residuals of the cell's last "
                  "one-step estimation (statsmodels.datasets.macrodata)",
        "cases": cases(),
    }
    (HERE / "residuals_ljung_box.json").write_text(json.dumps(obj, indent=1) + "\n")
    print(len(obj["cases"]), "cases")


if __name__ == "__main__":
    main()
