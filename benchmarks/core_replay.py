"""The core alone over the physics families: default settings and approach given.

A quick check of a core change on many tune traces (100 per family, dense and
sparse, about 10 s from the trace cache, 1-3 min without): the same replay and
scoring as ``benchmarks/families.py`` (its per-trace CSV columns), without the
baselines, the real recording or the report. Prints, per sampling and setting,
each family's per-trace mean coverage of the 80 % interval / no-estimate share
(sparse: / from the third reading), and every trace with early-arrival rows
(family, seed, seconds between readings, rows, air column 0/1).

    .venv/bin/python benchmarks/core_replay.py --per-family 100 --out tune100.csv

The holdout seeds are for reporting only (``--seeds holdout``): never choose with them.
"""
import argparse
import collections
import csv
import math
import os
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import families as F  # noqa: E402


def mean_of(rows, key):
    """Mean of a CSV column over ``rows``, NaN and blanks left out (NaN when none)."""
    vals = []
    for r in rows:
        try:
            v = float(r[key])
        except (TypeError, ValueError):
            continue
        if not math.isnan(v):
            vals.append(v)
    return sum(vals) / len(vals) if vals else math.nan


def summary_lines(rows):
    """Per sampling and method: family coverage / no estimate (/ from the 3rd reading), early traces."""
    lines = []
    for sampling in ("dense", "sparse"):
        for method in sorted({r["method"] for r in rows if r["sampling"] == sampling}):
            sel = [r for r in rows if r["sampling"] == sampling and r["method"] == method]
            by_family = collections.OrderedDict()
            for r in sel:
                by_family.setdefault(r["family"], []).append(r)
            third = sampling == "sparse"

            def figs(rs):
                s = "%.3f/%.3f" % (mean_of(rs, "coverage"), mean_of(rs, "no_estimate_fraction"))
                return s + ("/%.3f" % mean_of(rs, "no_estimate_from_third") if third else "")
            lines.append("%s %s: %s | all %s" % (sampling, method, "; ".join(
                "%s %s" % (f, figs(rs)) for f, rs in by_family.items()), figs(sel)))
            for r in sel:
                if mean_of([r], "early_arrival") > 0:
                    lines.append("   early %s %s every %s s: %s rows (air column %s)" % (
                        r["family"], r["seed"], r["interval_s"], r["early_arrival"],
                        r["ambient_column"]))
    return lines


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--per-family", type=int, default=100, help="traces per family (default 100)")
    ap.add_argument("--seeds", choices=("tune", "holdout"), default="tune")
    ap.add_argument("--sampling", choices=("dense", "sparse", "both"), default="both")
    ap.add_argument("--jobs", type=int, default=2, help="worker processes (default 2)")
    ap.add_argument("--out", default=None, help="per-trace CSV (families.py's columns)")
    args = ap.parse_args(argv)
    plan = F.estimator_plan([], F.parse_grid(["approach=0,1"]), "core")
    res = []
    baselines = F.make_family_baselines
    F.make_family_baselines = lambda: []  # (the workers are forked: they see it too)
    try:
        if args.sampling in ("dense", "both"):
            res += F.run_traces([args.seeds], args.per_family, plan, args.jobs)
        if args.sampling in ("sparse", "both"):
            res += F.run_traces([args.seeds], args.per_family, plan, args.jobs, sampling="sparse")
    finally:
        F.make_family_baselines = baselines
    path = args.out or os.path.join(tempfile.mkdtemp(), "core_replay.csv")
    F.write_csv(path, res, None)
    with open(path) as fh:
        rows = list(csv.DictReader(fh))
    print("\n".join(summary_lines(rows)))
    return 0


if __name__ == "__main__":
    sys.exit(main())
