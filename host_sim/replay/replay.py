"""Replay a trace through the on-device estimator, row by row.

Every row goes through exactly the core's :class:`tinytherm.estimator.ThermalEstimator`:
``update(temp_c, dt_s, ambient_c=..., duty=...)`` and then ``predict(target_c)``,
as firmware would call it. ``dt_s`` is the difference of consecutive
``time_s`` values (0.0 for the first row), computed in double precision on the
host.
"""
import math
import sys

import numpy as np

from host_sim.replay.settings import settings_of
from tinytherm import status as st

# statuses whose ETA a device would show to the user
SHOWN_STATUSES = (st.TRACKING, st.ARRIVED)


class ReplayResult:
    """Per-row results of a replay.

    ``rows``: list of dicts with the prediction CSV columns (``status`` as its
    name) plus ``verdict`` (name), ``status_code`` (int), ``temp_est_c``,
    ``ambient_est_c``, ``gain_k_per_s``. ``settings``: the
    :class:`host_sim.replay.settings.ReplaySettings` of the replay;
    ``estimator_kwargs``: the keyword arguments the estimator was built with.
    ``heater``: whether a heater duty was fed.
    """

    def __init__(self, rows, settings, estimator_kwargs, target_c):
        self.rows = rows
        self.settings = settings
        self.estimator_kwargs = estimator_kwargs
        self.heater = bool(estimator_kwargs.get("heater", False))
        self.target_c = target_c

    def column(self, name):
        """One column as a list (None where empty)."""
        return [r[name] for r in self.rows]

    def shown_eta(self, name="eta_s"):
        """An ETA column with None wherever the status is not one a device shows."""
        return [r[name] if r["status_code"] in SHOWN_STATUSES else None for r in self.rows]


def _prediction_row(est, t, temp_c, verdict):
    """The per-row dict of :class:`ReplayResult` from the estimator's state."""
    return {
        "time_s": t,
        "temp_c": temp_c,
        "eta_s": est.eta_s,
        "eta_low_s": est.eta_low_s,
        "eta_high_s": est.eta_high_s,
        "status": st.status_name(est.status),
        "status_code": est.status,
        "rate_per_s": est.rate_per_s,
        "equilibrium_c": est.equilibrium_c,
        "verdict": st.verdict_name(verdict),
        "temp_est_c": est.temp_est_c,
        "ambient_est_c": est.ambient_est_c,
        "gain_k_per_s": est.gain_k_per_s,
    }


def replay_rows(rows, target_c, estimator, settings=None):
    """Streaming replay: a generator of ``(row, prediction)`` pairs, one per input row.

    ``rows``: any iterable of ``(time_s, temp_c, ambient_c, heater, ...)``
    tuples (seconds, deg C, deg C or None, duty 0..1 or None; further items
    are ignored), e.g. :func:`host_sim.replay.trace_reader.iter_trace_rows`.
    ``estimator``: a fresh estimator, built once by
    :meth:`host_sim.replay.settings.ReplaySettings.estimator`. ``settings``: the
    :class:`~host_sim.replay.settings.ReplaySettings` it was built from (for
    ``approach``, given to ``predict``, and ``use_ambient_column``; default:
    the defaults). Each row goes through ``update(temp_c, dt_s,
    ambient_c=..., duty=...)`` then ``predict(target_c, approach)`` (deg C);
    the duty is fed when the estimator fits a heater, otherwise 0.0. ``dt_s``
    is the difference of consecutive ``time_s`` (0.0 first). Yields the input
    row as given and a dict with the keys of :attr:`ReplayResult.rows`; holds
    one row at a time, so memory does not grow with the trace.
    """
    approach = settings.approach if settings is not None else 0
    use_ambient_column = settings.use_ambient_column if settings is not None else True
    use_heater = bool(getattr(estimator, "heater", False))
    prev_t = None
    for row in rows:
        t = float(row[0])
        dt = 0.0 if prev_t is None else t - prev_t
        prev_t = t
        temp = float(row[1])
        amb = row[2] if use_ambient_column else None
        if amb is not None:
            amb = float(amb)
            if not math.isfinite(amb):
                amb = None
        duty = 0.0
        if use_heater and row[3] is not None:
            duty = float(row[3])
        verdict = estimator.update(temp, dt, ambient_c=amb, duty=duty)
        if approach:
            estimator.predict(target_c, approach)
        else:
            estimator.predict(target_c)
        yield row, _prediction_row(estimator, t, temp, verdict)


