#!/usr/bin/env python3
"""Reference values for outturn's density scores and forecast tests:
src/score/mod.rs (quantile_score, log_score), src/score/efficiency.rs
(Mincer-Zarnowitz with Newey-West errors), src/score/calibration.rs
(Christoffersen coverage tests, Berkowitz density test) and
src/score/pairwise.rs (forecast encompassing).

Regenerate (from the crate root):

    python3 tests/reference/density/generate_density.py

Pinned environment: numpy 2.1.3, scipy 1.14.1, statsmodels 0.14.4.

Input data (public domain, shipped inside the statsmodels package):
  * statsmodels.datasets.macrodata -- US quarterly macro data 1959Q1-2009Q3
    (`infl`, `tbilrate`, `unemp`);
  * statsmodels.datasets.nile -- annual Nile flow at Aswan 1871-1970.
Forecasts are those of simple models computed here from the data (naive,
the expanding mean, a direct AR(p) with an intercept by least squares on an
expanding window), each with the Gaussian standard deviation outturn's
SPEC section 4 gives it (sqrt(SSR/(rows - k)) of its own regression; for
naive the root mean squared one-step change); nothing below is invented.

Expected values:
  * quantile_score: numpy mean of the pinball loss (y - q)(tau - 1{y < q})
    (Koenker & Bassett 1978) at q = scipy.stats.norm.ppf(tau, mu, sigma);
  * log_score: -scipy.stats.norm.logpdf(y, mu, sigma), averaged;
  * efficiency: statsmodels OLS(actual, add_constant(forecast)).fit(
    cov_type='HAC', cov_kwds={'maxlags': h - 1}) -- Bartlett kernel,
    statsmodels' default use_correction=False -- params, bse, the Wald test
    of (const, slope) = (0, 1) by `wald_test(..., use_f=False)`, and
    two-sided normal p-values of const = 0 and slope = 1 by `t_test`;
  * calibration: Christoffersen (1998) LR_uc, LR_ind and LR_cc = LR_uc +
    LR_ind written here from the paper's likelihoods (0 ln 0 = 0), with
    scipy.stats.chi2.sf p-values; Berkowitz (2001) LR test of z = (y - mu)/
    sigma against an AR(1), conditional on the first value: the AR(1) fitted
    by statsmodels OLS, log-likelihoods by scipy.stats.norm.logpdf, p-value
    scipy.stats.chi2.sf(LR, 3);
  * empirical quantiles for intervals_from: past_errors: numpy.quantile
    (default method 'linear', Hyndman & Fan 1996 type 7) of the errors, and
    of the errors known at each origin (T' + h <= T), none before ten;
  * encompassing: Harvey, Leybourne & Newbold (1998) modified statistic on
    d_t = (e1_t - e2_t) e1_t written here from the paper (variance
    gamma_0 + 2 sum_{k<h} gamma_k of d with divisor n, the factor
    sqrt((n + 1 - 2h + h(h-1)/n)/n)), one-sided p = scipy.stats.t.sf(stat, n - 1).
"""

import json
import os

import numpy as np
import scipy
import scipy.stats as st
import statsmodels
import statsmodels.api as sm

HERE = os.path.dirname(os.path.abspath(__file__))
VERSIONS = {"numpy": np.__version__, "scipy": scipy.__version__,
            "statsmodels": statsmodels.__version__}
assert VERSIONS == {"numpy": "2.1.3", "scipy": "1.14.1", "statsmodels": "0.14.4"}, VERSIONS


def ar_direct(y, T, p, h):
    """Direct AR(p) with intercept on positions <= T: forecast and sigma."""
    rows = [s for s in range(p - 1, T + 1) if s + h <= T]
    X = np.array([[1.0] + [y[s - j] for j in range(p)] for s in rows])
    z = np.array([y[s + h] for s in rows])
    beta, *_ = np.linalg.lstsq(X, z, rcond=None)
    ssr = float(np.sum((z - X @ beta) ** 2))
    x_t = np.array([1.0] + [y[T - j] for j in range(p)])
    return float(x_t @ beta), float(np.sqrt(ssr / (len(rows) - p - 1)))


def naive(y, T, h):
    d = np.diff(y[: T + 1])
    return float(y[T]), float(np.sqrt(h * np.mean(d ** 2)))


def mean_model(y, T, h):
    w = y[: T + 1]
    return float(np.mean(w)), float(np.std(w, ddof=1))


def backtest(y, model, h, t0):
    out = {"actual": [], "forecast": [], "sd": []}
    for T in range(t0, len(y) - h):
        f, s = model(y, T, h)
        out["actual"].append(float(y[T + h]))
        out["forecast"].append(f)
        out["sd"].append(s)
    return out


