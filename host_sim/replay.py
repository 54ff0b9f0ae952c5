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

from tinytherm import status as st
from tinytherm.estimator import ThermalEstimator

# statuses whose ETA a device would show to the user
SHOWN_STATUSES = (st.TRACKING, st.ARRIVED)


class ReplayResult:
    """Per-row results of a replay.

    ``rows``: list of dicts with the prediction CSV columns (``status`` as its
    name) plus ``verdict`` (name), ``status_code`` (int), ``temp_est_c``,
    ``ambient_est_c``, ``gain_k_per_s``. ``settings``: the keyword arguments
    given to the estimator. ``heater``: whether a heater duty was fed.
    """

    def __init__(self, rows, settings, heater, target_c):
        self.rows = rows
        self.settings = settings
        self.heater = heater
        self.target_c = target_c

    def column(self, name):
        """One column as a list (None where empty)."""
        return [r[name] for r in self.rows]

    def shown_eta(self, name="eta_s"):
        """An ETA column with None wherever the status is not one a device shows."""
        return [r[name] if r["status_code"] in SHOWN_STATUSES else None for r in self.rows]


def estimator_settings(trace, ambient_c=None, heater="auto", **settings):
    """Keyword arguments for the estimator from CLI-style options.

    ``heater``: ``"auto"`` (on when the trace has a heater column with a
    nonzero duty), ``"on"``/``True`` or ``"off"``/``False``. ``ambient_c``: a
    constant ambient (deg C) or None. Other ``settings`` that are None are left
    to the core's defaults.
    """
    if heater in ("auto", None):
        use_heater = bool(trace.has_heater and np.any(trace.heater > 0.0))
    elif heater in ("on", True):
        use_heater = True
    elif heater in ("off", False):
        use_heater = False
    else:
        raise ValueError("heater must be auto, on or off")
    if use_heater and not trace.has_heater:
        raise ValueError("heater=on needs a heater column in the trace")
    kw = {k: v for k, v in settings.items() if v is not None}
    kw["heater"] = use_heater
    if ambient_c is not None:
        kw["ambient_c"] = float(ambient_c)
    return kw


def replay(trace, target_c, ambient_c=None, heater="auto", use_ambient_column=True,
           progress=False, **settings):
    """Feed ``trace`` through a fresh estimator; returns a :class:`ReplayResult`.

    ``target_c`` deg C. ``ambient_c``: known constant ambient (deg C) given to
    the constructor. ``use_ambient_column``: pass the trace's ``ambient_c``
    cells (when present) with each reading. ``settings``: further estimator
    keyword arguments (``memory_s``, ``block_s``, ``interval``, ...).
    ``progress``: print a progress line to stderr every 10 % of long traces.
    """
    kw = estimator_settings(trace, ambient_c=ambient_c, heater=heater, **settings)
    est = ThermalEstimator(**kw)
    use_heater = kw["heater"]
    amb_col = trace.ambient_c if (use_ambient_column and trace.has_ambient) else None
    times = trace.time_s
    temps = trace.temp_c
    n = len(trace)
    step = max(n // 10, 1)
    rows = []
    prev_t = None
    for i in range(n):
        t = float(times[i])
        dt = 0.0 if prev_t is None else t - prev_t
        prev_t = t
        amb = None
        if amb_col is not None and math.isfinite(amb_col[i]):
            amb = float(amb_col[i])
        duty = float(trace.heater[i]) if use_heater else 0.0
        verdict = est.update(float(temps[i]), dt, ambient_c=amb, duty=duty)
        est.predict(target_c)
        rows.append({
            "time_s": t,
            "temp_c": float(temps[i]),
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
        })
        if progress and n >= 20000 and (i + 1) % step == 0:
            print("replay: %d/%d rows" % (i + 1, n), file=sys.stderr)
    return ReplayResult(rows, kw, use_heater, target_c)


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
