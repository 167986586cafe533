#!/usr/bin/env python3
"""Reference values for order selection (`ar` with `select`, `max_lags`),
psi-weights and normal quantiles.  Used by tests/reference_select.rs and
tests/scoring_metrics.rs.

Run from anywhere (output is deterministic, committed; CI never runs it):

    pip install -r tests/reference/requirements.txt
    python3 tests/reference/select/generate_select.py

Pinned versions (checked at start-up): numpy 2.1.3, scipy 1.14.1,
statsmodels 0.14.4, pandas 2.2.3.

Data: statsmodels.datasets.macrodata (US quarterly macro series 1959Q1-2009Q3),
columns infl and realgdp written unchanged to macro_select.csv.

What is computed, and by what
-----------------------------
* Order selection.  outturn's rule (DEVELOPERS.md, "Order selection"): inside
  every training window each order p = 1..P is fitted on the common sample of
  the largest order (rows where all P lags exist), the criterion is
  n*ln(SSR/n) + penalty*k (AIC 2, BIC ln n, HQIC 2 ln ln n; k = coefficients
  including the intercept; ties to the smaller order), and the chosen order's
  fit on that sample gives the forecast.
  The reference is statsmodels:
    - order: statsmodels.tsa.ar_model.ar_select_order(y_window, maxlag=P,
      ic=..., trend='c', glob=False).  It fits every order on the same
      hold_back=P sample; its criteria are -2 llf + penalty*(df_model+1) with
      llf = -n/2 (ln(2 pi SSR/n) + 1), i.e. ours plus n(ln 2 pi + 1), a
      constant within a window, so the ranking is the same.  The script
      verifies this claim by computing our criterion directly (numpy lstsq on
      the same sample) and by checking that statsmodels' value minus ours is
      the constant n(ln 2 pi + 1) for every order; it records every window
      where the two choices differ.  statsmodels also considers p = 0
      (intercept only), which outturn's ar does not: the reference order is
      the minimiser of statsmodels' own criterion values over p = 1..P (the
      same as ar_select_order's choice whenever that is >= 1; checked), and
      the windows where ar_select_order picks p = 0 are listed in
      selection_check.json under statsmodels_chose_zero.
    - forecast: AutoReg(y_window, lags=p, trend='c', hold_back=P).fit(),
      one step ahead (h = 1), or predict(start=T, end=T+3) (iterated,
      dynamic) for multi_step: iterated.
    - 80% interval: AutoReg's get_prediction(...).conf_int(alpha=0.2), whose
      sigma2 is SSR/nobs, rescaled by sqrt(nobs/(nobs-k)) to SPEC section 4's
      SSR/(rows-k); is_mse = AutoReg's sigma2 (SSR/nobs).
* psi_weights.json: statsmodels ArmaProcess(np.r_[1, -phi], [1]).arma2ma(count).
* normal_quantiles.json: scipy.stats.norm.ppf.
"""

from __future__ import annotations

import csv
import io
import json
import math
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import scipy
import scipy.stats
import statsmodels
import statsmodels.api as sm
from statsmodels.tsa.ar_model import AutoReg, ar_select_order
from statsmodels.tsa.arima_process import ArmaProcess

PINNED = {"numpy": (np, "2.1.3"), "scipy": (scipy, "1.14.1"),
          "statsmodels": (statsmodels, "0.14.4"), "pandas": (pd, "2.2.3")}
for name, (mod, ver) in PINNED.items():
    if mod.__version__ != ver:
        sys.exit("%s %s installed, %s pinned" % (name, mod.__version__, ver))

HERE = Path(__file__).resolve().parent
Z80 = float(scipy.stats.norm.ppf(0.9))


def fmt(x) -> str:
    return "" if x is None else repr(float(x))


def write_text(path: Path, text: str) -> None:
    with open(path, "w", newline="\n", encoding="utf-8") as fh:
        fh.write(text)


def write_json(path: Path, obj) -> None:
    write_text(path, json.dumps(obj, indent=2) + "\n")


# ---------------------------------------------------------------------------
# data
# ---------------------------------------------------------------------------

d = sm.datasets.macrodata.load_pandas().data
LABELS = ["%dQ%d" % (int(r.year), int(r.quarter)) for r in d.itertuples()]
out = io.StringIO()
w = csv.writer(out, lineterminator="\n")
w.writerow(["period", "infl", "realgdp"])
for i, lab in enumerate(LABELS):
    w.writerow([lab, fmt(d["infl"].iloc[i]), fmt(d["realgdp"].iloc[i])])
write_text(HERE / "macro_select.csv", out.getvalue())

# Transformed targets in position space (SPEC section 4): position j (1-based)
# is y[j-1]; labels[j-1] is its period.
SERIES = {
    "infl": (d["infl"].to_numpy(float), LABELS),
    # log_diff: ln x_t - ln x_{t-1}; position 1 is 1959Q2
    "realgdp": (np.diff(np.log(d["realgdp"].to_numpy(float))), LABELS[1:]),
}

CRITERIA = ["aic", "bic", "hqic"]


