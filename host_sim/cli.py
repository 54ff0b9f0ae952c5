"""Command line: ``python -m host_sim`` or the ``tinytherm-sim`` console script.

Subcommands:

- ``replay TRACE.csv --target C --out PRED.csv [--plot OUT.png]``: feed a
  trace through the on-device estimator, write one prediction row per input
  row, print accuracy metrics when the trace crosses the target;
- ``scenario KIND --seed N --out trace.csv [--truth truth.json]``: generate a
  seeded physical scenario;
- ``demo [--plot demo.png]``: generate an invented scenario, stream it through
  the estimator printing the evolving time-to-target, write a PNG;
- ``benchmark --seeds tune|holdout|both``: the accuracy benchmark against
  batch baselines.
"""
import argparse
import json
import math
import sys

from host_sim import scenarios
from host_sim.trace_io import TraceError, read_trace, write_predictions

SAFETY_NOTE = ("Note: an estimate is never a safety interlock. Hot liquids scald; check "
               "serving and food temperatures with a calibrated thermometer and follow local "
               "codes; heaters need an independent thermal cut-out.")


def _add_estimator_options(p):
    g = p.add_argument_group("estimator settings (defaults: the core's own)")
    g.add_argument("--ambient", type=float, metavar="C", default=None,
                   help="known constant ambient, deg C (default: use the trace's ambient_c "
                        "column if any, else estimate it)")
    g.add_argument("--ignore-ambient-column", action="store_true",
                   help="do not pass the trace's ambient_c column to the estimator")
    g.add_argument("--ambient-prior", type=float, metavar="C", default=None,
                   help="prior centre for an estimated ambient, deg C")
    g.add_argument("--interval", type=float, metavar="P", default=None,
                   help="two-sided probability of the ETA interval, e.g. 0.8")
    g.add_argument("--memory-s", type=float, metavar="S", default=None,
                   help="forgetting time constant of the fit, seconds")
    g.add_argument("--block-s", type=float, metavar="S", default=None,
                   help="averaging block length of the fit, seconds")
    g.add_argument("--settle-s", type=float, metavar="S", default=None,
                   help="seconds of data before an answer may be trusted")
    g.add_argument("--max-relative-sd", type=float, metavar="X", default=None,
                   help="largest relative ETA spread still shown as tracking")
    g.add_argument("--heater", choices=("auto", "on", "off"), default="auto",
                   help="fit a heater gain from the trace's heater column (auto: when the "
                        "column exists and has a nonzero duty)")


def _estimator_kwargs(args):
    """Settings the user gave (None = the core's default), checked against the core."""
    import inspect
    from tinytherm.estimator import ThermalEstimator
    kw = {"memory_s": args.memory_s, "block_s": args.block_s, "interval": args.interval,
          "settle_s": args.settle_s, "max_relative_sd": args.max_relative_sd,
          "ambient_prior_c": args.ambient_prior}
    kw = {k: v for k, v in kw.items() if v is not None}
    known = inspect.signature(ThermalEstimator.__init__).parameters
    for name in kw:
        if name not in known:
            raise ValueError("this version of the estimator has no setting %s" % name)
    return kw


