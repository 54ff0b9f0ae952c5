"""Ambient schedules for the forecast, and a tracker that picks one from readings.

One :class:`AmbientSchedule` holds the ambient ``R(t)`` (deg C) a
:class:`tinytherm.forecast.Forecast` assumes, ``t`` in seconds from now:

* constant ``R``;
* a ramp ``R(t) = level + slope * min(t, ramp_s)`` (recent level and trend,
  frozen after ``ramp_s`` so the extrapolation cannot run away);
* piecewise-linear through caller-provided breakpoints (held flat before the
  first and after the last), read in place, never copied; their times are on
  the caller's own clock and ``now_s`` says where "now" falls on it;
* periodic ``R(t) = mean + amplitude * sin(2*pi*t/period + phase)``.

:class:`AmbientTracker` watches an ambient sensor and sets the best of these
on a forecast (see its docstring).

Inputs are read with :func:`_real`: a value the caller meant as a number as a
float (a bool counts, as ``float(True)`` says), NaN for anything else, so
that every check after it sees a float (:func:`tinytherm.num.finite` is
type-exact). Runs unchanged on CPython and MicroPython; no containers are
created after construction.
"""
import math

try:
    from micropython import const
except ImportError:  # CPython
    def const(x):
        return x

from tinytherm.num import as_float, exp, finite

AMBIENT_CONSTANT = const(0)
AMBIENT_RAMP = const(1)
AMBIENT_PIECEWISE = const(2)
AMBIENT_PERIODIC = const(3)

_TWO_PI = 2.0 * math.pi
_INF = math.inf
_NAN = math.nan


def _real(x):
    """``x`` as a float; NaN for a non-number (None, str, list...) or an int beyond float range.

    The forecast's reading of an argument: :func:`tinytherm.num.as_float`,
    except that a bool is the number it converts to (1.0 or 0.0).
    """
    if type(x) is float:
        return x  # the usual case, first
    if x is True or x is False:
        return 1.0 if x else 0.0
    v = as_float(x)
    return _NAN if v is None else v


def _sin(x):
    """``sin(x)`` (rad); NaN for a non-finite angle (math.sin raises there)."""
    if x - x != 0.0:
        return _NAN
    return math.sin(x)


def _cos(x):
    """``cos(x)`` (rad); NaN for a non-finite angle."""
    if x - x != 0.0:
        return _NAN
    return math.cos(x)


def _seek(tt, x):
    """Index i with tt[i] <= x < tt[i+1] in sorted breakpoints tt (-1 before, last after).

    Binary search: at most log2(len(tt)) steps, no containers.
    """
    if x < tt[0]:
        return -1
    lo = 0
    hi = len(tt) - 1
    if tt[hi] <= x:
        return hi
    while hi - lo > 1:  # tt[lo] <= x < tt[hi]
        mid = (lo + hi) >> 1
        if tt[mid] <= x:
            lo = mid
        else:
            hi = mid
    return lo


