"""Where the core's median error comes from against the window refit, by phase of the approach.

    python benchmarks/median_phases.py --family bath --sampling dense --per-family 32
    python benchmarks/median_phases.py --family pot --sampling sparse --per-family 32 --jobs 2

For each family trace of the tune (or holdout) seeds this replays the core estimator
(the device's settings, as ``benchmarks/families.py``) and the window refit ``exp_recent``
(free equilibrium over ``max(300 s, half the elapsed time)``,
:func:`host_sim.replay.baselines.make_family_baselines`), and at every evaluated row (after
the first minute of the approach, before the true crossing, as
:mod:`host_sim.replay.metrics` evaluates them) records each method's relative error, the
log ratio ``ln(eta / remaining)`` (below 0: the point short, the liquid took longer), the
fitted rate times the trace's loss time constant ``k tau`` (the family's ``tau_ref_s``;
families without one print ``-``), and whether the core's k was pinned at 0 (the data
accelerating: the exact line).

Printed, each trace weighing one (medians over the traces of per-trace medians, as the
families benchmark's median error):

- per trace set: the median error as scored (each method on its own rows), on the rows both
  answer, and on the rows only the core answers (their share of the core's rows);
- per phase of the approach (share of the way from its start to the crossing): each
  method's median error, the log ratios on the rows both answer, the fitted ``k tau``, the
  share of the core's rows the refit leaves blank, the share with k pinned;
- the core's rows the refit leaves blank and those both answer: pinned share, log ratio,
  ``k tau``, and the pinned rows' log ratio.

Figures only.
"""
import argparse
import math
import multiprocessing
import os
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
for p in (ROOT, os.path.join(ROOT, "benchmarks")):
    if p not in sys.path:
        sys.path.insert(0, p)

import numpy as np  # noqa: E402

import families as F  # noqa: E402
from host_sim.replay.baselines import make_family_baselines  # noqa: E402
from host_sim.replay.metrics import relative_errors  # noqa: E402
from host_sim.sim import families as fam  # noqa: E402
from tinytherm import status as st  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402

PHASES = (0.0, 0.1, 0.2, 0.35, 0.5, 0.7, 0.85, 1.0)


def trace_rows(family, seed, sampling):
    """Evaluated rows of one trace: a list of dicts (keys ``ph``, ``rc``, ``rb``, ``lc``,
    ``lb`` (both answer), ``lcore`` (the core's), ``ktc``, ``ktb``, ``pin``; NaN where a method gives no answer or no tau)."""
    ft = fam.load_or_generate(family, seed, sensor_faults=True, sampling=sampling)
    tr = ft.truth
    est = ThermalEstimator(**F.device_kwargs(ThermalEstimator, ft.heater is not None,
                                             tr["quantum_c"]))
    eta_c, k_c = [], []
    for _t in F.feed(est, ft.time_s, ft.temp_c, ft.ambient_c, ft.heater):
        est.predict(tr["target_c"])
        shown = st.status_name(est.status) in ("tracking", "arrived")
        eta_c.append(est.eta_s if shown else None)
        k_c.append(est.rate_per_s if shown else None)
    base = make_family_baselines()[2]  # exp_recent
    eta_b, k_b = [], []
    for t, y in zip(ft.time_s, ft.temp_c):
        base.update(float(t), float(y))
        eta_b.append(base.predict(tr["target_c"]))
        k_b.append(base.params[2] if base.params is not None else None)
    cross, start = tr["crossing_time_s"], tr["approach_start_s"]
    mask, rel_c, rem = relative_errors(ft.time_s, eta_c, cross, start_s=start)
    _, rel_b, _ = relative_errors(ft.time_s, eta_b, cross, start_s=start)
    tau = tr.get("tau_ref_s") or math.nan
    nan = math.nan

    def ln_ratio(eta, remaining):
        return nan if eta is None else math.log(max(eta, 1.0) / max(remaining, 1.0))
    rows = []
    for i in np.nonzero(mask)[0]:
        both = eta_b[i] is not None and eta_c[i] is not None
        rows.append(dict(
            ph=float((ft.time_s[i] - start) / (cross - start)), rc=float(rel_c[i]),
            rb=float(rel_b[i]), lc=ln_ratio(eta_c[i], rem[i]) if both else nan,
            lb=ln_ratio(eta_b[i], rem[i]) if both else nan, lcore=ln_ratio(eta_c[i], rem[i]),
            ktc=nan if k_c[i] is None else k_c[i] * tau,
            ktb=nan if k_b[i] is None or eta_b[i] is None else k_b[i] * tau,
            pin=k_c[i] == 0.0))
    return rows


