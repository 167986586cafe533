#!/usr/bin/env python3
"""Reference values for src/score/compare.rs (outturn).

Regenerate (from the crate root):

    python3 tests/reference/compare/generate_compare.py

Pinned environment: numpy 2.1.3, scipy 1.14.1, arch 7.2.0, statsmodels 0.14.4.

Input data (all public domain, shipped inside the statsmodels package):
  * statsmodels.datasets.macrodata -- US quarterly macro data 1959Q1-2009Q3
    (columns `infl`, `realgdp`, `unemp`, `tbilrate`);
  * statsmodels.datasets.nile -- annual Nile flow at Aswan 1871-1970
    (Cobb 1978);
  * statsmodels.datasets.co2 -- Mauna Loa weekly CO2 1958-2001 as monthly
    means (the few empty months filled by linear interpolation), 12-month
    differences.
Loss series are forecast errors of simple models (naive, mean, drift and
direct least-squares AR(p) with an intercept, expanding window) computed
here from those data; nothing below is invented.

Expected values:
  * autocovariance, Bartlett variance, Diebold-Mariano, Clark-West: a
    from-formula numpy implementation written from outturn SPEC section 4
    (independent of the Rust code); HLN factor written from Harvey,
    Leybourne & Newbold (1997); p-values via scipy.stats.t.sf and
    scipy.stats.norm.sf.
  * Spearman: scipy.stats.spearmanr (average ranks for ties).
  * block length: arch.bootstrap.optimal_block_length (Politis & White 2004,
    Patton, Politis & White 2009), column `stationary`.
  * MCS: arch.bootstrap.MCS(method="max", bootstrap="stationary").
  * SPA: arch.bootstrap.SPA (studentize=True, nested=False) -- which in arch
    7.2.0 does NOT divide by the standard deviations when forming the
    statistic (the `studentize` flag only changes the printed info); and a
    from-formula numpy implementation of Hansen (2005) studentized
    T^SPA driven by arch's own StationaryBootstrap indices, with the model
    attaining the studentized maximum (`driver`, argmax_k sqrt(n) dbar_k /
    omega_k; Hansen 2005, eq. for T^SPA).
"""

import json
import os

import numpy as np
import scipy
import scipy.stats as st
import statsmodels
import statsmodels.api as sm
import arch
from arch.bootstrap import MCS, SPA, StationaryBootstrap, optimal_block_length

HERE = os.path.dirname(os.path.abspath(__file__))

VERSIONS = {
    "numpy": np.__version__,
    "scipy": scipy.__version__,
    "arch": arch.__version__,
    "statsmodels": statsmodels.__version__,
}
assert VERSIONS == {
    "numpy": "2.1.3",
    "scipy": "1.14.1",
    "arch": "7.2.0",
    "statsmodels": "0.14.4",
}, VERSIONS


# --------------------------------------------------------------------------
# Data and forecasts
# --------------------------------------------------------------------------


def macro():
    return sm.datasets.macrodata.load_pandas().data


def nile():
    return sm.datasets.nile.load_pandas().data["volume"].to_numpy(dtype=float)


def co2_annual_change():
    co2 = sm.datasets.co2.load_pandas().data["co2"]
    monthly = co2.resample("MS").mean().interpolate(method="linear").to_numpy(dtype=float)
    return monthly[12:] - monthly[:-12]


def ar_direct(y, T, p, h):
    """Direct AR(p) with intercept, estimated on positions <= T (expanding)."""
    rows = [s for s in range(p - 1, T + 1) if s + h <= T]
    X = np.array([[1.0] + [y[s - j] for j in range(p)] for s in rows])
    z = np.array([y[s + h] for s in rows])
    beta, *_ = np.linalg.lstsq(X, z, rcond=None)
    x_t = np.array([1.0] + [y[T - j] for j in range(p)])
    return float(x_t @ beta)


def forecast(y, T, model, h):
    if model == "naive":
        return float(y[T])
    if model == "mean":
        return float(np.mean(y[: T + 1]))
    if model == "drift":
        return float(y[T] + h * (y[T] - y[0]) / T)
    if model.startswith("ar"):
        return ar_direct(y, T, int(model[2:]), h)
    raise ValueError(model)


