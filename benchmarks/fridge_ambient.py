"""Cycling fridge: varying-ambient prediction against the constant-ambient assumption.

    python benchmarks/fridge_ambient.py [--seeds 24] [--first-seed 7000] [--every-s 60]

Each trace comes from the simulator's ``fridge`` scenario
(:func:`host_sim.sim.scenarios.generate`): a drink cooling in a fridge whose air
temperature cycles with the compressor (plus the warm-air transient after the
door closes), read by a lagging, noisy, quantised air sensor written as the
ambient column, with sensor faults on. Every row goes through the core as on
a device: :class:`tinytherm.estimator.ThermalEstimator` (fed the measured
ambient per reading) and :class:`tinytherm.forecast.AmbientTracker` (fed the
same ambient readings).

At moments between 10 % and 90 % of the true crossing time (every
``--every-s`` seconds) the remaining time to the target is predicted with the
*same* fitted rate ``k`` and current temperature, three ways:

- ``const_latest``: constant ambient = the latest air reading (the usual
  assumption; the estimator's own answer instead uses the measured ambient
  smoothed with time constant ``memory_s``);
- ``const_level``: constant ambient = the tracker's smoothed level;
- ``varying``: the tracker's extrapolated ambient (periodic once a cycle has
  been seen, else its mean, or level and trend when a trend dominates)
  through :class:`tinytherm.forecast.Forecast`;
- ``varying_notrend``: the same with trend extrapolation off (``trend_s=0``).

Also shown: ``estimator``, the estimator's own ``eta_s``. Errors are relative
to the exact remaining time (truth from the simulator's dense solution); "no
answer" (target judged out of reach although it is reached) counts as a miss.
Prints a table; no pass/fail.
"""
import argparse
import math
import os
import sys
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
if ROOT not in sys.path:
    sys.path.insert(0, ROOT)

import numpy as np  # noqa: E402

from host_sim.sim import scenarios  # noqa: E402
from tinytherm import status as st  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402
from tinytherm.forecast import AMBIENT_PERIODIC, AmbientTracker, Forecast  # noqa: E402

METHODS = ("const_latest", "const_level", "varying", "varying_notrend", "estimator")


def evaluate_trace(seed, every_s):
    """Per-method lists of (relative error or None) for one fridge trace."""
    gen = scenarios.generate("fridge", seed)
    crossing = gen.truth["crossing_time_s"]
    if crossing is None:
        return None
    target = gen.truth["target_c"]
    est = ThermalEstimator()
    tracker = AmbientTracker()
    flat = AmbientTracker(trend_s=0.0)  # same, but never extrapolates a trend
    fc = Forecast()
    out = {m: [] for m in METHODS}
    out["_flags"] = []
    periodic_used = 0
    prev_t = None
    next_eval = 0.1 * crossing
    for t, temp, amb in zip(gen.time_s, gen.temp_c, gen.ambient_c):
        t = float(t)
        dt = 0.0 if prev_t is None else t - prev_t
        prev_t = t
        amb_c = float(amb) if math.isfinite(amb) else None
        est.update(float(temp), dt, ambient_c=amb_c)
        if amb_c is not None:
            tracker.update(amb_c, dt)
            flat.update(amb_c, dt)
        if t < next_eval or t > 0.9 * crossing:
            continue
        next_eval = t + every_s
        est.predict(target)
        k = est.rate_per_s
        temp_now = est.temp_est_c
        if k is None or not k > 0.0 or temp_now is None or amb_c is None:
            continue
        truth = crossing - t
        fc.set_model(k, 0.0)
        fc.set_plan_duty(0.0)

        def rel(eta):
            return None if eta is None else abs(eta - truth) / truth

        fc.set_ambient_constant(amb_c)
        out["const_latest"].append(rel(fc.time_to_target_s(temp_now, target)))
        fc.set_ambient_constant(tracker.mean_level_c)
        out["const_level"].append(rel(fc.time_to_target_s(temp_now, target)))
        is_periodic = tracker.apply(fc) == AMBIENT_PERIODIC
        if is_periodic:
            periodic_used += 1
        out["_flags"].append(is_periodic)
        out["varying"].append(rel(fc.time_to_target_s(temp_now, target)))
        flat.apply(fc)
        out["varying_notrend"].append(rel(fc.time_to_target_s(temp_now, target)))
        out["estimator"].append(rel(est.eta_s if est.status != st.OUT_OF_REACH else None))
    out["_periodic"] = periodic_used
    return out


