"""``benchmark --seeds tune|holdout|both``: the accuracy benchmark against batch baselines."""
import sys

from host_sim.cli.options import CliError, add_estimator_options, check_output, estimator_kwargs


def add_parser(sub):
    """Add the ``benchmark`` subcommand to the CLI's subparsers."""
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
    add_estimator_options(b)
    b.set_defaults(func=cmd_benchmark)
    return b


def cmd_benchmark(args):
    """Run the seeded suite for the chosen seed sets; returns the exit code."""
    from host_sim.replay import benchmark
    if args.csv:
        try:
            check_output(args.csv, "--csv")
        except CliError as exc:
            print("error: %s" % exc, file=sys.stderr)
            return 2
    try:
        settings = estimator_kwargs(args)
    except ValueError as exc:
        print("error: %s" % exc, file=sys.stderr)
        return 2
    settings["heater"] = args.heater
    settings["use_ambient_column"] = not args.ignore_ambient_column
    settings["sensor_faults"] = not args.no_faults
    if args.ambient is not None:
        settings["ambient_c"] = args.ambient
    sets = ("tune", "holdout") if args.seeds == "both" else (args.seeds,)
    all_results = []
    for seed_set in sets:
        results = benchmark.run_suite(seed_set, per_kind=args.per_kind, jobs=args.jobs,
                                      settings=settings)
        all_results.append((seed_set, results))
        if args.no_faults:
            print("(diagnosis run: sensor faults off)")
        print(benchmark.format_table(seed_set, results, args.per_kind))
        print("")
        sys.stdout.flush()
    if args.csv:
        benchmark.write_csv(args.csv, all_results)
        print("per-trace figures written to %s" % args.csv)
    return 0