def _job(args):
    return trace_rows(*args)


def _med(values):
    values = [v for v in values if v is not None and math.isfinite(v)]
    return float(np.median(values)) if values else math.nan


def _over_traces(traces, pick, stat):
    """Median over the traces of ``stat`` of each trace's rows that ``pick`` keeps."""
    out = []
    for rows in traces:
        kept = [r for r in rows if pick(r)]
        if kept:
            out.append(stat(kept))
    return _med(out), len(out)


def report(family, sampling, traces):
    """Print the three tables of the module docstring for one family's traces."""
    core = lambda r: math.isfinite(r["rc"])  # noqa: E731
    both = lambda r: core(r) and math.isfinite(r["rb"])  # noqa: E731
    only = lambda r: core(r) and not math.isfinite(r["rb"])  # noqa: E731
    print("\n## %s, %s, %d traces\n" % (family, sampling, len(traces)))
    own_c = _over_traces(traces, core, lambda k: _med([r["rc"] for r in k]))[0]
    own_b = _over_traces(traces, lambda r: math.isfinite(r["rb"]),
                         lambda k: _med([r["rb"] for r in k]))[0]
    pair_c = _over_traces(traces, both, lambda k: _med([r["rc"] for r in k]))[0]
    pair_b = _over_traces(traces, both, lambda k: _med([r["rb"] for r in k]))[0]
    only_e, n_only = _over_traces(traces, only, lambda k: _med([r["rc"] for r in k]))
    share = _med([sum(map(only, t)) / max(sum(map(core, t)), 1) for t in traces])
    print("median error core / exp_recent: as scored %.3f / %.3f (%.2fx); on the rows both "
          "answer %.3f / %.3f (%.2fx); core-only rows %.3f on %d traces (median share of the "
          "core's rows %.2f)" % (own_c, own_b, own_c / own_b, pair_c, pair_b, pair_c / pair_b,
                                 only_e, n_only, share))
    print("\n| phase | traces | core err | exp_recent err | ln ratio core / exp_recent (both) "
          "| k tau core / exp_recent | core-only share | k pinned share |")
    print("|---|---|---|---|---|---|---|---|")
    for lo, hi in zip(PHASES[:-1], PHASES[1:]):
        ts = [[r for r in t if lo <= r["ph"] < hi] for t in traces]
        ts = [t for t in ts if t]
        f = [_over_traces(ts, pick, lambda k, key=key: _med([r[key] for r in k]))[0]
             for pick, key in ((core, "rc"), (lambda r: math.isfinite(r["rb"]), "rb"),
                               (both, "lc"), (both, "lb"), (core, "ktc"),
                               (lambda r: math.isfinite(r["rb"]), "ktb"))]
        o = _med([sum(map(only, t)) / len(t) for t in ts])
        p = _med([sum(1 for r in t if core(r) and r["pin"]) / max(sum(map(core, t)), 1)
                  for t in ts])
        print("| %.2f-%.2f | %d | %.3f | %.3f | %+.3f / %+.3f | %.2f / %.2f | %.2f | %.2f |"
              % ((lo, hi, len(ts)) + tuple(f) + (o, p)))
    print("\n| core rows | traces | k pinned share | ln ratio | k tau | pinned rows' ln ratio |")
    print("|---|---|---|---|---|---|")
    for label, pick in (("the refit blank", only), ("both answer", both)):
        ts = [[r for r in t if pick(r)] for t in traces]
        ts = [t for t in ts if t]
        pinned = _med([sum(r["pin"] for r in t) / len(t) for t in ts])
        ln_c = _med([_med([r["lcore"] for r in t]) for t in ts])
        kt = _med([_med([r["ktc"] for r in t]) for t in ts])
        pl = _med([_med([r["lcore"] for r in t if r["pin"]]) for t in ts
                   if any(r["pin"] for r in t)])
        print("| %s | %d | %.2f | %+.3f | %.2f | %+.3f |" % (label, len(ts), pinned, ln_c, kt, pl))


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    F.add_family_arguments(ap)
    ap.add_argument("--jobs", type=int, default=2, help="worker processes (default 2)")
    args = ap.parse_args(argv)
    base = F.SEED_BASE[args.seeds]
    for family in F.chosen_families(ap, args):
        work = [(family, base + i, args.sampling) for i in range(args.per_family)]
        if args.jobs > 1:
            with multiprocessing.Pool(args.jobs) as pool:
                traces = pool.map(_job, work)
        else:
            traces = [_job(w) for w in work]
        report(family, args.sampling, traces)


if __name__ == "__main__":
    main()