def backtest(y, models, h, t0):
    """Forecasts and errors for origins t0..N-1-h (0-based positions)."""
    out = {}
    origins = range(t0, len(y) - h)
    for m in models:
        f = np.array([forecast(y, T, m, h) for T in origins])
        a = np.array([y[T + h] for T in origins])
        out[m] = {"forecast": f, "error": a - f}
    return out


# --------------------------------------------------------------------------
# From-formula statistics (SPEC section 4)
# --------------------------------------------------------------------------


def autocov(x, k):
    x = np.asarray(x, dtype=float)
    n = len(x)
    if k >= n:
        return 0.0  # empty sum
    xb = x.mean()
    return float(np.sum((x[k:] - xb) * (x[: n - k] - xb)) / n)


def bartlett(x, h):
    return autocov(x, 0) + 2 * sum((1 - k / h) * autocov(x, k) for k in range(1, h))


def hln(n, h):
    return float(np.sqrt((n + 1 - 2 * h + h * (h - 1) / n) / n))


def dm(ec, ev, h):
    d = np.asarray(ev) ** 2 - np.asarray(ec) ** 2
    n = len(d)
    if n < 2:
        return None
    var = autocov(d, 0) + 2 * sum(autocov(d, k) for k in range(1, h))
    used_bartlett = False
    if not var > 0:
        var = bartlett(d, h)
        used_bartlett = True
    if not var > 0:
        return None
    stat = d.mean() / np.sqrt(var / n) * hln(n, h)
    p = 2 * st.t.sf(abs(stat), df=n - 1)
    return {"statistic": float(stat), "p_value": float(p), "bartlett": used_bartlett}


def cw(ec, ev, fc, fv, h):
    ec, ev, fc, fv = map(np.asarray, (ec, ev, fc, fv))
    f = ev**2 - (ec**2 - (fv - fc) ** 2)
    n = len(f)
    if n < 2:
        return None
    var = bartlett(f, h)
    if not var > 0:
        return None
    stat = f.mean() / np.sqrt(var / n)
    return {"statistic": float(stat), "p_value": float(st.norm.sf(stat))}


def lst(a):
    return [float(v) for v in a]


def write(name, obj):
    obj = {"generator": "generate_compare.py", "versions": VERSIONS, **obj}
    with open(os.path.join(HERE, name), "w") as fh:
        json.dump(obj, fh, separators=(",", ":"))
        fh.write("\n")


# --------------------------------------------------------------------------
# Pairwise tests
# --------------------------------------------------------------------------


def pairwise_cases():
    d = macro()
    infl = d["infl"].to_numpy(dtype=float)
    gdp = np.diff(np.log(d["realgdp"].to_numpy(dtype=float)))
    tbil = d["tbilrate"].to_numpy(dtype=float)
    volume = nile()
    series = {
        "macrodata.infl": (infl, 100),
        "macrodata.realgdp.log_diff": (gdp, 100),
        "macrodata.tbilrate": (tbil, 120),
        "nile.volume": (volume, 50),
    }
    # (candidate, versus, nested?) -- versus nested in candidate per SPEC.
    pairs = [("ar1", "naive", True), ("ar2", "mean", True), ("ar4", "ar1", True),
             ("ar1", "mean", True), ("drift", "naive", False), ("mean", "naive", False)]
    cases = []
    for sname, (y, t0) in series.items():
        for h in (1, 2, 4, 8):
            bt = backtest(y, ["naive", "mean", "drift", "ar1", "ar2", "ar4"], h, t0)
            for cand, vers, nested in pairs:
                ec, ev = bt[cand]["error"], bt[vers]["error"]
                fc, fv = bt[cand]["forecast"], bt[vers]["forecast"]
                d_ = ev**2 - ec**2
                case = {
                    "name": f"{sname} h={h} {cand} vs {vers}",
                    "h": h,
                    "e_candidate": lst(ec),
                    "e_versus": lst(ev),
                    "f_candidate": lst(fc),
                    "f_versus": lst(fv),
                    "loss_diff_autocov": [autocov(d_, k) for k in range(0, h + 2)],
                    "loss_diff_bartlett": bartlett(d_, h),
                    "hln_factor": hln(len(d_), h),
                    "diebold_mariano": dm(ec, ev, h),
                    "clark_west": cw(ec, ev, fc, fv, h) if nested else None,
                }
                cases.append(case)
    # Keep the file small: all h=1,4 cases plus every case that needed the
    # Bartlett fallback in DM.
    keep = [c for c in cases
            if c["h"] in (1, 4) or (c["diebold_mariano"] or {}).get("bartlett")]
    n_fallback = sum(1 for c in keep if (c["diebold_mariano"] or {}).get("bartlett"))
    # Short subsamples (first n origins) to exercise small n and the
    # Bartlett fallback on real data.
    y, t0 = series["nile.volume"]
    for h in (2, 3, 4):
        bt = backtest(y, ["naive", "mean", "ar1"], h, t0)
        for n_sub in (3, 5, 8, 12):
            ec = bt["ar1"]["error"][:n_sub]
            ev = bt["naive"]["error"][:n_sub]
            fc = bt["ar1"]["forecast"][:n_sub]
            fv = bt["naive"]["forecast"][:n_sub]
            d_ = ev**2 - ec**2
            keep.append({
                "name": f"nile.volume h={h} ar1 vs naive first {n_sub} origins",
                "h": h,
                "e_candidate": lst(ec), "e_versus": lst(ev),
                "f_candidate": lst(fc), "f_versus": lst(fv),
                "loss_diff_autocov": [autocov(d_, k) for k in range(0, h + 2)],
                "loss_diff_bartlett": bartlett(d_, h),
                "hln_factor": hln(len(d_), h),
                "diebold_mariano": dm(ec, ev, h),
                "clark_west": cw(ec, ev, fc, fv, h),
            })
    n_fallback = sum(1 for c in keep if (c["diebold_mariano"] or {}).get("bartlett"))
    assert n_fallback >= 1, "no real-data case exercises the Bartlett fallback"
    write("pairwise.json", {
        "source": "from-formula numpy (SPEC s4); scipy.stats.t.sf / norm.sf",
        "bartlett_fallback_cases": n_fallback,
        "cases": keep,
    })
    return series


