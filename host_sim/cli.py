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
import os
import sys
from array import array

import numpy as np

from host_sim import scenarios
from tinytherm import __version__
from host_sim.trace_io import TraceError

SAFETY_NOTE = ("Note: an estimate is never a safety interlock. Hot liquids scald; check "
               "serving and food temperatures with a calibrated thermometer and follow local "
               "codes; heaters need an independent thermal cut-out.")


def _finite_float(text):
    """argparse type: a finite float (nan and inf are refused)."""
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError("expected a number, got %r" % text) from None
    if not math.isfinite(value):
        raise argparse.ArgumentTypeError("expected a finite number, got %r" % text)
    return value


def _positive_float(text):
    """argparse type: a finite float > 0."""
    value = _finite_float(text)
    if not value > 0.0:
        raise argparse.ArgumentTypeError("expected a number above 0, got %r" % text)
    return value


def _seed(text):
    """argparse type: a non-negative integer seed."""
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError("expected a non-negative integer, got %r"
                                         % text) from None
    if value < 0 or value >= 2 ** 32:
        raise argparse.ArgumentTypeError("expected a non-negative integer below 2**32, got %r"
                                         % text)
    return value


def _add_estimator_options(p):
    g = p.add_argument_group("estimator settings (defaults: the core's own)")
    g.add_argument("--ambient", type=_finite_float, metavar="C", default=None,
                   help="known constant ambient, deg C (default: use the trace's ambient_c "
                        "column if any, else estimate it); with an ambient_c column it "
                        "needs --ignore-ambient-column")
    g.add_argument("--ignore-ambient-column", action="store_true",
                   help="do not pass the trace's ambient_c column to the estimator")
    g.add_argument("--ambient-prior", type=_finite_float, metavar="C", default=None,
                   help="prior centre for an estimated ambient, deg C")
    g.add_argument("--interval", type=_finite_float, metavar="P", default=None,
                   help="two-sided probability of the ETA interval, e.g. 0.8")
    g.add_argument("--memory-s", type=_finite_float, metavar="S", default=None,
                   help="forgetting time constant of the fit, seconds")
    g.add_argument("--block-s", type=_finite_float, metavar="S", default=None,
                   help="averaging block length of the fit, seconds")
    g.add_argument("--settle-s", type=_finite_float, metavar="S", default=None,
                   help="seconds of data before an answer may be trusted")
    g.add_argument("--max-relative-sd", type=_finite_float, metavar="X", default=None,
                   help="largest relative ETA spread still shown as tracking")
    g.add_argument("--profile", metavar="PROFILE.json", default=None,
                   help="a vessel profile from `calibrate` (.json, .hex or .bin), used "
                        "exactly as the device would: through its device blob")
    g.add_argument("--approach", choices=("either", "cool", "heat"), default="either",
                   help="how the product reaches its target: cool (a drink cooling to "
                        "drinkable), heat (a kettle, a bath) or either (default: the "
                        "direction of travel decides; a probe warming up after a pour "
                        "can then read as arrived)")
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
    if getattr(args, "profile", None):
        from host_sim.calibrate import load_profile
        from tinytherm.profile import reason_name
        try:
            prof, reason = load_profile(args.profile)
        except (OSError, ValueError, KeyError) as exc:
            raise ValueError("--profile %s: cannot read it (%s)" % (args.profile, exc))
        if prof is None:
            raise ValueError("--profile %s: the device would refuse it (%s)"
                             % (args.profile, reason_name(reason)))
        kw["profile"] = prof
    approach = {"cool": -1, "heat": 1}.get(getattr(args, "approach", "either"), 0)
    if approach:
        kw["approach"] = approach  # for predict(), see host_sim.replay.replay_rows
    return kw


class CliError(ValueError):
    """A user error: printed as one line ``error: ...`` with exit status 2."""


# Time-to-trust as the CLI prints it: the share of the approach (first reading to
# the crossing) after which every shown answer stays within TRUST_TOLERANCE of the
# true time left, measured against max(time left, TRUST_FLOOR_S). With the error
# floor of 30 s the last 30 s asked for 3 s, about one 0.0625 C step at the end of
# a mug's approach (0.02 K/s) and a block of the fit (20 s) long: no estimator can
# meet it, so every trace read 1.00. 120 s asks for 12 s in the last two minutes:
# several sensor steps and well inside a countdown shown in whole minutes.
TRUST_FLOOR_S = 120.0
TRUST_HELP = ("time-to-trust: share of the approach (first reading to the crossing) after "
              "which every shown answer stays within 10 %% of the true time left (within "
              "%.0f s in the last %.0f min); 1.00 = never" % (0.1 * TRUST_FLOOR_S,
                                                               TRUST_FLOOR_S / 60.0))

