#!/usr/bin/env python3
"""Sanity check of the INVENTED demo data (not a test of outturn).

Re-implements with numpy least squares the direct ar/ardl arithmetic of
SPEC.md section 4 for the grid of experiments/water_demand.yaml, and prints
the out-of-sample RMSE of every candidate for one scheme. It answers
questions about the made-up data only: does the rainfall-deficit indicator
help a little at horizon 1 (ardl modestly below ar)? Does every estimation
have at least k + 1 rows and full rank at every origin? It is for people
tuning the demo data; outturn's tests never take expected values from it.

    python3 scripts/check_demo_data.py                       # expanding, h = 1, 3
    python3 scripts/check_demo_data.py --scheme fixed
    python3 scripts/check_demo_data.py --scheme rolling --window 72
    python3 scripts/check_demo_data.py --score-from 2020-07  # forecasts of 2020-07 on
    python3 scripts/check_demo_data.py --score-to 2020-06
"""

import argparse
import csv
import math
import os

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
DATA = os.path.join(HERE, os.pardir, "experiments", "data", "water_demand.csv")
M = 12  # monthly


def transform(values, how):
    """SPEC section 2 transforms of a column, None for a missing cell."""
    out = []
    for t, x in enumerate(values):
        lag = M if how == "seasonal_diff" else 1
        prev = values[t - lag] if t >= lag else None
        if how == "none":
            out.append(x)
        elif x is None or (how != "log" and prev is None):
            out.append(None)
        elif how == "log":
            out.append(math.log(x))
        elif how in ("diff", "seasonal_diff"):
            out.append(x - prev)
        elif how == "log_diff":
            out.append(math.log(x) - math.log(prev))
        elif how == "pct_change":
            out.append(x / prev - 1)
        else:
            raise ValueError(how)
    return out


def load(path):
    with open(path, newline="") as f:
        rows = list(csv.DictReader(f))
    cols = {k: [float(r[k]) if r[k] != "" else None for r in rows] for k in rows[0] if k != "period"}
    return [r["period"] for r in rows], cols


class Series:
    """A transformed column addressed by 1-based target positions."""

    def __init__(self, values, first_row):
        self.values, self.first_row = values, first_row

    def at(self, pos):
        if pos < 1:
            return None  # before position 1 a regressor does not exist (SPEC section 4)
        row = self.first_row + pos - 1
        return self.values[row] if row < len(self.values) else None


class Direct:
    """Direct least-squares ar(p) / ardl(p,q): y_{s+h} on trend, p lags of y, q lags of each predictor."""

    def __init__(self, y, preds, p, q, trend):
        self.y, self.preds, self.p, self.q, self.trend = y, preds, p, q, trend

    def regressors(self, s, h):
        out = []
        if self.trend in ("constant", "linear"):
            out.append(1.0)
        if self.trend == "linear":
            out.append(float(s + h))  # position of the dependent value
        out += [self.y.at(s - j) for j in range(self.p)]
        for series, release_lag, known_ahead in self.preds:
            latest = s + h if known_ahead else s - release_lag
            out += [series.at(latest - j) for j in range(self.q)]
        return None if any(v is None for v in out) else out

    def forecast(self, origin, h, end, window):
        xs, ys = [], []
        for s in range(1, end - h + 1):
            x = self.regressors(s, h)
            if x is not None:
                xs.append(x)
                ys.append(self.y.at(s + h))
        if window:
            xs, ys = xs[-window:], ys[-window:]
        X, Y = np.array(xs), np.array(ys)
        k = X.shape[1]
        if len(Y) < k + 1 or np.linalg.matrix_rank(X) < k:
            raise SystemExit("invalid: %d rows for %d coefficients (or rank deficient) at origin %d, h=%d"
                             % (len(Y), k, origin, h))
        beta = np.linalg.lstsq(X, Y, rcond=None)[0]
        return float(np.dot(beta, self.regressors(origin, h)))


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--data", default=DATA)
    ap.add_argument("--scheme", choices=["fixed", "expanding", "rolling"], default="expanding")
    ap.add_argument("--window", type=int, default=72, help="rolling: regression rows kept")
    ap.add_argument("--first-origin", default="2014-12")
    ap.add_argument("--horizons", default="1,3")
    ap.add_argument("--score-from", default=None, help="score only forecasts of this period on")
    ap.add_argument("--score-to", default=None, help="score only forecasts up to this period")
    args = ap.parse_args()

    periods, cols = load(args.data)
    target = transform(cols["demand_ml"], "seasonal_diff")
    first_row = next(i for i, v in enumerate(target) if v is not None)
    n = max(i for i, v in enumerate(target) if v is not None) - first_row + 1
    y = Series(target, first_row)
    rain = Series(transform(cols["rain_deficit_mm"], "seasonal_diff"), first_row)
    hol = Series(transform(cols["school_holiday_days"], "seasonal_diff"), first_row)
    label = {i + 1: periods[first_row + i] for i in range(n)}
    position = {v: k for k, v in label.items()}
    t0 = position[args.first_origin]
    window = args.window if args.scheme == "rolling" else None
    print("demand_ml seasonal_diff, N=%d, %s scheme%s, first origin %s (T0=%d)"
          % (n, args.scheme, " (window %d)" % window if window else "", args.first_origin, t0))

    rain_p = [(rain, 1, False)]
    both_p = [(rain, 1, False), (hol, 0, True)]
    grid = {}
    for p in [1, 2, 3, 4, 12, 13]:
        grid["ar(%d)" % p] = Direct(y, [], p, 0, "constant")
    grid["ar_trend(1,linear)"] = Direct(y, [], 1, 0, "linear")
    for p in [1, 13]:
        for q in [1, 2, 3]:
            grid["ardl(%d,%d)" % (p, q)] = Direct(y, rain_p, p, q, "constant")
        for q in [1, 2]:
            grid["ardl_cal(%d,%d)" % (p, q)] = Direct(y, both_p, p, q, "constant")

    for h in [int(x) for x in args.horizons.split(",")]:
        origins = list(range(t0, n - h + 1))
        if args.score_from:
            origins = [T for T in origins if T + h >= position[args.score_from]]
        if args.score_to:
            origins = [T for T in origins if T + h <= position[args.score_to]]
        fc = {
            "naive": lambda T, E: y.at(T),
            "seasonal_naive": lambda T, E: y.at(T + h - M * math.ceil(h / M)),
            "mean": lambda T, E: float(np.mean([y.at(i) for i in range(max(1, E - window + 1) if window else 1, E + 1)])),
        }
        for name, model in grid.items():
            fc[name] = lambda T, E, model=model: model.forecast(T, h, E, window)
        rmse = {}
        for name, f in fc.items():
            errs = [y.at(T + h) - f(T, t0 if args.scheme == "fixed" else T) for T in origins]
            rmse[name] = math.sqrt(sum(e * e for e in errs) / len(errs))
        print("horizon %d: %d origins %s .. %s" % (h, len(origins), label[origins[0]], label[origins[-1]]))
        for name, v in sorted(rmse.items(), key=lambda kv: (kv[1], kv[0])):
            note = ""
            if name.startswith("ardl("):
                nested = "ar(%s)" % name[5:].split(",")[0]
                note = "  vs %s %+5.1f %%" % (nested, 100 * (v / rmse[nested] - 1))
            print("  %-20s rmse %7.3f%s" % (name, v, note))


if __name__ == "__main__":
    main()