class AmbientSchedule:
    """The ambient a forecast assumes (deg C against seconds from now).

    Set with one of the ``set_*`` methods (each raises ValueError for an
    argument it cannot use and then leaves the schedule as it was); read with
    :meth:`at_c`. The attributes are the forecast's inputs: read them, set
    them only through the methods.
    """

    def __init__(self, ambient_c=20.0):
        self.kind = AMBIENT_CONSTANT
        self.level_c = 0.0        # constant value / ramp level / periodic mean, deg C
        self.slope_c_per_s = 0.0  # ramp slope, K/s
        self.ramp_s = 0.0         # ramp length, s
        self.amplitude_c = 0.0    # periodic amplitude, K
        self.period_s = 1.0       # periodic period, s
        self.phase_rad = 0.0      # periodic phase at now, rad
        self.times_s = None       # piecewise breakpoint times (caller's clock, s)
        self.values_c = None      # piecewise breakpoint values, deg C
        self.now_s = 0.0          # where now falls on the caller's clock, s
        self.cursor = 0           # index into the piecewise breakpoints
        self.lo_c = 0.0           # lowest and highest ambient (see range_c), deg C
        self.hi_c = 0.0
        self.pw_lo_c = 0.0        # lowest and highest piecewise value, deg C
        self.pw_hi_c = 0.0
        self.set_constant(ambient_c)

    def set_constant(self, ambient_c):
        """Constant ambient ``ambient_c`` (deg C)."""
        ambient_c = _real(ambient_c)
        if not finite(ambient_c):
            raise ValueError("ambient_c must be finite")
        self.kind = AMBIENT_CONSTANT
        self.level_c = ambient_c
        self.times_s = None
        self.values_c = None

    def set_ramp(self, level_c, slope_c_per_s, ramp_s=_INF):
        """Ambient ``level_c + slope_c_per_s * min(t, ramp_s)`` (deg C, K/s, s)."""
        level_c = _real(level_c)
        slope_c_per_s = _real(slope_c_per_s)
        ramp_s = _real(ramp_s)
        if not (finite(level_c) and finite(slope_c_per_s) and ramp_s >= 0.0):
            raise ValueError("level_c, slope_c_per_s must be finite, ramp_s >= 0")
        self.kind = AMBIENT_RAMP
        self.level_c = level_c
        self.slope_c_per_s = slope_c_per_s
        self.ramp_s = ramp_s
        self.times_s = None
        self.values_c = None

    def set_piecewise(self, times_s, values_c, now_s=0.0):
        """Piecewise-linear through ``(times_s[i], values_c[i])`` (s, deg C), read in place.

        Validation reads every breakpoint once (O(n)) and keeps the lowest
        and highest value, so no later call reads them all again.
        """
        now_s = _real(now_s)
        n = len(times_s)
        if n < 1 or len(values_c) != n or not finite(now_s):
            raise ValueError("need >= 1 breakpoint, equal lengths, finite now_s")
        lo = _INF
        hi = -_INF
        prev = -_INF
        i = 0
        while i < n:
            t = _real(times_s[i])
            v = _real(values_c[i])
            if not (finite(t) and finite(v)):
                raise ValueError("breakpoints must be finite numbers")
            if t < prev:
                raise ValueError("times_s must be non-decreasing")
            prev = t
            if v < lo:
                lo = v
            if v > hi:
                hi = v
            i += 1
        self.kind = AMBIENT_PIECEWISE
        self.times_s = times_s
        self.values_c = values_c
        self.now_s = now_s
        self.pw_lo_c = lo
        self.pw_hi_c = hi

    def set_periodic(self, mean_c, amplitude_c, period_s, phase_rad=0.0):
        """``mean_c + amplitude_c * sin(2*pi*t/period_s + phase_rad)`` (deg C, K, s > 0, rad)."""
        mean_c = _real(mean_c)
        amplitude_c = _real(amplitude_c)
        period_s = _real(period_s)
        phase_rad = _real(phase_rad)
        if not (finite(mean_c) and finite(amplitude_c) and finite(phase_rad)
                and finite(period_s) and period_s > 0.0 and finite(_TWO_PI / period_s)):
            raise ValueError("finite arguments and period_s > 0 required")
        self.kind = AMBIENT_PERIODIC
        self.level_c = mean_c
        self.amplitude_c = amplitude_c
        self.period_s = period_s
        self.phase_rad = math.fmod(phase_rad, _TWO_PI)
        self.times_s = None
        self.values_c = None

    def at_c(self, t_s):
        """Ambient in deg C at ``t_s`` seconds from now (O(log n) for breakpoints).

        NaN for a ``t_s`` that is not a number (a periodic ambient: not finite).
        """
        t_s = _real(t_s)
        kind = self.kind
        if kind == AMBIENT_CONSTANT:
            return self.level_c
        if t_s != t_s:
            return _NAN
        if kind == AMBIENT_RAMP:
            return self.level_c + self.slope_c_per_s * min(max(t_s, 0.0), self.ramp_s)
        if kind == AMBIENT_PERIODIC:
            if not finite(t_s):
                return _NAN
            return self.level_c + self.amplitude_c * _sin(self.angle_at(t_s))
        self.cursor = _seek(self.times_s, self.now_s + t_s)
        return self.piecewise_c(t_s)

    def range_c(self):
        """Lowest and highest ambient of the schedule into ``lo_c``/``hi_c`` (deg C); O(1)."""
        lo = self.level_c
        hi = self.level_c
        kind = self.kind
        if kind == AMBIENT_RAMP and self.slope_c_per_s != 0.0:
            end = self.level_c + self.slope_c_per_s * self.ramp_s
            lo = min(lo, end)
            hi = max(hi, end)
        elif kind == AMBIENT_PERIODIC:
            lo = self.level_c - abs(self.amplitude_c)
            hi = self.level_c + abs(self.amplitude_c)
        elif kind == AMBIENT_PIECEWISE:
            lo = self.pw_lo_c  # kept by set_piecewise
            hi = self.pw_hi_c
        self.lo_c = lo
        self.hi_c = hi

    def angle_at(self, t_s):
        """Periodic ambient's sine angle at ``t_s`` (rad); fmod keeps it accurate on float32."""
        p = self.period_s
        return _TWO_PI * math.fmod(t_s, p) / p + self.phase_rad

    def piecewise_c(self, t_s):
        """Piecewise ambient at ``t_s`` (deg C) from the breakpoint at ``cursor``."""
        i = self.cursor
        v = self.values_c
        if i < 0:
            return v[0]
        tt = self.times_s
        if i >= len(tt) - 1:
            return v[len(v) - 1]
        t0 = tt[i]
        return v[i] + (v[i + 1] - v[i]) * ((self.now_s + t_s - t0) / (tt[i + 1] - t0))