SCAN_SAMPLE = 20000          # rows whose steps and readings feed the sanity medians
MAX_TIME_S = 1e10            # ~300 years: beyond this, row differences lose precision
PLOT_POINTS = 20000          # rows kept for a plot (every k-th, plus events)
MAX_EVENTS = 1000            # event markers kept for a plot (it labels the first 30)
LIQUID_RANGE_C = (-60.0, 150.0)
MAX_SPAN_S = 30 * 86400.0    # a month: longer is more likely milliseconds read as seconds


def _finite(value, option):
    if value is not None and not math.isfinite(value):
        raise CliError("%s must be a finite number, got %r" % (option, value))
    return value


def _check_output(path, option, suffix=None, inputs=()):
    """An output path we can create: its folder exists, it is not a folder or an input."""
    if suffix is not None and not path.lower().endswith(suffix):
        raise CliError("%s %s: the file name must end with %s (a PNG image is written)"
                       % (option, path, suffix))
    folder = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(folder):
        raise CliError("%s %s: folder %s does not exist (create it first)"
                       % (option, path, folder))
    if os.path.isdir(path):
        raise CliError("%s %s: is a folder; give a file name" % (option, path))
    for other in inputs:
        if other and os.path.exists(other) and os.path.exists(path) \
                and os.path.samefile(other, path):
            raise CliError("%s %s would overwrite the input %s" % (option, path, other))


def _load_truth(path, target_c):
    """(crossing_s or None) from a scenario truth JSON checked against ``target_c``."""
    try:
        with open(path, encoding="utf-8") as handle:
            truth = json.load(handle)
    except FileNotFoundError:
        raise CliError("--truth %s: no such file" % path) from None
    except IsADirectoryError:
        raise CliError("--truth %s: is a folder, not a truth JSON" % path) from None
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise CliError("--truth %s: not a truth JSON from 'scenario' (%s)"
                       % (path, str(exc).split(":")[0])) from None
    except (OSError, RecursionError, ValueError) as exc:
        raise CliError("--truth %s: cannot read (%s)" % (path, exc)) from None
    if not isinstance(truth, dict) or "crossing_time_s" not in truth:
        raise CliError("--truth %s: no crossing_time_s entry (write it with 'scenario "
                       "--truth')" % path)
    crossing = truth["crossing_time_s"]
    if crossing is not None and (isinstance(crossing, bool) or not isinstance(
            crossing, (int, float)) or not math.isfinite(crossing) or crossing < 0):
        raise CliError("--truth %s: crossing_time_s must be a non-negative number or null, "
                       "got %r" % (path, crossing))
    tgt = truth.get("target_c")
    if tgt is not None:
        if isinstance(tgt, bool) or not isinstance(tgt, (int, float)) \
                or not math.isfinite(tgt):
            raise CliError("--truth %s: target_c must be a number, got %r" % (path, tgt))
        if abs(tgt - target_c) > 1e-6:
            raise CliError("--truth %s is for target %.4g C but --target is %.4g C: its "
                           "crossing belongs to another target (pass --target %.4g, or "
                           "drop --truth)" % (path, tgt, target_c, tgt))
    return None if crossing is None else float(crossing)


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
        shown = _show_temp(med, unit)
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
                        % (_show_temp(amb, unit), lo, hi))
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


def _show_temp(value_c, unit):
    """A deg C value as the user's unit: '60.0 C' or '140.0 F'."""
    value, name = (value_c * 9.0 / 5.0 + 32.0, "F") if unit == "F" else (value_c, "C")
    return ("%.1f %s" if abs(value) < 1e6 else "%.3g %s") % (value, name)