# --------------------------------------------------------------------------
# Spearman
# --------------------------------------------------------------------------


def spearman_cases():
    d = macro()
    cases = []
    def add(name, a, b):
        r = st.spearmanr(a, b).statistic
        cases.append({"name": name, "a": lst(a), "b": lst(b),
                      "rho": None if np.isnan(r) else float(r)})
    # unemp (one decimal) and rounded inflation carry many ties.
    add("macrodata unemp vs infl", d["unemp"], d["infl"])
    add("macrodata unemp vs round(infl)", d["unemp"], np.round(d["infl"]))
    add("macrodata realgdp vs realcons", d["realgdp"], d["realcons"])
    v = nile()
    add("nile volume vs lagged volume", v[1:], v[:-1])
    add("nile round(volume,-2) vs year", np.round(v, -2), np.arange(1871.0, 1971.0))
    write("spearman.json", {"source": "scipy.stats.spearmanr", "cases": cases})


# --------------------------------------------------------------------------
# Block length
# --------------------------------------------------------------------------


def block_cases(series):
    cases = []
    def add(name, x):
        b = optimal_block_length(np.asarray(x, dtype=float))
        cases.append({"name": name, "x": lst(x), "stationary": float(b["stationary"].iloc[0])})
    d = macro()
    add("macrodata infl", d["infl"])
    add("macrodata tbilrate", d["tbilrate"])
    add("macrodata unemp diff", np.diff(d["unemp"].to_numpy()))
    add("nile volume", nile())
    y, t0 = series["macrodata.infl"]
    bt = backtest(y, ["naive", "ar1"], 1, t0)
    add("macrodata infl h=1 naive sq error - ar1 sq error",
        bt["naive"]["error"] ** 2 - bt["ar1"]["error"] ** 2)
    y, t0 = series["nile.volume"]
    bt = backtest(y, ["naive", "ar1"], 1, t0)
    add("nile h=1 naive sq error - ar1 sq error",
        bt["naive"]["error"] ** 2 - bt["ar1"]["error"] ** 2)
    write("block_length.json", {
        "source": "arch.bootstrap.optimal_block_length (column stationary)",
        "cases": cases})


# --------------------------------------------------------------------------
# MCS and SPA
# --------------------------------------------------------------------------


