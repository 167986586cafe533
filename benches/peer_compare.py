#!/usr/bin/env python3
"""Helper for benches/peer_compare.sh (standard library only).

Subcommands
  experiment  write the outturn experiment equivalent to the peer's grid
  compare     check outturn's forecasts.csv against a peer's --out CSV
  bench       run commands in interleaved rounds; print wall time and peak RSS
              (a command whose line holds {k} runs as two copies side by
              side, {k} = 1 and 2; its wall time lasts until both finish)

Wall time is a monotonic clock read around each child process (start-up
included); peak RSS is the kernel's ru_maxrss of that child as returned by
wait4(2) -- the same accounting `/usr/bin/time -v` prints as "Maximum
resident set size".
"""
import argparse
import csv
import json
import math
import os
import shlex
import statistics
import subprocess
import sys
import time

# The peer's grid: ar(1..8) and these ardl (p, q) pairs, predictor x.
AR_LAGS = range(1, 9)
ARDL_PAIRS = [(1, 1), (2, 1), (4, 1), (2, 2), (2, 4), (4, 2), (4, 4)]


def cmd_experiment(a):
    targets = ", ".join(f"y{k}" for k in range(a.series))
    # ardl entries expand lags x predictor_lags as a grid (SPEC section 3), so
    # three entries give exactly the seven pairs above, in the peer's order.
    text = f"""\
# Written by benches/peer_compare.py: the grid of ../shared/peer/scripted_backtest.py
# (--max-lag 8 --ardl {' '.join(f'{p},{q}' for p, q in ARDL_PAIRS)} --first-origin {a.first_origin} --horizons 1 4).
version: 1
experiment: peer-compare-{a.series}
notes: Invented benchmark panel ({a.series} series); performance work only.

data:
  file: {a.panel}
  time: t
  frequency: index

target: [{targets}]
transform: none

predictors:
  - column: x
    transform: none
    release_lag: 0          # the peer uses x at positions s..s-q+1

candidates:
  - family: ar
    lags: {{from: 1, to: 8}}
  - family: ardl
    lags: [1, 2, 4]
    predictors: [x]
    predictor_lags: [1]
  - family: ardl
    lags: [2]
    predictors: [x]
    predictor_lags: [2, 4]
  - family: ardl
    lags: [4]
    predictors: [x]
    predictor_lags: [2, 4]

backtest:
  schemes:
    - expanding: {{first_origin: {a.first_origin}}}
  horizons: [1, 4]
  multi_step: direct

scoring:
  metrics: [rmse]

report:
  formats: [markdown]
"""
    with open(a.out, "w") as f:
        f.write(text)


def peer_candidate_to_id(name):
    # The peer writes ar(p) and ardl(p,q); outturn's ids (SPEC section 3) for
    # ar with the default constant trend and ardl with one predictor are the
    # same strings. Map explicitly so a change on either side is caught.
    if name.startswith("ar(") and name.endswith(")"):
        return f"ar({int(name[3:-1])})"
    if name.startswith("ardl(") and name.endswith(")"):
        p, q = (int(v) for v in name[5:-1].split(","))
        return f"ardl({p},{q})"
    raise ValueError(f"unknown peer candidate {name!r}")


def cmd_compare(a):
    with open(a.panel) as f:
        r = csv.reader(f)
        head = next(r)
        ti = head.index("t")
        labels = [row[ti] for row in r]  # position i (1-based) -> labels[i-1]

    ours = {}
    with open(a.outturn) as f:
        for row in csv.DictReader(f):
            if row["scheme"] != "expanding":
                continue
            key = (row["target"], row["candidate"], int(row["horizon"]), row["origin"])
            if key in ours:
                sys.exit(f"duplicate outturn row {key}")
            ours[key] = float(row["forecast"])

    peer = {}
    with open(a.peer) as f:
        for row in csv.DictReader(f):
            origin = labels[int(row["origin"]) - 1]
            key = (row["target"], peer_candidate_to_id(row["candidate"]), int(row["horizon"]), origin)
            peer[key] = float(row["forecast"])

    missing = sorted(set(peer) - set(ours))
    extra = sorted(set(ours) - set(peer))
    bad = []
    worst = (0.0, None)
    for key, ref in peer.items():
        if key not in ours:
            continue
        got = ours[key]
        scaled = abs(got - ref) / max(1.0, abs(ref))
        if not math.isfinite(got) or scaled > a.tol:
            bad.append((key, got, ref, scaled))
        if scaled > worst[0] or worst[1] is None:
            worst = (scaled, key)
    ok = not missing and not extra and not bad
    verdict = "PASS" if ok else "FAIL"
    print(f"  {a.name:<12} {verdict}: {len(peer)} peer forecasts, {len(ours)} outturn forecasts, "
          f"{len(missing)} missing, {len(extra)} extra, {len(bad)} beyond {a.tol:g}*max(1,|f|); "
          f"max scaled diff {worst[0]:.2e} at {worst[1]}")
    for key in missing[:5]:
        print(f"    missing in outturn: {key}")
    for key in extra[:5]:
        print(f"    not in peer: {key}")
    for key, got, ref, scaled in sorted(bad, key=lambda b: -b[3])[:5]:
        print(f"    {key}: outturn {got!r} peer {ref!r} (scaled diff {scaled:.2e})")
    return 0 if ok else 1