class AmbientTracker:
    """Level, trend and cycle of a measured ambient, in fixed state.

    Feed it the ambient sensor's readings (:meth:`update`); then
    :meth:`apply` sets a :class:`Forecast`'s ambient to the best extrapolation
    it has:

    * a periodic schedule once a full cycle has been seen (a fridge's
      compressor cycle): mean and fundamental of the last complete cycle,
      period between the last two upward triggers of a Schmitt trigger at the
      mean +- ``band_c``, phase from the time since the last trigger (the
      first cycle's amplitude is half its swing; later ones project the cycle
      on the fundamental);
    * otherwise, when a steady trend explains at least ``trend_min_share`` of
      the recent variance (a kitchen warming up), a ramp from the recent
      level and trend (exponentially weighted straight-line fit, forgetting
      time ``memory_s``), frozen after ``trend_s`` seconds;
    * otherwise a constant at the exponentially weighted mean.

    ``memory_s`` (s) forgetting time of the level/trend fit; ``band_c`` (K)
    hysteresis for detecting a crossing of the mean (above the sensor noise);
    ``trend_s`` (s) how far ahead the trend is extrapolated (0: never);
    ``trend_min_share`` (0..1) the share of variance a trend must explain;
    ``min_period_s``
    and ``max_period_s`` (s) the cycle lengths accepted. Work per update: O(1)
    (two sin/cos and one exp); no containers are created.
    """

    def __init__(self, memory_s=1800.0, band_c=0.3, trend_s=600.0, trend_min_share=0.8,
                 min_period_s=120.0, max_period_s=14400.0):
        memory_s = _real(memory_s)
        band_c = _real(band_c)
        trend_s = _real(trend_s)
        trend_min_share = _real(trend_min_share)
        min_period_s = _real(min_period_s)
        max_period_s = _real(max_period_s)
        if not (memory_s > 0.0 and band_c >= 0.0 and trend_s >= 0.0
                and 0.0 <= trend_min_share <= 1.0 and 0.0 < min_period_s < max_period_s):
            raise ValueError("memory_s > 0, band_c >= 0, trend_s >= 0, share in [0, 1], "
                             "0 < min < max period")
        self.trend_min_share = float(trend_min_share)
        self.memory_s = float(memory_s)
        self.band_c = float(band_c)
        self.trend_s = float(trend_s)
        self.min_period_s = float(min_period_s)
        self.max_period_s = float(max_period_s)
        self.reset()

    def reset(self):
        """Forget everything."""
        # weighted straight-line fit R = level - slope * age (age: s before now)
        self._s0 = 0.0
        self._s1 = 0.0
        self._s2 = 0.0
        self._sy = 0.0
        self._sya = 0.0
        self._syy = 0.0
        self._last_c = 0.0
        self._started = False
        # cycle detection
        self._high = True         # Schmitt trigger state (starts armed high)
        self._since_up_s = -1.0   # s since the last upward trigger (-1: none yet)
        self._cyc_max = 0.0       # highest and lowest reading this cycle, deg C
        self._cyc_min = 0.0
        self._cyc_int = 0.0       # integral of R over the current cycle, K s
        self._cyc_sin = 0.0       # integral of (R - mean) sin(theta), K s
        self._cyc_cos = 0.0
        self.level_c = None        # level now from the straight-line fit, deg C
        self.slope_c_per_s = None  # fitted trend, K/s
        self.mean_level_c = None   # exponentially weighted mean, deg C
        self.trend_share = 0.0     # share of the variance the trend explains, 0..1
        self.period_s = None       # last complete cycle, s
        self.mean_c = None         # mean over the last complete cycle, deg C
        self.amplitude_c = None    # fundamental amplitude of the last cycle, K
        self._offset_rad = 0.0     # phase of the fundamental at the upward crossing
        self.readings = 0

    def update(self, ambient_c, dt_s):
        """Add one ambient reading (deg C) taken ``dt_s`` seconds after the previous one.

        Returns False (and ignores it) for a reading that is not a finite
        number or a ``dt_s`` that is negative, not finite or not a number.
        Never raises (readings so extreme that the fit overflows leave it
        without a usable level; :meth:`apply` then leaves the forecast alone).
        """
        ambient_c = _real(ambient_c)
        dt_s = _real(dt_s)
        if not (finite(ambient_c) and finite(dt_s) and dt_s >= 0.0):
            return False
        if not self._started:
            self._started = True
            self._s0 = 1.0
            self._sy = ambient_c
            self._syy = ambient_c * ambient_c
            self._last_c = ambient_c
            self.level_c = ambient_c
            self.mean_level_c = ambient_c
            self.slope_c_per_s = 0.0
            self.readings = 1
            return True
        self.readings += 1
        # ageing every stored point by dt, then forgetting
        s0 = self._s0
        s1 = self._s1
        self._s2 += 2.0 * dt_s * s1 + dt_s * dt_s * s0
        self._s1 = s1 + dt_s * s0
        self._sya += dt_s * self._sy
        f = exp(-dt_s / self.memory_s)
        self._s0 = s0 * f + 1.0
        self._s1 *= f
        self._s2 *= f
        self._sy = self._sy * f + ambient_c
        self._syy = self._syy * f + ambient_c * ambient_c
        self._sya *= f
        s0 = self._s0
        mean = self._sy / s0
        self.mean_level_c = mean
        self.level_c = mean
        self.slope_c_per_s = 0.0
        self.trend_share = 0.0
        sxx = self._s2 - self._s1 * self._s1 / s0  # weighted spread of the ages
        if sxx > 1e-12 * self._s2 and sxx > 0.0:
            # minimise sum w (R - L + b a)^2 over level L and slope b
            slope = (self._s1 * self._sy / s0 - self._sya) / sxx
            self.level_c = mean + slope * self._s1 / s0
            self.slope_c_per_s = slope
            total = self._syy - self._sy * mean
            if total > 0.0:
                share = slope * slope * sxx / total
                self.trend_share = share if share < 1.0 else 1.0
        self._cycle(ambient_c, dt_s)
        self._last_c = ambient_c
        return True

    def _cycle(self, ambient_c, dt_s):
        """Schmitt trigger at mean +- band_c; per-cycle integrals between triggers."""
        ref = self.mean_c if self.mean_c is not None else self._sy / self._s0
        prev = self._last_c
        if self._since_up_s >= 0.0:
            self._since_up_s += dt_s
            mid = 0.5 * (prev + ambient_c)
            self._cyc_int += mid * dt_s
            if ambient_c > self._cyc_max:
                self._cyc_max = ambient_c
            if ambient_c < self._cyc_min:
                self._cyc_min = ambient_c
            if self.period_s is not None:
                th = _TWO_PI * (self._since_up_s - 0.5 * dt_s) / self.period_s
                self._cyc_sin += (mid - self.mean_c) * _sin(th) * dt_s
                self._cyc_cos += (mid - self.mean_c) * _cos(th) * dt_s
        if self._high:
            if ambient_c < ref - self.band_c:
                self._high = False
            return
        level = ref + self.band_c
        if ambient_c <= level:
            return
        self._high = True
        # trigger time by linear interpolation inside the last step
        back = 0.0
        if prev < level:
            back = dt_s * (ambient_c - level) / (ambient_c - prev)
        if self._since_up_s >= 0.0:
            length = self._since_up_s - back
            if self.min_period_s <= length <= self.max_period_s:
                mean = (self._cyc_int - 0.5 * (level + ambient_c) * back) / length
                if self.period_s is not None:
                    # fundamental by projection on the previous period's sin/cos
                    a_s = 2.0 * self._cyc_sin / length
                    a_c = 2.0 * self._cyc_cos / length
                    self.amplitude_c = math.sqrt(a_s * a_s + a_c * a_c)
                    self._offset_rad = math.atan2(a_c, a_s)
                else:
                    # first cycle: half the swing, sine through the trigger level
                    amp = 0.5 * (self._cyc_max - self._cyc_min)
                    self.amplitude_c = amp
                    x = (level - mean) / amp if amp > 0.0 else 0.0
                    self._offset_rad = math.asin(max(-1.0, min(1.0, x)))
                self.period_s = length
                self.mean_c = mean
        self._since_up_s = back
        self._cyc_int = 0.5 * (level + ambient_c) * back
        self._cyc_sin = 0.0
        self._cyc_cos = 0.0
        self._cyc_max = ambient_c
        self._cyc_min = ambient_c

    def cycling(self):
        """True once a period, mean and amplitude of the cycle are known."""
        return self.amplitude_c is not None and self._since_up_s >= 0.0

    def apply(self, fc):
        """Set the ambient of Forecast ``fc`` from what has been seen; returns the AMBIENT_* kind.

        Never raises: a cycle, trend or level whose numbers are not finite
        (readings so extreme that the sums overflowed) is skipped, and with
        none usable ``fc`` is left as it was.
        """
        if self.cycling():
            phase = _TWO_PI * self._since_up_s / self.period_s + self._offset_rad
            if (finite(self.mean_c) and finite(self.amplitude_c) and finite(phase)
                    and finite(_TWO_PI / self.period_s)):
                fc.set_ambient_periodic(self.mean_c, self.amplitude_c, self.period_s, phase)
                return AMBIENT_PERIODIC
        if self.level_c is None:
            return fc.ambient.kind
        if (self.trend_s > 0.0 and self.trend_share >= self.trend_min_share
                and finite(self.level_c) and finite(self.slope_c_per_s)):
            fc.set_ambient_ramp(self.level_c, self.slope_c_per_s, self.trend_s)
            return AMBIENT_RAMP
        if finite(self.mean_level_c):
            fc.set_ambient_constant(self.mean_level_c)
            return AMBIENT_CONSTANT
        return fc.ambient.kind
