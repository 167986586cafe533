#!/usr/bin/env python3
"""Compare the outputs of two outturn builds byte for byte.

A refactor is proven by this, not by tests alone: every experiment is run
with both builds at --jobs 1 and --jobs 2, and every file of every results
folder must be identical, the manifest aside from its `run` section and the
tool version. `check` output, exit codes and error messages must agree too.

For the first thread count the new build also re-renders a copy of the
folder the old build wrote (same bytes) and verifies it (exit 0).

The experiments:
  - the demo (experiments/*.yaml);
  - every experiment the test suite runs, captured with --capture (below);
  - a 30-target invented panel with every family, written by this script
    (seeded; performance and comparison only, never a reference value).

usage:
  scripts/compare_builds.py --capture DIR          # run the test suite once and keep every
                                                   # experiment it runs (needs cargo)
  scripts/compare_builds.py BEFORE AFTER [--cases DIR] [--work DIR] [--jobs 1,2]

BEFORE and AFTER are outturn binaries. Exit status 0 when everything agrees.
"""
import argparse
import hashlib
import json
import os
import random
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent

WRAPPER = r"""#!/usr/bin/env python3
# Stands in for the outturn binary while the tests run: keeps a copy of
# every experiment given to `run` or `check`, then runs the real binary.
import hashlib, os, shutil, sys
from pathlib import Path
real, store = {real!r}, {store!r}
args = sys.argv[1:]
if args and args[0] in ("run", "check"):
    ymls = [a for a in args[1:] if a.endswith((".yaml", ".yml"))]
    if ymls:
        exp = Path(ymls[0]).resolve()
        if exp.is_file():
            src = exp.parent
            h = hashlib.sha256()
            files = []
            for p in sorted(src.rglob("*")):
                rel = p.relative_to(src)
                # Skip results folders (anything below a folder with a manifest) and big files.
                if any((src / Path(*rel.parts[:i]) / "manifest.json").exists() for i in range(1, len(rel.parts))):
                    continue
                if p.is_file() and p.suffix in (".yaml", ".yml", ".csv", ".j2") and p.stat().st_size < 20_000_000:
                    files.append(rel)
                    h.update(str(rel).encode()); h.update(p.read_bytes())
            h.update(exp.name.encode())
            dest = Path(store) / h.hexdigest()[:16]
            if not dest.exists():
                tmp = Path(str(dest) + ".tmp%d" % os.getpid())
                for rel in files:
                    (tmp / rel).parent.mkdir(parents=True, exist_ok=True)
                    shutil.copyfile(src / rel, tmp / rel)
                (tmp / "CASE").write_text(exp.name + "\n")
                try:
                    tmp.rename(dest)
                except OSError:
                    shutil.rmtree(tmp, ignore_errors=True)
os.execv(real, [real] + args)
"""


def capture(store: Path) -> None:
    """Build the tests, put a recording wrapper where they expect the binary, run them."""
    store.mkdir(parents=True, exist_ok=True)
    out = subprocess.run(
        ["cargo", "test", "--release", "--no-run", "--message-format=json"],
        cwd=REPO, check=True, capture_output=True, text=True,
    ).stdout
    tests = []
    for line in out.splitlines():
        try:
            msg = json.loads(line)
        except ValueError:
            continue
        if msg.get("reason") == "compiler-artifact" and msg.get("executable") and msg["profile"]["test"]:
            tests.append(msg["executable"])
    binary = REPO / "target" / "release" / "outturn"
    real = binary.with_name("outturn.real-for-capture")
    shutil.copy2(binary, real)
    saved = binary.with_name("outturn.saved-for-capture")
    shutil.move(binary, saved)
    try:
        binary.write_text(WRAPPER.format(real=str(real), store=str(store)))
        binary.chmod(0o755)
        for t in tests:
            print(f"capture: {Path(t).name}", file=sys.stderr)
            subprocess.run([t, "--test-threads", "2"], cwd=REPO, capture_output=True)
    finally:
        shutil.move(saved, binary)
        real.unlink(missing_ok=True)
    print(f"captured {len(list(store.glob('*')))} experiments in {store}", file=sys.stderr)


