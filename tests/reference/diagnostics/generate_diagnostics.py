#!/usr/bin/env python3
"""Reference values for outturn's statistical diagnostics (src/score/diagnostics.rs).

Run from anywhere (statsmodels 0.14.4, numpy 2.1.3, scipy 1.14.1):

    python3 tests/reference/diagnostics/generate_diagnostics.py [OUTDIR ...]

Writes the JSON files next to this script (and into every OUTDIR given).  The
output is deterministic.  CI never runs this script; its outputs are committed.

Where every expected value comes from
-------------------------------------
* Data: open data sets that statsmodels carries -- ``macrodata`` (realgdp as
  log level and log difference, infl, unemp), ``nile`` (volume) and ``co2``
  (Mauna Loa weekly CO2, as monthly means 1958-03 to 2001-12, the few empty
  months filled by linear interpolation) -- plus the residuals of a statsmodels
  ``AutoReg`` fit on GDP growth.  No invented data.
* Ljung-Box: ``statsmodels.stats.diagnostic.acorr_ljungbox`` (Q, p-value) at
  several lags and ``model_df`` values.
* ADF: ``statsmodels.tsa.stattools.adfuller`` with ``autolag='AIC'`` for
  regression 'c', 'ct', 'n' (default and explicit maxlag), plus a grid of
  ``mackinnonp`` and ``mackinnoncrit`` values.  Values that the Rust tests
  compare exactly are also written as their IEEE-754 bit patterns (``*_bits``)
  so that JSON float parsing cannot blur them.
* Giacomini-Rossi fluctuation test: loss differentials from two simple
  forecasts of US inflation (macrodata ``infl``): benchmark = random walk
  (y_{t-1}), candidate = mean of the last four quarters; d_t = e_bench^2 -
  e_cand^2.  The rolling statistic is computed here from the formula with
  numpy; its long-run variance is cross-checked against statsmodels' OLS HAC
  (Bartlett, ``use_correction=False``) to 1e-12 relative.  The critical value
  table (Giacomini & Rossi 2010, Table 1, two-sided) is written below FROM
  MEMORY -- no installed package carries it -- and interpolated with
  ``numpy.interp``.  The recalled table is checked against a seeded Monte
  Carlo simulation of the test's null limit (see ``gr_monte_carlo``).
"""

from __future__ import annotations

import json
import math
import struct
import sys
from pathlib import Path

import numpy as np
import scipy
import statsmodels
import statsmodels.api as sm
from statsmodels.stats.diagnostic import acorr_ljungbox
from statsmodels.tsa.adfvalues import mackinnoncrit, mackinnonp
from statsmodels.tsa.ar_model import AutoReg
from statsmodels.tsa.stattools import adfuller

HERE = Path(__file__).resolve().parent

assert statsmodels.__version__ == "0.14.4", statsmodels.__version__
assert np.__version__ == "2.1.3", np.__version__
assert scipy.__version__ == "1.14.1", scipy.__version__


def bits(x: float) -> int:
    return struct.unpack("<Q", struct.pack("<d", float(x)))[0]


def co2_monthly() -> list[float]:
    co2 = sm.datasets.co2.load_pandas().data["co2"]
    monthly = co2.resample("MS").mean().interpolate(method="linear")
    return monthly.to_numpy(dtype=float).tolist()


def series() -> dict[str, list[float]]:
    macro = sm.datasets.macrodata.load_pandas().data
    gdp = np.log(macro["realgdp"].to_numpy(dtype=float))
    dgdp = np.diff(gdp)
    ar = AutoReg(dgdp, lags=2, trend="c").fit()
    return {
        "log_realgdp": gdp.tolist(),
        "dlog_realgdp": dgdp.tolist(),
        "infl": macro["infl"].to_numpy(dtype=float).tolist(),
        "unemp": macro["unemp"].to_numpy(dtype=float).tolist(),
        "nile": sm.datasets.nile.load_pandas().data["volume"].to_numpy(dtype=float).tolist(),
        "co2_monthly": co2_monthly(),
        "ar2_resid_dlog_realgdp": np.asarray(ar.resid, dtype=float).tolist(),
    }


def ljung_box(data: dict[str, list[float]]) -> list[dict]:
    cases = []
    for name, x in data.items():
        x = np.asarray(x)
        for model_df in (0, 2):
            lags = [1, 2, 4, 8, 10, 12, 20, 24]
            df = acorr_ljungbox(x, lags=lags, model_df=model_df)
            for lag in lags:
                q = float(df.loc[lag, "lb_stat"])
                p = float(df.loc[lag, "lb_pvalue"])
                cases.append({
                    "series": name,
                    "lags": lag,
                    "model_df": model_df,
                    "q": q,
                    "p": None if math.isnan(p) else p,
                    "df": lag - model_df,
                })
    return cases


REG = {"c": "Constant", "ct": "ConstantTrend", "n": "None"}
NTREND = {"c": 1, "ct": 2, "n": 0}