def cmd_replay(args):
    from host_sim.metrics import format_metrics, trace_metrics
    from host_sim.replay import crossing_from_trace, replay
    try:
        trace = read_trace(args.trace, fahrenheit=args.fahrenheit, skip_bad=args.skip_bad)
    except (OSError, TraceError) as exc:
        print("error: %s" % exc, file=sys.stderr)
        return 2
    if trace.skipped_rows:
        print("skipped %d bad row(s) (--skip-bad):" % trace.skipped_rows, file=sys.stderr)
        for reason in trace.skipped_reasons[:5]:
            print("  " + reason, file=sys.stderr)
        if trace.skipped_rows > 5:
            print("  ... and %d more" % (trace.skipped_rows - 5), file=sys.stderr)
    target = args.target
    if args.fahrenheit and args.target_in_f:
        target = (target - 32.0) * 5.0 / 9.0
    try:
        settings = _estimator_kwargs(args)
        result = replay(trace, target, ambient_c=args.ambient, heater=args.heater,
                        use_ambient_column=not args.ignore_ambient_column, progress=True,
                        **settings)
    except ValueError as exc:
        print("error: %s" % exc, file=sys.stderr)
        return 2
    write_predictions(args.out, result.rows)
    last = result.rows[-1]
    print("replayed %d rows through the estimator (%s); predictions in %s"
          % (len(trace), ", ".join("%s=%s" % kv for kv in sorted(result.settings.items())),
             args.out))
    print("last row: t=%.1f s, status %s, eta %s s" % (
        last["time_s"], last["status"],
        "-" if last["eta_s"] is None else "%.0f" % last["eta_s"]))
    crossing, source = None, None
    if args.truth:
        with open(args.truth) as handle:
            truth = json.load(handle)
        crossing, source = truth.get("crossing_time_s"), "truth file"
        if truth.get("target_c") is not None and abs(truth["target_c"] - target) > 1e-9:
            print("warning: truth file target %.3f C differs from --target %.3f C"
                  % (truth["target_c"], target), file=sys.stderr)
    else:
        crossing = crossing_from_trace(trace.time_s, trace.temp_c, target)
        source = "the trace (5-reading running median)"
    if crossing is not None:
        shown = trace_metrics(trace.time_s, result.shown_eta(), crossing,
                              result.shown_eta("eta_low_s"), result.shown_eta("eta_high_s"))
        raw = trace_metrics(trace.time_s, result.column("eta_s"), crossing,
                            result.column("eta_low_s"), result.column("eta_high_s"))
        print("target %.2f C crossed at t=%.1f s (from %s)" % (target, crossing, source))
        print("accuracy (answers a device shows, status tracking/arrived): " + format_metrics(shown))
        print("accuracy (every estimate, including settling):          " + format_metrics(raw))
    else:
        print("the trace does not cross the target: no accuracy metrics")
    if args.plot:
        from host_sim.plots import plot_replay
        plot_replay(trace, result, args.plot, crossing_s=crossing,
                    title="replay of %s, target %.1f C" % (args.trace, target))
        print("plot written to %s" % args.plot)
    return 0


def cmd_scenario(args):
    if args.list:
        for k in scenarios.KINDS:
            print("%-8s %s" % (k, scenarios.KIND_TITLES[k]))
        return 0
    if args.kind is None or args.out is None:
        print("error: scenario needs KIND and --out (or --list)", file=sys.stderr)
        return 2
    try:
        gen = scenarios.generate(args.kind, args.seed, target_c=args.target,
                                 sensor_faults=not args.no_faults)
    except ValueError as exc:
        print("error: %s" % exc, file=sys.stderr)
        return 2
    scenarios.write_scenario(gen, args.out, args.truth)
    tr = gen.truth
    print("%s (seed %d): %d rows over %.0f s, target %.2f C, crossing %s"
          % (tr["title"], tr["seed"], tr["rows"], tr["duration_s"], tr["target_c"],
             "none" if tr["crossing_time_s"] is None else "%.2f s" % tr["crossing_time_s"]))
    print("trace written to %s%s" % (args.out, "" if not args.truth else
                                     ", truth to %s" % args.truth))
    return 0


def cmd_demo(args):
    from host_sim.metrics import format_metrics, trace_metrics
    from host_sim.replay import replay
    from host_sim.trace_io import Trace
    gen = scenarios.generate(args.kind, args.seed)
    tr = gen.truth
    trace = Trace(gen.time_s, gen.temp_c, ambient_c=gen.ambient_c, heater=gen.heater,
                  events=gen.events)
    target = tr["target_c"]
    print("demo: %s (invented scenario, seed %d), target %.1f C" % (tr["title"], args.seed, target))
    print("true crossing of the noise-free sensor signal: %.0f s" % tr["crossing_time_s"])
    result = replay(trace, target)
    print("%8s %8s  %-12s %10s %21s %10s" % ("time_s", "temp_c", "status", "eta_s",
                                              "interval_s", "true_s"))
    next_print = 0.0
    for r, ev in zip(result.rows, trace.events):
        if r["time_s"] + 1e-9 < next_print and not ev:
            continue
        next_print = r["time_s"] + args.every
        true_left = tr["crossing_time_s"] - r["time_s"]
        eta = "-" if r["eta_s"] is None else "%.0f" % r["eta_s"]
        if r["eta_low_s"] is None:
            band = "-"
        else:
            band = "%.0f..%s" % (r["eta_low_s"], "inf" if not math.isfinite(r["eta_high_s"])
                                 else "%.0f" % r["eta_high_s"])
        print("%8.0f %8.2f  %-12s %10s %21s %10s%s" % (
            r["time_s"], r["temp_c"], r["status"], eta, band,
            "%.0f" % true_left if true_left > 0 else "-", ("   <- " + ev) if ev else ""))
    m = trace_metrics(trace.time_s, result.shown_eta(), tr["crossing_time_s"],
                      result.shown_eta("eta_low_s"), result.shown_eta("eta_high_s"))
    print("accuracy: " + format_metrics(m))
    if args.plot:
        from host_sim.plots import plot_replay
        plot_replay(trace, result, args.plot, crossing_s=tr["crossing_time_s"],
                    clean_c=gen.clean_c,
                    title="demo: %s (seed %d), target %.1f C" % (tr["title"], args.seed, target))
        print("plot written to %s" % args.plot)
    print(SAFETY_NOTE)
    return 0


