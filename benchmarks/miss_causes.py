"""Why the 80 % intervals miss, and which statuses make the rows without an estimate.

    python benchmarks/miss_causes.py --family wort --sampling dense
    python benchmarks/miss_causes.py --family wort --family mug --sampling sparse --per-family 32

For each family trace of the tune (or holdout) seeds this replays the core
estimator and sorts every evaluated row of the approach (after the first
minute, before the true crossing, as :mod:`host_sim.replay.metrics` evaluates
them) by its cause:

- a shown time (``tracking``): whether the equilibrium's drift was in the
  answer (:mod:`tinytherm.answer`, watched by wrapping
  ``answer.time_to_target_drift_s`` (imported from num) and ``answer._work_out`` for the run), whether the time reached
  beyond twice the fit's age (an extrapolation over more than the fit has seen),
  and, when the interval missed the true remaining time, whether the point was
  short (the liquid took longer) or long;
- no estimate: the status shown instead (gathering, settling, out of reach,
  sensor fault, disturbed); gathering and disturbed with what began the fit they
  gather for (the trace's start, a turn, a jump, the settle restart, a gap; "spike"
  when one of the two readings before it was more than max(1 C, 6 noise sd) off the
  noise-free probe, a sensor fault the guard passed), settling with why (the fitted
  slope against the block means, "turned"; a time worked out but its forecast sd
  over the show gate, "show gate"; else "other").

With ``--split`` each cause is split further by the trace's columns (``air``: the
measured air or room column the family gives some traces, ``no air``) and by where
in the approach the row lies (the share of the time from the approach's start to
the true crossing: ``<0.1``, ``<0.5``, ``<0.9``, ``>=0.9``, as
``benchmarks/no_estimate_causes.py``'s); without it the causes are as before.

Each trace weighs one (its rows' shares are averaged over the traces, as the
per-trace coverage and no-estimate figures of ``benchmarks/families.py`` are),
so one trace read every second does not outweigh one read every five minutes.
A missed share mostly ``short`` says the point is biased, not the interval
narrow. Figures only.
"""
import argparse
import os
import sys
from collections import Counter

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
for p in (ROOT, os.path.join(ROOT, "benchmarks")):
    if p not in sys.path:
        sys.path.insert(0, p)

import families as F  # noqa: E402
from host_sim.replay.metrics import WARMUP_S  # noqa: E402  (rows evaluated after this much of the approach)
from host_sim.sim import families as fam  # noqa: E402
from tinytherm import answer  # noqa: E402
from tinytherm import status as st  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402
from tinytherm.guard import GAP_RESTART  # noqa: E402

POSITIONS = ((0.1, "<0.1"), (0.5, "<0.5"), (0.9, "<0.9"))


def trace_causes(family, seed, sampling, split=False):
    """Counter of the causes of one trace's evaluated rows (keys: the module docstring's;
    ``split``: each key followed by the trace's air column and the row's share of the
    approach, `` | air, <0.5``)."""
    ft = fam.load_or_generate(family, seed, sensor_faults=True, sampling=sampling)
    tr = ft.truth
    column = "air" if tr["has_ambient_column"] else "no air"
    drift = {"on": False}
    original, original_work_out = answer.time_to_target_drift_s, answer._work_out

    def watched(gap, slope, k, bd):
        drift["on"] = True  # (called only with a drift in the answer)
        return original(gap, slope, k, bd)

    def work_out(est, target, approach):
        drift["on"] = False
        return original_work_out(est, target, approach)

    answer.time_to_target_drift_s = watched
    answer._work_out = work_out
    out = Counter()
    began = ["start"]  # what began the current fit
    off = max(1.0, 6.0 * tr["noise_sd_c"])  # deg C: a reading this far off the probe is a fault
    try:
        est = ThermalEstimator(**F.device_kwargs(ThermalEstimator, ft.heater is not None,
                                                 tr["quantum_c"]))
        start = float(tr.get("approach_start_s") or ft.time_s[0])
        begin_again = est._begin_again
        seen = {"turns": 0, "i": 0}

        def traced_begin(disturbed, from_previous=False):
            why = "jump" if disturbed else ("turn" if est.turns != seen["turns"] else "settle")
            seen["turns"] = est.turns
            i = seen["i"]
            spike = any(abs(ft.temp_c[j] - ft.clean_c[j]) > off for j in range(max(0, i - 1), min(i + 1, len(ft.temp_c))))
            began[0] = why + (", spike" if spike else "")
            return begin_again(disturbed, from_previous)

        est._begin_again = traced_begin
        for i, t in enumerate(F.feed(est, ft.time_s, ft.temp_c, ft.ambient_c, ft.heater)):
            seen["i"] = i + 1  # (the reading fed next: _begin_again runs inside its update)
            if est.guard.gap == GAP_RESTART and est.last_verdict == st.ACCEPTED and i:
                began[0] = "gap"
            est.predict(tr["target_c"])  # (between block closes: the answer counted down)
            remaining = tr["crossing_time_s"] - t
            if t - start < WARMUP_S or remaining <= 0.0:
                continue
            where = ""
            if split:
                frac = (t - start) / max(tr["crossing_time_s"] - start, 1e-9)
                where = " | %s, %s" % (column, next(
                    (name for edge, name in POSITIONS if frac < edge), ">=0.9"))
            if est.status == st.ARRIVED:
                out["shown: arrived" + where] += 1
            elif est.status != st.TRACKING or est.eta_s is None:
                key = "none: " + st.status_name(est.status)
                if est.status in (st.GATHERING, st.DISTURBED):
                    key += " (after %s)" % began[0]
                elif est.status == st.SETTLING:
                    key += " (%s)" % ("show gate" if est.eta_s is not None else "turned" if (
                        est._slope * est.blocks.dir < 0.0) else "other")
                out[key + where] += 1
            else:
                age = max(est.audits.age_ms * 0.001, 1.0)
                key = "shown: drift %s, eta %s 2 x fit age" % (
                    "on" if drift["on"] else "off", ">" if est.eta_s > 2.0 * age else "<=")
                out[key + where] += 1
                if not est.eta_low_s <= remaining <= est.eta_high_s:
                    out["missed: " + key[7:] + (", short" if est.eta_s < remaining else ", long")
                        + where] += 1
    finally:
        answer.time_to_target_drift_s = original
        answer._work_out = original_work_out
    return out


def main(argv=None):
    ap = argparse.ArgumentParser(description="Why intervals miss and which statuses give no "
                                             "estimate, per family (per-trace shares).")
    F.add_family_arguments(ap)
    ap.add_argument("--split", action="store_true",
                    help="split each cause by the air column and the share of the approach")
    args = ap.parse_args(argv)
    names = F.chosen_families(ap, args)
    print("| family | cause | share of evaluated rows (mean over traces) |")
    print("|---|---|---|")
    for f in names:
        shares, n = Counter(), 0
        for i in range(args.per_family):
            c = trace_causes(f, F.SEED_BASE[args.seeds] + i, args.sampling, args.split)
            rows = sum(v for k, v in c.items() if not k.startswith("missed"))
            if not rows:
                continue
            n += 1
            for k, v in c.items():
                shares[k] += v / rows
        for k in sorted(shares):
            print("| %s | %s | %.3f |" % (f, k, shares[k] / n))
    return 0


if __name__ == "__main__":
    sys.exit(main())