def summary(errors):
    n = len(errors)
    got = np.array([e for e in errors if e is not None])
    answered = len(got) / n if n else float("nan")
    # misses count as infinite error for the quantiles
    full = np.array([e if e is not None else np.inf for e in errors])
    return (n, answered, float(np.median(full)), float(np.quantile(full, 0.9)),
            float(np.mean(full <= 0.10)), float(np.mean(full <= 0.25)))


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--seeds", type=int, default=24, help="number of fridge traces (default 24)")
    ap.add_argument("--first-seed", type=int, default=7000, help="first seed (default 7000)")
    ap.add_argument("--every-s", type=float, default=60.0,
                    help="seconds between evaluation moments (default 60)")
    args = ap.parse_args(argv)
    pooled = {m: [] for m in METHODS}
    flags = []
    periodic = 0
    used = 0
    t0 = time.time()
    for i in range(args.seeds):
        seed = args.first_seed + i
        res = evaluate_trace(seed, args.every_s)
        if res is None:
            print("seed %d: no crossing within the horizon, skipped" % seed, file=sys.stderr)
            continue
        used += 1
        periodic += res.pop("_periodic")
        flags.extend(res.pop("_flags"))
        for m in METHODS:
            pooled[m].extend(res[m])
        if (i + 1) % 6 == 0:
            print("  %d/%d traces (%.0f s)" % (i + 1, args.seeds, time.time() - t0), file=sys.stderr)
    n_eval = len(pooled["varying"])
    print("Cycling fridge, %d traces (seeds %d..%d), %d prediction moments between 10%% and 90%%"
          " of the true crossing time" % (used, args.first_seed, args.first_seed + args.seeds - 1,
                                          n_eval))
    print("varying path used a periodic ambient at %.0f%% of the moments (else mean, or level+trend)"
          % (100.0 * periodic / max(n_eval, 1)))
    print("%-15s %7s %9s %10s %10s %9s %9s" % ("method", "moments", "answered", "median_err",
                                             "p90_err", "within10%", "within25%"))
    for m in METHODS:
        n, ans, med, p90, w10, w25 = summary(pooled[m])
        print("%-15s %7d %8.1f%% %9.1f%% %9s %8.1f%% %8.1f%%" % (
            m, n, 100.0 * ans, 100.0 * med,
            ("%.1f%%" % (100.0 * p90)) if math.isfinite(p90) else "miss",
            100.0 * w10, 100.0 * w25))
    flags = np.array(flags, dtype=bool)
    print("median error before / after a full air cycle has been seen:")
    for m in METHODS:
        full = np.array([e if e is not None else np.inf for e in pooled[m]])
        pre = float(np.median(full[~flags])) if np.any(~flags) else float("nan")
        post = float(np.median(full[flags])) if np.any(flags) else float("nan")
        print("  %-15s %6.1f%% / %6.1f%%" % (m, 100.0 * pre, 100.0 * post))
    # paired comparison on moments where both answered
    a = pooled["const_latest"]
    b = pooled["varying"]
    both = [(x, y) for x, y in zip(a, b) if x is not None and y is not None]
    if both:
        better = sum(1 for x, y in both if y < x)
        print("varying closer than const_latest at %d of %d moments where both answered (%.0f%%)"
              % (better, len(both), 100.0 * better / len(both)))
    print("(errors relative to the true remaining time; a miss = no answer although reached)")


if __name__ == "__main__":
    main()
