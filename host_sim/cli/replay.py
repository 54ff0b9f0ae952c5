"""``replay TRACE.csv --target C --out PRED.csv [--plot OUT.png]``: feed a trace through the core.

Writes one prediction row per input row and prints accuracy metrics when the
trace crosses the target. Two passes over the file (a scan for the sanity
checks, then the replay), so memory does not grow with the trace length.
"""
import math
import os
import sys

import numpy as np

from host_sim.cli.options import (TRUST_FLOOR_S, TRUST_HELP, CliError, add_estimator_options,
                                  add_skip_bad_option, add_unit_options, check_finite,
                                  check_output, finite_float, format_accuracy, load_truth,
                                  settings_from_args, show_temp, target_in_c, unit_of)
from host_sim.cli.eta_table import ArrivalCount, EtaTable, add_table_options, auto_step_s
from host_sim.replay.trace_checks import TraceScan, target_problem, trace_problems
from host_sim.replay.trace_reader import TraceError

PLOT_POINTS = 20000          # rows kept for a plot (every k-th, plus events)
MAX_EVENTS = 1000            # event markers kept for a plot (it labels the first 30)


def add_parser(sub):
    """Add the ``replay`` subcommand to the CLI's subparsers."""
    r = sub.add_parser("replay", help="feed a trace CSV through the estimator",
                       description="Feed every row of TRACE.csv (columns time_s,temp_c"
                                   "[,ambient_c][,heater][,event]) to the estimator "
                                   "(update then predict) and write PRED.csv with columns "
                                   "time_s,temp_c,eta_s,eta_low_s,eta_high_s,status,"
                                   "rate_per_s,equilibrium_c.")
    r.add_argument("trace", metavar="TRACE.csv")
    r.add_argument("--target", type=finite_float, required=True, metavar="C",
                   help="target temperature, deg C (deg F with --target-in-f)")
    r.add_argument("--out", required=True, metavar="PRED.csv", help="prediction CSV to write")
    r.add_argument("--plot", metavar="OUT.png", help="also write a PNG plot")
    r.add_argument("--truth", metavar="TRUTH.json",
                   help="truth JSON from 'scenario' for the exact crossing time")
    add_skip_bad_option(r, default=False)
    r.add_argument("--verdict", action="store_true",
                   help="append a verdict column (accepted, spike, stuck, ...: what the "
                        "reading guard decided) after the fixed columns of PRED.csv")
    add_unit_options(r, target=True, checks_help="replay even when the sampling or the "
                     "readings look wrong (median step under 0.1 s or over 1 h, under a "
                     "minute of data, median reading outside -60..150 C)")
    add_table_options(r)
    add_estimator_options(r)
    r.set_defaults(func=cmd_replay)
    return r


def cmd_replay(args):
    """Run the ``replay`` subcommand; returns the exit code."""
    try:
        return _replay(args)
    except TraceError as exc:
        raise CliError(str(exc)) from None


