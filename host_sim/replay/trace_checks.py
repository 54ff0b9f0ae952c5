"""The trace checks every command runs: one scan, one list of problems.

``replay``, ``calibrate`` and ``fleet`` read the same trace format and refuse
the same traces that cannot be what the user meant (times in milliseconds read
as seconds, deg F under ``temp_c``, Kelvin, all-equal times, ...), with the
same one-line message. A :class:`TraceScan` is fed rows one at a time (memory
does not grow with the trace: it keeps at most :data:`SCAN_SAMPLE` steps and
readings for the medians); :func:`trace_problems` turns it into messages.
"""
import math

SCAN_SAMPLE = 20000          # rows whose steps and readings feed the sanity medians
MAX_TIME_S = 1e10            # ~300 years: beyond this, row differences lose precision
LIQUID_RANGE_C = (-60.0, 150.0)
MAX_SPAN_S = 30 * 86400.0    # a month: longer is more likely milliseconds read as seconds
MAX_HOT_FRACTION = 0.05      # readings above a liquid's range allowed as spikes


def median_low(values):
    """The lower median (an element, so no overflow from averaging two), or None."""
    if not values:
        return None
    return float(sorted(values)[(len(values) - 1) // 2])


class TraceScan:
    """A first pass over a trace: sizes, times and readings for the checks.

    Feed it :class:`host_sim.replay.trace_reader.TraceRow` tuples with
    :meth:`add` (or build it from a reader with :meth:`of`). Attributes after
    :meth:`finish`: ``rows``, ``t0``/``t_last`` (s), ``median_step_s``,
    ``median_temp_c``, ``median_ambient_c`` (deg C or None), ``hot_rows``
    (readings above :data:`LIQUID_RANGE_C`), ``heater_on`` (some duty > 0),
    ``has_ambient``/``has_heater``/``columns`` (from the reader), and the
    reader's ``skipped_*`` counts.
    """

    def __init__(self, reader=None):
        self.columns = getattr(reader, "columns", None)
        self.has_ambient = bool(getattr(reader, "has_ambient", False))
        self.has_heater = bool(getattr(reader, "has_heater", False))
        self.name = getattr(reader, "name", "<trace>")
        self.rows = 0
        self.hot_rows = 0
        self.t0 = self.t_last = None
        self.heater_on = False
        self._steps, self._temps, self._ambs = [], [], []
        self.median_step_s = self.median_temp_c = self.median_ambient_c = None
        self.skipped_rows = 0
        self.skipped_reasons = []
        self.skipped_by_reason = {}
        self._reader = reader

    @classmethod
    def of(cls, reader):
        """Scan every row of ``reader`` (a :class:`TraceRows`); returns the finished scan."""
        scan = cls(reader)
        for row in reader:
            scan.add(row)
        return scan.finish()

    def add(self, row):
        """One row ``(time_s, temp_c, ambient_c, heater, ...)``: s, deg C, deg C or None, duty."""
        t = row[0]
        if self.t_last is None:
            self.t0 = t
        elif len(self._steps) < SCAN_SAMPLE:
            self._steps.append(t - self.t_last)
        if len(self._temps) < SCAN_SAMPLE:
            self._temps.append(row[1])
        if row[1] > LIQUID_RANGE_C[1]:
            self.hot_rows += 1
        if row[2] is not None and len(self._ambs) < SCAN_SAMPLE:
            self._ambs.append(row[2])
        if row[3] is not None and row[3] > 0.0:
            self.heater_on = True
        self.t_last = t
        self.rows += 1

    def finish(self):
        """Compute the medians (and copy the reader's skip counts); returns self."""
        self.median_step_s = median_low(self._steps)
        self.median_temp_c = median_low(self._temps)
        self.median_ambient_c = median_low(self._ambs)
        self._steps = self._temps = self._ambs = None
        reader = self._reader
        if reader is not None:
            self.skipped_rows = reader.skipped_rows
            self.skipped_reasons = reader.skipped_reasons
            self.skipped_by_reason = reader.skipped_by_reason
            self._reader = None
        return self


def _show_temp(value_c, unit):
    value, name = (value_c * 9.0 / 5.0 + 32.0, "F") if unit == "F" else (value_c, "C")
    return ("%.1f %s" if abs(value) < 1e6 else "%.3g %s") % (value, name)


def trace_problems(scan, unit="C", time_unit="s", time_unit_option="--time-unit",
                   ambient_option=None, ambient_used=True):
    """Messages for a trace that cannot be what the user meant (empty list if fine).

    ``scan``: a finished :class:`TraceScan`; ``unit``: "C" or "F" (how the
    readings are shown); ``time_unit``: the unit the time column was read in.
    The hints name the unit options every command that reads traces has
    (``--fahrenheit``, ``time_unit_option``); ``ambient_option``: how this
    command is told to ignore the ambient_c column (None: it cannot be, the
    hint says to convert the column); ``ambient_used``: False when the
    command was told to ignore the column (it is then not checked).
    """
    problems = []
    if not scan.rows:
        return ["no data rows"]
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
    elif scan.hot_rows > MAX_HOT_FRACTION * scan.rows and unit == "C":
        # a 185 F drink cooling towards the room: most readings in range, the start not
        problems.append("%d of %d readings are above %g C, hotter than a liquid at the "
                        "stove: deg F? add --fahrenheit" % (scan.hot_rows, scan.rows, hi))
    amb = scan.median_ambient_c
    if amb is not None and ambient_used and not lo <= amb <= hi:
        problems.append("the median ambient_c is %s, not an air or bath temperature (%g..%g "
                        "C): Kelvin or deg F? convert it%s"
                        % (_show_temp(amb, unit), lo, hi,
                           ", or add " + ambient_option if ambient_option else ""))
    if scan.t_last > MAX_TIME_S:
        problems.append("time_s reaches %.3g s: row-to-row differences are lost at that size "
                        "in double precision; %swrite seconds since the start of the recording"
                        % (scan.t_last, "milliseconds? add %s ms; otherwise " % time_unit_option
                           if scan.t_last < 1e14 and time_unit == "s" else ""))
    elif scan.rows > 1 and span == 0.0:
        problems.append("all %d rows have the same time_s (%g): times must advance from row "
                        "to row" % (scan.rows, scan.t0))
    elif scan.median_step_s is not None and scan.median_step_s == 0.0:
        problems.append("more than half of the rows repeat the previous row's time_s: "
                        "times must advance from row to row")
    elif scan.median_step_s is not None and scan.median_step_s < 0.1:
        problems.append("the median time step is %.3g s (%.0f readings a second): time in "
                        "minutes? add %s min" % (scan.median_step_s, 1.0 / scan.median_step_s,
                                                 time_unit_option))
    elif scan.median_step_s is not None and scan.median_step_s > 3600.0:
        problems.append("the median time step is %.3g s (%.1f h): time in milliseconds? add "
                        "%s ms" % (scan.median_step_s, scan.median_step_s / 3600.0,
                                   time_unit_option))
    elif span > MAX_SPAN_S:
        problems.append("the trace spans %.0f days: time in milliseconds? add %s ms"
                        % (span / 86400.0, time_unit_option))
    elif span < 60.0:
        # minutes read as seconds only when minutes would make it a minute or more
        problems.append("the trace covers only %.3g s (%d rows); the estimator needs minutes "
                        "of readings%s" % (span, scan.rows, ": time in minutes? add %s min"
                                           % time_unit_option if span >= 1.0 and
                                           time_unit == "s" else ""))
    return problems


def target_problem(target_c, unit="C", target_in_f=False):
    """A message when a target (deg C) is not a liquid's temperature, else None."""
    lo, hi = LIQUID_RANGE_C
    if isinstance(target_c, float) and not math.isfinite(target_c):
        return "the target %r is not a finite number" % target_c
    if lo <= target_c <= hi:
        return None
    return "the target %s is outside a liquid's %g..%g C%s" % (
        _show_temp(target_c, unit), lo, hi,
        ": deg F? add --fahrenheit --target-in-f" if hi < target_c <= 500.0
        and not target_in_f else "")
