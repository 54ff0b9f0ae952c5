"""Trace CSV input and prediction CSV output.

Trace format (one header row, comma separated)::

    time_s,temp_c[,ambient_c][,heater][,event]

- ``time_s``: seconds since the start of the recording, float, non-decreasing;
- ``temp_c``: the sensor reading in deg C (deg F with ``fahrenheit=True``);
- ``ambient_c`` (optional): a second sensor's reading in deg C (deg F with
  ``fahrenheit=True``); an empty cell means "no ambient reading on this row";
- ``heater`` (optional): heater duty in [0, 1] applied since the previous row;
- ``event`` (optional): free-text marker such as ``top-up``;
- any other column is ignored.

Blank lines and lines whose first character is ``#`` are comments. Every other
row must parse: a bad row raises :class:`TraceError` naming the file, the line
and the problem, unless ``skip_bad=True``, in which case the row is skipped and
counted in :attr:`Trace.skipped_rows` (with the reasons in
:attr:`Trace.skipped_reasons`).

Prediction CSV (one row per input row) has exactly the columns
:data:`PREDICTION_COLUMNS`; ``eta_*``, ``rate_per_s`` and ``equilibrium_c`` are
empty when the estimator has no value, and ``eta_high_s`` is ``inf`` when the
data cannot rule out "never".
"""
import csv
import math

import numpy as np

PREDICTION_COLUMNS = ("time_s", "temp_c", "eta_s", "eta_low_s", "eta_high_s",
                      "status", "rate_per_s", "equilibrium_c")

REQUIRED_COLUMNS = ("time_s", "temp_c")


class TraceError(ValueError):
    """A malformed trace file; the message names the file, line and problem."""


def fahrenheit_to_celsius(value_f):
    """deg F -> deg C: ``(F - 32) * 5/9`` (definition of the Fahrenheit scale)."""
    return (value_f - 32.0) * 5.0 / 9.0


class Trace:
    """A parsed trace, all temperatures in deg C.

    Attributes: ``time_s``, ``temp_c`` (float numpy arrays), ``ambient_c``
    (float array with NaN where a row had no ambient reading, or ``None`` if
    the file has no ambient column), ``heater`` (duty array in [0, 1] or
    ``None``), ``events`` (list of str, ``""`` where none), ``line_numbers``
    (file line of each row), ``skipped_rows`` (int), ``skipped_reasons`` (list
    of str), ``source`` (path or ``None``).
    """

    def __init__(self, time_s, temp_c, ambient_c=None, heater=None, events=None,
                 line_numbers=None, skipped_rows=0, skipped_reasons=None, source=None):
        self.time_s = np.asarray(time_s, dtype=float)
        self.temp_c = np.asarray(temp_c, dtype=float)
        n = len(self.time_s)
        if len(self.temp_c) != n:
            raise ValueError("time_s and temp_c lengths differ")
        self.ambient_c = None if ambient_c is None else np.asarray(ambient_c, dtype=float)
        self.heater = None if heater is None else np.asarray(heater, dtype=float)
        self.events = list(events) if events is not None else [""] * n
        self.line_numbers = list(line_numbers) if line_numbers is not None else list(range(2, n + 2))
        self.skipped_rows = skipped_rows
        self.skipped_reasons = list(skipped_reasons or [])
        self.source = source

    def __len__(self):
        return len(self.time_s)

    @property
    def has_heater(self):
        """True when the trace has a heater column."""
        return self.heater is not None

    @property
    def has_ambient(self):
        """True when the trace has an ambient column."""
        return self.ambient_c is not None


def _parse_float(text, column, where):
    text = text.strip()
    if text == "":
        raise TraceError("%s: empty %s" % (where, column))
    try:
        value = float(text)
    except ValueError:
        raise TraceError("%s: %s is not a number: %r" % (where, column, text)) from None
    if not math.isfinite(value):
        raise TraceError("%s: %s is not finite: %r" % (where, column, text))
    return value


def read_trace(path, fahrenheit=False, skip_bad=False):
    """Read a trace CSV file; returns a :class:`Trace` with temperatures in deg C.

    ``fahrenheit``: the ``temp_c``/``ambient_c`` columns hold deg F (a header
    may then also name them ``temp_f``/``ambient_f``). ``skip_bad``: skip and
    count malformed rows instead of raising :class:`TraceError`. A missing
    required column or an empty file always raises.
    """
    with open(path, newline="") as handle:
        return parse_trace(handle, fahrenheit=fahrenheit, skip_bad=skip_bad, source=str(path))


