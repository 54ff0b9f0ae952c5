"""``fleet MANIFEST.csv --out RESULTS.csv``: replay many traces on a dask cluster (see :mod:`host_sim.fleet.run`)."""
import os
import sys

from host_sim.cli.options import (SET_HELP, CliError, add_set_option, add_skip_bad_option,
                                  add_unit_options, count_int, finite_float, target_in_c)


def add_parser(sub):
    """Add the ``fleet`` subcommand to the CLI's subparsers."""
    f = sub.add_parser(
        "fleet", help="replay many traces on a dask cluster, with an A/B of two cores",
        description="Replay every trace of MANIFEST.csv (columns path,target and tag "
                    "columns; paths relative to the manifest) or of a folder/glob through "
                    "the estimator on a dask.distributed cluster (a LocalCluster here by "
                    "default) and write one result row per trace.",
        epilog="Workers need tinytherm with the sim extra, dask[distributed], and the trace "
               "files at the same paths. An estimate is never a safety interlock.")
    f.add_argument("manifest", metavar="MANIFEST.csv",
                   help="manifest CSV, a folder of trace CSVs, or a quoted glob pattern")
    f.add_argument("--out", required=True, metavar="RESULTS.csv",
                   help="per-trace results; beside it RESULTS.parquet, RESULTS_by_tag.csv, "
                        "RESULTS_report.md and PNG plots")
    f.add_argument("--workers", type=count_int(0), default=None, metavar="N",
                   help="LocalCluster workers (default: CPU count; 0: in this process, no dask)")
    f.add_argument("--scheduler", metavar="ADDR",
                   help="use an existing dask cluster, e.g. tcp://10.0.0.5:8786")
    f.add_argument("--threads", action="store_true",
                   help="LocalCluster workers as threads, not processes")
    f.add_argument("--target", type=finite_float, metavar="C",
                   help="target, deg C (deg F with --target-in-f), for traces without one in "
                        "the manifest")
    add_skip_bad_option(f, default=False)
    add_unit_options(f, files="the traces'", target=True, checks_help="run traces that replay "
                     "would refuse (the checks every command runs on traces)")
    f.add_argument("--chunk", type=count_int(1), metavar="K",
                   help="traces per task (default: auto)")
    f.add_argument("--core", metavar="PATH", help="candidate core: another checkout's folder "
                   "(default: the installed tinytherm)")
    add_set_option(f, help_text="candidate: " + SET_HELP)
    f.add_argument("--baseline-core", metavar="PATH",
                   help="A/B: the baseline (e.g. released) core's checkout or install folder")
    add_set_option(f, "--baseline-set", "A/B: a baseline setting, as --set (repeatable)")
    f.add_argument("--worse-by", type=finite_float, default=0.02, metavar="X",
                   help="A/B: a trace got worse when its median relative error rose by more "
                        "than X (default 0.02)")
    f.add_argument("--plot-worse", type=count_int(0), default=10, metavar="N",
                   help="A/B: replay plots of the N worst traces (default 10)")
    f.add_argument("--no-plots", action="store_true", help="no PNG plots")
    f.add_argument("--quiet", action="store_true", help="no progress bar")
    f.add_argument("--allow-failures", action="store_true",
                   help="exit 0 even when some traces fail (default: exit 1, so CI notices)")
    f.set_defaults(func=cmd_fleet)
    return f


def cmd_fleet(args):
    """The ``fleet`` subcommand; returns the exit code."""
    from host_sim.fleet import report as fleet_report
    from host_sim.cli.options import check_output
    from host_sim.fleet.run import check_run_options, load_items, make_variant, run_fleet
    try:
        check_run_options(args.workers, args.chunk)
        units = {"fahrenheit": args.fahrenheit, "time_unit": args.time_unit,
                 "checks": not args.no_checks, "target_in_f": args.target_in_f}
        items, tag_names = load_items(args.manifest, target_in_c(args, args.target),
                                      args.skip_bad, units)
        variants = {"cand": make_variant(args.core, args.set)}
        if args.baseline_core or args.baseline_set:
            variants["base"] = make_variant(args.baseline_core, args.baseline_set)
    except (OSError, ValueError, RuntimeError) as exc:
        raise CliError(str(exc)) from None
    if not items:
        raise CliError("no traces in %s" % args.manifest)
    inputs = [args.manifest] + [it.spec["path"] for it in items]
    for path in fleet_report.output_paths(args.out, not args.no_plots):
        check_output(path, "--out", inputs=inputs)   # never overwrite the manifest or a trace
    where = args.scheduler or ("this process" if args.workers == 0 else
                               "a LocalCluster of %d worker(s)"
                               % (args.workers or os.cpu_count() or 1))
    print("fleet: %d trace(s) on %s" % (len(items), where))
    try:
        results = run_fleet(items, variants, workers=args.workers, scheduler=args.scheduler,
                            processes=not args.threads, progress=not args.quiet,
                            chunk_size=args.chunk)
    except ImportError as exc:
        raise CliError("%s (the fleet command needs the fleet extra: pip install "
                       "\"tinytherm[fleet]\", or --workers 0 without dask)" % exc) from None
    except OSError as exc:          # e.g. no scheduler at --scheduler ADDR
        raise CliError(str(exc)) from None
    report = fleet_report.write_all(args.out, items, tag_names, variants, results,
                                    worse_by=args.worse_by, plot_worse=args.plot_worse,
                                    plots=not args.no_plots)
    for line in report:
        print(line)
    failed = fleet_report.failed_count(results)
    if failed and not args.allow_failures:
        print("fleet: %d of %d trace(s) failed (listed in the report); exit status 1 "
              "(--allow-failures exits 0)" % (failed, len(items)), file=sys.stderr)
        return 1
    return 0