def _estimator_for(args, scan):
    """The estimator and its keyword arguments for this trace and the CLI options."""
    from tinytherm.estimator import ThermalEstimator
    try:
        kw = _estimator_kwargs(args)
    except ValueError as exc:
        raise CliError(str(exc)) from None
    if args.heater == "auto":
        use_heater = scan.heater_on
    else:
        use_heater = args.heater == "on"
    if use_heater and not scan.has_heater:
        raise CliError("--heater on needs a heater column in the trace")
    kw["heater"] = use_heater
    if args.ambient is not None:
        kw["ambient_c"] = args.ambient
    try:
        from host_sim.replay import split_settings
        return ThermalEstimator(**split_settings(kw)[0]), kw
    except (TypeError, ValueError, OverflowError) as exc:
        raise CliError("estimator settings: %s" % exc) from None


def cmd_replay(args):
    try:
        return _replay(args)
    except (CliError, TraceError) as exc:
        print("error: %s" % exc, file=sys.stderr)
        return 2


def _replay(args):
    from host_sim.metrics import trace_metrics
    from host_sim.replay import CrossingFinder, replay_rows
    from host_sim.trace_io import PredictionWriter, iter_trace_rows
    from tinytherm import status as st

    unit = "F" if args.fahrenheit else "C"
    _finite(args.target, "--target")
    _finite(args.ambient, "--ambient")
    if args.target_in_f and not args.fahrenheit:
        raise CliError("--target-in-f needs --fahrenheit (the target is in deg C otherwise)")
    target = args.target
    if args.fahrenheit and args.target_in_f:
        target = (target - 32.0) * 5.0 / 9.0
    _check_output(args.out, "--out", inputs=(args.trace, args.truth))
    if args.plot:
        _check_output(args.plot, "--plot", suffix=".png", inputs=(args.trace, args.truth))
        if os.path.abspath(args.plot) == os.path.abspath(args.out):
            raise CliError("--plot and --out name the same file")
    crossing = None
    if args.truth:
        crossing = _load_truth(args.truth, target)

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
    if args.ambient is not None and scan.has_ambient and not args.ignore_ambient_column:
        raise CliError("--ambient %g and the trace's ambient_c column both give the ambient: "
                       "drop --ambient to use the column, or add --ignore-ambient-column to "
                       "use %g C" % (args.ambient, args.ambient))
    if not args.no_checks:
        problems = _sanity_problems(scan, unit, args.time_unit)
        lo, hi = LIQUID_RANGE_C
        if not lo <= target <= hi:
            problems.insert(0, "the target %s is outside a liquid's %g..%g C%s" % (
                _show_temp(target, unit), lo, hi,
                ": deg F? add --fahrenheit --target-in-f" if hi < target <= 500.0
                and not args.target_in_f else ""))
        if problems:
            raise CliError("%s: %s (--no-checks replays it anyway)"
                           % (args.trace, "; ".join(problems)))
    _, settings = _estimator_for(args, scan)      # builds one to check the settings
    use_amb = scan.has_ambient and not args.ignore_ambient_column

    n = scan.rows
    stride = max(1, -(-n // PLOT_POINTS)) if args.plot else 0
    t_arr = array("d")
    eta_arr, low_arr, high_arr = array("d"), array("d"), array("d")
    shown_arr = array("b")
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
        current = [None]
        crossing_finder = None if args.truth else CrossingFinder(target)

        def source():
            for row in open_rows():
                current[0] = row
                yield row

        verdict_codes = {name: code for code, name in enumerate(st.VERDICT_NAMES)}
        for i, pred in enumerate(replay_rows(source(), target, use_ambient_column=use_amb,
                                             **settings)):
            t, temp, amb, _, event = current[0]
            code = pred["status_code"]
            verdict = verdict_codes.get(pred["verdict"], -1)
            if 0 <= verdict < len(verdicts):
                verdicts[verdict] += 1
            eta, low, high = pred["eta_s"], pred["eta_low_s"], pred["eta_high_s"]
            writer.write(t, temp, eta, low, high, pred["status"], pred["rate_per_s"],
                         pred["equilibrium_c"], pred["verdict"])
            t_arr.append(t)
            eta_arr.append(nan if eta is None else eta)
            low_arr.append(nan if low is None else low)
            high_arr.append(nan if high is None else high)
            shown_arr.append(code in shown_codes)
            if crossing_finder is not None:
                crossing_finder.add(t, temp)
            last = (t, temp, code)
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

    rows_done = len(t_arr)
    settings_shown = ", ".join("%s=%s" % kv for kv in sorted(settings.items()))
    print("replayed %d rows through the estimator (%s); predictions in %s%s"
          % (rows_done, settings_shown, args.out,
             " (with a verdict column)" if args.verdict else ""))
    counted = ", ".join("%s %d" % (st.verdict_name(v), c) for v, c in enumerate(verdicts)
                        if c and v != st.ACCEPTED)
    print("reading verdicts: accepted %d of %d%s" % (
        verdicts[st.ACCEPTED], rows_done,
        "; rejected: " + counted if counted else "; none rejected"))
    last_eta = eta_arr[-1]
    print("last row: t=%.1f s, %s, status %s, eta %s" % (
        last[0], _show_temp(last[1], unit), st.status_name(last[2]),
        "-" if math.isnan(last_eta) else "%.0f s" % last_eta))

    t_np = np.frombuffer(t_arr, dtype=float)
    if args.truth:
        source = "truth file %s" % args.truth
    else:
        crossing = crossing_finder.result()
        source = "the trace (5-reading running median)"
    target_shown = _show_temp(target, unit)
    if unit == "F":
        target_shown += " (%.2f C)" % target
    if crossing is not None:
        eta_np = np.frombuffer(eta_arr, dtype=float)
        low_np = np.frombuffer(low_arr, dtype=float)
        high_np = np.frombuffer(high_arr, dtype=float)
        shown = np.frombuffer(shown_arr, dtype=np.int8).astype(bool)
        nan_arr = np.full(len(eta_np), math.nan)
        s_eta, s_low, s_high = (np.where(shown, a, nan_arr) for a in (eta_np, low_np, high_np))
        print("target %s crossed at t=%.1f s (from %s)" % (target_shown, crossing, source))
        for label, e, lo_, hi_ in (("answers a device shows (tracking/arrived)",
                                    s_eta, s_low, s_high),
                                   ("every estimate, including settling", eta_np, low_np,
                                    high_np)):
            m = trace_metrics(t_np, e, crossing, lo_, hi_)
            m_trust = trace_metrics(t_np, e, crossing, floor_s=TRUST_FLOOR_S)
            print("accuracy, %s: %s" % (label, _format_accuracy(m, m_trust["time_to_trust"])))
        print("  (" + TRUST_HELP + ")")
    else:
        print("the trace does not cross the target %s: no accuracy metrics" % target_shown)
    if args.plot:
        from host_sim.plots import ReplaySeries, plot_series
        series = ReplaySeries.from_tuples(plot_rows, target, settings.get("interval", 0.8),
                                          events=events, has_ambient=use_amb)
        try:
            plot_series(series, args.plot, crossing_s=crossing,
                        crossing_label="true crossing" if args.truth else "crossing (trace)",
                        title="replay of %s, target %s" % (os.path.basename(args.trace),
                                                           _show_temp(target, unit)),
                        unit=unit)
        except OSError as exc:
            raise CliError("--plot %s: cannot write (%s)" % (args.plot,
                                                             exc.strerror or exc)) from None
        print("plot written to %s" % args.plot)
    return 0


def _format_accuracy(m, trust):
    def f(v, fmt):
        return "n/a" if v is None else fmt % v
    return ("median rel. error %s, p90 %s, time-to-trust %s, interval coverage %s, "
            "no answer on %s of the readings" % (
                f(m["median_rel_error"], "%.3f"), f(m["p90_rel_error"], "%.3f"),
                f(trust, "%.2f"), f(m["coverage"], "%.2f"),
                f(m["no_estimate_fraction"], "%.2f")))


def cmd_scenario(args):
    if args.list:
        for k in scenarios.KINDS:
            print("%-8s %s" % (k, scenarios.KIND_TITLES[k]))
        return 0
    if args.kind is None or args.out is None:
        print("error: scenario needs KIND and --out (or --list)", file=sys.stderr)
        return 2
    try:
        _check_output(args.out, "--out")
        if args.truth:
            _check_output(args.truth, "--truth")
            if os.path.abspath(args.truth) == os.path.abspath(args.out):
                raise CliError("--truth and --out name the same file")
    except CliError as exc:
        print("error: %s" % exc, file=sys.stderr)
        return 2
    try:
        gen = scenarios.generate(args.kind, args.seed, target_c=args.target,
                                 sensor_faults=not args.no_faults)
    except ValueError as exc:
        print("error: %s" % exc, file=sys.stderr)
        return 2
    try:
        scenarios.write_scenario(gen, args.out, args.truth)
    except OSError as exc:
        print("error: cannot write %s (%s)" % (exc.filename or args.out, exc.strerror or exc),
              file=sys.stderr)
        return 2
    tr = gen.truth
    print("%s (seed %d): %d rows over %.0f s, target %.2f C, crossing %s"
          % (tr["title"], tr["seed"], tr["rows"], tr["duration_s"], tr["target_c"],
             "none" if tr["crossing_time_s"] is None else "%.2f s" % tr["crossing_time_s"]))
    print("trace written to %s%s" % (args.out, "" if not args.truth else
                                     ", truth to %s" % args.truth))
    return 0


def cmd_demo(args):
    from host_sim.metrics import trace_metrics
    from host_sim.replay import replay
    from host_sim.trace_io import Trace
    if args.plot:
        try:
            _check_output(args.plot, "--plot", suffix=".png")
        except CliError as exc:
            print("error: %s" % exc, file=sys.stderr)
            return 2
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
    print("accuracy of the answers shown (tracking/arrived): " + _format_accuracy(m, trust))
    print("  (" + TRUST_HELP + ")")
    if args.plot:
        from host_sim.plots import plot_replay
        plot_replay(trace, result, args.plot, crossing_s=tr["crossing_time_s"],
                    clean_c=gen.clean_c,
                    title="demo: %s (seed %d), target %.1f C" % (tr["title"], args.seed, target))
        print("plot written to %s" % args.plot)
    print(SAFETY_NOTE)
    return 0


def cmd_benchmark(args):
    if args.csv:
        try:
            _check_output(args.csv, "--csv")
        except CliError as exc:
            print("error: %s" % exc, file=sys.stderr)
            return 2
    from host_sim import benchmark
    return benchmark.run_cli(args)


def build_parser():
    p = argparse.ArgumentParser(
        prog="tinytherm-sim",
        description="Replay temperature traces through the tinytherm estimator on a PC, "
                    "generate physical test scenarios, and benchmark accuracy.",
        epilog=SAFETY_NOTE)
    p.add_argument("--version", action="version", version="%(prog)s " + __version__)
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True

    r = sub.add_parser("replay", help="feed a trace CSV through the estimator",
                       description="Feed every row of TRACE.csv (columns time_s,temp_c"
                                   "[,ambient_c][,heater][,event]) to the estimator "
                                   "(update then predict) and write PRED.csv with columns "
                                   "time_s,temp_c,eta_s,eta_low_s,eta_high_s,status,"
                                   "rate_per_s,equilibrium_c.")
    r.add_argument("trace", metavar="TRACE.csv")
    r.add_argument("--target", type=_finite_float, required=True, metavar="C",
                   help="target temperature, deg C (deg F with --target-in-f)")
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
    r.add_argument("--time-unit", choices=("s", "ms", "min"), default="s",
                   help="unit of the time_s column (default s); converted to seconds")
    r.add_argument("--verdict", action="store_true",
                   help="append a verdict column (accepted, spike, stuck, ...: what the "
                        "reading guard decided) after the fixed columns of PRED.csv")
    r.add_argument("--no-checks", action="store_true",
                   help="replay even when the sampling or the readings look wrong (median "
                        "step under 0.1 s or over 1 h, under a minute of data, median "
                        "reading outside -60..150 C)")
    _add_estimator_options(r)
    r.set_defaults(func=cmd_replay)

    s = sub.add_parser("scenario", help="generate a seeded physical scenario trace",
                       description="Generate a trace CSV and a truth JSON (exact crossing "
                                   "time of the noise-free sensor signal).")
    s.add_argument("kind", nargs="?", choices=scenarios.KINDS, help="scenario kind")
    s.add_argument("--seed", type=_seed, default=0, help="non-negative integer (default 0)")
    s.add_argument("--out", metavar="trace.csv")
    s.add_argument("--truth", metavar="truth.json")
    s.add_argument("--target", type=_finite_float, metavar="C", default=None,
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
    d.add_argument("--seed", type=_seed, default=7, help="non-negative integer (default 7)")
    d.add_argument("--every", type=_positive_float, default=60.0, metavar="S",
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
    from host_sim import fleet      # the fleet subcommand lives in host_sim/fleet.py
    fleet.add_parser(sub)
    from host_sim import calibrate  # the calibrate subcommand lives in host_sim/calibrate.py
    calibrate.add_parser(sub)
    return p


def main(argv=None):
    """Entry point; returns the process exit code."""
    args = build_parser().parse_args(argv)
    try:
        return args.func(args)
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
