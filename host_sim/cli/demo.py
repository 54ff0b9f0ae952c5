"""``demo [--plot demo.png]``: stream an invented scenario through the core, printing the time-to-target."""
import math

from host_sim.cli.options import (SAFETY_NOTE, TRUST_FLOOR_S, TRUST_HELP, check_output,
                                  format_accuracy, positive_float, seed_int)
from host_sim.sim import scenarios


def add_parser(sub):
    """Add the ``demo`` subcommand to the CLI's subparsers."""
    d = sub.add_parser("demo", help="stream an invented scenario through the estimator",
                       description="Synthesise a scenario, stream it through the estimator "
                                   "printing the time-to-target as it evolves, and "
                                   "optionally write a PNG.")
    d.add_argument("--plot", metavar="demo.png")
    d.add_argument("--kind", choices=scenarios.KINDS, default="mug")
    d.add_argument("--seed", type=seed_int, default=7, help="non-negative integer (default 7)")
    d.add_argument("--every", type=positive_float, default=60.0, metavar="S",
                   help="print a line every S seconds of trace time (and at events)")
    d.set_defaults(func=cmd_demo)
    return d


def cmd_demo(args):
    """Run the ``demo`` subcommand; returns the exit code."""
    from host_sim.replay.metrics import trace_metrics
    from host_sim.replay.replay import replay
    from host_sim.replay.trace_io import Trace
    if args.plot:
        check_output(args.plot, "--plot", suffix=".png")
    gen = scenarios.generate(args.kind, args.seed)
    tr = gen.truth
    trace = Trace(gen.time_s, gen.temp_c, ambient_c=gen.ambient_c, heater=gen.heater,
                  events=gen.events)
    target = tr["target_c"]
    print("demo: %s (invented scenario, seed %d), target %.1f C" % (tr["title"], args.seed, target))
    print("true crossing of the noise-free sensor signal: %.0f s" % tr["crossing_time_s"])
    # the product knows how it reaches its target (see --approach of replay)
    result = replay(trace, target,
                    approach=-1 if tr.get("direction", "cooling") == "cooling" else 1)
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
    trust = trace_metrics(trace.time_s, result.shown_eta(), tr["crossing_time_s"],
                          floor_s=TRUST_FLOOR_S)["time_to_trust"]
    print("accuracy of the answers shown (tracking/arrived): " + format_accuracy(m, trust))
    print("  (" + TRUST_HELP + ")")
    if args.plot:
        from host_sim.replay.plots import plot_replay
        plot_replay(trace, result, args.plot, crossing_s=tr["crossing_time_s"],
                    clean_c=gen.clean_c,
                    title="demo: %s (seed %d), target %.1f C" % (tr["title"], args.seed, target))
        print("plot written to %s" % args.plot)
    print(SAFETY_NOTE)
    return 0
