"""What calibrate refuses up front, and what it warns about after the fit.

Before anything is held in memory, every trace is streamed once through the
same checks as ``replay`` and ``fleet`` (:mod:`host_sim.replay.trace_checks`)
and through calibrate's own bounds: the uniform grid the fit works on
(:func:`host_sim.calibrate.prepare.prepare`) must stay within
:data:`MAX_GRID_POINTS` per trace and :data:`MAX_TOTAL_GRID_POINTS` in all, a
trace within :data:`MAX_ROWS`, and no gap between two rows may exceed
:data:`MAX_GAP_S` (the grid would invent readings across it). So time and
memory stay bounded whatever the input. After the fit,
:func:`data_warnings` says when the data cannot support the profile.
"""
import math

import numpy as np

from host_sim.calibrate.prepare import MAX_GRID_POINTS  # one trace: about 60 s of fitting
from host_sim.replay.trace_checks import LIQUID_RANGE_C, TraceScan, trace_problems
from host_sim.replay.trace_io import read_trace
from host_sim.replay.trace_reader import TraceError, iter_trace_rows

MAX_ROWS = 200000                # rows of one trace (a day at one reading every 0.5 s)
MAX_TOTAL_GRID_POINTS = 1000000  # grid points of all traces together
MAX_GAP_S = 3600.0               # the longest gap between two rows the grid may bridge
MIN_GRID_STEP_S = 0.5            # prepare()'s finest grid step, s
MAX_SMOOTH_S = 3600.0            # a smoothing window longer than an hour smooths the approach away
MIN_TRACES_FOR_SPREAD = 3
FEW_ROWS = 60                    # a trace with fewer rows gives weak derivatives
STEP_SHARE = 0.5                 # one row-to-row change this share of the range: a step


def check_arguments(n_traces, fills=None, ambient_c=None, folds=5, smooth_s=60.0):
    """ValueError naming the option when a calibrate argument cannot be used."""
    if n_traces < 1:
        raise ValueError("calibrate needs at least one trace")
    if isinstance(smooth_s, bool) or not isinstance(smooth_s, (int, float)) \
            or not math.isfinite(smooth_s) or not 0.0 < smooth_s <= MAX_SMOOTH_S:
        raise ValueError("--smooth-s must be a number of seconds in (0, %g], got %r"
                         % (MAX_SMOOTH_S, smooth_s))
    if isinstance(folds, bool) or not isinstance(folds, int) or folds < 2:
        raise ValueError("--folds must be an integer of at least 2, got %r" % (folds,))
    if ambient_c is not None:
        lo, hi = LIQUID_RANGE_C
        if not isinstance(ambient_c, (int, float)) or not math.isfinite(ambient_c) \
                or not lo <= ambient_c <= hi:
            raise ValueError("--ambient must be a room temperature in %g..%g C, got %r"
                             % (lo, hi, ambient_c))
    if fills is not None:
        fills = list(fills)
        if len(fills) != n_traces:
            raise ValueError("--fill-kg needs one value per trace (%d traces, %d fills)"
                             % (n_traces, len(fills)))
        for i, f in enumerate(fills):
            if not isinstance(f, (int, float)) or not math.isfinite(f) or not 0.0 < f <= 1e4:
                raise ValueError("--fill-kg value %d is %r: a fill is a positive number of kg"
                                 % (i + 1, f))


class _GapScan(TraceScan):
    """A :class:`TraceScan` that also finds the longest gap between rows (and its line)
    and the first reading outside a liquid's range (replay's guard drops such a
    spike; calibrate fits every reading, so one 1e308 would make the fit infinite)."""

    def __init__(self, reader):
        TraceScan.__init__(self, reader)
        self.max_gap_s = 0.0
        self.gap_line = None
        self.wild = None           # (line, column, value) of the first impossible reading

    def add(self, row):
        if self.t_last is not None and row[0] - self.t_last > self.max_gap_s:
            self.max_gap_s = row[0] - self.t_last
            self.gap_line = self._reader.line
        if self.wild is None:
            lo, hi = LIQUID_RANGE_C
            for column, value in (("temp_c", row[1]), ("ambient_c", row[2])):
                if value is not None and not lo <= value <= hi:
                    self.wild = (self._reader.line, column, value)
                    break
        TraceScan.add(self, row)


def bound_problems(scan):
    """Calibrate's own bounds on one scanned trace: messages (empty list if fine)."""
    problems = []
    if scan.rows > MAX_ROWS:
        problems.append("%d rows (calibrate takes at most %d per trace): thin the recording "
                        "or split it into uses" % (scan.rows, MAX_ROWS))
    span = scan.t_last - scan.t0
    step = max(scan.median_step_s or 0.0, MIN_GRID_STEP_S)
    points = span / step + 1.0
    if points > MAX_GRID_POINTS:
        problems.append("%.3g s at a median step of %.3g s is %.3g grid points (at most %d): "
                        "split the recording into uses" % (span, step, points, MAX_GRID_POINTS))
    elif scan.wild is not None:
        line, column, value = scan.wild
        lo, hi = LIQUID_RANGE_C
        problems.append("line %d: %s %.6g C is outside a liquid's %g..%g C (a spike?): "
                        "calibrate fits every reading; remove the row" % (line, column, value,
                                                                          lo, hi))
    elif scan.max_gap_s > MAX_GAP_S:
        problems.append("line %d: a gap of %.0f s after the previous row (at most %.0f s): "
                        "calibrate would invent readings across it; split the trace there"
                        % (scan.gap_line, scan.max_gap_s, MAX_GAP_S))
    return problems, points


