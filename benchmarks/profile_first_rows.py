"""The rows a profile answers before the device's own fit does (its first answers).

    .venv/bin/python benchmarks/profile_first_rows.py [--tune] [--vessels mug flask]

profile_gain.py scores each (trace, target) pair from the probe's peak (the
approach's start) on: the first answers given while a slow probe still rises
to the poured drink (``VesselProfile.first_answer``) fall before it. Here, per
passive vessel, with its own profile and with the other's (calibrated on uses
0-9 as profile_gain's), over the rows shown with the profile before the device
without a profile shows its first (at most 300 s in): how many, the share whose
interval holds the crossing (the liquid's, ``host_sim.calibrate.prepare``),
the crossing below / above it, the median relative error, and the share of
traces (middle target) answered within 60 s of the first reading. Test uses
1000-1029, or the tune uses 500-529 with ``--tune``; three targets each.
"""
import argparse
import os
import sys

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

from host_sim.calibrate.pipeline import calibrate  # noqa: E402
from host_sim.calibrate.prepare import TARGET_FRACTIONS, crossing_s, prepare, targets_for  # noqa: E402
from host_sim.replay.replay import SHOWN_STATUSES, replay  # noqa: E402
from host_sim.sim import vessels  # noqa: E402

OTHER = {"mug": "flask", "flask": "mug"}
HORIZON_S = 300.0


def first_rows(name, prof, seeds):
    """(rows, inside, below, above, errors, first shown s of each trace's middle target)."""
    inside, below, above, errs, firsts = 0, 0, 0, [], []
    for seed in seeds:
        tr = vessels.use_trace(vessels.generate_use(name, seed))
        pr = prepare(tr)
        t = np.asarray(tr.time_s, dtype=float)
        for j, target in enumerate(targets_for(pr, TARGET_FRACTIONS)):
            cross = crossing_s(pr, target)
            if cross is None:
                continue
            a = replay(tr, target, profile=prof.to_blob())
            b = replay(tr, target)
            sa = np.isin([r["status_code"] for r in a.rows], SHOWN_STATUSES)
            sb = np.nonzero(np.isin([r["status_code"] for r in b.rows], SHOWN_STATUSES))[0]
            own = sb[0] if len(sb) else len(t)
            if j == len(TARGET_FRACTIONS) // 2:
                fa = np.nonzero(sa)[0]
                firsts.append(t[fa[0]] - t[0] if len(fa) else np.inf)
            for i in range(min(own, len(t))):
                r = a.rows[i]
                if not sa[i] or t[i] >= cross or t[i] - t[0] > HORIZON_S or not r["eta_s"]:
                    continue
                act = cross - t[i]
                below += act < r["eta_low_s"]
                above += act > r["eta_high_s"]
                inside += r["eta_low_s"] <= act <= r["eta_high_s"]
                errs.append(abs(r["eta_s"] - act) / act)
    return inside + below + above, inside, below, above, errs, np.array(firsts)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--tune", action="store_true", help="the tune uses 500-529")
    ap.add_argument("--vessels", nargs="+", default=["mug", "flask"], choices=sorted(OTHER))
    args = ap.parse_args(argv)
    first = 500 if args.tune else 1000
    seeds = range(first, first + 30)
    profs = {}
    for name in sorted(OTHER):
        uses = [vessels.generate_use(name, s) for s in range(10)]
        profs[name] = calibrate([vessels.use_trace(u) for u in uses], folds=5, progress=False,
                                fills=[u.truth["fill_kg"] for u in uses]).profile
    print("uses %d-%d; rows shown before the device without a profile shows, <= %.0f s"
          % (first, first + 29, HORIZON_S))
    for name in args.vessels:
        for pname in (name, OTHER[name]):
            n, ins, lo, hi, errs, firsts = first_rows(name, profs[pname], seeds)
            print("  %-6s with the %-6s profile%s: %4d rows, coverage %s (crossing below %d, "
                  "above %d), median error %s; answer within 60 s %.2f (median first %.0f s)"
                  % (name, pname, " (own fit)" if profs[pname].own_fit else "", n,
                     "%.3f" % (ins / n) if n else "-", lo, hi,
                     "%.3f" % np.median(errs) if errs else "-", np.mean(firsts <= 60.0),
                     np.median(firsts)))
    return 0


if __name__ == "__main__":
    sys.exit(main())