def write_panel(dest: Path) -> Path:
    """A 30-target monthly panel with a predictor, a known-ahead column and every family."""
    rng = random.Random(20261202)
    dest.mkdir(parents=True, exist_ok=True)
    n, k = 150, 30
    x = [0.0] * n
    cal = [float((t % 12) in (6, 7)) + (0.5 if t % 12 == 3 else 0.0) for t in range(n)]
    for t in range(1, n):
        x[t] = 0.6 * x[t - 1] + rng.gauss(0, 1)
    ys = []
    for _ in range(k):
        phi, beta, season = rng.uniform(0.2, 0.8), rng.uniform(-0.5, 0.5), rng.uniform(0, 2)
        y = [10.0] * n
        for t in range(1, n):
            y[t] = 2.0 + phi * y[t - 1] + beta * x[t - 1] + season * cal[t] + rng.gauss(0, 1)
        ys.append(y)
    rows = ["period,x,cal," + ",".join(f"y{j}" for j in range(k))]
    for t in range(n):
        year, month = 2010 + t // 12, t % 12 + 1
        vals = [repr(x[t]) if t < n - 1 else "", repr(cal[t])] + [repr(y[t]) for y in ys]
        rows.append(f"{year}-{month:02d}," + ",".join(vals))
    # Two future rows with the known-ahead calendar only.
    for t in range(n, n + 2):
        year, month = 2010 + t // 12, t % 12 + 1
        rows.append(f"{year}-{month:02d},,{float((t % 12) in (6, 7))}," + ",".join("" for _ in ys))
    (dest / "panel.csv").write_text("\n".join(rows) + "\n")
    targets = ", ".join(f"y{j}" for j in range(k))
    (dest / "panel.yaml").write_text(f"""version: 1
experiment: compare-panel
notes: Invented 30-target panel for comparing two builds; never a reference value.
data: {{file: panel.csv, time: period, frequency: monthly}}
target: [{targets}]
predictors:
  - {{column: x, release_lag: 1}}
  - {{column: cal, known_ahead: true}}
candidates:
  - family: naive
  - family: mean
  - family: drift
  - family: seasonal_naive
  - {{family: ar, lags: [1, 2, 4]}}
  - {{family: ar, select: bic, max_lags: 6}}
  - {{family: ardl, lags: [1, 2], predictors: [x], predictor_lags: [1, 2]}}
  - {{family: ardl, label: ardl_cal, lags: [1], predictors: [x, cal], predictor_lags: [1]}}
  - {{family: arima, p: [0, 1], d: [0, 1], q: [1]}}
  - {{family: smoothing, trend: [none, damped], season: [none]}}
  - {{family: combination, members: ["ar(1)", "ardl(1,1)", "arima(1,0,1)"], weights: trimmed}}
  - {{family: combination, members: ["ar(2)", "smoothing(none,none)"], weights: inverse_mse}}
backtest:
  schemes: [{{fixed: {{test_start: 2016-01}}}}, {{expanding: {{first_origin: 2015-12, refit_every: 3}}}}, {{rolling: {{window: 60}}}}]
  horizons: [1, 3]
scoring:
  metrics: [rmse, mae, bias, mape, smape, mase, r2_oos, coverage, interval_score, crps]
  benchmark: naive
  intervals: [0.8, 0.95]
  tests: {{diebold_mariano: true, clark_west: true, confidence_set: {{alpha: 0.1, resamples: 300}}, snooping: {{resamples: 300}}}}
  periods: {{early: [2016-01, 2018-06], late: [2018-07, 2022-06]}}
report: {{formats: [html, markdown], title: Compare panel}}
seed: 7
""")
    return dest / "panel.yaml"


def digest_folder(folder: Path) -> dict:
    """name -> sha256 of every file; the manifest without `run` and the tool version."""
    out = {}
    for p in sorted(folder.rglob("*")):
        if not p.is_file():
            continue
        rel = str(p.relative_to(folder))
        data = p.read_bytes()
        if rel == "manifest.json" or rel.endswith("/manifest.json"):
            try:
                m = json.loads(data)
                m.pop("run", None)
                for key in ("tool", "tool_version", "version"):
                    if isinstance(m.get(key), str):
                        m[key] = "<version>"
                data = json.dumps(m, sort_keys=True).encode()
            except ValueError:
                pass
        out[rel] = hashlib.sha256(data).hexdigest()
    return out


def run_one(binary: str, args: list, cwd: Path) -> tuple:
    p = subprocess.run([binary] + args, cwd=cwd, capture_output=True, timeout=900)
    err = p.stderr.decode(errors="replace")
    # Timing lines differ run to run.
    err = "\n".join(l for l in err.splitlines() if " in " not in l or "cells" not in l)
    return p.returncode, p.stdout.decode(errors="replace"), err