def penalty(ic: str, n: int) -> float:
    return {"aic": 2.0, "bic": math.log(n), "hqic": 2.0 * math.log(math.log(n))}[ic]


def our_choice(yw: np.ndarray, P: int, ic: str):
    """outturn's rule computed directly: orders 1..P on the common sample
    (dependent positions P+1..len), n ln(SSR/n) + penalty k, ties to smaller.
    Returns (chosen p, {p: criterion}) with p = 0 included in the dict for
    information only."""
    n = len(yw) - P
    dep = yw[P:]
    vals = {}
    for p in range(0, P + 1):
        X = np.column_stack([np.ones(n)] + [yw[P - j: len(yw) - j] for j in range(1, p + 1)])
        beta, *_ = np.linalg.lstsq(X, dep, rcond=None)
        ssr = float(np.sum((dep - X @ beta) ** 2))
        vals[p] = n * math.log(ssr / n) + penalty(ic, n) * (p + 1)
    best = None
    for p in range(1, P + 1):
        if best is None or vals[p] < vals[best]:
            best = p
    return best, vals


def sm_choice(yw: np.ndarray, P: int, ic: str):
    sel = ar_select_order(yw, maxlag=P, ic=ic, trend="c", glob=False)
    lags = sel.ar_lags
    p = 0 if lags is None or len(lags) == 0 else int(max(lags))
    if p and list(lags) != list(range(1, p + 1)):
        sys.exit("ar_select_order returned a non-contiguous lag set %s" % list(lags))
    ics = {}
    raw = getattr(sel, ic)  # {lags tuple or 0: value}
    for key, v in raw.items():
        q = 0 if key == 0 else len(key)
        ics[q] = float(v)
    return p, ics


def reference(name, target, P, schemes, horizons, iterated, report):
    """schemes: list of (scheme id, window or None, first origin label)."""
    y, labels = SERIES[target]
    N = len(y)
    rows = []
    windows = 0
    for scheme_id, window, first in schemes:
        T0 = labels.index(first) + 1
        hmax = max(horizons)
        for T in range(T0, N - min(horizons) + 1):
            # estimation window (expanding: positions 1..T; rolling: the last
            # `window` regression rows of the common sample, plus P presample
            # values for their lags)
            if window is None:
                yw = y[:T]
            else:
                start = max(0, T - window - P)
                yw = y[start:T]
            for ic in CRITERIA:
                ours, our_vals = our_choice(yw, P, ic)
                unrestricted, sm_vals = sm_choice(yw, P, ic)
                # outturn's ar searches p = 1..P; ar_select_order also tries
                # p = 0.  The reference order is the minimiser of statsmodels'
                # own criterion values over 1..P (ties to the smaller order),
                # equal to ar_select_order's choice whenever that is >= 1.
                theirs = min(range(1, P + 1), key=lambda q: (sm_vals[q], q))
                if unrestricted != 0 and unrestricted != theirs:
                    sys.exit("restricted choice %d differs from ar_select_order's %d"
                             % (theirs, unrestricted))
                windows += 1
                # the claim: statsmodels' IC = ours + n (ln 2 pi + 1) for every order
                n = len(yw) - P
                offset = n * (math.log(2 * math.pi) + 1)
                for q in range(P + 1):
                    if abs(sm_vals[q] - our_vals[q] - offset) > 1e-8 * max(1.0, abs(sm_vals[q])):
                        sys.exit("%s %s T=%s p=%d: statsmodels %r, ours + offset %r"
                                 % (name, ic, labels[T - 1], q, sm_vals[q], our_vals[q] + offset))
                ranked = sorted(our_vals[q] for q in range(1, P + 1))
                margin = ranked[1] - ranked[0]
                if name not in report["smallest_margin"] or margin < report["smallest_margin"][name]["margin"]:
                    report["smallest_margin"][name] = {
                        "margin": margin, "scheme": scheme_id, "criterion": ic,
                        "origin": labels[T - 1]}
                if ours != theirs:
                    report["disagreements"].append(
                        {"experiment": name, "scheme": scheme_id, "criterion": ic,
                         "origin": labels[T - 1], "ours": ours, "statsmodels": theirs})
                if unrestricted == 0:
                    report["statsmodels_chose_zero"].append(
                        {"experiment": name, "scheme": scheme_id, "criterion": ic,
                         "origin": labels[T - 1], "best_of_1_to_P": theirs})
                p = theirs
                res = AutoReg(yw, lags=p, trend="c", hold_back=P).fit()
                k = len(res.params)
                if res.nobs != len(yw) - P:
                    sys.exit("AutoReg nobs %d != common sample %d" % (res.nobs, len(yw) - P))
                last = len(yw)
                steps = hmax if iterated else 1
                fc = np.asarray(res.predict(start=last, end=last + steps - 1))
                ci = res.get_prediction(start=last, end=last + steps - 1, dynamic=True).conf_int(alpha=0.2)
                ci = np.asarray(ci)
                dof = math.sqrt(res.nobs / (res.nobs - k))
                for h in horizons:
                    if T + h > N or (not iterated and h != 1):
                        continue
                    f = float(fc[h - 1])
                    half = (ci[h - 1, 1] - ci[h - 1, 0]) / 2 * dof
                    if h == 1:
                        # SPEC section 4 directly: z * sqrt(SSR/(rows - k))
                        direct = Z80 * math.sqrt(float(np.sum(res.resid ** 2)) / (res.nobs - k))
                        if abs(direct - half) > 1e-10 * direct:
                            sys.exit("interval half-width mismatch %r %r" % (direct, half))
                    rows.append([target, "ar(%s,%d)" % (ic, P), scheme_id, str(h), labels[T - 1],
                                 labels[T + h - 1], str(p), fmt(f), fmt(y[T + h - 1]),
                                 fmt(res.sigma2), fmt(f - half), fmt(f + half)])
    report["windows"][name] = windows
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["target", "candidate", "scheme", "horizon", "origin", "period", "order",
                "forecast", "actual", "is_mse", "q10", "q90"])
    w.writerows(rows)
    write_text(HERE / ("expected_%s.csv" % name), buf.getvalue())
    return rows