def parse_trace(lines, fahrenheit=False, skip_bad=False, source="<trace>"):
    """Parse trace CSV text from an iterable of lines (see :func:`read_trace`)."""
    reader = csv.reader(lines)
    header = None
    header_line = 0
    for row in reader:
        if not row or not "".join(row).strip() or row[0].lstrip().startswith("#"):
            continue
        header = [c.strip().lower() for c in row]
        header_line = reader.line_num
        break
    if header is None:
        raise TraceError("%s: empty file (no header row)" % source)
    aliases = {}
    if fahrenheit:
        aliases = {"temp_f": "temp_c", "ambient_f": "ambient_c"}
    header = [aliases.get(c, c) for c in header]
    for name in REQUIRED_COLUMNS:
        if name not in header:
            hint = ""
            if name == "temp_c" and "temp_f" in header:
                hint = " (found temp_f: use --fahrenheit)"
            raise TraceError("%s:%d: header has no %s column%s; header is %s"
                             % (source, header_line, name, hint, ",".join(header)))
    dup = sorted(set(c for c in header if header.count(c) > 1 and c))
    if dup:
        raise TraceError("%s:%d: duplicate column(s) %s" % (source, header_line, ",".join(dup)))
    col = {name: header.index(name) for name in header}
    i_time, i_temp = col["time_s"], col["temp_c"]
    i_amb, i_heat, i_event = col.get("ambient_c"), col.get("heater"), col.get("event")
    ncols = len(header)

    times, temps, ambs, heats, events, lines_out, reasons = [], [], [], [], [], [], []
    last_time = -math.inf
    for row in reader:
        line = reader.line_num
        if not row or not "".join(row).strip() or row[0].lstrip().startswith("#"):
            continue
        where = "%s:%d" % (source, line)
        try:
            if len(row) != ncols:
                raise TraceError("%s: expected %d fields (as in the header), got %d"
                                 % (where, ncols, len(row)))
            t = _parse_float(row[i_time], "time_s", where)
            if t < 0.0:
                raise TraceError("%s: time_s is negative: %r" % (where, row[i_time].strip()))
            if t < last_time:
                raise TraceError("%s: time_s decreases (%g after %g)" % (where, t, last_time))
            temp = _parse_float(row[i_temp], "temp_c", where)
            if fahrenheit:
                temp = fahrenheit_to_celsius(temp)
            amb = math.nan
            if i_amb is not None and row[i_amb].strip() != "":
                amb = _parse_float(row[i_amb], "ambient_c", where)
                if fahrenheit:
                    amb = fahrenheit_to_celsius(amb)
            duty = 0.0
            if i_heat is not None:
                duty = _parse_float(row[i_heat], "heater", where)
                if not 0.0 <= duty <= 1.0:
                    raise TraceError("%s: heater duty %r is outside 0..1" % (where, row[i_heat].strip()))
        except TraceError as exc:
            if not skip_bad:
                raise
            reasons.append(str(exc))
            continue
        last_time = t
        times.append(t)
        temps.append(temp)
        ambs.append(amb)
        heats.append(duty)
        events.append(row[i_event].strip() if i_event is not None else "")
        lines_out.append(line)
    if not times:
        raise TraceError("%s: no data rows%s" % (
            source, " (all %d skipped as bad)" % len(reasons) if reasons else ""))
    return Trace(times, temps,
                 ambient_c=ambs if i_amb is not None else None,
                 heater=heats if i_heat is not None else None,
                 events=events, line_numbers=lines_out,
                 skipped_rows=len(reasons), skipped_reasons=reasons, source=source)


def _fmt(value, digits):
    if value is None:
        return ""
    value = float(value)
    if value == math.inf:
        return "inf"   # an unbounded upper end of an interval
    if not math.isfinite(value):
        return ""
    return "%.*f" % (digits, value)


def write_trace(path, time_s, temp_c, ambient_c=None, heater=None, events=None):
    """Write a trace CSV (format in the module docstring), temperatures in deg C.

    ``ambient_c`` entries that are NaN are written as empty cells.
    """
    cols = ["time_s", "temp_c"]
    if ambient_c is not None:
        cols.append("ambient_c")
    if heater is not None:
        cols.append("heater")
    if events is not None:
        cols.append("event")
    with open(path, "w", newline="") as handle:
        w = csv.writer(handle, lineterminator="\n")
        w.writerow(cols)
        for i in range(len(time_s)):
            row = ["%.3f" % time_s[i], "%.4f" % temp_c[i]]
            if ambient_c is not None:
                row.append(_fmt(ambient_c[i], 4))
            if heater is not None:
                row.append("%.4f" % heater[i])
            if events is not None:
                row.append(events[i])
            w.writerow(row)


def write_predictions(path, rows):
    """Write prediction rows to ``path`` with exactly :data:`PREDICTION_COLUMNS`.

    Each row is a dict with those keys; ``None`` (or non-finite) values are
    written as empty cells. ``status`` is written as given (the status name).
    """
    with open(path, "w", newline="") as handle:
        w = csv.writer(handle, lineterminator="\n")
        w.writerow(PREDICTION_COLUMNS)
        for r in rows:
            w.writerow([
                "%.3f" % r["time_s"],
                _fmt(r["temp_c"], 4),
                _fmt(r["eta_s"], 1),
                _fmt(r["eta_low_s"], 1),
                _fmt(r["eta_high_s"], 1),
                r["status"],
                "" if r["rate_per_s"] is None else "%.6g" % r["rate_per_s"],
                _fmt(r["equilibrium_c"], 3),
            ])


def read_predictions(path):
    """Read a prediction CSV back: dict of column -> list (floats or None; status str)."""
    out = {c: [] for c in PREDICTION_COLUMNS}
    with open(path, newline="") as handle:
        reader = csv.reader(handle)
        header = next(reader)
        if tuple(header) != PREDICTION_COLUMNS:
            raise TraceError("%s:1: not a prediction file; header is %s" % (path, ",".join(header)))
        for row in reader:
            for name, cell in zip(header, row):
                if name == "status":
                    out[name].append(cell)
                else:
                    out[name].append(float(cell) if cell != "" else None)
    return out
