"""``demo [--plot demo.png]``: stream an invented scenario through the core, printing the time-to-target."""
from host_sim.cli.eta_table import ArrivalCount, EtaTable, add_table_options, auto_step_s
from host_sim.cli.options import (SAFETY_NOTE, TRUST_FLOOR_S, TRUST_HELP, check_output,
                                  format_accuracy, seed_int)
from host_sim.sim import scenarios


def add_parser(sub):
    """Add the ``demo`` subcommand to the CLI's subparsers."""
    d = sub.add_parser("demo", help="stream an invented scenario through the estimator",
                       description="Synthesise a scenario, stream it through the estimator, "
                                   "print the time-to-target as it evolves (a table in "
                                   "minutes) and optionally write a PNG.")
    d.add_argument("--plot", metavar="demo.png")
    d.add_argument("--kind", choices=scenarios.KINDS, default="mug")
    d.add_argument("--seed", type=seed_int, default=7, help="non-negative integer (default 7)")
    add_table_options(d)
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
    print("true crossing of the noise-free sensor signal: %.0f s (%.1f min)"
          % (tr["crossing_time_s"], tr["crossing_time_s"] / 60.0))
    # the product knows how it reaches its target (see --approach of replay)
    approach = -1 if tr.get("direction", "cooling") == "cooling" else 1
    result = replay(trace, target, approach=approach)
    table = EtaTable(args.every or auto_step_s(trace.time_s[-1] - trace.time_s[0]),
                     result.settings.value("interval"))
    arrivals = ArrivalCount(target, approach)
    for r, ev in zip(result.rows, trace.events):
        table.offer(r["time_s"], r["temp_c"], r["status_code"], r["eta_s"], r["eta_low_s"],
                    r["eta_high_s"], ev)
        arrivals.add(r)
    if not args.no_table:
        for line in table.lines(tr["crossing_time_s"], "C", "the simulation's truth"):
            print(line)
    m = trace_metrics(trace.time_s, result.shown_eta(), tr["crossing_time_s"],
                      result.shown_eta("eta_low_s"), result.shown_eta("eta_high_s"))
    trust = trace_metrics(trace.time_s, result.shown_eta(), tr["crossing_time_s"],
                          floor_s=TRUST_FLOOR_S)
    print("accuracy of the answers shown (tracking/arrived): " + format_accuracy(m, trust))
    print("  (" + TRUST_HELP + ")")
    print(arrivals.line())
    if args.plot:
        from host_sim.replay.plots import plot_replay
        plot_replay(trace, result, args.plot, crossing_s=tr["crossing_time_s"],
                    clean_c=gen.clean_c,
                    title="demo: %s (seed %d), target %.1f C" % (tr["title"], args.seed, target))
        print("plot written to %s" % args.plot)
    print(SAFETY_NOTE)
    return 0