def degenerate(reg: str, usedlag: int, nobs: int) -> bool:
    """True when the final ADF regression has no residual degrees of freedom.

    statsmodels then returns a meaningless statistic (0.0 from a perfect fit,
    its standard error computed from SSR/0); the Rust port returns None, which
    the tests check instead of the values recorded here for information.
    """
    return nobs <= usedlag + 1 + NTREND[reg]


def adf(data: dict[str, list[float]]) -> list[dict]:
    cases = []
    names = ["log_realgdp", "dlog_realgdp", "infl", "unemp", "nile", "co2_monthly"]
    for name in names:
        x = np.asarray(data[name])
        for reg in ("c", "ct", "n"):
            for maxlag in (None, 0, 1, 4, 8):
                stat, p, usedlag, nobs, crit, icbest = adfuller(
                    x, maxlag=maxlag, regression=reg, autolag="AIC")
                cv = [crit["1%"], crit["5%"], crit["10%"]]
                cases.append({
                    "series": name,
                    "regression": REG[reg],
                    "max_lag": maxlag,
                    "statistic": float(stat),
                    "p_value": float(p),
                    "used_lag": int(usedlag),
                    "nobs": int(nobs),
                    "critical_values": [float(v) for v in cv],
                    "critical_values_bits": [bits(v) for v in cv],
                    "icbest": float(icbest),
                    "degenerate": degenerate(reg, int(usedlag), int(nobs)),
                })
    # short prefixes exercise small samples and the default-maxlag cap
    for name in ("infl", "nile"):
        for n in (12, 20, 40):
            x = np.asarray(data[name][:n])
            for reg in ("c", "ct", "n"):
                stat, p, usedlag, nobs, crit, icbest = adfuller(
                    x, regression=reg, autolag="AIC")
                cv = [crit["1%"], crit["5%"], crit["10%"]]
                cases.append({
                    "series": name,
                    "prefix": n,
                    "regression": REG[reg],
                    "max_lag": None,
                    "statistic": float(stat),
                    "p_value": float(p),
                    "used_lag": int(usedlag),
                    "nobs": int(nobs),
                    "critical_values": [float(v) for v in cv],
                    "critical_values_bits": [bits(v) for v in cv],
                    "icbest": float(icbest),
                    "degenerate": degenerate(reg, int(usedlag), int(nobs)),
                })
    return cases


def mackinnon() -> dict:
    pgrid = []
    stats = [round(-26.0 + 0.5 * i, 2) for i in range(0, 2 * 30 + 1)]  # -26 .. 4
    stats += [-19.04, -18.83, -16.18, -1.61, -2.62, -2.89, -1.04, 2.74, 0.7, 1.51]
    for reg in ("c", "ct", "n"):
        for n_series in range(1, 7):
            for s in stats:
                p = float(mackinnonp(s, regression=reg, N=n_series))
                pgrid.append({"regression": REG[reg], "n_series": n_series,
                              "stat": s, "p": p, "p_bits": bits(p)})
    cgrid = []
    for reg in ("c", "ct", "n"):
        nmax = 1 if reg == "n" else 12
        for n_series in range(1, nmax + 1):
            for nobs in (None, 10, 25, 50, 100, 193, 250, 500, 1000, 100000):
                cv = mackinnoncrit(N=n_series, regression=reg,
                                   nobs=np.inf if nobs is None else nobs)
                cv = [float(v) for v in cv]
                cgrid.append({"regression": REG[reg], "n_series": n_series,
                              "nobs": nobs, "critical_values": cv,
                              "critical_values_bits": [bits(v) for v in cv]})
    return {"mackinnonp": pgrid, "mackinnoncrit": cgrid}


# Giacomini & Rossi (2010), Table 1: two-sided critical values k_alpha of the
# fluctuation test for mu = m/P.  FROM MEMORY (not read from any installed
# package; none carries it).
GR_MU = [0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9]
GR_K05 = [3.393, 3.179, 3.012, 2.890, 2.779, 2.634, 2.560, 2.433, 2.248]
GR_K10 = [3.170, 2.948, 2.766, 2.626, 2.500, 2.356, 2.252, 2.130, 1.950]


