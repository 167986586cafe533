#!/usr/bin/env python3
"""The largest Rust files and functions under a source folder.

usage: scripts/code_sizes.py [SRC] [--files N] [--functions N] [--over LINES]

Functions are found by their `fn name(` line and measured to the matching
closing brace (braces inside strings, chars and comments are skipped); a
`#[cfg(test)]` module's functions are listed separately from the rest.
"""
import argparse
import re
from pathlib import Path

FN = re.compile(r"^\s*(pub(\([a-z]+\))?\s+)?(const\s+)?(async\s+)?(unsafe\s+)?fn\s+([A-Za-z0-9_]+)")


def strip(line: str, state: dict) -> str:
    """The line without strings, chars and comments (state carries /* */ and raw strings)."""
    out = []
    i = 0
    while i < len(line):
        c = line[i]
        if state["block"]:
            if line.startswith("*/", i):
                state["block"] = False
                i += 2
            else:
                i += 1
            continue
        if state["string"]:
            if c == "\\":
                i += 2
                continue
            if c == '"':
                state["string"] = False
            i += 1
            continue
        if line.startswith("//", i):
            break
        if line.startswith("/*", i):
            state["block"] = True
            i += 2
            continue
        if c == '"':
            state["string"] = True
            i += 1
            continue
        if c == "'" and re.match(r"'(\\.|[^\\'])'", line[i:]):
            i += len(re.match(r"'(\\.|[^\\'])'", line[i:]).group(0))
            continue
        out.append(c)
        i += 1
    return "".join(out)


def functions(path: Path):
    lines = path.read_text().splitlines()
    state = {"block": False, "string": False}
    clean = [strip(l, state) for l in lines]
    in_tests_from = None
    for i, l in enumerate(lines):
        if "#[cfg(test)]" in l:
            in_tests_from = i
            break
    for i, l in enumerate(clean):
        m = FN.match(l)
        if not m:
            continue
        depth, started = 0, False
        for j in range(i, len(clean)):
            depth += clean[j].count("{") - clean[j].count("}")
            if "{" in clean[j]:
                started = True
            if started and depth <= 0:
                yield m.group(6), i + 1, j - i + 1, in_tests_from is not None and i > in_tests_from
                break
            if not started and ";" in clean[j]:
                break  # a declaration without a body


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("src", nargs="?", default="src")
    ap.add_argument("--files", type=int, default=12)
    ap.add_argument("--functions", type=int, default=15)
    ap.add_argument("--over", type=int, default=80)
    a = ap.parse_args()
    files = sorted(Path(a.src).rglob("*.rs"))
    sizes = sorted(((len(f.read_text().splitlines()), f) for f in files), reverse=True)
    print(f"{len(files)} files, {sum(s for s, _ in sizes)} lines")
    print("largest files:")
    for n, f in sizes[: a.files]:
        print(f"  {n:6} {f}")
    fns = [(n, f, name, line) for f in files for name, line, n, test in functions(f) if not test]
    fns.sort(reverse=True)
    print(f"largest functions outside tests ({sum(1 for x in fns if x[0] > a.over)} over {a.over} lines):")
    for n, f, name, line in fns[: a.functions]:
        print(f"  {n:6} {f}:{line} {name}")


if __name__ == "__main__":
    main()
