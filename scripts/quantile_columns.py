#!/usr/bin/env python3
"""Check that a results folder with quantile columns holds the same numbers
as one written with the older interval columns.

    python3 scripts/quantile_columns.py OLD_FOLDER NEW_FOLDER

For forecasts.csv and outlook.csv: the new header is the old one with every
`lower_<c>`, `upper_<c>` pair replaced by `q<(100 - c)/2>`, `q<(100 + c)/2>`
(all quantile columns ascending), and every cell of every row, read by column
name, is the same text. Prints one line per file; exits 1 on a difference.
"""

import csv
import sys
from decimal import Decimal
from pathlib import Path


def name(percent: Decimal) -> str:
    text = format(percent.normalize(), "f")
    return "q" + text


def renamed(column: str) -> str:
    for prefix, sign in (("lower_", -1), ("upper_", 1)):
        if column.startswith(prefix):
            c = Decimal(column[len(prefix):])
            return name((Decimal(100) + sign * c) / 2)
    return column


def compare(old: Path, new: Path) -> list:
    with open(old, newline="") as a, open(new, newline="") as b:
        ra, rb = csv.reader(a), csv.reader(b)
        ha, hb = next(ra), next(rb)
        mapped = [renamed(c) for c in ha]
        problems = []
        if sorted(mapped) != sorted(hb):
            problems.append(f"columns differ: old {ha} -> {mapped}, new {hb}")
            return problems
        where = [hb.index(c) for c in mapped]
        rows = 0
        for line, (x, y) in enumerate(zip(ra, rb), start=2):
            rows += 1
            if [y[i] for i in where] != x:
                problems.append(f"line {line} differs")
                if len(problems) > 5:
                    break
        for _ in ra:
            problems.append("old file has more rows")
            break
        for _ in rb:
            problems.append("new file has more rows")
            break
        quantiles = [c for c in hb if c.startswith("q")]
        print(f"{new.name}: {rows} rows; {', '.join(f'{o} = {n}' for o, n in zip(ha, mapped) if o != n)}; new quantile order {quantiles}")
        return problems


def main() -> int:
    old, new = Path(sys.argv[1]), Path(sys.argv[2])
    bad = False
    for f in ("forecasts.csv", "outlook.csv"):
        problems = compare(old / f, new / f)
        for p in problems:
            print(f"  {f}: {p}")
        bad |= bool(problems)
    print("same numbers" if not bad else "DIFFERENT")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
