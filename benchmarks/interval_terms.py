"""Which term sets the width of the 80 % interval, against the error it should cover.

    python benchmarks/interval_terms.py --family pot --family bath --sampling dense
    python benchmarks/interval_terms.py --family pot --sampling sparse --out terms.csv

The interval's sd of ln(eta) is (:mod:`tinytherm.answer`)::

    rel^2 = var_at(eta, age, prior) + b^2
    var_at = (prior + n var_audits) / (1 + n),  prior = max(F var_delta, AUDIT_PRIOR_VAR)

with ``b`` the model term (the rate off by RATE_MODEL_SD, the equilibrium's
drift). For each family trace of the tune (or holdout) seeds this replays the
core estimator and, at every reading with a shown answer before the crossing,
records the prior, ``var_at`` (:meth:`tinytherm.answer.Audits.var_at`, watched
by wrapping it for the run; the answer is worked out at a block close and
repeated until the next), ``b^2 = rel^2 - var_at`` and the true log error
``ln(eta / remaining)``. Printed per family, reading interval and half of the
approach (before and after half the time to the crossing): the rms log error,
the median interval sd and the median sd of each term, and how often the
interval covers (per reading, as ``benchmarks/families.py`` counts it). An interval much wider than the rms error, with
``var_at`` near it, says the audits' memory sets it. Figures only.
"""
import argparse
import csv
import math
import os
import statistics
import sys
from collections import defaultdict

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
for p in (ROOT, os.path.join(ROOT, "benchmarks")):
    if p not in sys.path:
        sys.path.insert(0, p)

from tqdm import tqdm  # noqa: E402

import families as F  # noqa: E402
from host_sim.sim import families as fam  # noqa: E402
from tinytherm import answer  # noqa: E402
from tinytherm import status as st  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402


def trace_terms(family, seed, sampling):
    """Per shown row before the crossing: (interval_s, half, err, rel, prior, var_at, b2,
    covered); ``half`` 1 or 2: before or after half the time from the first row to the crossing."""
    ft = fam.load_or_generate(family, seed, sensor_faults=True, sampling=sampling)
    tr = ft.truth
    seen = {}
    original = answer.Audits.var_at

    def watched(self, eta_s, age_s, prior_var):
        v = original(self, eta_s, age_s, prior_var)
        seen.update(prior=prior_var, var_at=v)
        return v

    answer.Audits.var_at = watched
    try:
        est = ThermalEstimator(**F.device_kwargs(ThermalEstimator, ft.heater is not None,
                                                 tr["quantum_c"]))
        rows = []
        for t in F.feed(est, ft.time_s, ft.temp_c, ft.ambient_c, ft.heater):
            est.predict(tr["target_c"])  # (between block closes: the answer repeated)
            remaining = tr["crossing_time_s"] - t
            if (est.status != st.TRACKING or not seen or est.eta_rel_sd is None
                    or not est.eta_s or remaining <= 0.0):
                continue
            rel = est.eta_rel_sd
            half = 1 if t - ft.time_s[0] < 0.5 * (tr["crossing_time_s"] - ft.time_s[0]) else 2
            rows.append((tr["sample_interval_s"], half, math.log(est.eta_s / remaining), rel,
                         seen["prior"], seen["var_at"], max(rel * rel - seen["var_at"], 0.0),
                         est.eta_low_s <= remaining <= est.eta_high_s))
    finally:
        answer.Audits.var_at = original
    return rows


def main(argv=None):
    ap = argparse.ArgumentParser(description="The interval's terms (prior, audits, model) "
                                             "against the true log error, per family and interval.")
    F.add_family_arguments(ap)
    ap.add_argument("--out", help="write one row per shown reading to this CSV")
    args = ap.parse_args(argv)
    names = F.chosen_families(ap, args)
    groups = defaultdict(list)
    for f in tqdm(names, desc="families", file=sys.stderr):
        for i in range(args.per_family):
            for row in trace_terms(f, F.SEED_BASE[args.seeds] + i, args.sampling):
                groups[(f, row[0], row[1])].append(row[:1] + row[2:])
    print("| family | interval s | half | rows | rms log err | median sd | sd prior | sd var_at | "
          "sd model | covered |")
    print("|---|---|---|---|---|---|---|---|---|---|")
    for (f, dt, half), rows in sorted(groups.items()):
        def med(j):
            return statistics.median(math.sqrt(r[j]) if j > 2 else r[j] for r in rows)
        rms = math.sqrt(sum(r[1] * r[1] for r in rows) / len(rows))
        print("| %s | %g | %d | %d | %.3f | %.3f | %.3f | %.3f | %.3f | %.2f |" % (
            f, dt, half, len(rows), rms, med(2), med(3), med(4), med(5),
            sum(r[6] for r in rows) / len(rows)))
    if args.out:
        with open(args.out, "w", newline="") as handle:
            w = csv.writer(handle)
            w.writerow(("family", "interval_s", "half", "log_err", "rel_sd", "prior_var", "var_at",
                        "model_var", "covered"))
            for (f, _dt, half), rows in sorted(groups.items()):
                for r in rows:
                    w.writerow((f, r[0], half) + tuple(r[1:]))
    return 0


if __name__ == "__main__":
    sys.exit(main())
