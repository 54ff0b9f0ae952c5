"""Batch baselines the on-device estimator is compared with.

Each baseline is fed the same rows as the core, one at a time, through
``update(time_s, temp_c)`` and answers ``predict(target_c)`` with an ETA in
seconds from the latest reading, or None:

- :class:`SlopeBaseline`: naive slope extrapolation, an ordinary least-squares
  line through the readings of the last ``window_s`` (120 s), extrapolated to
  the target.
- :class:`ExpRefitBaseline` with ``window_s=None``: scipy ``least_squares``
  fit of ``T(t) = E + A exp(-k (t - t_a))`` to *all* readings so far (robust
  ``soft_l1`` loss with a 0.5 C scale so a spike does not wreck it), solved
  for the target crossing. The fit starts at the last peak (cooling) or
  trough (heating) of the data, so a sensor warming up after a pour does not
  spoil it.
- :class:`ExpRefitBaseline` with ``window_s=600``: the same on the last 600 s.
- :class:`ExpRefitBaseline` with ``window_s=300, window_frac=0.5``
  (``exp_recent``, issue 9): the same with a FREE equilibrium over the window
  ``max(300 s, half the elapsed time)``.

To keep the benchmark fast the exponential fits are redone only every
``refit_every`` accepted readings (default 5) and warm-started from the last
fit; with ``refit_frac`` > 0 also not before ``refit_frac`` x the elapsed
time has passed since the last fit, and with ``max_points`` the fit uses at
most that many readings (an even stride over the window, always keeping the
latest). In between, the last fitted curve's crossing time is reused (the
ETA still counts down with the clock). None of the baselines sees the heater
duty or the ambient column: they are the batch fits a developer would try
first.

All baselines answer 0.0 ("arrived") when their readings say so
(:class:`ArrivalTracker`: the median of the last 5 readings is at or past the
target in the current direction of travel, and this leg of travel began on
the near side), and None when their curve does not reach the target ahead
(behind the direction of travel, beyond the fitted equilibrium, or a curve
already past the target while the readings are not).
"""
import math

import numpy as np

from tinytherm import model


def _crossing_from_curve(e_c, a_c, k, t_anchor, target_c):
    """Absolute time at which E + A exp(-k (t - t_anchor)) equals target, or None.

    The core's closed form (:func:`tinytherm.model.time_to_target_s`) from
    the curve's value E + A at ``t_anchor``; None ahead of no crossing
    (target behind the anchor, at or beyond E, or no decay).
    """
    if not k > 0.0 or a_c == 0.0:
        return None
    wait = model.time_to_target_s(e_c + a_c, target_c, k, e_c)
    return None if wait is None else t_anchor + wait


class ArrivalTracker:
    """Direction of travel and arrival from the readings alone (no target side given).

    The median of the last ``window`` readings is followed; a retreat of more
    than ``band_c`` (deg C) from its extreme starts a new leg of travel the
    other way, beginning at that extreme. :meth:`arrived` is True when the
    median is at or past the target in the leg's direction and the leg began
    on the near side of the target.
    """

    def __init__(self, window=5, band_c=0.5):
        self.window = int(window)
        self.band_c = float(band_c)
        self.recent = []
        self.direction = 0
        self.start = None
        self.hi = self.lo = None
        self.level = None

    def update(self, temp_c):
        """Add a reading (deg C)."""
        self.recent.append(float(temp_c))
        if len(self.recent) > self.window:
            self.recent.pop(0)
        m = float(np.median(self.recent))
        self.level = m
        if self.start is None:
            self.start = self.hi = self.lo = m
            return
        if self.direction >= 0:
            self.hi = max(self.hi, m)
            if m < self.hi - self.band_c:
                self.direction, self.start, self.lo = -1, self.hi, m
        if self.direction <= 0:
            self.lo = min(self.lo, m)
            if m > self.lo + self.band_c:
                self.direction, self.start, self.hi = 1, self.lo, m

    def arrived(self, target_c):
        """True when the readings have reached ``target_c`` (deg C) on this leg."""
        if self.direction == 0:
            return False
        return ((self.start - target_c) * self.direction < 0.0
                and (self.level - target_c) * self.direction >= 0.0)