def read_traces(paths, fahrenheit=False, skip_bad=True, time_unit="s", checks=True,
                notes=None):
    """Check then read calibrate's traces; returns a list of :class:`Trace`.

    Each file is streamed once (constant memory) through the shared trace
    checks (skipped with ``checks=False``) and calibrate's bounds (always),
    then read. Raises :class:`TraceError` with one line naming the file (and
    the row) for the first file refused. ``notes``: a list that receives
    one message per file with skipped rows.
    """
    total = 0.0
    for path in paths:
        with iter_trace_rows(path, fahrenheit=fahrenheit, skip_bad=skip_bad,
                             time_unit=time_unit) as reader:
            scan = _GapScan(reader)
            for row in reader:
                scan.add(row)
            scan.finish()
        problems = trace_problems(scan, "F" if fahrenheit else "C", time_unit) if checks \
            else []
        bounds, points = bound_problems(scan)
        if problems:
            raise TraceError("%s: %s (--no-checks calibrates on it anyway)"
                             % (path, "; ".join(problems)))
        if bounds:
            raise TraceError("%s: %s" % (path, "; ".join(bounds)))
        total += points
        if total > MAX_TOTAL_GRID_POINTS:
            raise TraceError("%s: the traces up to this one make %.3g grid points (at most "
                             "%d in all): calibrate on fewer or shorter traces"
                             % (path, total, MAX_TOTAL_GRID_POINTS))
    traces = []
    for path in paths:
        tr = read_trace(path, fahrenheit=fahrenheit, skip_bad=skip_bad, time_unit=time_unit)
        if tr.skipped_rows and notes is not None:
            notes.append("%s: skipped %d bad row(s) (a torn last row after a power loss is one)"
                         % (path, tr.skipped_rows))
        traces.append(tr)
    return traces


def _step_line(trace):
    """(share of the range in the largest row-to-row change, its file line) of a trace."""
    y = np.asarray(trace.temp_c, dtype=float)
    if len(y) < 2:
        return 0.0, None
    rng = float(np.max(y) - np.min(y))
    if rng <= 0.0:
        return 0.0, None
    d = np.abs(np.diff(y))
    j = int(np.argmax(d))
    return float(d[j]) / rng, trace.line_numbers[j + 1]


def data_warnings(cal):
    """Plain-language warnings when the data cannot support the profile (list of str)."""
    out = []
    m = len(cal.preps)
    if m < MIN_TRACES_FOR_SPREAD:
        out.append("calibrated on %d trace(s): the spread across uses is unknown%s; record "
                   "5 or more uses of the vessel" % (m, " and nothing is cross-validated"
                                                     if m < 2 else ""))
    for pr in cal.preps:
        tr = pr.trace
        if len(tr) < FEW_ROWS:
            out.append("%s has only %d rows: too few for the derivatives the fit needs"
                       % (tr.source, len(tr)))
        share, line = _step_line(tr)
        if share >= STEP_SHARE:
            out.append("%s: %.0f %% of its temperature change happens between two rows (line "
                       "%s): a step (probe moved?), not an approach" % (tr.source, 100 * share,
                                                                       line))
    counts = cal.table_counts
    names = ("<60 s", "60-300 s", "300-1200 s", ">1200 s")
    if counts is None:
        out.append("no replayed (trace, target) pair to calibrate the interval on: the "
                   "interval table holds a default, not a calibration")
    else:
        empty = [names[i] for i, c in enumerate(counts) if not c]
        if empty:
            out.append("no replayed pair in the interval bin(s) %s: those bins hold a "
                       "neighbour's or a default value" % ", ".join(empty))
    cv = cal.cv or {}
    if cv.get("folds"):
        ratio = cv.get("error_ratio_profile_model_to_device")
        if ratio is None or not np.isfinite(ratio):
            out.append("cross-validation gave no error figures (no held-out trace crossed a "
                       "target): the profile is untested")
        elif ratio > 1.0:
            out.append("on held-out traces the profile model's error is %.2f times the "
                       "device's without a profile: %s" % (ratio, (
                           "the device answers with its own fit and takes only the "
                           "interval table from this profile (own_fit)")
                           if cal.profile.own_fit else "this profile would make answers worse"))
        cov = cv.get("coverage_profile_interval")
        if cov is not None and np.isfinite(cov) and cov < 0.5:
            out.append("the profile's 80 %% interval covers only %.2f of held-out answers: "
                       "the traces disagree (units mixed, or different vessels?)" % cov)
    return out