def gr_monte_carlo(steps: int = 500, reps: int = 20000, seed: int = 20100401) -> dict:
    """Self-check of the recalled table: simulate the null limit
    sup_{t in [mu, 1]} |B(t) - B(t - mu)| / sqrt(mu) on a grid of `steps`
    points (Giacomini & Rossi 2010, Proposition 1) and compare quantiles.

    On a 500-point grid the recalled values agree to within ~0.03 (Monte
    Carlo error ~0.01-0.02); finer grids give larger values (the discrete
    supremum is below the continuous one; on 2000 points the 5 % value at
    mu = 0.1 is ~3.47), so the table corresponds to a moderate discretisation.
    A mis-recalled digit in the first decimal stops the script.
    """
    rng = np.random.default_rng(seed)
    sims = {mu: [] for mu in GR_MU}
    chunk = 1000
    for _ in range(reps // chunk):
        e = rng.standard_normal((chunk, steps))
        b = np.concatenate([np.zeros((chunk, 1)), np.cumsum(e, axis=1)], axis=1) / math.sqrt(steps)
        for mu in GR_MU:
            m = int(round(mu * steps))
            f = (b[:, m:] - b[:, :-m]) / math.sqrt(mu)
            sims[mu].append(np.abs(f).max(axis=1))
    q05, q10 = [], []
    for i, mu in enumerate(GR_MU):
        s = np.concatenate(sims[mu])
        q05.append(float(np.quantile(s, 0.95)))
        q10.append(float(np.quantile(s, 0.90)))
        assert abs(q05[-1] - GR_K05[i]) < 0.06, (mu, q05[-1], GR_K05[i])
        assert abs(q10[-1] - GR_K10[i]) < 0.06, (mu, q10[-1], GR_K10[i])
    return {"steps": steps, "reps": reps, "seed": seed, "k_05": q05, "k_10": q10}


def nw_lags(p: int) -> int:
    """Newey-West (1994) rule of thumb: floor(4 (P/100)^(2/9))."""
    return int(math.floor(4.0 * (p / 100.0) ** (2.0 / 9.0)))


def hac_var(d: np.ndarray, lags: int, demean: bool) -> float:
    p = d.shape[0]
    u = d - d.mean() if demean else d
    s = float(u @ u) / p
    for j in range(1, lags + 1):
        w = 1.0 - j / (lags + 1.0)
        s += 2.0 * w * float(u[j:] @ u[:-j]) / p
    return s


def fluctuation(data: dict[str, list[float]]) -> dict:
    y = np.asarray(data["infl"])
    # forecasts of y_t made at t-1: random walk and the mean of the last 4
    t = np.arange(4, y.shape[0])
    f_rw = y[t - 1]
    f_ao = np.array([y[i - 4:i].mean() for i in t])
    e_rw = y[t] - f_rw
    e_ao = y[t] - f_ao
    d = e_rw ** 2 - e_ao ** 2
    p = d.shape[0]

    cases = []
    for window, demean, lags in [
        (p * 3 // 10, True, None),       # mu near 0.3
        (p // 2, True, None),            # mu near 0.5
        (40, True, None),
        (150, True, None),
        (60, False, None),
        (60, True, 0),
        (60, True, 8),
    ]:
        q = nw_lags(p) if lags is None else lags
        s2 = hac_var(d, q, demean)
        if demean:
            # independent check: statsmodels OLS on a constant, HAC Bartlett
            res = sm.OLS(d, np.ones(p)).fit(
                cov_type="HAC", cov_kwds={"maxlags": q, "use_correction": False})
            s2_sm = float(res.bse[0] ** 2 * p)
            assert abs(s2 - s2_sm) <= 1e-12 * abs(s2), (s2, s2_sm)
        sigma = math.sqrt(s2)
        c = np.concatenate([[0.0], np.cumsum(d)])
        path = [(c[i] - c[i - window]) / math.sqrt(window) / sigma
                for i in range(window, p + 1)]
        # also the direct sum, to make sure the cumulative-sum shortcut is exact enough
        path_direct = [float(d[i - window:i].sum()) / math.sqrt(window) / sigma
                       for i in range(window, p + 1)]
        assert np.allclose(path, path_direct, rtol=1e-10, atol=1e-12)
        mu = window / p
        cases.append({
            "window": window,
            "demean": demean,
            "lags": lags,
            "lags_used": q,
            "mu": mu,
            "sigma2": s2,
            "path": path_direct,
            "max_abs": float(np.max(np.abs(path_direct))),
            "critical_5": float(np.interp(mu, GR_MU, GR_K05)),
            "critical_10": float(np.interp(mu, GR_MU, GR_K10)),
        })
    return {
        "source_table": "Giacomini & Rossi (2010), Table 1, two-sided; from memory",
        "table": {"mu": GR_MU, "k_05": GR_K05, "k_10": GR_K10},
        "monte_carlo_check": gr_monte_carlo(),
        "d": d.tolist(),
        "cases": cases,
    }


def dump(obj, name: str, outdirs: list[Path]) -> None:
    text = json.dumps(obj, indent=1, sort_keys=True, allow_nan=False) + "\n"
    for out in outdirs:
        out.mkdir(parents=True, exist_ok=True)
        (out / name).write_text(text)


def main() -> None:
    outdirs = [HERE] + [Path(a) for a in sys.argv[1:]]
    data = series()
    dump({"series": data}, "series.json", outdirs)
    dump({"cases": ljung_box(data)}, "ljung_box.json", outdirs)
    dump({"cases": adf(data)}, "adf.json", outdirs)
    dump(mackinnon(), "mackinnon.json", outdirs)
    dump(fluctuation(data), "fluctuation.json", outdirs)


if __name__ == "__main__":
    main()
