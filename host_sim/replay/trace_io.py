"""Whole traces and prediction files: the :class:`Trace` container, reading a
trace into it, writing traces and predictions.

The trace format and its streaming reader are in
:mod:`host_sim.replay.trace_reader`; :func:`read_trace`/:func:`parse_trace`
collect its rows into a :class:`Trace`.

Prediction CSV (one row per input row) has exactly the columns
:data:`PREDICTION_COLUMNS`; ``eta_*``, ``rate_per_s`` and ``equilibrium_c`` are
empty when the estimator has no value, and ``eta_high_s`` is ``inf`` when the
data cannot rule out "never".
"""
import csv
import math

import numpy as np

from host_sim.replay.trace_reader import FileOwner, TraceError, TraceRows

PREDICTION_COLUMNS = ("time_s", "temp_c", "eta_s", "eta_low_s", "eta_high_s",
                      "status", "rate_per_s", "equilibrium_c")


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


def read_trace(path, fahrenheit=False, skip_bad=False, time_unit="s"):
    """Read a trace CSV file; returns a :class:`Trace` with temperatures in deg C.

    ``fahrenheit``: the ``temp_c``/``ambient_c`` columns hold deg F (a header
    may then also name them ``temp_f``/``ambient_f``). ``skip_bad``: skip and
    count malformed rows instead of raising :class:`TraceError`. A missing
    required column or an empty file always raises. ``time_unit``: unit of
    the time column (``s``, ``ms`` or ``min``), converted to seconds. Holds
    every row in memory: use :func:`iter_trace_rows` to stream.
    """
    return _collect(TraceRows(path, fahrenheit=fahrenheit, skip_bad=skip_bad,
                              time_unit=time_unit))


def parse_trace(lines, fahrenheit=False, skip_bad=False, source="<trace>", time_unit="s"):
    """Parse trace CSV text from an iterable of lines (see :func:`read_trace`)."""
    return _collect(TraceRows(lines, fahrenheit=fahrenheit, skip_bad=skip_bad,
                              time_unit=time_unit, name=source))


def _collect(reader):
    times, temps, ambs, heats, events, lines_out = [], [], [], [], [], []
    reader.keep_reasons = None           # a Trace keeps every message
    for row in reader:
        times.append(row[0])
        temps.append(row[1])
        ambs.append(math.nan if row[2] is None else row[2])
        heats.append(0.0 if row[3] is None else row[3])
        events.append(row[4] or "")
        lines_out.append(reader.line)
    return Trace(times, temps,
                 ambient_c=ambs if reader.has_ambient else None,
                 heater=heats if reader.has_heater else None,
                 events=events, line_numbers=lines_out,
                 skipped_rows=reader.skipped_rows, skipped_reasons=reader.skipped_reasons,
                 source=reader.name)


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


class PredictionWriter(FileOwner):
    """Write prediction rows one at a time (constant memory); a context manager.

    ``path``: the CSV to create. ``verdict``: append a ``verdict`` column
    (the reading's verdict name) after :data:`PREDICTION_COLUMNS`, so readers
    of the fixed columns keep working. :meth:`write` takes seconds, deg C,
    seconds, seconds, seconds, the status name, 1/s, deg C (None = empty).
    """

    def __init__(self, path, verdict=False):
        self.path = path
        self.verdict = bool(verdict)
        self._handle = open(path, "w", newline="")
        self._w = csv.writer(self._handle, lineterminator="\n")
        self._w.writerow(PREDICTION_COLUMNS + (("verdict",) if self.verdict else ()))
        self.rows = 0

    def write(self, time_s, temp_c, eta_s, eta_low_s, eta_high_s, status, rate_per_s,
              equilibrium_c, verdict=None):
        """One row; ``verdict`` (a name) is written only with ``verdict=True``."""
        row = ["%.3f" % time_s, _fmt(temp_c, 4), _fmt(eta_s, 1), _fmt(eta_low_s, 1),
               _fmt(eta_high_s, 1), status,
               "" if rate_per_s is None else "%.6g" % rate_per_s, _fmt(equilibrium_c, 3)]
        if self.verdict:
            row.append("" if verdict is None else verdict)
        self._w.writerow(row)
        self.rows += 1


def write_predictions(path, rows, verdict=False):
    """Write prediction rows to ``path`` with exactly :data:`PREDICTION_COLUMNS`.

    Each row is a dict with those keys; ``None`` (or non-finite) values are
    written as empty cells. ``status`` is written as given (the status name).
    ``verdict=True`` appends a ``verdict`` column from each row's ``verdict``.
    """
    with PredictionWriter(path, verdict=verdict) as w:
        for r in rows:
            w.write(r["time_s"], r["temp_c"], r["eta_s"], r["eta_low_s"], r["eta_high_s"],
                    r["status"], r["rate_per_s"], r["equilibrium_c"], r.get("verdict"))


def read_predictions(path):
    """Read a prediction CSV back: dict of column -> list (floats or None; status str).

    A ``verdict`` column, when present, is read as str.
    """
    out = None
    with open(path, newline="") as handle:
        reader = csv.reader(handle)
        header = next(reader)
        if tuple(header[:len(PREDICTION_COLUMNS)]) != PREDICTION_COLUMNS:
            raise TraceError("%s:1: not a prediction file; header is %s" % (path, ",".join(header)))
        out = {c: [] for c in header}
        for row in reader:
            for name, cell in zip(header, row):
                if name in ("status", "verdict"):
                    out[name].append(cell)
                else:
                    out[name].append(float(cell) if cell != "" else None)
    return out
