#!/usr/bin/env python3
"""Recomputes a run's sensing statistics from DIR/cells.csv alone and compares them with DIR/summary.json
(`sensing`) and DIR/sensing_by_position.csv. Shares no code with the writers.

Usage: python3 check_sensing.py DIR

Rules as documented for users: a cell fails when its direction_error is not <= readable_error (so inf and
nan fail); cells whose centre lies closer than statistics_margin to the chamber's x ends are left out; the
rest of the x range is cut into equal slabs, a cell in the slab of its centre; quantiles interpolate
linearly between order statistics (h = (n - 1) p), inf kept in the ordering, nan left out.
Every number must agree exactly. Exit 0 when all agree, 1 on the first disagreement.
"""

import csv
import json
import math
import os
import sys


def quantile(values, p):
    v = sorted(x for x in values if not math.isnan(x))
    if not v:
        return math.nan
    if len(v) == 1:
        return v[0]
    h = (len(v) - 1) * p
    lo = math.floor(h)
    hi = min(lo + 1, len(v) - 1)
    a, b, t = v[lo], v[hi], h - lo
    return a if a == b or t == 0 else a + t * (b - a)


def json_real(x):
    if x is None:
        return math.nan
    if isinstance(x, str):
        return float(x)  # "inf", "-inf"
    return float(x)


def same(a, b):
    return (math.isnan(a) and math.isnan(b)) or a == b


def main(directory):
    with open(os.path.join(directory, "summary.json")) as fh:
        summary = json.load(fh)
    s = summary["sensing"]
    with open(os.path.join(directory, "cells.csv"), newline="") as fh:
        rows = list(csv.DictReader(fh))
    grid = summary["grid"]
    x0 = grid["origin"][0]
    x1 = x0 + grid["shape"][0] * grid["spacing"]
    readable, margin = s["readable_error"], s["statistics_margin"]
    bins = len(s["by_position"])
    low, high = x0 + margin, x1 - margin
    cells = [r for r in rows if low <= float(r["x"]) <= high]
    fails = lambda r: not (float(r["direction_error"]) <= readable)
    problems = []

    def check(what, ours, theirs):
        if not same(ours, theirs):
            problems.append(f"{what}: recomputed {ours!r}, written {theirs!r}")

    check("cells_counted", len(cells), s["cells_counted"])
    check("cells_left_out", len(rows) - len(cells), s["cells_left_out"])
    failed = sum(map(fails, cells))
    check("failed", failed, s["failed"])
    check("failed_fraction", failed / len(cells) if cells else math.nan, json_real(s["failed_fraction"]))
    errors = [float(r["direction_error"]) for r in cells]
    for key, p in (("p10", 0.1), ("median", 0.5), ("p90", 0.9)):
        check(f"direction_error.{key}", quantile(errors, p), json_real(s["direction_error"][key]))

    width = (high - low) / bins
    members = [[] for _ in range(bins)]
    for r in cells:
        b = math.floor((float(r["x"]) - low) / width) if width > 0 else 0
        members[min(b, bins - 1)].append(r)
    with open(os.path.join(directory, "sensing_by_position.csv"), newline="") as fh:
        table = list(csv.DictReader(fh))
    if len(table) != bins:
        problems.append(f"sensing_by_position.csv has {len(table)} rows for {bins} slabs")
    for b, (slab, written, row) in enumerate(zip(members, s["by_position"], table)):
        n, f = len(slab), sum(map(fails, slab))
        fraction = f / n if n else math.nan
        if "estimate_direction_error" in rows[0] if rows else False:
            e = sum(1 for r in slab if not (float(r["estimate_direction_error"]) <= readable))
            estimated = e / n if n else math.nan
            check(f"slab {b} estimated_failed_fraction (summary.json)", estimated,
                  json_real(written["estimated_failed_fraction"]))
            check(f"slab {b} estimated_failed_fraction (csv)", estimated,
                  float(row["estimated_failed_fraction [1]"]))
        for what, ours, json_value, csv_key in (
            ("cells", n, written["cells"], "cells [1]"),
            ("failed", f, written["failed"], "failed [1]"),
            ("failed_fraction", fraction, json_real(written["failed_fraction"]), "failed_fraction [1]"),
        ):
            check(f"slab {b} {what} (summary.json)", ours, json_value)
            check(f"slab {b} {what} (csv)", ours, float(row[csv_key]))
        quantities = {"direction_error": written["direction_error"], **written["quantities"]}
        for name, spread in quantities.items():
            values = [float(r[name]) for r in slab]
            for key, p in (("p10", 0.1), ("median", 0.5), ("p90", 0.9)):
                ours = quantile(values, p)
                check(f"slab {b} {name}.{key} (summary.json)", ours, json_real(spread[key]))
                header = [h for h in row if h.startswith(f"{name}_{key} [")]
                if len(header) != 1:
                    problems.append(f"sensing_by_position.csv lacks a column {name}_{key} [unit]")
                else:
                    check(f"slab {b} {name}.{key} (csv)", ours, float(row[header[0]]))
    if problems:
        print("FAILED:\n  " + "\n  ".join(problems[:20]), file=sys.stderr)
        return 1
    print(f"sensing statistics: {len(cells)} cells in {bins} slabs ({failed} failed) agree exactly with cells.csv")
    return 0


if __name__ == "__main__":
    if len(sys.argv) != 2:
        print(__doc__, file=sys.stderr)
        sys.exit(2)
    sys.exit(main(sys.argv[1]))