def replay(trace, target_c, settings=None, progress=False, **values):
    """Feed ``trace`` through a fresh estimator; returns a :class:`ReplayResult`.

    ``target_c`` deg C. ``settings``: a
    :class:`~host_sim.replay.settings.ReplaySettings` (or what it takes: a dict
    or ``NAME=VALUE`` texts); ``values``: further settings by name, e.g.
    ``heater="on"``, ``approach=-1``, ``interval=0.5``, ``ambient_c=21.0``
    (a setting in both is an error). Bad settings raise ValueError.
    ``progress``: print a progress line to stderr every 10 % of long traces.
    Holds every row in memory; :func:`replay_rows` streams.
    """
    settings = settings_of(settings, **values)
    any_duty = bool(trace.has_heater and np.any(trace.heater > 0.0))
    kw = settings.constructor_kwargs(trace.has_heater, any_duty)
    estimator = settings.estimator(trace.has_heater, any_duty)
    use_heater = estimator.heater
    amb_col = trace.ambient_c if trace.has_ambient else None
    n = len(trace)

    def source():
        for i in range(n):
            yield (trace.time_s[i], trace.temp_c[i],
                   None if amb_col is None else amb_col[i],
                   trace.heater[i] if use_heater else None)

    step = max(n // 10, 1)
    rows = []
    for i, (_, pred) in enumerate(replay_rows(source(), target_c, estimator, settings)):
        rows.append(pred)
        if progress and n >= 20000 and (i + 1) % step == 0:
            print("replay: %d/%d rows" % (i + 1, n), file=sys.stderr)
    return ReplayResult(rows, settings, kw, target_c)


class RunningMedian:
    """Centred running median of ``window`` readings, streamed with a delay.

    The same values as the padded array median of :func:`crossing_from_trace`
    (the first and last readings repeat beyond the ends). :meth:`push` takes
    a row's ``(time_s, value)`` and returns the ``(time_s, median)`` of the row
    ``window // 2`` rows back, or None while the window fills; :meth:`finish`
    returns the remaining rows' list at the end. Holds ``window`` readings.
    """

    def __init__(self, window=5):
        if window < 1 or window % 2 != 1:
            raise ValueError("window must be an odd number of readings")
        self.window = window
        self._raw = []

    def push(self, time_s, value):
        """Add one row; the median of the row ``window // 2`` back, or None."""
        half = self.window // 2
        if not self._raw:
            self._raw = [(None, value)] * half
        self._raw.append((time_s, value))
        if len(self._raw) > self.window:
            del self._raw[0]
        if len(self._raw) < self.window:
            return None
        return self._raw[half][0], sorted(v for _, v in self._raw)[half]

    def finish(self):
        """Medians of the last ``window // 2`` rows (end padded with the last value)."""
        half = self.window // 2
        if not self._raw:
            return []
        last = self._raw[-1][1]
        out = []
        for _ in range(half):
            self._raw.append((None, last))
            if len(self._raw) > self.window:
                del self._raw[0]
            if len(self._raw) == self.window and self._raw[half][0] is not None:
                out.append((self._raw[half][0], sorted(v for _, v in self._raw)[half]))
        self._raw = []
        return out


class CrossingFinder:
    """Streaming form of :func:`crossing_from_trace`: same answer, constant memory.

    Call :meth:`add` with each row's ``time_s`` (s) and ``temp_c`` (deg C) in
    order, then :meth:`result` once for the crossing time (s) or None. Keeps
    the last ``window`` readings and, for each possible final side of the
    target, the last row clearly on the other side and the first sign change
    after it.
    """

    def __init__(self, target_c, band_c=0.5, window=5):
        self.target_c = float(target_c)
        self.band_c = float(band_c)
        self.window = window
        self.rows = 0
        self._median = RunningMedian(window)
        self._prev = None     # (time, gap) of the previous row's median
        self._gaps = []       # gaps of the last two rows
        # per final side e = +1 / -1: [last row clearly short, first sign change after it]
        self._side = {1: [False, None], -1: [False, None]}

    def add(self, time_s, temp_c):
        """Feed one row (seconds, deg C)."""
        self.rows += 1
        got = self._median.push(float(time_s), float(temp_c))
        if got is not None:
            self._gap(*got)

    def _gap(self, t, med):
        gap = med - self.target_c
        for e, state in self._side.items():
            if gap * -e > self.band_c:
                state[0] = True
                state[1] = None
            elif state[0] and state[1] is None and gap * e >= 0.0:
                state[1] = (self._prev[0], self._prev[1], t, gap)
        self._prev = (t, gap)
        self._gaps = (self._gaps + [gap])[-2:]

    def result(self):
        """Crossing time in seconds, or None (see :func:`crossing_from_trace`)."""
        if self.rows < self.window:
            return None
        for got in self._median.finish():
            self._gap(*got)
        gaps = self._gaps
        end_sign = 0 if gaps[-1] == 0.0 else (1 if gaps[-1] > 0.0 else -1)
        if end_sign == 0 and len(gaps) > 1 and gaps[-2] != 0.0:
            end_sign = 1 if gaps[-2] > 0.0 else -1
        if end_sign == 0:
            return None
        short, cand = self._side[end_sign]
        if not short or cand is None:
            return None
        t0, g0, t1, g1 = cand
        if g1 == g0:
            return float(t1)
        return float(t0 + (t1 - t0) * (-g0) / (g1 - g0))


def crossing_from_trace(time_s, temp_c, target_c, band_c=0.5, window=5):
    """The trace's own crossing of ``target_c`` (seconds), or None.

    A ``window``-reading running median smooths noise and spikes; the crossing
    is the first sign change after the last row on the starting side by more
    than ``band_c``, interpolated linearly between rows. The starting side is
    the side of the final value's opposite; None if the trace ends on the
    starting side or never leaves the band. Use a truth file for exact times.
    """
    t = np.asarray(time_s, dtype=float)
    y = np.asarray(temp_c, dtype=float)
    n = len(y)
    if n < window:
        return None
    half = window // 2
    pad = np.concatenate([np.full(half, y[0]), y, np.full(half, y[-1])])
    med = np.median(np.lib.stride_tricks.sliding_window_view(pad, window), axis=1)
    gap = med - target_c
    end_sign = np.sign(gap[-1])
    if end_sign == 0.0:
        end_sign = np.sign(gap[-2]) if n > 1 else 0.0
    if end_sign == 0.0:
        return None
    before = np.nonzero(gap * -end_sign > band_c)[0]
    if len(before) == 0:
        return None
    j = before[-1]
    after = np.nonzero(gap[j:] * end_sign >= 0.0)[0]
    if len(after) == 0:
        return None
    i1 = j + after[0]
    i0 = i1 - 1
    g0, g1 = gap[i0], gap[i1]
    if g1 == g0:
        return float(t[i1])
    return float(t[i0] + (t[i1] - t[i0]) * (-g0) / (g1 - g0))