def experiment_yaml(name, target, transform, P, schemes, horizons, iterated, notes):
    cands = "".join("  - family: ar\n    select: %s\n    max_lags: %d\n" % (ic, P) for ic in CRITERIA)
    sch = ""
    for _, window, first in schemes:
        if window is None:
            sch += "    - expanding: {first_origin: %s}\n" % first
        else:
            sch += "    - rolling: {window: %d, first_origin: %s}\n" % (window, first)
    text = (
        "version: 1\n"
        "experiment: %s\n"
        "notes: %s\n\n"
        "data:\n  file: macro_select.csv\n  time: period\n  frequency: quarterly\n\n"
        "target: %s\n"
        "transform: %s\n\n"
        "candidates:\n%s\n"
        "backtest:\n  schemes:\n%s"
        "  horizons: [%s]\n"
        "  multi_step: %s\n\n"
        "scoring:\n  metrics: [rmse]\n  intervals: [0.8]\n\n"
        "report:\n  formats: [markdown]\n\n"
        "seed: 1\n"
    ) % (name.replace("_", "-"), notes, target, transform, cands, sch,
         ", ".join(str(h) for h in horizons), "iterated" if iterated else "direct")
    write_text(HERE / ("%s.yaml" % name), text)


def main():
    report = {"disagreements": [], "statsmodels_chose_zero": [], "windows": {},
              # the closest call: runner-up minus best criterion over p = 1..P
              "smallest_margin": {}}

    # 1. infl (untransformed), max_lags 8, direct h = 1, expanding and rolling(60),
    # first origin at position floor(0.6 N).
    y, labels = SERIES["infl"]
    first = labels[int(0.6 * len(y)) - 1]
    schemes = [("expanding", None, first), ("rolling(60)", 60, first)]
    experiment_yaml("select_infl", "infl", "none", 8, schemes, [1], False,
                    "Reference check of ar order selection (aic, bic, hqic) against statsmodels ar_select_order and AutoReg.")
    reference("select_infl", "infl", 8, schemes, [1], False, report)

    # 2. realgdp log_diff, max_lags 6, iterated h = 1, 4, expanding.
    y, labels = SERIES["realgdp"]
    first = labels[int(0.6 * len(y)) - 1]
    schemes = [("expanding", None, first)]
    experiment_yaml("select_gdp_iterated", "realgdp", "log_diff", 6, schemes, [1, 4], True,
                    "Reference check of ar order selection with iterated multi-step forecasts against statsmodels AutoReg.")
    reference("select_gdp_iterated", "realgdp", 6, schemes, [1, 4], True, report)

    write_json(HERE / "selection_check.json", report)
    print("windows checked:", report["windows"])
    print("our rule vs statsmodels disagreements:", len(report["disagreements"]))
    print("statsmodels chose p = 0:", len(report["statsmodels_chose_zero"]))

    # 3. psi-weights: ArmaProcess(np.r_[1, -phi], [1]).arma2ma(count)
    cases = []
    for phi in ([0.5], [-0.7], [0.5, 0.3], [1.2, -0.5], [0.4, -0.2, 0.25, 0.1], [0.9, 0.0, 0.0, -0.3]):
        count = 12
        psi = ArmaProcess(np.r_[1, -np.asarray(phi)], [1]).arma2ma(count)
        cases.append({"phi": phi, "count": count, "psi": [float(v) for v in psi]})
    write_json(HERE / "psi_weights.json",
               {"source": "statsmodels 0.14.4 ArmaProcess(np.r_[1, -phi], [1]).arma2ma(count)",
                "cases": cases})

    # 4. normal quantiles: scipy.stats.norm.ppf
    ps = [0.5, 0.75, 0.8, 0.9, 0.95, 0.975, 0.995, 0.025, 0.001]
    write_json(HERE / "normal_quantiles.json",
               {"source": "scipy 1.14.1 scipy.stats.norm.ppf",
                "cases": [{"p": p, "quantile": float(scipy.stats.norm.ppf(p))} for p in ps]})


if __name__ == "__main__":
    main()
