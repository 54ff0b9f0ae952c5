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
                                  add_skip_bad_option, check_finite, check_output, finite_float,
                                  format_accuracy, load_truth, settings_from_args, show_temp)
from host_sim.replay.trace_reader import TraceError

SCAN_SAMPLE = 20000          # rows whose steps and readings feed the sanity medians
MAX_TIME_S = 1e10            # ~300 years: beyond this, row differences lose precision
PLOT_POINTS = 20000          # rows kept for a plot (every k-th, plus events)
MAX_EVENTS = 1000            # event markers kept for a plot (it labels the first 30)
LIQUID_RANGE_C = (-60.0, 150.0)
MAX_SPAN_S = 30 * 86400.0    # a month: longer is more likely milliseconds read as seconds

def _median_low(values):
    """The lower median (an element, so no overflow from averaging two), or None."""
    if not values:
        return None
    return float(sorted(values)[(len(values) - 1) // 2])


class _Scan:
    """First pass over a trace: sizes, times and readings for the sanity checks."""

    def __init__(self, reader):
        self.columns = reader.columns
        self.has_ambient, self.has_heater = reader.has_ambient, reader.has_heater
        self.rows = 0
        self.t0 = self.t_last = None
        self.heater_on = False
        steps, temps, ambs = [], [], []
        prev = None
        for row in reader:
            t = row[0]
            if prev is None:
                self.t0 = t
            elif len(steps) < SCAN_SAMPLE:
                steps.append(t - prev)
            if len(temps) < SCAN_SAMPLE:
                temps.append(row[1])
            if row[2] is not None and len(ambs) < SCAN_SAMPLE:
                ambs.append(row[2])
            if row[3] is not None and row[3] > 0.0:
                self.heater_on = True
            prev = t
            self.rows += 1
        self.t_last = prev
        self.median_step_s = _median_low(steps)
        self.median_temp_c = _median_low(temps)
        self.median_ambient_c = _median_low(ambs)
        self.skipped_rows = reader.skipped_rows
        self.skipped_reasons = reader.skipped_reasons
        self.skipped_by_reason = reader.skipped_by_reason


def _sanity_problems(scan, unit, time_unit="s"):
    """Messages for a trace that cannot be what the user meant (empty list if fine).

    ``unit``: "C" or "F" for the messages; ``time_unit``: the --time-unit given.
    """
    problems = []
    span = scan.t_last - scan.t0
    lo, hi = LIQUID_RANGE_C
    med = scan.median_temp_c
    if not lo <= med <= hi:
        shown = show_temp(med, unit)
        if hi < med <= 500.0:
            problems.append("the median reading is %s, beyond a liquid's %g..%g C: deg F? add "
                            "--fahrenheit; Kelvin? subtract 273.15" % (shown, lo, hi))
        else:
            problems.append("the median reading is %s, not a liquid temperature (%g..%g C): "
                            "is temp_c the right column, in deg C?" % (shown, lo, hi))
    amb = scan.median_ambient_c
    if amb is not None and not lo <= amb <= hi:
        problems.append("the median ambient_c is %s, not an air or bath temperature (%g..%g "
                        "C): Kelvin or deg F? convert it, or add --ignore-ambient-column"
                        % (show_temp(amb, unit), lo, hi))
    if scan.t_last > MAX_TIME_S:
        problems.append("time_s reaches %.3g s: row-to-row differences are lost at that size "
                        "in double precision; %swrite seconds since the start of the recording"
                        % (scan.t_last, "milliseconds? add --time-unit ms; otherwise "
                           if scan.t_last < 1e14 and time_unit == "s" else ""))
    elif scan.rows > 1 and span == 0.0:
        problems.append("all %d rows have the same time_s (%g): times must advance from row "
                        "to row" % (scan.rows, scan.t0))
    elif scan.median_step_s is not None and scan.median_step_s == 0.0:
        problems.append("more than half of the rows repeat the previous row's time_s: "
                        "times must advance from row to row")
    elif scan.median_step_s is not None and scan.median_step_s < 0.1:
        problems.append("the median time step is %.3g s (%.0f readings a second): time in "
                        "minutes? add --time-unit min" % (scan.median_step_s,
                                                          1.0 / scan.median_step_s))
    elif scan.median_step_s is not None and scan.median_step_s > 3600.0:
        problems.append("the median time step is %.3g s (%.1f h): time in milliseconds? add "
                        "--time-unit ms" % (scan.median_step_s, scan.median_step_s / 3600.0))
    elif span > MAX_SPAN_S:
        problems.append("the trace spans %.0f days: time in milliseconds? add --time-unit ms"
                        % (span / 86400.0))
    elif span < 60.0:
        problems.append("the trace covers only %.3g s; the estimator needs minutes of "
                        "readings: time in minutes? add --time-unit min" % span)
    return problems


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
    r.add_argument("--fahrenheit", action="store_true",
                   help="the trace's temp_c/ambient_c columns hold deg F")
    r.add_argument("--target-in-f", action="store_true",
                   help="with --fahrenheit: --target is in deg F too")
    add_skip_bad_option(r, default=False)
    r.add_argument("--time-unit", choices=("s", "ms", "min"), default="s",
                   help="unit of the time_s column (default s); converted to seconds")
    r.add_argument("--verdict", action="store_true",
                   help="append a verdict column (accepted, spike, stuck, ...: what the "
                        "reading guard decided) after the fixed columns of PRED.csv")
    r.add_argument("--no-checks", action="store_true",
                   help="replay even when the sampling or the readings look wrong (median "
                        "step under 0.1 s or over 1 h, under a minute of data, median "
                        "reading outside -60..150 C)")
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

    unit = "F" if args.fahrenheit else "C"
    check_finite(args.target, "--target")
    settings = settings_from_args(args)
    ambient = settings.value("ambient_c")
    if args.target_in_f and not args.fahrenheit:
        raise CliError("--target-in-f needs --fahrenheit (the target is in deg C otherwise)")
    target = args.target
    if args.fahrenheit and args.target_in_f:
        target = (target - 32.0) * 5.0 / 9.0
    check_output(args.out, "--out", inputs=(args.trace, args.truth))
    if args.plot:
        check_output(args.plot, "--plot", suffix=".png", inputs=(args.trace, args.truth))
        if os.path.abspath(args.plot) == os.path.abspath(args.out):
            raise CliError("--plot and --out name the same file")
    crossing = None
    if args.truth:
        crossing = load_truth(args.truth, target)

    def open_rows():
        return iter_trace_rows(args.trace, fahrenheit=args.fahrenheit, skip_bad=args.skip_bad,
                               time_unit=args.time_unit)

    scan = _Scan(open_rows())
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
        problems = _sanity_problems(scan, unit, args.time_unit)
        lo, hi = LIQUID_RANGE_C
        if not lo <= target <= hi:
            problems.insert(0, "the target %s is outside a liquid's %g..%g C%s" % (
                show_temp(target, unit), lo, hi,
                ": deg F? add --fahrenheit --target-in-f" if hi < target <= 500.0
                and not args.target_in_f else ""))
        if problems:
            raise CliError("%s: %s (--no-checks replays it anyway)"
                           % (args.trace, "; ".join(problems)))
    try:
        estimator = settings.estimator(scan.has_heater, scan.heater_on)
    except ValueError as exc:
        raise CliError(str(exc).replace("heater on needs", "--heater on needs")) from None
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
    print("last row: t=%.1f s, %s, status %s, eta %s" % (
        last[0], show_temp(last[1], unit), st.status_name(last[2]),
        "-" if last[3] is None or math.isnan(last[3]) else "%.0f s" % last[3]))

    if args.truth:
        source = "truth file %s" % args.truth
    else:
        crossing = crossing_finder.result()
        source = "the trace (5-reading running median)"
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
            print("accuracy, %s: %s" % (label, format_accuracy(m, m_trust["time_to_trust"])))
        print("  (" + TRUST_HELP + ")")
    else:
        print("the trace does not cross the target %s: no accuracy metrics" % target_shown)
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