class SlopeBaseline:
    """Linear fit of the last ``window_s`` seconds, extrapolated to the target."""

    name = "slope"

    def __init__(self, window_s=120.0, min_points=3):
        self.window_s = float(window_s)
        self.min_points = int(min_points)
        self.t = []
        self.y = []
        self.tracker = ArrivalTracker()

    def update(self, time_s, temp_c):
        """Add a reading (seconds, deg C)."""
        self.t.append(float(time_s))
        self.y.append(float(temp_c))
        self.tracker.update(temp_c)

    def predict(self, target_c):
        """Seconds from the latest reading to the target, or None."""
        if self.tracker.arrived(target_c):
            return 0.0
        t = np.asarray(self.t)
        if len(t) < self.min_points:
            return None
        sel = t >= t[-1] - self.window_s
        if sel.sum() < self.min_points:
            sel = np.zeros(len(t), dtype=bool)
            sel[-self.min_points:] = True
        tt = t[sel] - t[-1]
        yy = np.asarray(self.y)[sel]
        if np.ptp(tt) <= 0.0:
            return None
        slope, level = np.polyfit(tt, yy, 1)
        if slope == 0.0:
            return None
        eta = (target_c - level) / slope
        if eta < 0.0:
            # the line heads away from the target (or is past it): no answer
            return None
        return float(eta)


