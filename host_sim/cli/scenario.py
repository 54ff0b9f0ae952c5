"""``scenario KIND --seed N --out trace.csv [--truth truth.json]``: generate a seeded physical scenario."""
import os

from host_sim.cli.options import CliError, check_output, finite_float, seed_int
from host_sim.sim import scenarios


def add_parser(sub):
    """Add the ``scenario`` subcommand to the CLI's subparsers."""
    s = sub.add_parser("scenario", help="generate a seeded physical scenario trace",
                       description="Generate a trace CSV and a truth JSON (exact crossing "
                                   "time of the noise-free sensor signal).")
    s.add_argument("kind", nargs="?", choices=scenarios.KINDS, help="scenario kind")
    s.add_argument("--seed", type=seed_int, default=0, help="non-negative integer (default 0)")
    s.add_argument("--out", metavar="trace.csv")
    s.add_argument("--truth", metavar="truth.json")
    s.add_argument("--target", type=finite_float, metavar="C", default=None,
                   help="override the drawn target, deg C")
    s.add_argument("--no-faults", action="store_true",
                   help="no dropouts, spikes or stuck stretch (noise and lag remain)")
    s.add_argument("--list", action="store_true", help="list the scenario kinds")
    s.set_defaults(func=cmd_scenario)
    return s


def cmd_scenario(args):
    """Run the ``scenario`` subcommand; returns the exit code."""
    if args.list:
        for k in scenarios.KINDS:
            print("%-8s %s" % (k, scenarios.KIND_TITLES[k]))
        return 0
    if args.kind is None or args.out is None:
        raise CliError("scenario needs KIND and --out (or --list)")
    check_output(args.out, "--out")
    if args.truth:
        check_output(args.truth, "--truth")
        if os.path.abspath(args.truth) == os.path.abspath(args.out):
            raise CliError("--truth and --out name the same file")
    try:
        gen = scenarios.generate(args.kind, args.seed, target_c=args.target,
                                 sensor_faults=not args.no_faults)
    except ValueError as exc:
        raise CliError(str(exc)) from None
    try:
        scenarios.write_scenario(gen, args.out, args.truth)
    except OSError as exc:
        raise CliError("cannot write %s (%s)" % (exc.filename or args.out,
                                                 exc.strerror or exc)) from None
    tr = gen.truth
    print("%s (seed %d): %d rows over %.0f s, target %.2f C, crossing %s"
          % (tr["title"], tr["seed"], tr["rows"], tr["duration_s"], tr["target_c"],
             "none" if tr["crossing_time_s"] is None else "%.2f s" % tr["crossing_time_s"]))
    print("trace written to %s%s" % (args.out, "" if not args.truth else
                                     ", truth to %s" % args.truth))
    return 0
