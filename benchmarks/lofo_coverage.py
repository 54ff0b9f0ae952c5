"""Leave-one-family-out choice of an interval setting by the goals' order.

    python benchmarks/families.py --seeds tune --no-real --out tune.csv \\
        --candidate knobs=benchmarks.estimator_knobs:Knobs --grid delta_var_factor=1,4
    python benchmarks/lofo_coverage.py tune.csv [--method knobs]

Reads the per-trace CSV of ``benchmarks/families.py --out`` (tune seeds) with
a grid of settings for one method (labels ``knobs[key=value,...]``). The
traces are scored in blocks: a family on the dense grid, and the same family
on the sparse grid (``--sampling both``: block ``wort sparse``) as a block of
its own. For each family, the setting is chosen on the tune traces of the
*other* families (the left-out family's dense and sparse blocks both left
out: one fold) by the order of issue 17's goals: fewest traces with an early
arrival, then the fewest blocks with 80 % coverage outside 0.75-0.85 (ties:
the smallest total distance outside), then the lowest mean no-estimate share
(on the sparse grid: from the third reading), then the lowest median error;
the chosen setting is then reported on the left-out family's blocks. With
``--reference METHOD`` (rows of another method in the same CSV, e.g. the
core at main) a setting is eligible only when its dense blocks score no worse
than the reference's on the same families (the dense goals may not get worse
while the sparse ones are chosen for). The holdout seeds never choose: give
this script tune rows only. Figures only; nothing passes or fails.
"""
import argparse
import csv
import math
import statistics
import sys
from collections import defaultdict

COVER_LOW, COVER_HIGH = 0.75, 0.85


def _num(text):
    return None if text == "" else float(text)


def block_of(row):
    """The scored block of a CSV row: its family, plus `` sparse`` on the sparse grid."""
    return row["family"] + (" sparse" if row.get("sampling") == "sparse" else "")


def family_of(block):
    """The fold (family) a block belongs to."""
    return block.split(" ")[0]


def read(path, method):
    """{label: {block: [row dict, ...]}} for the grid labels of ``method`` (tune rows)."""
    out = defaultdict(lambda: defaultdict(list))
    with open(path, newline="") as handle:
        for row in csv.DictReader(handle):
            if row["seed_set"] != "tune":
                continue
            m = row["method"]
            if m == method or m.startswith(method + "["):
                out[m][block_of(row)].append(row)
    return out


def family_figures(rows):
    """(coverage, no estimate, median error, early-arrival traces) over one block's traces
    (no estimate: on the sparse grid from the third reading, issue 17's figure there)."""
    cov = [_num(r["coverage"]) for r in rows if _num(r["coverage"]) is not None]
    key = ("no_estimate_from_third" if rows and rows[0].get("sampling") == "sparse"
           else "no_estimate_fraction")
    ne = [_num(r[key]) for r in rows if _num(r[key]) is not None]
    med = [_num(r["median_rel_error"]) for r in rows if _num(r["median_rel_error"]) is not None]
    early = sum(1 for r in rows if (_num(r["early_arrival"]) or 0) > 0)
    return (sum(cov) / len(cov) if cov else math.nan, sum(ne) / len(ne) if ne else math.nan,
            statistics.median(med) if med else math.nan, early)


def score(per_family, families):
    """The goals' order as a sortable key over the blocks ``families``."""
    early = outside = distance = 0.0
    ne, med = [], []
    for f in families:
        cov, no_est, m, e = family_figures(per_family[f])
        early += e
        miss = max(COVER_LOW - cov, cov - COVER_HIGH, 0.0) if cov == cov else 1.0
        outside += miss > 0.0
        distance += miss
        ne.append(no_est)
        med.append(m)
    return (early, outside, round(distance, 4), sum(ne) / len(ne), statistics.median(med))


def main(argv=None):
    ap = argparse.ArgumentParser(description="Leave-one-family-out choice of an interval setting "
                                             "(early arrivals, coverage, no estimate, median).")
    ap.add_argument("csv", help="per-trace CSV of benchmarks/families.py --out (tune seeds)")
    ap.add_argument("--method", default="knobs", help="the grid method's name (default knobs)")
    ap.add_argument("--reference", default=None,
                    help="a method whose dense blocks a setting may not score worse than")
    args = ap.parse_args(argv)
    data = read(args.csv, args.method)
    if not data:
        ap.error("no tune rows of method %r in %s" % (args.method, args.csv))
    ref = read(args.csv, args.reference).get(args.reference) if args.reference else None
    if args.reference and ref is None:
        ap.error("no tune rows of method %r in %s" % (args.reference, args.csv))

    def eligible(labs, blocks):
        """The settings whose dense blocks among ``blocks`` score no worse than the reference's."""
        dense = [b for b in blocks if " " not in b]
        if ref is None or not dense:
            return labs
        bar = score(ref, dense)
        return [lab for lab in labs if score(data[lab], dense) <= bar] or labs
    labels = sorted(data)
    families = sorted({f for lab in labels for f in data[lab]})  # the blocks
    folds = sorted({family_of(f) for f in families})
    print("| setting | " + " | ".join("%s cov / no est / median / early" % f for f in families)
          + " |")
    print("|---|" + "---|" * len(families))
    for lab in labels:
        cells = []
        for f in families:
            cov, ne, med, early = family_figures(data[lab][f])
            cells.append("%.2f / %.2f / %.3f / %d" % (cov, ne, med, early))
        print("| `%s` | %s |" % (lab, " | ".join(cells)))
    print("")
    print("| left-out family (block) | setting chosen without it | coverage | no estimate | "
          "median rel err | early-arrival traces |")
    print("|---|---|---|---|---|---|")
    for fold in folds:
        others = [g for g in families if family_of(g) != fold]
        choice = min(eligible(labels, others), key=lambda lab: score(data[lab], others))
        for f in families:
            if family_of(f) == fold:
                cov, ne, med, early = family_figures(data[choice][f])
                print("| %s | `%s` | %.2f | %.2f | %.3f | %d |" % (f, choice, cov, ne, med, early))
    best = min(eligible(labels, families), key=lambda lab: score(data[lab], families))
    print("\nsetting chosen on all families' tune traces: `%s`" % best)
    return 0


if __name__ == "__main__":
    sys.exit(main())