def mcs_block_length(losses):
    """Rule used by compare.rs: mean of the Politis-White stationary block
    lengths of each model's loss minus the cross-model mean loss, series
    without variation skipped, result clamped to [1, n]."""
    n, k = losses.shape
    dev = losses - losses.mean(1, keepdims=True)
    bs = []
    for j in range(k):
        if np.ptp(dev[:, j]) > 0:
            b = float(optimal_block_length(dev[:, j])["stationary"].iloc[0])
            if np.isfinite(b):
                bs.append(b)
    b = float(np.mean(bs)) if bs else 1.0
    return min(max(b, 1.0), float(n))


def spa_block_length(bench, models):
    diffs = bench[:, None] - models
    n, k = diffs.shape
    bs = []
    for j in range(k):
        if np.ptp(diffs[:, j]) > 0:
            b = float(optimal_block_length(diffs[:, j])["stationary"].iloc[0])
            if np.isfinite(b):
                bs.append(b)
    b = float(np.mean(bs)) if bs else 1.0
    return min(max(b, 1.0), float(n))


def sb_indices(n, block, reps, seed):
    bs = StationaryBootstrap(block, np.arange(n), seed=seed)
    return [np.asarray(data[0][0], dtype=int) for data in bs.bootstrap(reps)]


def spa_from_formula(bench, models, block, indices, studentize):
    """Hansen (2005) from the paper, given bootstrap index vectors."""
    d = bench[:, None] - models
    n, k = d.shape
    dbar = d.mean(0)
    dm_ = d - dbar
    q = 1.0 / block
    om2 = np.sum(dm_**2, 0) / n
    for i in range(1, n):
        kappa = (n - i) / n * (1 - q) ** i + i / n * (1 - q) ** (n - i)
        om2 = om2 + 2 * kappa * np.sum(dm_[: n - i] * dm_[i:], 0) / n
    om = np.sqrt(om2) if studentize else np.ones(k)
    scale = np.sqrt(n) if studentize else 1.0
    thr = -np.sqrt(om2 / n * 2 * np.log(np.log(n)))
    mu = {"lower": np.maximum(dbar, 0.0),
          "consistent": np.where(dbar >= thr, dbar, 0.0),
          "upper": dbar}
    driver = int(np.argmax(scale * dbar / om))  # first on ties
    stat = np.max(scale * dbar / om)
    if studentize:
        stat = max(stat, 0.0)
    out = {"statistic": float(stat), "omega2": lst(om2), "driver": driver}
    for key, m in mu.items():
        cnt = 0
        for idx in indices:
            z = scale * (d[idx].mean(0) - m) / om
            t = np.max(z)
            if studentize:
                t = max(t, 0.0)
            cnt += t > stat
        out[key] = cnt / len(indices)
    return out


def loss_sets(series):
    sets = []
    y, t0 = series["macrodata.infl"]
    for h in (1, 4):
        models = ["naive", "mean", "drift", "ar1", "ar2", "ar4"]
        bt = backtest(y, models, h, t0)
        sets.append((f"macrodata.infl h={h} squared errors", models,
                     np.column_stack([bt[m]["error"] ** 2 for m in models])))
    y, t0 = series["macrodata.realgdp.log_diff"]
    models = ["naive", "mean", "drift", "ar1", "ar2", "ar4"]
    bt = backtest(y, models, 1, t0)
    sets.append(("macrodata.realgdp.log_diff h=1 absolute errors", models,
                 np.column_stack([np.abs(bt[m]["error"]) for m in models])))
    y, t0 = series["nile.volume"]
    models = ["naive", "mean", "ar1", "ar2"]
    bt = backtest(y, models, 1, t0)
    sets.append(("nile.volume h=1 squared errors", models,
                 np.column_stack([bt[m]["error"] ** 2 for m in models])))
    y = co2_annual_change()
    for h in (1, 3):
        models = ["naive", "mean", "ar1", "ar2", "ar4"]
        bt = backtest(y, models, h, 400)
        sets.append((f"co2.monthly_12_month_change h={h} squared errors", models,
                     np.column_stack([bt[m]["error"] ** 2 for m in models])))
    return sets


MC_REPS = 100_000   # arch resamples for the Monte-Carlo comparison
IDX_REPS = 200      # arch index vectors shipped for the exact comparison
SEED = 20261201


