#!/usr/bin/env python3
"""Compares two directories written by scripts/demo-outputs.sh number by number.

Every CSV cell and JSON number found in both must agree to a relative tolerance (default 1e-9);
text must match exactly. Columns or JSON keys named with --skip are left out (quantities whose
definition changed on purpose); --rename OLD=NEW compares an old column with a renamed one.
Prints each difference and exits 1 if there is any.

Usage: compare-outputs.py OLD_DIR NEW_DIR [--rtol 1e-9] [--skip NAME ...] [--rename OLD=NEW ...]
"""
import argparse
import csv
import json
import math
import pathlib
import sys


def close(a, b, rtol):
    if isinstance(a, float) and isinstance(b, float):
        if math.isnan(a) and math.isnan(b):
            return True
        return abs(a - b) <= rtol * max(abs(a), abs(b)) or a == b
    return a == b


def number(text):
    try:
        return float(text)
    except ValueError:
        return text


def compare_csv(old, new, args, problems):
    with open(old) as f:
        old_rows = list(csv.DictReader(f))
    with open(new) as f:
        new_rows = list(csv.DictReader(f))
    if len(old_rows) != len(new_rows):
        problems.append(f"{new}: {len(new_rows)} rows, was {len(old_rows)}")
        return
    for i, (a, b) in enumerate(zip(old_rows, new_rows)):
        for key, value in a.items():
            if key in args.skip:
                continue
            target = args.rename.get(key, key)
            if target not in b:
                problems.append(f"{new}: column {key} missing")
                return
            if not close(number(value), number(b[target]), args.rtol):
                problems.append(f"{new}: row {i + 1} {key}: {value} -> {b[target]}")


def compare_json(old, new, path, args, problems, where):
    if isinstance(old, dict) and isinstance(new, dict):
        for key, value in old.items():
            if key in args.skip:
                continue
            target = args.rename.get(key, key)
            if target not in new:
                problems.append(f"{where}: {path}/{key} missing")
                continue
            compare_json(value, new[target], f"{path}/{key}", args, problems, where)
    elif isinstance(old, list) and isinstance(new, list):
        if len(old) != len(new):
            problems.append(f"{where}: {path} has {len(new)} items, was {len(old)}")
            return
        for i, (a, b) in enumerate(zip(old, new)):
            compare_json(a, b, f"{path}[{i}]", args, problems, where)
    else:
        a = float(old) if isinstance(old, (int, float)) and not isinstance(old, bool) else old
        b = float(new) if isinstance(new, (int, float)) and not isinstance(new, bool) else new
        if not close(a, b, args.rtol):
            problems.append(f"{where}: {path}: {old} -> {new}")


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("old")
    parser.add_argument("new")
    parser.add_argument("--rtol", type=float, default=1e-9)
    parser.add_argument("--skip", nargs="*", default=[])
    parser.add_argument("--rename", nargs="*", default=[])
    args = parser.parse_args()
    args.rename = dict(pair.split("=", 1) for pair in args.rename)
    args.skip = set(args.skip)
    problems = []
    compared = 0
    for old in sorted(pathlib.Path(args.old).rglob("*")):
        relative = old.relative_to(args.old)
        new = pathlib.Path(args.new) / relative
        if old.suffix not in (".csv", ".json") or relative.name == "run.json":
            continue
        if not new.exists():
            problems.append(f"{new}: missing")
            continue
        compared += 1
        if old.suffix == ".csv":
            compare_csv(old, new, args, problems)
        else:
            compare_json(json.loads(old.read_text()), json.loads(new.read_text()), "", args, problems, new)
    for p in problems:
        print(p)
    print(f"{compared} files compared, {len(problems)} differences (relative tolerance {args.rtol:g})")
    sys.exit(1 if problems else 0)


if __name__ == "__main__":
    main()