def series():
    d = sm.datasets.macrodata.load_pandas().data
    nile = sm.datasets.nile.load_pandas().data["volume"].to_numpy(dtype=float)
    return {
        "macrodata.infl": d["infl"].to_numpy(dtype=float),
        "macrodata.tbilrate": d["tbilrate"].to_numpy(dtype=float),
        "macrodata.unemp": d["unemp"].to_numpy(dtype=float),
        "nile.volume": nile,
    }


def cases():
    s = series()
    out = []
    for name, t0 in (("macrodata.infl", 120), ("macrodata.tbilrate", 100),
                     ("macrodata.unemp", 130), ("nile.volume", 50)):
        y = s[name]
        for h in (1, 4):
            for model, fn in (("ar(2)", lambda y, T, h: ar_direct(y, T, 2, h)),
                              ("naive", naive), ("mean", mean_model)):
                b = backtest(y, fn, h, t0)
                out.append({"name": f"{name} {model} h={h}", "h": h, **b})
    return out


def pinball(y, q, tau):
    return (y - q) * (tau - (y < q).astype(float))


def quantile_score(c, taus):
    y, f, sd = map(np.asarray, (c["actual"], c["forecast"], c["sd"]))
    losses = [pinball(y, st.norm.ppf(t, loc=f, scale=sd), t) for t in taus]
    return float(np.mean(np.array(losses)))


def efficiency(c):
    y, f = np.asarray(c["actual"]), np.asarray(c["forecast"])
    X = sm.add_constant(f)
    res = sm.OLS(y, X).fit(cov_type="HAC", cov_kwds={"maxlags": c["h"] - 1})
    R = np.eye(2)
    wald = res.wald_test((R, np.array([0.0, 1.0])), use_f=False, scalar=True)
    slope = res.t_test((np.array([[0.0, 1.0]]), np.array([1.0])))
    return {
        "params": [float(v) for v in res.params],
        "bse": [float(v) for v in res.bse],
        "p_intercept": float(res.pvalues[0]),
        "p_slope": float(np.squeeze(slope.pvalue)),
        "wald": float(wald.statistic),
        "p_wald": float(wald.pvalue),
        "cov_type": res.cov_type,
        "use_correction": res.cov_kwds["use_correction"],
    }


def xlogy(n, p):
    return 0.0 if n == 0 else n * np.log(p)


def christoffersen(misses, level):
    m = np.asarray(misses, dtype=int)
    n = len(m)
    p = 1 - level
    n1 = int(m.sum())
    n0 = n - n1
    pi = n1 / n
    lr_uc = -2 * ((xlogy(n0, 1 - p) + xlogy(n1, p)) - (xlogy(n0, 1 - pi) + xlogy(n1, pi)))
    t = np.zeros((2, 2), dtype=int)
    for a, b in zip(m[:-1], m[1:]):
        t[a, b] += 1
    n00, n01, n10, n11 = t[0, 0], t[0, 1], t[1, 0], t[1, 1]
    pi01 = n01 / (n00 + n01) if n00 + n01 else 0.0
    pi11 = n11 / (n10 + n11) if n10 + n11 else 0.0
    pi2 = (n01 + n11) / (n00 + n01 + n10 + n11)
    l_ind = (xlogy(n00, 1 - pi01) + xlogy(n01, pi01) + xlogy(n10, 1 - pi11) + xlogy(n11, pi11))
    l_res = xlogy(n00 + n10, 1 - pi2) + xlogy(n01 + n11, pi2)
    lr_ind = -2 * (l_res - l_ind)
    lr_cc = lr_uc + lr_ind
    return {
        "misses": n1, "transitions": [int(n00), int(n01), int(n10), int(n11)],
        "lr_uc": float(lr_uc), "p_uc": float(st.chi2.sf(lr_uc, 1)),
        "lr_ind": float(lr_ind), "p_ind": float(st.chi2.sf(lr_ind, 1)),
        "lr_cc": float(lr_cc), "p_cc": float(st.chi2.sf(lr_cc, 2)),
    }


def calibration(c, levels):
    y, f, sd = map(np.asarray, (c["actual"], c["forecast"], c["sd"]))
    out = []
    for level in levels:
        z = st.norm.ppf((1 + level) / 2)
        misses = ~((y >= f - z * sd) & (y <= f + z * sd))
        out.append({"level": level, **christoffersen(misses, level)})
    return out


