#!/usr/bin/env python3
"""How far apart are the numbers of two builds' outputs?

After scripts/compare_builds.py reports DIFFERENT experiments, this reads
its work dir (out/<case>/before-jN and after-jN) and, for every file that
differs, reports the largest relative difference of the numbers that
changed: per column for CSV files, over all numbers in order for the
others (reports; the manifest, whose hashes follow the files, is skipped). Text that is not a number and differs is
reported as such, so a change of a selected order or a cell turning empty
is visible too.

usage: scripts/number_diffs.py WORK [--jobs 1]
"""
import argparse
import csv
import io
import re
import sys
from pathlib import Path

NUMBER = re.compile(r"-?(?:\d+\.\d*|\.\d+|\d+)(?:[eE][-+]?\d+)?")


def rel(a: float, b: float) -> float:
    if a == b:
        return 0.0
    return abs(a - b) / max(abs(a), abs(b), 1e-300)


def as_float(s: str):
    try:
        return float(s)
    except ValueError:
        return None


def csv_diffs(before: bytes, after: bytes) -> dict:
    """column -> (changed numbers, largest relative difference, other changes)."""
    rb = list(csv.reader(io.StringIO(before.decode())))
    ra = list(csv.reader(io.StringIO(after.decode())))
    out = {}
    if len(rb) != len(ra) or not rb or rb[0] != ra[0]:
        return {"<shape>": (0, 0.0, f"rows {len(rb)} vs {len(ra)} or header differs")}
    header = rb[0]
    for row_b, row_a in zip(rb[1:], ra[1:]):
        for i, (x, y) in enumerate(zip(row_b, row_a)):
            if x == y:
                continue
            col = header[i] if i < len(header) else str(i)
            n, worst, other = out.get(col, (0, 0.0, ""))
            fx, fy = as_float(x), as_float(y)
            if fx is not None and fy is not None:
                out[col] = (n + 1, max(worst, rel(fx, fy)), other)
            else:
                out[col] = (n, worst, other or f"{x!r} -> {y!r}")
    return out


HASHED = re.compile(r"\d+ bytes(.{1,40}?)[0-9a-f]{64}", re.S)


def text_diffs(before: bytes, after: bytes) -> dict:
    """The reports quote each table's size and SHA-256, which follow the
    tables: those are masked (and named when they were all that differed)."""
    tb, ta = before.decode(errors="replace"), after.decode(errors="replace")
    mb, ma = HASHED.sub(r"<size>\1<sha256>", tb), HASHED.sub(r"<size>\1<sha256>", ta)
    if mb == ma:
        return {"<sizes and hashes of tables>": (0, 0.0, "")}
    tb, ta = mb, ma
    nb, na = NUMBER.findall(tb), NUMBER.findall(ta)
    if NUMBER.sub("#", tb) != NUMBER.sub("#", ta) or len(nb) != len(na):
        return {"<text>": (0, 0.0, "text other than numbers differs")}
    changed = [(float(x), float(y)) for x, y in zip(nb, na) if x != y]
    return {"<numbers>": (len(changed), max((rel(x, y) for x, y in changed), default=0.0), "")}


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("work")
    ap.add_argument("--jobs", default="1")
    a = ap.parse_args()
    overall = 0.0
    for case in sorted((Path(a.work) / "out").iterdir()):
        b, f = case / f"before-j{a.jobs}", case / f"after-j{a.jobs}"
        if not b.is_dir() or not f.is_dir():
            continue
        for p in sorted(b.rglob("*")):
            if not p.is_file():
                continue
            q = f / p.relative_to(b)
            if not q.exists():
                print(f"{case.name}: {p.relative_to(b)} only before")
                continue
            xb, xa = p.read_bytes(), q.read_bytes()
            # The manifest's hashes follow the files; its numbers are the files'.
            if xb == xa or p.name == "manifest.json":
                continue
            diffs = csv_diffs(xb, xa) if p.suffix == ".csv" else text_diffs(xb, xa)
            for col, (n, worst, other) in sorted(diffs.items()):
                overall = max(overall, worst)
                extra = f"; also {other}" if other else ""
                print(f"{case.name}: {p.relative_to(b)} [{col}] {n} numbers, largest relative difference {worst:.2e}{extra}")
    print(f"largest relative difference overall: {overall:.2e}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
