"""``calibrate TRACE.csv ... --out PROFILE.json``: learn a vessel profile (see :mod:`host_sim.calibrate`)."""
import sys

from host_sim.cli.options import (CliError, add_set_option, add_skip_bad_option, count_int,
                                  finite_float, positive_float, settings_from_args)


def add_parser(sub):
    """Add the ``calibrate`` subcommand to an argparse subparsers object."""
    c = sub.add_parser(
        "calibrate", help="learn a vessel profile from many traces of one vessel",
        description="Fit a vessel's dynamics (power-law rate, probe lag, ambient offset, heater "
                    "gain and lag) across TRACE.csv files of one vessel, calibrate the ETA "
                    "interval split-conformally with k-fold cross-validation by trace, and "
                    "write PROFILE.json, the device blob (.bin, .hex) and PNG plots. Traces "
                    "are in the replay format; no target is needed.")
    c.add_argument("traces", nargs="+", metavar="TRACE.csv")
    c.add_argument("--out", required=True, metavar="PROFILE.json", help="profile JSON to write")
    c.add_argument("--fill-kg", type=positive_float, nargs="+", metavar="KG", default=None,
                   help="fill of each trace in kg (one per trace, same order): fits how the "
                        "rate and gain scale with the fill")
    c.add_argument("--ambient", type=finite_float, metavar="C", default=None,
                   help="room temperature, deg C, for traces without an ambient_c column")
    c.add_argument("--folds", type=count_int(0), default=5, metavar="K",
                   help="cross-validation folds by trace (default 5)")
    c.add_argument("--smooth-s", type=positive_float, default=60.0, metavar="S",
                   help="smoothing window for the derivatives, seconds (default 60)")
    c.add_argument("--fahrenheit", action="store_true",
                   help="the traces' temp_c/ambient_c columns hold deg F")
    add_skip_bad_option(c, default=True)
    add_set_option(c, help_text="a setting of the device's estimator for the replays that "
                   "calibrate the interval (repeatable; as --set of replay, without heater "
                   "and profile: the traces decide the heater, the replays use no profile)")
    c.add_argument("--no-plots", action="store_true", help="do not write the PNG plots")
    c.set_defaults(func=cmd_calibrate)
    return c


def cmd_calibrate(args):
    """Run the ``calibrate`` subcommand; returns the exit code."""
    from host_sim.calibrate.pipeline import calibrate
    from host_sim.calibrate.report import report_lines, write_outputs
    from host_sim.replay.trace_io import read_trace
    from host_sim.replay.trace_reader import TraceError
    from tinytherm import profile as tp
    settings = settings_from_args(args, refuse=("heater", "profile"))
    traces = []
    for path in args.traces:
        try:
            tr = read_trace(path, fahrenheit=args.fahrenheit, skip_bad=args.skip_bad)
        except (OSError, TraceError) as exc:
            raise CliError(str(exc)) from None
        if tr.skipped_rows:
            print("%s: skipped %d bad row(s) (a torn last row after a power loss is one)"
                  % (path, tr.skipped_rows), file=sys.stderr)
        traces.append(tr)
    try:
        cal = calibrate(traces, fills=args.fill_kg, ambient_c=args.ambient, folds=args.folds,
                        smooth_s=args.smooth_s, settings=settings)
    except ValueError as exc:
        raise CliError(str(exc)) from None
    for line in report_lines(cal):
        print(line)
    paths = write_outputs(cal, args.out, plots=not args.no_plots)
    print("device blob: %d bytes, %s" % (tp.PROFILE_SIZE, cal.profile.to_blob().hex()))
    print("written: %s" % ", ".join(paths))
    return 0
