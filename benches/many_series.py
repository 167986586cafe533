#!/usr/bin/env python3
"""Many series on one machine: outturn's wall time and peak memory as the
number of targets grows.

Panel (invented, seeded; no real data): K monthly series of 72 months from
2019-01, each a positive level times a seasonal pattern with a slow trend
and noise (numpy's default generator, seed 7 + K), written as one wide CSV
(`period`, `s0` … `s{K-1}`).

Experiment: candidates naive, seasonal_naive, mean, drift, ar lags 1..4,
theta and smoothing (no trend, no season); horizons 1..12; two schemes:
a single-origin holdout of the last 12 months (`fixed`, `origins: first`)
and an expanding scheme whose first origin is 17 months before the end
(6 origins at h = 12, 17 at h = 1); metrics rmse, mae and mase; benchmark
naive; Markdown report.

For each K: `outturn run --jobs J --no-cache --quiet` timed as a whole
process (start-up, reading, every table, the report, the folder swap), the
peak resident memory of the child read from wait4(2) (the kernel's
ru_maxrss), over `--runs` rounds; medians are printed with the min-max
spread, and the bytes of memory per series between consecutive sizes.

usage: python3 benches/many_series.py [--series 1000 10000 100000] [--runs 1]
           [--jobs 2] [--outturn target/release/outturn] [--work DIR]
The machine may be shared: read medians and ratios, not single figures.
Large K writes a large results folder (about 0.2 MB per series).
"""
import argparse
import os
import shutil
import statistics
import subprocess
import tempfile
import time

import numpy as np

LENGTH = 72
HOLDOUT = 12


def panel(path, k):
    rng = np.random.default_rng(7 + k)
    t = np.arange(LENGTH)
    level = rng.lognormal(4.0, 1.0, size=(k, 1))
    amp = rng.uniform(0.0, 0.3, size=(k, 1))
    phase = rng.uniform(0, 2 * np.pi, size=(k, 1))
    trend = rng.normal(0.0, 0.004, size=(k, 1))
    noise = rng.normal(0.0, 0.05, size=(k, LENGTH))
    y = level * np.exp(trend * t + amp * np.sin(2 * np.pi * t / 12 + phase) + noise)
    periods = [f"{2019 + m // 12}-{m % 12 + 1:02d}" for m in range(LENGTH)]
    with open(path, "w") as f:
        f.write("period," + ",".join(f"s{i}" for i in range(k)) + "\n")
        for j, p in enumerate(periods):
            f.write(p + "," + ",".join(f"{v:.4f}" for v in y[:, j]) + "\n")
    return periods


def experiment(path, data, k, periods):
    holdout_first = periods[LENGTH - HOLDOUT - 1]
    expanding_first = periods[LENGTH - HOLDOUT - 6]
    targets = "\n".join(f"  - s{i}" for i in range(k))
    text = f"""\
# Written by benches/many_series.py: an invented panel for performance work.
version: 1
experiment: many-series-{k}
notes: Invented monthly panel ({k} series x {LENGTH} months), performance work only.

data:
  file: {data}
  time: period
  frequency: monthly

target:
{targets}
transform: none

candidates:
  - family: naive
  - family: seasonal_naive
  - family: mean
  - family: drift
  - family: ar
    lags: {{from: 1, to: 4}}
  - family: theta
  - family: smoothing
    trend: [none]
    season: [none]

backtest:
  schemes:
    - fixed: {{first_origin: {holdout_first}, origins: first}}
    - expanding: {{first_origin: {expanding_first}}}
  horizons: [{", ".join(str(h) for h in range(1, HOLDOUT + 1))}]

scoring:
  metrics: [rmse, mae, mase]
  benchmark: naive

report:
  formats: [markdown]
"""
    with open(path, "w") as f:
        f.write(text)


def timed(cmd):
    start = time.monotonic()
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.monotonic() - start
    err = proc.stderr.read().decode(errors="replace")
    proc.stderr.close()
    code = os.waitstatus_to_exitcode(status)
    if code != 0:
        raise SystemExit(f"{' '.join(cmd)} exited {code}:\n{err}")
    return wall, usage.ru_maxrss / 1024.0  # MiB


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--series", type=int, nargs="+", default=[1000, 10000, 100000])
    ap.add_argument("--runs", type=int, default=1)
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--outturn", default=os.path.join(os.path.dirname(__file__), "..", "target", "release", "outturn"))
    ap.add_argument("--work", default=None)
    a = ap.parse_args()
    work = a.work or tempfile.mkdtemp(prefix="outturn-many-")
    os.makedirs(work, exist_ok=True)
    print(f"== many series: {os.cpu_count()} cores, --jobs {a.jobs}, {a.runs} round(s), work {work}")
    print(f"{'series':>8} {'wall s (median, min-max)':>28} {'peak MiB (max)':>15} {'results MB':>11} {'forecasts/s':>12}")
    previous = None
    for k in a.series:
        data = os.path.join(work, f"panel{k}.csv")
        periods = panel(data, k)
        yaml = os.path.join(work, f"many{k}.yaml")
        experiment(yaml, os.path.basename(data), k, periods)
        out = os.path.join(work, f"out{k}")
        walls, peaks = [], []
        for _ in range(a.runs):
            shutil.rmtree(out, ignore_errors=True)
            w, m = timed([a.outturn, "run", yaml, "--out", out, "--jobs", str(a.jobs), "--no-cache", "--quiet"])
            walls.append(w)
            peaks.append(m)
        size = sum(os.path.getsize(os.path.join(out, f)) for f in os.listdir(out)) / 1e6
        with open(os.path.join(out, "forecasts.csv")) as f:
            rows = sum(1 for _ in f) - 1
        med = statistics.median(walls)
        print(f"{k:>8} {med:>12.2f} ({min(walls):.2f}-{max(walls):.2f}) {max(peaks):>15.1f} {size:>11.1f} {rows / med:>12.0f}")
        if previous:
            pk, pm = previous
            per = (max(peaks) - pm) * 1024 * 1024 / (k - pk)
            print(f"{'':>8} peak memory per further series from {pk}: {per:,.0f} bytes")
        previous = (k, max(peaks))
        if a.work is None:
            shutil.rmtree(out, ignore_errors=True)


if __name__ == "__main__":
    main()
