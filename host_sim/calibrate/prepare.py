"""Preparation: a trace on a uniform grid, smoothed and differentiated; its approach and targets.

See :mod:`host_sim.calibrate.pipeline` for the method.
"""
import math

import numpy as np
from scipy.signal import lfilter, savgol_coeffs, savgol_filter

TARGET_FRACTIONS = (0.30, 0.55, 0.80)
MAX_GRID_POINTS = 100000    # one trace's grid (host_sim.calibrate.checks refuses more up front)


# ------------------------------------------------------------- preprocessing
class Prepared:
    """One trace on a uniform grid: ``t`` (s), ``s``, ``ds``, ``d2s`` (reading and
    derivatives, deg C, K/s, K/s^2), ``u`` (duty 0..1), ``amb`` (deg C or None),
    ``fill`` (kg or None), ``dt`` (grid step, s), ``trace`` (the source)."""

    def __init__(self, **kw):
        self.__dict__.update(kw)


def prepare(trace, smooth_s=60.0, fill_kg=None, ambient_c=None):
    """Grid, smooth and differentiate a :class:`host_sim.replay.trace_io.Trace` (see module docstring).

    ``smooth_s``: Savitzky-Golay window in seconds (at least 7 grid points).
    ``ambient_c``: constant ambient (deg C) used when the trace has no
    ambient column. Returns :class:`Prepared`.
    """
    t_raw = np.asarray(trace.time_s, dtype=float)
    y_raw = np.asarray(trace.temp_c, dtype=float)
    keep = np.concatenate([[True], np.diff(t_raw) > 0.0])
    t_raw, y_raw = t_raw[keep], y_raw[keep]
    if len(t_raw) < 8:
        raise ValueError("%s: too few rows to calibrate on (%d)" % (trace.source, len(t_raw)))
    dt = max(float(np.median(np.diff(t_raw))), 0.5)
    if not (math.isfinite(smooth_s) and smooth_s > 0.0):
        raise ValueError("smooth_s must be a positive number of seconds, got %r" % (smooth_s,))
    points = (t_raw[-1] - t_raw[0]) / dt + 1.0
    if not points <= MAX_GRID_POINTS:       # refused before any allocation
        raise ValueError("%s: %.3g s at a step of %.3g s is %.3g grid points (at most %d): "
                         "split the recording into uses"
                         % (trace.source, t_raw[-1] - t_raw[0], dt, points, MAX_GRID_POINTS))
    t = np.arange(t_raw[0], t_raw[-1] + 1e-9, dt)
    y = np.interp(t, t_raw, y_raw)
    win = int(round(smooth_s / dt)) | 1
    win = max(win, 7)
    if win > len(t):
        win = len(t) if len(t) % 2 else len(t) - 1
    s = savgol_filter(y, win, 3, mode="interp")
    ds = savgol_filter(y, win, 3, deriv=1, delta=dt, mode="interp")
    d2s = savgol_filter(y, win, 3, deriv=2, delta=dt, mode="interp")
    u = np.zeros(len(t))
    if trace.heater is not None:
        h = np.asarray(trace.heater, dtype=float)[keep]
        # a row's duty applies since the previous row: integrate that step function
        # (exact, piecewise linear) and average it over each grid interval
        energy = np.concatenate([[0.0], np.cumsum(h[1:] * np.diff(t_raw))])
        e_grid = np.interp(t, t_raw, energy)
        u = np.empty(len(t))
        u[1:] = np.diff(e_grid) / dt
        u[0] = h[0]
    amb = None
    if trace.ambient_c is not None and np.any(np.isfinite(trace.ambient_c)):
        a_raw = np.asarray(trace.ambient_c, dtype=float)[keep]
        ok = np.isfinite(a_raw)
        amb = np.interp(t, t_raw[ok], a_raw[ok])
    elif ambient_c is not None:
        amb = np.full(len(t), float(ambient_c))
    half = win // 2
    return Prepared(t=t, s=s, ds=ds, d2s=d2s, u=u, amb=amb, fill=fill_kg, dt=dt, trace=trace,
                    edge=half, win=win, sg=savgol_coeffs(win, 3), raw_t=t_raw, raw_y=y_raw)


def heater_state(u, dt, lag_s):
    """Duty through a first-order lag (s), zero-order hold, element cold at the start."""
    b = 1.0 - math.exp(-dt / max(lag_s, 1e-6))
    return lfilter([b], [1.0, -(1.0 - b)], u)


def signed_power(d, n):
    return np.sign(d) * np.abs(d) ** n


# --------------------------------------------------------- approach/targets
def approach(prep):
    """``(i0, i1, direction)``: grid indices of the approach and +1 heating / -1 cooling.

    The approach runs from the global maximum or minimum of the smoothed
    reading, whichever is followed by the larger change, to the end of the
    trace (a probe warming up after the pour, or a heat-up before a cool-down,
    is not the approach).
    """
    i1 = len(prep.s) - 1
    i_max = int(np.argmax(prep.s))
    i_min = int(np.argmin(prep.s))
    if abs(prep.s[i1] - prep.s[i_max]) >= abs(prep.s[i1] - prep.s[i_min]):
        return i_max, i1, -1
    return i_min, i1, 1


def targets_for(prep, fractions=TARGET_FRACTIONS):
    """Target temperatures (deg C) along the approach: ``start + f (end - start)``."""
    i0, i1, _ = approach(prep)
    a, b = float(prep.s[i0]), float(prep.s[i1])
    return [a + f * (b - a) for f in fractions]


def crossing_s(prep, target_c):
    """First time (s) the smoothed reading passes ``target_c`` within the approach, or None."""
    i0, i1, direction = approach(prep)
    seg = (prep.s[i0:i1 + 1] - target_c) * direction
    hit = np.nonzero(seg >= 0.0)[0]
    if len(hit) == 0 or hit[0] == 0:
        return None
    j = i0 + int(hit[0])
    g0, g1 = prep.s[j - 1] - target_c, prep.s[j] - target_c
    return float(prep.t[j - 1] + prep.dt * (-g0) / (g1 - g0)) if g1 != g0 else float(prep.t[j])