class ExpRefitBaseline:
    """Robust batch exponential refit on all data (``window_s=None``) or a window."""

    def __init__(self, window_s=None, refit_every=5, min_points=8, min_span_s=60.0,
                 window_frac=0.0, refit_frac=0.0, max_points=None, name=None, refit_s=None):
        self.window_s = window_s
        self.window_frac = float(window_frac)
        self.refit_every = int(refit_every)
        self.refit_s = None if refit_s is None else float(refit_s)
        self.refit_frac = float(refit_frac)
        self.tracker = ArrivalTracker()
        self.max_points = None if max_points is None else int(max_points)
        self.min_points = int(min_points)
        self.min_span_s = float(min_span_s)
        if name is None:
            name = "exp_all" if window_s is None else "exp_window%d" % int(window_s)
        self.name = name
        self.last_fit_t = None
        self.t = []
        self.y = []
        self.params = None      # (E, A, k, t_anchor)
        self.since_fit = 0
        self.fits = 0
        self.target_c = None

    def update(self, time_s, temp_c):
        """Add a reading (seconds, deg C); refits every ``refit_every`` readings."""
        self.t.append(float(time_s))
        self.y.append(float(temp_c))
        self.tracker.update(temp_c)
        self.since_fit += 1
        if self.params is None or self.last_fit_t is None:
            self._fit()
            return
        since_s = self.t[-1] - self.last_fit_t
        due = self.since_fit >= self.refit_every or (
            self.refit_s is not None and since_s >= self.refit_s)
        if due and since_s >= self.refit_frac * (self.t[-1] - self.t[0]):
            self._fit()

    def _fit(self):
        t = np.asarray(self.t)
        y = np.asarray(self.y)
        if self.window_s is not None:
            window = max(self.window_s, self.window_frac * (t[-1] - t[0]))
            sel = t >= t[-1] - window
            t, y = t[sel], y[sel]
        if self.target_c is not None and len(y) >= 5:
            # A developer would fit only the approach: drop readings before the
            # last peak (cooling) or trough (heating) of a 5-reading running
            # median, e.g. the sensor warming up after a pour or a top-up.
            med = np.median(np.lib.stride_tricks.sliding_window_view(y, 5), axis=1)
            turn = int(np.argmax(med) if y[-1] > self.target_c else np.argmin(med))
            t, y = t[turn:], y[turn:]
        if len(t) < self.min_points or t[-1] - t[0] < self.min_span_s:
            return
        if self.max_points is not None and len(t) > self.max_points:
            idx = np.unique(np.round(np.linspace(0, len(t) - 1, self.max_points)).astype(int))
            t, y = t[idx], y[idx]
        from scipy.optimize import least_squares   # here: importing the CLI needs no scipy
        self.since_fit = 0
        self.last_fit_t = float(t[-1])
        # Parameterised by the level y1 and slope s at the last reading and k:
        #   T(t) = y1 + s * (1 - exp(-k (t - t1))) / k
        # which is E + A exp(-k (t - t1)) with E = y1 + s/k, A = -s/k, and stays
        # well conditioned as k -> 0 (a straight line), unlike (E, A, k).
        t1 = t[-1]
        x = t - t1
        span = -x[0]
        guesses = []
        if self.params is not None:
            e, a, k, anchor = self.params
            y1 = model.temperature_at(t1 - anchor, e + a, k, e)
            guesses.append((y1, -k * (y1 - e), k))
        n3 = max(len(x) // 3, 2)
        slope = np.polyfit(x[-n3:], y[-n3:], 1)[0]
        guesses.append((y[-1], slope, 1.0 / max(span, 300.0)))
        best = None
        lo_k, hi_k = math.log(1e-6), math.log(0.05)  # time constants 20 s .. 11 days

        def resid(p):
            k = math.exp(p[2])
            return p[0] - p[1] * np.expm1(np.minimum(-k * x, 600.0)) / k - y
        for y1, sl, k in guesses:
            p0 = np.array([y1, sl, min(max(math.log(max(k, 1e-7)), lo_k), hi_k)])
            try:
                res = least_squares(resid, p0, loss="soft_l1", f_scale=0.5,
                                    bounds=([-100.0, -10.0, lo_k], [300.0, 10.0, hi_k]),
                                    max_nfev=60)
            except ValueError:
                continue
            if best is None or res.cost < best.cost:
                best = res
            if res.success and res.cost < 0.5 * len(x) * 0.25:
                break  # warm start already fits to about the noise: skip the fresh guess
        if best is not None and best.status > 0:
            y1, sl, lk = best.x
            k = math.exp(lk)
            self.params = (float(y1 + sl / k), float(-sl / k), float(k), float(t1))
            self.fits += 1

    def predict(self, target_c):
        """Seconds from the latest reading to the target, or None."""
        self.target_c = target_c  # tells the next refit which way the approach goes
        if self.tracker.arrived(target_c):
            return 0.0
        if self.params is None:
            return None
        e, a, k, anchor = self.params
        now = self.t[-1]
        fitted_now = model.temperature_at(now - anchor, e + a, k, e)
        if (target_c - fitted_now) * (e - fitted_now) <= 0.0:
            return None         # the target lies behind the direction of travel
        t_cross = _crossing_from_curve(e, a, k, anchor, target_c)
        if t_cross is None or t_cross <= now:
            return None
        return t_cross - now


def make_baselines():
    """The three baselines of the scenario benchmark, fresh."""
    return [SlopeBaseline(), ExpRefitBaseline(window_s=None), ExpRefitBaseline(window_s=600.0)]


def make_family_baselines():
    """The three baselines of issue 9, fresh: slope, exp_all, exp_recent.

    The exponential fits need 5 readings over 60 s; they are redone every 5
    readings or 60 s, whichever comes first, but not before 2 % of the
    elapsed time has passed since the last fit, on at most 400 readings of
    their window (so a 5000-row trace costs about 200 fits, and readings a
    minute or more apart are each refitted).
    """
    common = dict(refit_frac=0.02, refit_s=60.0, max_points=400, min_points=5)
    return [SlopeBaseline(),
            ExpRefitBaseline(window_s=None, **common),
            ExpRefitBaseline(window_s=300.0, window_frac=0.5, name="exp_recent", **common)]
