"""Where the 80 % intervals miss by the readings the fit rests on (readings minutes apart).

    python benchmarks/young_fits.py --sampling sparse
    python benchmarks/young_fits.py --family pot --family bath --sampling sparse --per-family 32

For each family trace of the tune (or holdout) seeds this replays the core
estimator and, at every evaluated row with a shown interval (after the first
minute of the approach, before the true crossing, as
:mod:`host_sim.replay.metrics` counts coverage), records what the answer was
worked out from (watched by wrapping ``answer._work_out``,
``Audits.var_at`` and ``Regression.eta_rel_var`` for the run): the readings in
the fit (``blocks.readings``), the interval's sd of ln(eta) and the fit's own
delta-method sd of it, whether the shortest audit had measured anything, whether
k was pinned at 0 (the data accelerating: the exact line), the residual
variance per reading over the noise variance (``reg.s2r / noise.var``) and
whether the noise was still its prior (never measured: readings further
apart than ``fit.NOISE_MAX_DT_MS``).

Printed per family and group of readings in the fit, each trace weighing one
(as the per-trace coverage of ``benchmarks/families.py``): the group's share
of the family's rows, its coverage, the share with the truth beyond the upper
end (the point short: the liquid took longer) and before the lower end, and
the widening that would cover 80 % of the group's rows (the weighted 80th
percentile of ``|ln(eta / remaining)| / (z sd)``; 1 = calibrated, below 1 too
wide). Then, per family, the coverage the family would have if its rows of at
most six readings were all covered (the first answers' weight in it). Figures
only.
"""
import argparse
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
from host_sim.replay.metrics import WARMUP_S  # noqa: E402
from host_sim.sim import families as fam  # noqa: E402
from tinytherm import answer, fit  # noqa: E402
from tinytherm import status as st  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402

# readings in the fit (0-2: a fit seeded with two readings at a turn, or an answer not
# worked out in this fit)
GROUPS = ((0, 2), (3, 3), (4, 4), (5, 6), (7, 8), (9, 16), (17, 255))


def group_of(readings):
    """The readings group's label (``GROUPS``) of a fit resting on ``readings`` readings."""
    for lo, hi in GROUPS:
        if lo <= readings <= hi:
            return "%d-%d" % (lo, hi) if lo != hi else "%d" % lo
    raise ValueError("%r readings: no group" % (readings,))


def trace_rows(family, seed, sampling):
    """Per evaluated row with a shown interval: (group, covered, side, need, sd, own sd,
    audited, pinned, s2r ratio, noise prior); side +1 truth beyond the upper end, -1 before
    the lower end, 0 inside; ``need``: |ln(eta / remaining)| / (z sd)."""
    ft = fam.load_or_generate(family, seed, sensor_faults=True, sampling=sampling)
    tr = ft.truth
    seen = {}
    work_out, var_at, eta_rel_var = answer._work_out, answer.Audits.var_at, fit.Regression.eta_rel_var

    def watched_var_at(self, eta_s, age_s, prior_var):
        seen["audited"] = self.a[0].n > 0
        return var_at(self, eta_s, age_s, prior_var)

    def watched_eta_rel_var(self, gap, slope, k, eta, gk):
        v = eta_rel_var(self, gap, slope, k, eta, gk)
        seen["own"] = v
        return v

    def watched_work_out(est, target, approach):
        seen.clear()
        work_out(est, target, approach)
        reg, nz = est.reg, est.noise
        seen.update(readings=est.blocks.readings, pinned=reg.ok and reg.k == 0.0 and reg.pkk == 0.0,
                    ratio=reg.s2r / nz.var, prior=nz.n <= fit.NOISE_PRIOR_N)
        seen["answer"] = dict(seen)

    answer._work_out = watched_work_out
    answer.Audits.var_at = watched_var_at
    fit.Regression.eta_rel_var = watched_eta_rel_var
    rows = []
    try:
        est = ThermalEstimator(**F.device_kwargs(ThermalEstimator, ft.heater is not None,
                                                 tr["quantum_c"]))
        start = tr.get("approach_start_s") or float(ft.time_s[0])
        z = est.audits.z
        for t in F.feed(est, ft.time_s, ft.temp_c, ft.ambient_c, ft.heater):
            est.predict(tr["target_c"])  # (between block closes: the answer counted down)
            remaining = tr["crossing_time_s"] - t
            if t < start + WARMUP_S or remaining <= 0.0:
                continue
            if est.status not in (st.TRACKING, st.ARRIVED) or est.eta_low_s is None:
                continue
            a = seen.get("answer", {})
            high = math.inf if est.eta_high_s is None else est.eta_high_s
            side = 0 if est.eta_low_s <= remaining <= high else (1 if remaining > high else -1)
            sd = est.eta_rel_sd if est.eta_rel_sd is not None else math.nan
            need = math.nan
            if est.eta_s and est.eta_s > 0.0 and sd > 0.0:
                need = abs(math.log(est.eta_s / remaining)) / (z * sd)
            rows.append((group_of(a.get("readings", 0)), side == 0, side, need, sd,
                         math.sqrt(a["own"]) if "own" in a else math.nan, a.get("audited", False),
                         a.get("pinned", False), a.get("ratio", math.nan), a.get("prior", False)))
    finally:
        answer._work_out = work_out
        answer.Audits.var_at = var_at
        fit.Regression.eta_rel_var = eta_rel_var
    return rows