def cmd_benchmark(args):
    from host_sim import benchmark
    return benchmark.run_cli(args)


def build_parser():
    p = argparse.ArgumentParser(
        prog="tinytherm-sim",
        description="Replay temperature traces through the tinytherm estimator on a PC, "
                    "generate physical test scenarios, and benchmark accuracy.",
        epilog=SAFETY_NOTE)
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True

    r = sub.add_parser("replay", help="feed a trace CSV through the estimator",
                       description="Feed every row of TRACE.csv (columns time_s,temp_c"
                                   "[,ambient_c][,heater][,event]) to the estimator "
                                   "(update then predict) and write PRED.csv with columns "
                                   "time_s,temp_c,eta_s,eta_low_s,eta_high_s,status,"
                                   "rate_per_s,equilibrium_c.")
    r.add_argument("trace", metavar="TRACE.csv")
    r.add_argument("--target", type=float, required=True, metavar="C",
                   help="target temperature, deg C")
    r.add_argument("--out", required=True, metavar="PRED.csv", help="prediction CSV to write")
    r.add_argument("--plot", metavar="OUT.png", help="also write a PNG plot")
    r.add_argument("--truth", metavar="TRUTH.json",
                   help="truth JSON from 'scenario' for the exact crossing time")
    r.add_argument("--fahrenheit", action="store_true",
                   help="the trace's temp_c/ambient_c columns hold deg F")
    r.add_argument("--target-in-f", action="store_true",
                   help="with --fahrenheit: --target is in deg F too")
    r.add_argument("--skip-bad", action="store_true",
                   help="skip malformed rows (their count is reported) instead of stopping")
    _add_estimator_options(r)
    r.set_defaults(func=cmd_replay)

    s = sub.add_parser("scenario", help="generate a seeded physical scenario trace",
                       description="Generate a trace CSV and a truth JSON (exact crossing "
                                   "time of the noise-free sensor signal).")
    s.add_argument("kind", nargs="?", choices=scenarios.KINDS, help="scenario kind")
    s.add_argument("--seed", type=int, default=0)
    s.add_argument("--out", metavar="trace.csv")
    s.add_argument("--truth", metavar="truth.json")
    s.add_argument("--target", type=float, metavar="C", default=None,
                   help="override the drawn target, deg C")
    s.add_argument("--no-faults", action="store_true",
                   help="no dropouts, spikes or stuck stretch (noise and lag remain)")
    s.add_argument("--list", action="store_true", help="list the scenario kinds")
    s.set_defaults(func=cmd_scenario)

    d = sub.add_parser("demo", help="stream an invented scenario through the estimator",
                       description="Synthesise a scenario, stream it through the estimator "
                                   "printing the time-to-target as it evolves, and "
                                   "optionally write a PNG.")
    d.add_argument("--plot", metavar="demo.png")
    d.add_argument("--kind", choices=scenarios.KINDS, default="mug")
    d.add_argument("--seed", type=int, default=7)
    d.add_argument("--every", type=float, default=60.0, metavar="S",
                   help="print a line every S seconds of trace time (and at events)")
    d.set_defaults(func=cmd_demo)

    b = sub.add_parser("benchmark", help="accuracy benchmark against batch baselines",
                       description="Seeded suite of scenarios: the estimator against naive "
                                   "slope extrapolation and scipy exponential refits.")
    b.add_argument("--seeds", choices=("tune", "holdout", "both"), default="both")
    b.add_argument("--per-kind", type=int, default=14, metavar="N",
                   help="traces per scenario kind and seed set (default 14: 70 traces)")
    b.add_argument("--jobs", type=int, default=2, help="worker processes (default 2)")
    b.add_argument("--csv", metavar="PER_TRACE.csv", help="write per-trace figures")
    b.add_argument("--no-faults", action="store_true",
                   help="diagnosis: scenarios without dropouts, spikes or stuck stretches")
    _add_estimator_options(b)
    b.set_defaults(func=cmd_benchmark)
    return p


def main(argv=None):
    """Entry point; returns the process exit code."""
    args = build_parser().parse_args(argv)
    return args.func(args)