def berkowitz(c):
    y, f, sd = map(np.asarray, (c["actual"], c["forecast"], c["sd"]))
    z = (y - f) / sd
    res = sm.OLS(z[1:], sm.add_constant(z[:-1])).fit()
    sigma2 = res.ssr / (len(z) - 1)
    fitted = res.params[0] + res.params[1] * z[:-1]
    l1 = float(np.sum(st.norm.logpdf(z[1:], loc=fitted, scale=np.sqrt(sigma2))))
    l0 = float(np.sum(st.norm.logpdf(z[1:])))
    lr = 2 * (l1 - l0)
    return {"rho": float(res.params[1]), "constant": float(res.params[0]),
            "sigma2": float(sigma2), "lr": lr, "p": float(st.chi2.sf(lr, 3))}


def autocov(x, k):
    n = len(x)
    xb = x.mean()
    return float(np.sum((x[k:] - xb) * (x[: n - k] - xb)) / n)


def encompassing(e_candidate, e_versus, h):
    e1, e2 = np.asarray(e_versus), np.asarray(e_candidate)
    d = (e1 - e2) * e1
    n = len(d)
    var = autocov(d, 0) + 2 * sum(autocov(d, k) for k in range(1, h))
    assert var > 0
    stat = np.sqrt((n + 1 - 2 * h + h * (h - 1) / n) / n) * d.mean() / np.sqrt(var / n)
    return {"statistic": float(stat), "p_value": float(st.t.sf(stat, n - 1))}


def main():
    all_cases = cases()
    taus_intervals = [0.025, 0.1, 0.9, 0.975]
    taus_more = [0.025, 0.05, 0.1, 0.5, 0.9, 0.95, 0.975]
    out_cases = []
    for c in all_cases:
        y, f, sd = map(np.asarray, (c["actual"], c["forecast"], c["sd"]))
        out_cases.append({
            **c,
            "quantile_score_intervals": quantile_score(c, taus_intervals),
            "quantile_score_more": quantile_score(c, taus_more),
            "log_score": float(-np.mean(st.norm.logpdf(y, loc=f, scale=sd))),
            "efficiency": efficiency(c),
            "calibration": calibration(c, [0.8, 0.95]),
            "berkowitz": berkowitz(c),
        })
    # Encompassing: does naive (and the mean) encompass ar(2), and the reverse?
    by_name = {c["name"]: c for c in all_cases}
    enc = []
    for c in all_cases:
        if " ar(2) " not in c["name"]:
            continue
        for rival in ("naive", "mean"):
            other = by_name[c["name"].replace("ar(2)", rival)]
            e_c = np.asarray(c["actual"]) - np.asarray(c["forecast"])
            e_r = np.asarray(other["actual"]) - np.asarray(other["forecast"])
            for cand, vers, label in ((e_c, e_r, f"{rival} encompasses ar(2)"),
                                      (e_r, e_c, f"ar(2) encompasses {rival}")):
                enc.append({"name": f"{c['name']}: {label}", "h": c["h"],
                            "e_candidate": [float(v) for v in cand],
                            "e_versus": [float(v) for v in vers],
                            **encompassing(cand, vers, c["h"])})
    # Empirical quantiles (numpy default method 'linear': Hyndman & Fan type 7)
    # of forecast errors, whole and as known at each origin (T' + h <= T).
    taus_all = taus_more + [0.0, 1.0, 0.333]
    empirical, past = [], []
    for c in all_cases:
        if " ar(2) " not in c["name"]:
            continue
        e = np.asarray(c["actual"]) - np.asarray(c["forecast"])
        empirical.append({"name": c["name"], "errors": [float(v) for v in e], "taus": taus_all,
                          "quantiles": [float(np.quantile(e, t)) for t in taus_all]})
        h = c["h"]
        qs = []
        for i in range(len(e)):
            k = max(0, i - h + 1)  # origins j with j + h <= i
            qs.append([float(np.quantile(e[:k], t)) for t in taus_more] if k >= 10 else None)
        first = next(i for i, q in enumerate(qs) if q is not None)
        past.append({"name": c["name"], "h": h, "errors": [float(v) for v in e],
                     "taus": taus_more, "quantiles": qs, "first": first})
    obj = {"generator": "generate_density.py", "versions": VERSIONS,
           "taus_intervals": taus_intervals, "taus_more": taus_more,
           "levels": [0.8, 0.95], "cases": out_cases, "encompassing": enc,
           "empirical": empirical, "past": past}
    with open(os.path.join(HERE, "density.json"), "w") as fh:
        json.dump(obj, fh, separators=(",", ":"))
        fh.write("\n")
    print(f"{len(out_cases)} cases, {len(enc)} encompassing cases")


if __name__ == "__main__":
    main()