def weighted_quantile(pairs, q):
    """The ``q`` quantile of (value, weight) pairs (NaN values left out)."""
    pairs = sorted((v, w) for v, w in pairs if v == v)
    total = sum(w for _, w in pairs)
    if not total:
        return math.nan
    run = 0.0
    for v, w in pairs:
        run += w
        if run >= q * total:
            return v
    return pairs[-1][0]


def main(argv=None):
    ap = argparse.ArgumentParser(description="Where the 80 % intervals miss, by the readings "
                                             "in the fit.")
    F.add_family_arguments(ap)
    args = ap.parse_args(argv)
    names = F.chosen_families(ap, args)
    weights = defaultdict(list)   # (family, group) -> [(row, weight)]
    early = {}
    for f in tqdm(names, desc="families", file=sys.stderr):
        per_trace = []
        for i in range(args.per_family):
            rows = trace_rows(f, F.SEED_BASE[args.seeds] + i, args.sampling)
            if not rows:
                continue
            w = 1.0 / len(rows)
            for r in rows:
                weights[(f, r[0])].append((r, w))
            per_trace.append((sum(r[1] for r in rows) / len(rows),
                              sum(1 for r in rows if r[1] or r[0] in ("3", "4", "5-6")) / len(rows)))
        if per_trace:
            early[f] = (statistics.mean(c for c, _ in per_trace),
                        statistics.mean(e for _, e in per_trace), len(per_trace))
    order = {g: j for j, g in enumerate(group_of(lo) for lo, _ in GROUPS)}
    print("| family | readings in fit | row share | coverage | beyond upper | before lower | "
          "widening for 80 % | median sd | median delta sd | audited | k pinned | "
          "median s2r / noise var | noise still prior |")
    print("|---|---|---|---|---|---|---|---|---|---|---|---|---|")
    for (f, g) in sorted(weights, key=lambda key: (names.index(key[0]), order[key[1]])):
        rw = weights[(f, g)]
        tot = sum(w for _, w in rw)

        def share(pred):
            return sum(w for r, w in rw if pred(r)) / tot
        print("| %s | %s | %.2f | %.2f | %.2f | %.2f | %.2f | %.3f | %.3f | %.2f | %.2f | %.1f | %.2f |"
              % (f, g, tot / early[f][2], share(lambda r: r[1]), share(lambda r: r[2] > 0),
                 share(lambda r: r[2] < 0), weighted_quantile([(r[3], w) for r, w in rw], 0.8),
                 statistics.median([r[4] for r, _ in rw if r[4] == r[4]] or [math.nan]),
                 statistics.median([r[5] for r, _ in rw if r[5] == r[5]] or [math.nan]),
                 share(lambda r: r[6]), share(lambda r: r[7]),
                 statistics.median([r[8] for r, _ in rw if r[8] == r[8]] or [math.nan]),
                 share(lambda r: r[9])))
    print("\n| family | traces | coverage | with the rows of at most 6 readings all covered |")
    print("|---|---|---|---|")
    for f in names:
        if f in early:
            print("| %s | %d | %.3f | %.3f |" % (f, early[f][2], early[f][0], early[f][1]))
    return 0


if __name__ == "__main__":
    sys.exit(main())
