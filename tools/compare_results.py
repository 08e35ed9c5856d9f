"""Compare two folders of result JSON files number by number (a check for refactorings).

    python tools/compare_results.py BEFORE_DIR AFTER_DIR [--rtol 1e-12]

Every result JSON below BEFORE_DIR must have a twin (same relative path) below AFTER_DIR.
Numbers must agree to the relative tolerance; strings, booleans and nulls exactly, except
the keys that differ between any two runs (time stamps, wall times, the source path).
Keys may be added in AFTER (the schema allows additions), never dropped. Exit code 1 and a
list of differences when anything disagrees.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import sys

VOLATILE = {"created", "seconds", "timings_s", "path", "polisect_version"}


def differences(before, after, where="", rtol=1e-12):
    """Paths where *after* differs from *before* (numbers to *rtol*)."""
    out = []
    if isinstance(before, dict):
        if not isinstance(after, dict):
            return [f"{where}: object became {type(after).__name__}"]
        for key, value in before.items():
            if key in VOLATILE:
                continue
            if key not in after:
                out.append(f"{where}.{key}: dropped")
                continue
            out += differences(value, after[key], f"{where}.{key}", rtol)
        return out
    if isinstance(before, list):
        if not isinstance(after, list) or len(after) != len(before):
            return [f"{where}: list of {len(before)} became {after!r:.60}"]
        for i, (b, a) in enumerate(zip(before, after)):
            out += differences(b, a, f"{where}[{i}]", rtol)
        return out
    if isinstance(before, (int, float)) and not isinstance(before, bool) \
            and isinstance(after, (int, float)) and not isinstance(after, bool):
        if not math.isclose(before, after, rel_tol=rtol, abs_tol=0.0):
            return [f"{where}: {before!r} became {after!r}"]
        return []
    return [] if before == after else [f"{where}: {before!r:.60} became {after!r:.60}"]


def result_files(folder):
    for root, _, files in os.walk(folder):
        for name in sorted(files):
            if name.endswith(".json") and name != "manifest.json":
                yield os.path.relpath(os.path.join(root, name), folder)


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("before")
    p.add_argument("after")
    p.add_argument("--rtol", type=float, default=1e-12)
    args = p.parse_args(argv)
    bad = 0
    files = list(result_files(args.before))
    for rel in files:
        with open(os.path.join(args.before, rel), encoding="utf-8") as f:
            before = json.load(f)
        try:
            with open(os.path.join(args.after, rel), encoding="utf-8") as f:
                after = json.load(f)
        except OSError:
            print(f"{rel}: missing in {args.after}")
            bad += 1
            continue
        diffs = differences(before, after, rtol=args.rtol)
        for d in diffs[:40]:
            print(f"{rel}{d}")
        bad += bool(diffs)
    print(f"{len(files)} files compared, {bad} differ (rtol {args.rtol:g})")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