def run_once(argv, log):
    """Run a command, or two copies of it side by side when its words hold
    {k} (k = 1, 2); the wall time lasts until every copy has finished and
    the peak is the largest single copy's."""
    copies = [argv]
    if any("{k}" in w for w in argv):
        copies = [[w.replace("{k}", str(k)) for w in argv] for k in (1, 2)]
    with open(log, "ab") as lf:
        t0 = time.monotonic()
        procs = [subprocess.Popen(c, stdin=subprocess.DEVNULL, stdout=lf, stderr=lf) for c in copies]
        peak = 0.0
        for c, proc in zip(copies, procs):
            _, status, ru = os.wait4(proc.pid, 0)
            code = os.waitstatus_to_exitcode(status)
            if code != 0:
                sys.exit(f"command failed (exit {code}): {shlex.join(c)}; see {log}")
            peak = max(peak, ru.ru_maxrss / 1024.0)  # KiB -> MiB
        wall = time.monotonic() - t0
    return wall, peak


def cmd_bench(a):
    cmds = [(label, shlex.split(line)) for label, line in a.cmd]
    logs = {label: os.path.join(a.logdir, f"{label}.log") for label, _ in cmds}
    for _ in range(a.warmup):
        for label, argv in cmds:
            run_once(argv, logs[label])
    walls = {label: [] for label, _ in cmds}
    peaks = {label: [] for label, _ in cmds}
    for i in range(a.runs):  # interleaved rounds: A B C ... A B C ...
        for label, argv in cmds:
            w, p = run_once(argv, logs[label])
            walls[label].append(w)
            peaks[label].append(p)
            print(f"    round {i + 1}/{a.runs} {label:<14} {w:8.3f} s", file=sys.stderr)
    result = {label: {"wall": walls[label], "peak_mib": peaks[label]} for label, _ in cmds}
    if a.json:
        with open(a.json, "w") as f:
            json.dump(result, f, indent=1)
    return result


def cmd_table(a):
    with open(a.json) as f:
        res = json.load(f)
    counts = dict(a.count or [])
    print(f"  {'command':<16} {'runs':>4} {'median s':>9} {'min s':>8} {'max s':>8} "
          f"{'peak MiB':>9} {'forecasts':>10} {'forecasts/s':>12}")
    for label, r in res.items():
        w = r["wall"]
        med = statistics.median(w)
        n = int(counts.get(label, 0))
        fps = f"{n / med:12.0f}" if n else f"{'':>12}"
        ns = f"{n:10d}" if n else f"{'':>10}"
        print(f"  {label:<16} {len(w):>4} {med:9.3f} {min(w):8.3f} {max(w):8.3f} "
              f"{max(r['peak_mib']):9.1f} {ns} {fps}")
    for num, den in (x.split("/") for x in (a.ratio or [])):
        wn, wd = res[num]["wall"], res[den]["wall"]
        of_medians = statistics.median(wn) / statistics.median(wd)
        paired = [x / y for x, y in zip(wn, wd)]
        print(f"  ratio {num + '/' + den:<28} {of_medians:8.2f}x  "
              f"(per-round: median {statistics.median(paired):.2f}, min {min(paired):.2f}, max {max(paired):.2f})")
    # Two copies of a run side by side against one alone: the throughput
    # the machine gives two independent copies of the same work, a yardstick
    # for what a second thread can give one run of it.
    for one, two in (x.split("/") for x in (a.throughput or [])):
        w1, w2 = res[one]["wall"], res[two]["wall"]
        of_medians = 2 * statistics.median(w1) / statistics.median(w2)
        paired = [2 * x / y for x, y in zip(w1, w2)]
        print(f"  throughput 2×{one}/{two:<18} {of_medians:8.2f}x  "
              f"(per-round: median {statistics.median(paired):.2f}, min {min(paired):.2f}, max {max(paired):.2f})")


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    sub = ap.add_subparsers(dest="sub", required=True)

    e = sub.add_parser("experiment")
    e.add_argument("--series", type=int, required=True)
    e.add_argument("--panel", required=True, help="data file path as written in the YAML (relative to it)")
    e.add_argument("--first-origin", type=int, default=100)
    e.add_argument("--out", required=True)

    c = sub.add_parser("compare")
    c.add_argument("--name", required=True)
    c.add_argument("--panel", required=True)
    c.add_argument("--outturn", required=True)
    c.add_argument("--peer", required=True)
    c.add_argument("--tol", type=float, default=1e-8)

    b = sub.add_parser("bench")
    b.add_argument("--runs", type=int, default=5)
    b.add_argument("--warmup", type=int, default=0)
    b.add_argument("--logdir", required=True)
    b.add_argument("--json", required=True)
    b.add_argument("--cmd", nargs=2, action="append", metavar=("LABEL", "COMMAND"), required=True)

    t = sub.add_parser("table")
    t.add_argument("--json", required=True)
    t.add_argument("--count", nargs=2, action="append", metavar=("LABEL", "N"))
    t.add_argument("--ratio", action="append", metavar="NUM/DEN")
    t.add_argument("--throughput", action="append", metavar="ONE/TWO_SIDE_BY_SIDE")

    a = ap.parse_args()
    if a.sub == "experiment":
        cmd_experiment(a)
    elif a.sub == "compare":
        sys.exit(cmd_compare(a))
    elif a.sub == "bench":
        cmd_bench(a)
    else:
        cmd_table(a)


if __name__ == "__main__":
    main()