def compare_case(before: str, after: str, exp: Path, work: Path, jobs: list) -> list:
    problems = []
    cwd = exp.parent
    rb = run_one(before, ["check", exp.name], cwd)
    ra = run_one(after, ["check", exp.name], cwd)
    if rb != ra:
        problems.append(f"check differs: before {rb!r} after {ra!r}")
    for j in jobs:
        outs = {}
        for tag, binary in (("before", before), ("after", after)):
            out = work / f"{tag}-j{j}"
            shutil.rmtree(out, ignore_errors=True)
            code, _, err = run_one(binary, ["run", exp.name, "--out", str(out), "--jobs", str(j), "--quiet", "--no-cache"], cwd)
            outs[tag] = (code, err.replace(str(out), "<out>"), digest_folder(out) if out.exists() else {})
        (cb, eb, db), (ca, ea, da) = outs["before"], outs["after"]
        if cb != ca:
            problems.append(f"--jobs {j}: exit {cb} before, {ca} after")
        if eb != ea:
            problems.append(f"--jobs {j}: stderr differs:\n  before: {eb[:400]!r}\n  after:  {ea[:400]!r}")
        for name in sorted(set(db) | set(da)):
            if db.get(name) != da.get(name):
                problems.append(f"--jobs {j}: {name} differs" if name in db and name in da
                                else f"--jobs {j}: {name} only {'before' if name in db else 'after'}")
        if j == jobs[0] and cb == 0 and db and "scores.csv" in db:
            problems += cross_checks(after, work / f"before-j{j}", work)
    return problems


def cross_checks(after: str, before_folder: Path, work: Path) -> list:
    """The new build re-renders and verifies a folder the old build wrote."""
    problems = []
    copy = work / "render-copy"
    shutil.rmtree(copy, ignore_errors=True)
    shutil.copytree(before_folder, copy)
    code, _, err = run_one(after, ["render", str(copy)], work)
    if code != 0:
        problems.append(f"render of the earlier folder: exit {code}: {err[:300]}")
    elif digest_folder(copy) != digest_folder(before_folder):
        changed = [n for n, h in digest_folder(copy).items() if digest_folder(before_folder).get(n) != h]
        problems.append(f"render of the earlier folder changed {changed}")
    code, out, err = run_one(after, ["verify", str(before_folder), "--jobs", "2"], work)
    if code != 0:
        problems.append(f"verify of the earlier folder: exit {code}: {(out + err)[:300]}")
    return problems


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("before", nargs="?")
    ap.add_argument("after", nargs="?")
    ap.add_argument("--capture", metavar="DIR", help="run the test suite and keep its experiments in DIR")
    ap.add_argument("--cases", metavar="DIR", help="captured experiments (from --capture)")
    ap.add_argument("--work", metavar="DIR")
    ap.add_argument("--jobs", default="1,2")
    ap.add_argument("--only", help="substring of the case names to run")
    a = ap.parse_args()
    if a.capture:
        capture(Path(a.capture).resolve())
        return 0
    if not (a.before and a.after):
        ap.error("give BEFORE and AFTER binaries, or --capture DIR")
    before, after = (str(Path(b).resolve()) for b in (a.before, a.after))
    work = Path(a.work).resolve() if a.work else Path(tempfile.mkdtemp(prefix="outturn-compare."))
    work.mkdir(parents=True, exist_ok=True)
    jobs = [int(j) for j in a.jobs.split(",")]
    cases = []
    demo = work / "demo"
    shutil.rmtree(demo, ignore_errors=True)
    shutil.copytree(REPO / "experiments", demo)
    cases += [("demo/" + p.name, p) for p in sorted(demo.glob("*.yaml"))]
    cases.append(("panel30", write_panel(work / "panel")))
    if a.cases:
        for d in sorted(Path(a.cases).iterdir()):
            if d.is_dir() and (d / "CASE").exists():
                name = (d / "CASE").read_text().strip()
                copy = work / "cases" / d.name
                shutil.rmtree(copy, ignore_errors=True)
                shutil.copytree(d, copy)
                cases.append((f"test/{d.name}/{name}", copy / name))
    if a.only:
        cases = [c for c in cases if a.only in c[0]]
    failed = 0
    for name, exp in cases:
        problems = compare_case(before, after, exp, work / "out" / name.replace("/", "_"), jobs)
        status = "same" if not problems else "DIFFERENT"
        print(f"{status:9} {name}")
        for p in problems:
            print(f"          {p}")
        failed += bool(problems)
    print(f"{len(cases) - failed} of {len(cases)} experiments identical (jobs {a.jobs}); work dir {work}")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