def _replay(args):
    from host_sim.replay.metrics import error_figures
    from host_sim.replay.replay import CrossingFinder, replay_rows
    from host_sim.replay.spool import ColumnSpool
    from host_sim.replay.trace_io import PredictionWriter
    from host_sim.replay.trace_reader import iter_trace_rows
    from tinytherm import status as st

    unit = unit_of(args)
    check_finite(args.target, "--target")
    settings = settings_from_args(args)
    ambient = settings.value("ambient_c")
    target = target_in_c(args, args.target)
    inputs = (args.trace, args.truth, getattr(args, "profile", None))
    check_output(args.out, "--out", inputs=inputs)
    if args.plot:
        check_output(args.plot, "--plot", suffix=".png", inputs=inputs)
        if os.path.abspath(args.plot) == os.path.abspath(args.out):
            raise CliError("--plot and --out name the same file")
    crossing = None
    if args.truth:
        crossing = load_truth(args.truth, target)

    def open_rows():
        return iter_trace_rows(args.trace, fahrenheit=args.fahrenheit, skip_bad=args.skip_bad,
                               time_unit=args.time_unit)

    scan = TraceScan.of(open_rows())
    if scan.skipped_rows:
        print("skipped %d bad row(s) (--skip-bad): %s" % (scan.skipped_rows, ", ".join(
            "%s %d" % kv for kv in sorted(scan.skipped_by_reason.items(),
                                          key=lambda kv: -kv[1]))), file=sys.stderr)
        for reason in scan.skipped_reasons[:5]:
            print("  " + reason, file=sys.stderr)
        if scan.skipped_rows > 5:
            print("  ... and %d more" % (scan.skipped_rows - 5), file=sys.stderr)
    if ambient is not None and scan.has_ambient and settings.use_ambient_column:
        raise CliError("--ambient %g and the trace's ambient_c column both give the ambient: "
                       "drop --ambient to use the column, or add --ignore-ambient-column to "
                       "use %g C" % (ambient, ambient))
    if not args.no_checks:
        problems = trace_problems(scan, unit, args.time_unit,
                                  ambient_option="--ignore-ambient-column",
                                  ambient_used=settings.use_ambient_column)
        target_wrong = target_problem(target, unit, args.target_in_f)
        if target_wrong:
            problems.insert(0, target_wrong)
        if problems:
            raise CliError("%s: %s (--no-checks replays it anyway)"
                           % (args.trace, "; ".join(problems)))
    try:
        estimator = settings.estimator(scan.has_heater, scan.heater_on)
    except ValueError as exc:
        raise CliError(str(exc).replace("heater on needs", "--heater on needs")) from None
    kw = settings.constructor_kwargs(scan.has_heater, scan.heater_on)
    if kw.get("profile") is not None:
        from host_sim.calibrate.report import profile_notes
        for note in profile_notes(settings.profile_path, kw["profile"], kw["heater"]):
            print("warning: " + note, file=sys.stderr)
    use_amb = scan.has_ambient and settings.use_ambient_column

    n = scan.rows
    stride = max(1, -(-n // PLOT_POINTS)) if args.plot else 0
    # what the metrics need of each row, on disk: time, ETA, interval, shown (1.0/0.0)
    scored = ColumnSpool(5)
    plot_rows, events = [], []
    verdicts = [0] * len(st.VERDICT_NAMES)
    nan = math.nan
    shown_codes = (st.TRACKING, st.ARRIVED)
    from tqdm import tqdm
    # a partial prediction file is removed on failure, but only one this run created
    # (never a device, a pipe or a file that was there before)
    created = not os.path.lexists(args.out)
    try:
        writer = PredictionWriter(args.out, verdict=args.verdict)
    except OSError as exc:
        raise CliError("--out %s: cannot write (%s)" % (args.out, exc.strerror or exc)) from None
    ok = False
    try:
        bar = tqdm(total=n, unit="row", desc="replay", disable=None if n >= 20000 else True,
                   file=sys.stderr, mininterval=0.5)
        crossing_finder = None if args.truth else CrossingFinder(target)
        table = None if args.no_table else EtaTable(
            args.every or auto_step_s(scan.t_last - scan.t0), settings.value("interval"))
        arrivals = ArrivalCount(target, settings.approach)
        verdict_codes = {name: code for code, name in enumerate(st.VERDICT_NAMES)}
        for i, (row, pred) in enumerate(replay_rows(open_rows(), target, estimator, settings)):
            t, temp, amb, _, event = row
            code = pred["status_code"]
            verdict = verdict_codes.get(pred["verdict"], -1)
            if 0 <= verdict < len(verdicts):
                verdicts[verdict] += 1
            eta, low, high = pred["eta_s"], pred["eta_low_s"], pred["eta_high_s"]
            writer.write(t, temp, eta, low, high, pred["status"], pred["rate_per_s"],
                         pred["equilibrium_c"], pred["verdict"])
            scored.append(t, nan if eta is None else eta, nan if low is None else low,
                          nan if high is None else high, 1.0 if code in shown_codes else 0.0)
            if crossing_finder is not None:
                crossing_finder.add(t, temp)
            if table is not None:
                table.offer(t, temp, code, eta, low, high, event)
            arrivals.add(pred)
            last = (t, temp, code, eta)
            if event and len(events) < MAX_EVENTS:
                events.append((t, event))
            if stride and (i % stride == 0 or (len(plot_rows) < 2 * PLOT_POINTS and (
                    event or verdict != st.ACCEPTED))):
                plot_rows.append((t, temp, amb if use_amb else None, pred["temp_est_c"], eta,
                                  low, high, code, verdict, pred["rate_per_s"],
                                  pred["equilibrium_c"]))
            bar.update(1)
        bar.close()
        writer.close()
        ok = True
    except OSError as exc:
        raise CliError("--out %s: write failed (%s)" % (args.out, exc.strerror or exc)) from None
    finally:
        if not ok:
            try:
                writer.close()
            except OSError:
                pass
            if created and os.path.isfile(args.out) and not os.path.islink(args.out):
                os.remove(args.out)

    rows_done = len(scored)
    used = dict(settings.constructor_kwargs(scan.has_heater, scan.heater_on))
    if settings.approach:
        used["approach"] = settings.approach
    settings_shown = ", ".join("%s=%s" % kv for kv in sorted(used.items()))
    print("replayed %d rows through the estimator (%s); predictions in %s%s"
          % (rows_done, settings_shown, args.out,
             " (with a verdict column)" if args.verdict else ""))
    counted = ", ".join("%s %d" % (st.verdict_name(v), c) for v, c in enumerate(verdicts)
                        if c and v != st.ACCEPTED)
    print("reading verdicts: accepted %d of %d%s" % (
        verdicts[st.ACCEPTED], rows_done,
        "; rejected: " + counted if counted else "; none rejected"))
    if args.truth:
        source = "truth file %s" % args.truth
    else:
        crossing = crossing_finder.result()
        source = "the trace (5-reading running median)"
    if table is not None:
        for line in table.lines(crossing, unit, source):
            print(line)
    print("last row: t=%.1f s, %s, status %s, eta %s" % (
        last[0], show_temp(last[1], unit), st.status_name(last[2]),
        "-" if last[3] is None or math.isnan(last[3]) else "%.0f s" % last[3]))
    target_shown = show_temp(target, unit)
    if unit == "F":
        target_shown += " (%.2f C)" % target
    if crossing is not None:
        print("target %s crossed at t=%.1f s (from %s)" % (target_shown, crossing, source))
        for label, only_shown in (("answers a device shows (tracking/arrived)", True),
                                  ("every estimate, including settling", False)):
            m = error_figures(_scored_chunks(scored, only_shown), crossing)
            m_trust = error_figures(_scored_chunks(scored, only_shown, intervals=False),
                                    crossing, floor_s=TRUST_FLOOR_S)
            print("accuracy, %s: %s" % (label, format_accuracy(m, m_trust)))
        print("  (" + TRUST_HELP + ")")
    else:
        print("the trace does not cross the target %s: no accuracy metrics" % target_shown)
    print(arrivals.line())
    scored.close()
    if args.plot:
        from host_sim.replay.plots import ReplaySeries, plot_series
        series = ReplaySeries.from_tuples(plot_rows, target, settings.value("interval"),
                                          events=events, has_ambient=use_amb)
        try:
            plot_series(series, args.plot, crossing_s=crossing,
                        crossing_label="true crossing" if args.truth else "crossing (trace)",
                        title="replay of %s, target %s" % (os.path.basename(args.trace),
                                                           show_temp(target, unit)),
                        unit=unit)
        except OSError as exc:
            raise CliError("--plot %s: cannot write (%s)" % (args.plot,
                                                             exc.strerror or exc)) from None
        print("plot written to %s" % args.plot)
    return 0


def _scored_chunks(scored, only_shown, intervals=True):
    """The ``chunks`` function of :func:`host_sim.replay.metrics.error_figures` over the
    spooled rows (time, ETA, low, high, shown); ``only_shown``: NaN where the status is
    not one a device shows; ``intervals``: give the interval columns."""
    def chunks():
        for t, eta, low, high, shown in scored.chunks():
            if only_shown:
                hidden = shown == 0.0
                eta, low, high = (np.where(hidden, math.nan, a) for a in (eta, low, high))
            yield t, eta, (low if intervals else None), (high if intervals else None)
    return chunks