def mcs_cases(series):
    cases = []
    for name, models, L in loss_sets(series):
        n, k = L.shape
        block = mcs_block_length(L)
        alpha = 0.10
        m = MCS(L, size=alpha, reps=MC_REPS, block_size=block, method="max",
                bootstrap="stationary", seed=SEED)
        m.compute()
        pv = m.pvalues["Pvalue"].sort_index()
        # Exact replay: arch's own indices for a short run.
        m2 = MCS(L, size=alpha, reps=IDX_REPS, block_size=block, method="max",
                 bootstrap="stationary", seed=SEED + 1)
        m2.compute()
        pv2 = m2.pvalues["Pvalue"].sort_index()
        cases.append({
            "name": name,
            "models": models,
            "losses": [lst(L[:, j]) for j in range(k)],
            "alpha": alpha,
            "block_length": block,
            "mc_resamples": MC_REPS,
            "p_values": [float(pv[j]) for j in range(k)],
            "included": [bool(pv[j] > alpha) for j in range(k)],
            "replay": {
                "indices": [[int(i) for i in idx] for idx in m2._bootstrap_indices],
                "p_values": [float(pv2[j]) for j in range(k)],
                "included": [bool(pv2[j] > alpha) for j in range(k)],
            },
        })
    write("mcs.json", {
        "source": "arch.bootstrap.MCS(method='max', bootstrap='stationary') "
                  "(Hansen, Lunde & Nason 2011)",
        "cases": cases})


def spa_cases(series):
    cases = []
    for name, models, L in loss_sets(series):
        bench_name = models[0]
        bench = L[:, 0]
        others = L[:, 1:]
        n = len(bench)
        block = spa_block_length(bench, others)
        s = SPA(bench, others, block_size=block, reps=MC_REPS, seed=SEED)
        s.compute()
        arch_p = {k_: float(v) for k_, v in s.pvalues.items()}
        # studentized Hansen (2005), arch's stationary bootstrap indices
        idx_mc = sb_indices(n, block, MC_REPS, SEED)
        hansen = spa_from_formula(bench, others, block, idx_mc, True)
        raw = spa_from_formula(bench, others, block, idx_mc, False)
        # arch 7.2.0 == unstudentized formula on the same indices (exactly)
        for key in ("lower", "consistent", "upper"):
            assert abs(raw[key] - arch_p[key]) < 1e-12, (key, raw[key], arch_p[key])
        assert np.allclose(raw["omega2"], s._loss_diff_var, rtol=1e-12)
        # short exact replay with shipped indices
        idx_short = sb_indices(n, block, IDX_REPS, SEED + 1)
        s2 = SPA(bench, others, block_size=block, reps=IDX_REPS, seed=SEED + 1)
        s2.compute()
        raw_short = spa_from_formula(bench, others, block, idx_short, False)
        for key in ("lower", "consistent", "upper"):
            assert abs(raw_short[key] - float(s2.pvalues[key])) < 1e-12
        hansen_short = spa_from_formula(bench, others, block, idx_short, True)
        cases.append({
            "name": name,
            "benchmark": bench_name,
            "models": models[1:],
            "benchmark_losses": lst(bench),
            "model_losses": [lst(others[:, j]) for j in range(others.shape[1])],
            "block_length": block,
            "mc_resamples": MC_REPS,
            "omega2": hansen["omega2"],
            "studentized": {k_: hansen[k_] for k_ in ("statistic", "lower", "consistent", "upper")},
            "driver": hansen["driver"],
            "driver_model": models[1:][hansen["driver"]],
            "lowest_mean_loss": models[1:][int(np.argmin(others.mean(0)))],
            "arch": {"statistic": float(np.max(bench.mean() - others.mean(0))), **arch_p},
            "replay": {
                "indices": [[int(i) for i in idx] for idx in idx_short],
                "studentized": {k_: hansen_short[k_] for k_ in ("lower", "consistent", "upper")},
                "arch": {k_: float(s2.pvalues[k_]) for k_ in ("lower", "consistent", "upper")},
            },
        })
    write("spa.json", {
        "source": "arch.bootstrap.SPA 7.2.0 (stationary, studentize=True, nested=False) and "
                  "from-formula Hansen (2005) studentized SPA on arch's indices",
        "cases": cases})


if __name__ == "__main__":
    s = pairwise_cases()
    spearman_cases()
    block_cases(s)
    mcs_cases(s)
    spa_cases(s)
    print("ok")
