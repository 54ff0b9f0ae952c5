"""Temperature forecasts under a varying ambient and a heater plan.

Model (the same lumped model as :mod:`tinytherm.model`, with time-varying
inputs)::

    dT/dt = -k * (T - R(t)) + g * u(t)

``T`` liquid temperature (deg C), ``R(t)`` ambient (deg C), ``k`` rate
constant (1/s), ``g`` heater gain (K/s at full duty; negative for a chiller),
``u(t)`` duty in [0, 1].

Time ``t`` is in seconds from *now* (the moment the forecast starts, with the
liquid at ``start_c``). Schedules given as sequences are read in place, never
copied; their times are on the caller's own clock and ``now_s`` says where
"now" falls on it.

Ambient schedules (one at a time):

* constant ``R``;
* a ramp ``R(t) = level + slope * min(t, ramp_s)`` (recent level and trend,
  frozen after ``ramp_s`` so the extrapolation cannot run away);
* piecewise-linear through caller-provided breakpoints (held flat before the
  first and after the last);
* periodic ``R(t) = mean + amplitude * sin(2*pi*t/period + phase)``.

Heater plans: a constant duty; a piecewise-constant duty schedule; full power
until a hold temperature, then held there; an on/off thermostat with
hysteresis.

How the answers are computed (details in DEVELOPERS.md): time is cut into
pieces at every breakpoint. On each piece the duty is constant and the ambient
is linear or sinusoidal, so the ODE has an exact closed-form solution (no step
size, no stability limit). A crossing of a level is bracketed on each piece
(the linear-ambient solution is convex or concave, so checking the ends and the
single possible turning point is exact; sinusoidal pieces are cut into
sub-steps of ``period / PERIODIC_SUBSTEPS`` after a rigorous bound has ruled out
the stretches where no crossing can be) and then solved by Newton's method with
a bisection fallback.

Work per call is capped: at most ``MAX_PIECES`` units of work per call, and
at most ``MAX_ROOT_ITERATIONS`` iterations per root solve (two solves per
piece at most, three for the thermostat). A unit is a piece, a sinusoid
sub-step, a doubling of an endless ramp's search span, or one look at a
breakpoint beyond the first per piece (many breakpoints at the same time, or a
start far into a schedule, are skipped by galloping and bisection, every look
counted). A call that hits the cap says so (``reason == REASON_WORK_CAP``)
instead of running on, and ``work`` is the count. No lists, dicts or tuples
are created per call; the state lives in fixed instance attributes.
"""
import math

try:
    from micropython import const
except ImportError:  # CPython
    def const(x):
        return x

from tinytherm import status
from tinytherm.model import _exp, _phi1  # the closed forms' shared helpers

# --- work caps (per call) ---
MAX_PIECES = const(600)          # pieces plus sinusoid sub-steps per call
MAX_ROOT_ITERATIONS = const(64)  # Newton/bisection iterations per root solve
PERIODIC_SUBSTEPS = const(16)    # sub-steps per period when a crossing may be near

# --- ambient schedule kinds ---
AMBIENT_CONSTANT = const(0)
AMBIENT_RAMP = const(1)
AMBIENT_PIECEWISE = const(2)
AMBIENT_PERIODIC = const(3)

# --- heater plan kinds ---
PLAN_DUTY = const(0)         # constant duty
PLAN_SCHEDULE = const(1)     # piecewise-constant duty schedule
PLAN_BOOST_HOLD = const(2)   # full power until hold_c, then held at hold_c
PLAN_THERMOSTAT = const(3)   # on/off with hysteresis

# --- reason beside a status code (why there is no answer, or a caveat) ---
REASON_NONE = const(0)            # an answer was found
REASON_NEVER = const(1)           # proved never reached under this ambient and plan
REASON_HORIZON = const(2)         # not reached within horizon_s or float time (may be later)
REASON_WORK_CAP = const(3)        # stopped at the work cap; searched_s says how far
REASON_BAD_INPUT = const(4)       # an argument is not usable (NaN, negative k, overflow...)
REASON_HELD = const(5)            # the plan holds the liquid short of the target
REASON_TOO_SLOW = const(6)        # full power cannot get there by the deadline
REASON_NO_DRIVE_NEEDED = const(7)  # at the deadline it is at/past target with the heater off
REASON_LATE = const(8)            # reaches the target, but after the deadline
REASON_BEYOND_EQUILIBRIUM = const(9)  # target at/past where full power levels off

REASON_NAMES = (
    "none",
    "never",
    "horizon",
    "work_cap",
    "bad_input",
    "held",
    "too_slow",
    "no_drive_needed",
    "late",
    "beyond_equilibrium",
)

_TWO_PI = 2.0 * math.pi
_INF = math.inf

# Kinds of piece (internal).
_PIECE_LINEAR = const(0)
_PIECE_SINE = const(1)


def _machine_epsilon():
    eps = 1.0
    while 1.0 + eps * 0.5 != 1.0:
        eps *= 0.5
    return eps


_EPS = _machine_epsilon()  # 2.2e-16 with doubles, 1.2e-7 on float32 ports


def _smallest_float():
    x = 1.0
    while x * 0.5 != 0.0:
        x *= 0.5
    return x


_TINY = _smallest_float()  # 5e-324 with doubles (denormal), about 1e-45 on float32


def reason_name(code):
    """Lower-case name of a reason code; ``"unknown"`` for anything else."""
    if 0 <= code < len(REASON_NAMES):
        return REASON_NAMES[code]
    return "unknown"


def _phi2(x):
    """``(x - 1 + exp(-x)) / x**2`` without cancellation near 0 (dimensionless)."""
    if -0.5 < x < 0.5:
        # sum (-x)**n / (n+2)!, n = 0..15, by Horner's rule.
        r = 1.0
        n = 15
        while n >= 1:
            r = 1.0 - x * r / (n + 2)
            n -= 1
        return 0.5 * r
    return (x - 1.0 + _exp(-x)) / (x * x)


def _log_ratio(z):
    """``-ln(1 - z) / z`` for ``z < 1`` without cancellation near 0 (dimensionless)."""
    if -0.25 < z < 0.25:
        # sum z**n / (n+1), n = 0..30; error < 0.25**31 / 32.
        r = 0.0
        n = 30
        while n >= 0:
            r = 1.0 / (n + 1) + z * r
            n -= 1
        return r
    try:
        return -math.log(1.0 - z) / z
    except (ValueError, OverflowError):
        return _INF


def _finite(x):
    return x == x and x != _INF and x != -_INF


def _real(x):
    """``x`` as a float; NaN for a non-number (None, str, list...) or an int beyond float range."""
    if isinstance(x, float):
        return x
    if isinstance(x, (str, bytes, bytearray)):
        return math.nan
    try:
        return float(x)
    except (TypeError, ValueError, OverflowError):
        return math.nan


def _sin(x):
    """``sin(x)`` (rad); NaN for a non-finite angle (math.sin raises there)."""
    if x - x != 0.0:
        return math.nan
    return math.sin(x)


def _cos(x):
    """``cos(x)`` (rad); NaN for a non-finite angle."""
    if x - x != 0.0:
        return math.nan
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


class Forecast:
    """Forecasts of the liquid temperature under an ambient schedule and a heater plan.

    ``rate_per_s`` is ``k`` (1/s, >= 0), ``gain_k_per_s`` is ``g`` (K/s at full
    duty; negative for a chiller), ``ambient_c`` the initial constant ambient
    (deg C). Change them with :meth:`set_model` and the ``set_ambient_*`` /
    ``set_plan_*`` methods; ask with :meth:`temperature_at_c` and
    :meth:`time_to_target_s`.

    After :meth:`time_to_target_s`: ``status`` (a :mod:`tinytherm.status`
    code), ``reason`` (a ``REASON_*`` code), ``eta_s`` (seconds from now or
    None), ``searched_s`` (how far the search got, s) and ``work`` (units of
    work used, <= ``MAX_PIECES``; see the module doc).
    """

    def __init__(self, rate_per_s=0.0, gain_k_per_s=0.0, ambient_c=20.0):
        self._k = 0.0
        self._g = 0.0
        self.set_model(rate_per_s, gain_k_per_s)
        # ambient schedule
        self._amb_kind = AMBIENT_CONSTANT
        self._amb_c = 0.0        # constant value / ramp level / periodic mean, deg C
        self._amb_slope = 0.0    # ramp slope, K/s
        self._amb_ramp_s = 0.0   # ramp length, s
        self._amb_amp = 0.0      # periodic amplitude, K
        self._amb_period = 1.0   # periodic period, s
        self._amb_phase = 0.0    # periodic phase at now, rad
        self._amb_times = None   # piecewise breakpoint times (caller's clock, s)
        self._amb_values = None  # piecewise breakpoint values, deg C
        self._amb_now = 0.0      # where now falls on the caller's clock, s
        self._amb_i = 0          # cursor into the piecewise breakpoints
        self._amb_lo = 0.0       # ambient range scratch, deg C
        self._amb_hi = 0.0
        self._pw_lo = 0.0        # lowest and highest piecewise value, deg C
        self._pw_hi = 0.0
        self.set_ambient_constant(ambient_c)
        # heater plan
        self._plan = PLAN_DUTY
        self._duty = 0.0          # constant duty
        self._plan_times = None   # schedule times (caller's clock, s)
        self._plan_duties = None  # schedule duties, 0..1
        self._plan_now = 0.0
        self._plan_i = 0
        self._hold_c = 0.0
        self._on_below_c = 0.0
        self._off_above_c = 0.0
        self._start_on = True
        self._mode = 0            # thermostat/boost mode: 1 on, 0 off, 2 holding
        # current piece (see _setup_piece)
        self._pkind = _PIECE_LINEAR
        self._pt = 0.0    # piece start time, s from now
        self._pT = 0.0    # temperature at piece start, deg C
        self._pq = 0.0    # heater drive g*u, K/s
        self._pr = 0.0    # ambient at piece start (linear) or mean (sine), deg C
        self._pb = 0.0    # ambient slope (linear), K/s
        self._pw = 0.0    # angular frequency (sine), rad/s
        self._pa = 0.0    # ambient angle at piece start (sine), rad
        self._pAr = 0.0   # steady-state response amplitude (sine), K
        self._ppsi = 0.0  # steady-state lag angle (sine), rad
        self._work = 0
        self._f = 0.0         # root solver scratch: function value
        self._df = 0.0        # root solver scratch: derivative
        self._reached_s = 0.0  # how far a stopped piece search got, s into the piece
        self._stop = REASON_NONE  # why a piece search stopped early (WORK_CAP or HORIZON)
        self._state_T = 0.0   # temperature at the end of the last run, deg C
        # answers
        self.status = status.GATHERING
        self.reason = REASON_NONE
        self.eta_s = None
        self.searched_s = 0.0
        self.work = 0

    # ------------------------------------------------------------------ setup
    def set_model(self, rate_per_s, gain_k_per_s=0.0):
        """Set ``k`` (1/s, finite, >= 0) and ``g`` (K/s at full duty). Raises ValueError."""
        rate_per_s = _real(rate_per_s)
        gain_k_per_s = _real(gain_k_per_s)
        if not (_finite(rate_per_s) and rate_per_s >= 0.0 and _finite(gain_k_per_s)):
            raise ValueError("rate_per_s must be finite and >= 0, gain_k_per_s finite")
        self._k = rate_per_s
        self._g = gain_k_per_s

    def set_ambient_constant(self, ambient_c):
        """Constant ambient ``ambient_c`` (deg C)."""
        ambient_c = _real(ambient_c)
        if not _finite(ambient_c):
            raise ValueError("ambient_c must be finite")
        self._amb_kind = AMBIENT_CONSTANT
        self._amb_c = ambient_c
        self._amb_times = None
        self._amb_values = None

    def set_ambient_ramp(self, level_c, slope_c_per_s, ramp_s=_INF):
        """Ambient ``level_c + slope_c_per_s * min(t, ramp_s)`` (deg C, K/s, s).

        The usual extrapolation of a measured ambient: its recent level and
        trend, frozen after ``ramp_s`` seconds.
        """
        level_c = _real(level_c)
        slope_c_per_s = _real(slope_c_per_s)
        ramp_s = _real(ramp_s)
        if not (_finite(level_c) and _finite(slope_c_per_s) and ramp_s >= 0.0):
            raise ValueError("level_c, slope_c_per_s must be finite, ramp_s >= 0")
        self._amb_kind = AMBIENT_RAMP
        self._amb_c = level_c
        self._amb_slope = slope_c_per_s
        self._amb_ramp_s = ramp_s
        self._amb_times = None
        self._amb_values = None

    def set_ambient_piecewise(self, times_s, values_c, now_s=0.0):
        """Piecewise-linear ambient through ``(times_s[i], values_c[i])`` (s, deg C).

        ``times_s`` must be non-decreasing (equal times make a step); both are
        read in place, not copied, so do not change them while forecasting.
        ``now_s`` is where now falls on the same clock. Held at the first value
        before the first time and at the last value after the last time.
        Validation reads every breakpoint once (O(n)) and keeps the lowest and
        highest value, so no later call reads them all again.
        """
        now_s = _real(now_s)
        n = len(times_s)
        if n < 1 or len(values_c) != n or not _finite(now_s):
            raise ValueError("need >= 1 breakpoint, equal lengths, finite now_s")
        lo = _INF
        hi = -_INF
        prev = -_INF
        i = 0
        while i < n:
            t = _real(times_s[i])
            v = _real(values_c[i])
            if not (_finite(t) and _finite(v)):
                raise ValueError("breakpoints must be finite numbers")
            if t < prev:
                raise ValueError("times_s must be non-decreasing")
            prev = t
            if v < lo:
                lo = v
            if v > hi:
                hi = v
            i += 1
        self._amb_kind = AMBIENT_PIECEWISE
        self._amb_times = times_s
        self._amb_values = values_c
        self._amb_now = now_s
        self._pw_lo = lo
        self._pw_hi = hi

    def set_ambient_periodic(self, mean_c, amplitude_c, period_s, phase_rad=0.0):
        """Ambient ``mean_c + amplitude_c * sin(2*pi*t/period_s + phase_rad)``.

        deg C, K, s (> 0), rad; ``phase_rad`` is the angle at now (t = 0).
        ``2*pi/period_s`` must be finite (a period above about 3.5e-308 s).
        """
        mean_c = _real(mean_c)
        amplitude_c = _real(amplitude_c)
        period_s = _real(period_s)
        phase_rad = _real(phase_rad)
        if not (_finite(mean_c) and _finite(amplitude_c) and _finite(phase_rad)
                and _finite(period_s) and period_s > 0.0 and _finite(_TWO_PI / period_s)):
            raise ValueError("finite arguments and period_s > 0 required")
        self._amb_kind = AMBIENT_PERIODIC
        self._amb_c = mean_c
        self._amb_amp = amplitude_c
        self._amb_period = period_s
        self._amb_phase = math.fmod(phase_rad, _TWO_PI)
        self._amb_times = None
        self._amb_values = None

    def set_plan_duty(self, duty):
        """Constant heater duty in [0, 1] (0 = heater off)."""
        duty = _real(duty)
        if not (duty == duty and 0.0 <= duty <= 1.0):
            raise ValueError("duty must be in [0, 1]")
        self._plan = PLAN_DUTY
        self._duty = duty
        self._plan_times = None
        self._plan_duties = None

    def set_plan_schedule(self, times_s, duties, now_s=0.0):
        """Piecewise-constant duty: ``duties[i]`` from ``times_s[i]`` to ``times_s[i+1]``.

        Times in seconds on the caller's clock (non-decreasing), duties in
        [0, 1]; the duty is 0 before ``times_s[0]`` and the last duty holds
        after the last time. Read in place, not copied. ``now_s`` is where now
        falls on that clock.
        """
        now_s = _real(now_s)
        n = len(times_s)
        if n < 1 or len(duties) != n or not _finite(now_s):
            raise ValueError("need >= 1 step, equal lengths, finite now_s")
        prev = -_INF
        i = 0
        while i < n:
            t = _real(times_s[i])
            d = _real(duties[i])
            if not (_finite(t) and d == d and 0.0 <= d <= 1.0):
                raise ValueError("finite times and duties in [0, 1] required")
            if t < prev:
                raise ValueError("times_s must be non-decreasing")
            prev = t
            i += 1
        self._plan = PLAN_SCHEDULE
        self._plan_times = times_s
        self._plan_duties = duties
        self._plan_now = now_s

    def set_plan_boost_hold(self, hold_c):
        """Full power until ``hold_c`` (deg C), then held there.

        Starting above ``hold_c`` the heater stays off until the liquid has
        cooled to it. The hold phase assumes the heater can hold, i.e. that
        ``0 <= k*(hold_c - R)/g <= 1`` at every ambient; check with
        :meth:`hold_is_sustainable`.
        """
        hold_c = _real(hold_c)
        if not _finite(hold_c):
            raise ValueError("hold_c must be finite")
        self._plan = PLAN_BOOST_HOLD
        self._hold_c = hold_c
        self._plan_times = None
        self._plan_duties = None

    def set_plan_thermostat(self, on_below_c, off_above_c, start_on=True):
        """On/off thermostat: full power until ``off_above_c``, off until ``on_below_c``.

        deg C, ``on_below_c < off_above_c`` (the hysteresis band). Starting
        inside the band the heater is on when ``start_on`` is true. Meant for a
        heater (``g > 0``); switching is ideal (no sensor lag).
        """
        on_below_c = _real(on_below_c)
        off_above_c = _real(off_above_c)
        if not (_finite(on_below_c) and _finite(off_above_c) and on_below_c < off_above_c):
            raise ValueError("need finite on_below_c < off_above_c")
        self._plan = PLAN_THERMOSTAT
        self._on_below_c = on_below_c
        self._off_above_c = off_above_c
        self._start_on = bool(start_on)
        self._plan_times = None
        self._plan_duties = None

    # ---------------------------------------------------------------- queries
    def ambient_at_c(self, t_s):
        """Ambient in deg C at ``t_s`` seconds from now (O(log n) for breakpoints).

        NaN for a ``t_s`` that is not a number (a periodic ambient: not finite).
        """
        t_s = _real(t_s)
        kind = self._amb_kind
        if kind == AMBIENT_CONSTANT:
            return self._amb_c
        if t_s != t_s:
            return math.nan
        if kind == AMBIENT_RAMP:
            return self._amb_c + self._amb_slope * min(max(t_s, 0.0), self._amb_ramp_s)
        if kind == AMBIENT_PERIODIC:
            if not _finite(t_s):
                return math.nan
            return self._amb_c + self._amb_amp * _sin(self._angle_at(t_s))
        self._amb_seek(t_s)
        return self._pw_value(t_s)

    def _ambient_range(self):
        """Lowest and highest ambient of the schedule into _amb_lo/_amb_hi (deg C)."""
        lo = self._amb_c
        hi = self._amb_c
        kind = self._amb_kind
        if kind == AMBIENT_RAMP and self._amb_slope != 0.0:
            end = self._amb_c + self._amb_slope * self._amb_ramp_s
            lo = min(lo, end)
            hi = max(hi, end)
        elif kind == AMBIENT_PERIODIC:
            lo = self._amb_c - abs(self._amb_amp)
            hi = self._amb_c + abs(self._amb_amp)
        elif kind == AMBIENT_PIECEWISE:
            lo = self._pw_lo  # kept by set_ambient_piecewise: O(1) here
            hi = self._pw_hi
        self._amb_lo = lo
        self._amb_hi = hi

    def hold_is_sustainable(self):
        """True when the boost-hold plan can hold ``hold_c`` at every ambient value.

        Needs ``0 <= k*(hold_c - R)/g <= 1`` over the whole ambient range
        (O(1): the piecewise range is kept when the breakpoints are set).
        Never raises.
        """
        self._ambient_range()
        g = self._g
        k = self._k
        if g == 0.0:
            return self._amb_lo == self._amb_hi == self._hold_c
        d1 = k * (self._hold_c - self._amb_lo) / g
        d2 = k * (self._hold_c - self._amb_hi) / g
        return 0.0 <= d1 <= 1.0 and 0.0 <= d2 <= 1.0

    def temperature_at_c(self, t_s, start_c):
        """Temperature in deg C ``t_s`` seconds from now, starting at ``start_c`` deg C.

        Exact under every plan (thermostat switches are located by root
        solving). Returns NaN on bad input (not a number, not finite, negative
        ``t_s``, or so extreme that the temperature overflows) or when the work
        cap is hit before ``t_s`` (``self.reason`` says which); otherwise a
        finite number. Never raises.
        """
        t_s = _real(t_s)
        start_c = _real(start_c)
        if not (_finite(t_s) and t_s >= 0.0 and _finite(start_c)):
            self.reason = REASON_BAD_INPUT
            self.searched_s = 0.0
            self.work = 0
            return math.nan
        self._run(start_c, 0.0, t_s, False)
        if self.reason != REASON_NONE:
            return math.nan
        return self._state_T

    def time_to_target_s(self, start_c, target_c, horizon_s=_INF):
        """Seconds from now until the liquid first reaches ``target_c`` (deg C), or None.

        Starts at ``start_c`` deg C; searches at most ``horizon_s`` seconds
        ahead (and at most ``MAX_PIECES`` units of work). Sets ``status``:
        ``ARRIVED`` (already there, 0.0), ``TRACKING`` (found; a finite
        ``eta_s``), or ``OUT_OF_REACH`` with ``reason`` NEVER, HELD, HORIZON
        (also: later than the largest float time), WORK_CAP or BAD_INPUT (not
        a number, or so extreme that the arithmetic overflows). Never raises.
        """
        self.eta_s = None
        start_c = _real(start_c)
        target_c = _real(target_c)
        horizon_s = _real(horizon_s)
        if not (_finite(start_c) and _finite(target_c) and horizon_s == horizon_s
                and horizon_s >= 0.0):
            self.status = status.OUT_OF_REACH
            self.reason = REASON_BAD_INPUT
            self.searched_s = 0.0
            self.work = 0
            return None
        if start_c == target_c:
            self.status = status.ARRIVED
            self.reason = REASON_NONE
            self.eta_s = 0.0
            self.searched_s = 0.0
            self.work = 0
            return 0.0
        if self._plan == PLAN_THERMOSTAT and self._g > 0.0:
            # With a heater the thermostat keeps T within
            # [min(start, on_below, R_min), max(start, off_above, R_max)].
            self._ambient_range()
            if (target_c > max(start_c, self._off_above_c, self._amb_hi)
                    or target_c < min(start_c, self._on_below_c, self._amb_lo)):
                self.status = status.OUT_OF_REACH
                self.reason = REASON_NEVER
                self.searched_s = 0.0
                self.work = 0
                return None
        found = self._run(start_c, target_c, horizon_s, True)
        if found >= 0.0:
            self.status = status.TRACKING
            self.eta_s = found
            return found
        self.status = status.OUT_OF_REACH
        return None

    # ------------------------------------------------------------- internals
    def _angle_at(self, t_s):
        """Ambient sine angle at t_s (rad); fmod keeps it accurate on float32."""
        p = self._amb_period
        return _TWO_PI * math.fmod(t_s, p) / p + self._amb_phase

    def _amb_seek(self, t_s):
        """Move the piecewise cursor so times[i] <= now+t < times[i+1] (i=-1: before)."""
        self._amb_i = _seek(self._amb_times, self._amb_now + t_s)

    def _pw_value(self, t_s):
        """Piecewise ambient value at t_s using the current cursor (deg C)."""
        i = self._amb_i
        v = self._amb_values
        if i < 0:
            return v[0]
        tt = self._amb_times
        if i >= len(tt) - 1:
            return v[len(v) - 1]
        t0 = tt[i]
        return v[i] + (v[i + 1] - v[i]) * ((self._amb_now + t_s - t0) / (tt[i + 1] - t0))

    def _tick(self):
        """Count one unit of work; False (and nothing counted) once MAX_PIECES are used."""
        if self._work >= MAX_PIECES:
            self._stop = REASON_WORK_CAP
            return False
        self._work += 1
        return True

    def _advance(self, tt, i, now, t):
        """Last index j >= i with tt[j] - now <= t (breakpoints at or before t), or -2.

        The usual case (the next breakpoint is after t) is one look and part
        of the piece's work. Skipping breakpoints (many at the same time, or a
        start far into the schedule) gallops then bisects, and every look
        beyond the first counts as work; -2 when the work cap stops it.
        """
        n = len(tt)
        if i + 1 >= n or tt[i + 1] - now > t:
            return i
        lo = i + 1  # tt[lo] - now <= t
        step = 1
        while True:
            if not self._tick():
                return -2
            hi = lo + step
            if hi >= n:
                hi = n
                break
            if tt[hi] - now > t:
                break
            lo = hi
            step += step
        while hi - lo > 1:  # tt[lo] - now <= t < tt[hi] - now (hi == n: past the end)
            if not self._tick():
                return -2
            mid = (lo + hi) >> 1
            if tt[mid] - now <= t:
                lo = mid
            else:
                hi = mid
        return lo

    def _next_break(self, t):
        """Time (s from now) of the next ambient/duty breakpoint after t (inf if none).

        -1.0 when the work cap stopped the cursor (see _advance).
        """
        nb = _INF
        kind = self._amb_kind
        if kind == AMBIENT_RAMP:
            if t < self._amb_ramp_s:
                nb = self._amb_ramp_s
        elif kind == AMBIENT_PIECEWISE:
            tt = self._amb_times
            i = self._advance(tt, self._amb_i, self._amb_now, t)  # skips steps
            if i == -2:
                return -1.0
            self._amb_i = i
            if i + 1 < len(tt):
                nb = tt[i + 1] - self._amb_now
        if self._plan == PLAN_SCHEDULE:
            tt = self._plan_times
            i = self._advance(tt, self._plan_i, self._plan_now, t)
            if i == -2:
                return -1.0
            self._plan_i = i
            if i + 1 < len(tt):
                x = tt[i + 1] - self._plan_now
                if x < nb:
                    nb = x
        return nb

    def _duty_now(self):
        """Duty of the current piece, 0..1, from the plan state."""
        plan = self._plan
        if plan == PLAN_DUTY:
            return self._duty
        if plan == PLAN_SCHEDULE:
            i = self._plan_i
            if i < 0:
                return 0.0
            return self._plan_duties[i]
        return 1.0 if self._mode == 1 else 0.0

    def _setup_piece(self, t, temp_c, duty):
        """Store the closed-form coefficients of the piece starting at t (s)."""
        k = self._k
        self._pt = t
        self._pT = temp_c
        self._pq = self._g * duty
        kind = self._amb_kind
        if k == 0.0 or kind == AMBIENT_CONSTANT:
            self._pkind = _PIECE_LINEAR
            self._pr = self._amb_c
            self._pb = 0.0
        elif kind == AMBIENT_RAMP:
            self._pkind = _PIECE_LINEAR
            if t < self._amb_ramp_s:
                self._pr = self._amb_c + self._amb_slope * t
                self._pb = self._amb_slope
            else:
                self._pr = self._amb_c + self._amb_slope * self._amb_ramp_s
                self._pb = 0.0
        elif kind == AMBIENT_PIECEWISE:
            self._pkind = _PIECE_LINEAR
            self._pr = self._pw_value(t)
            i = self._amb_i
            tt = self._amb_times
            if 0 <= i < len(tt) - 1:
                v = self._amb_values
                self._pb = (v[i + 1] - v[i]) / (tt[i + 1] - tt[i])
            else:
                self._pb = 0.0
        else:
            self._pkind = _PIECE_SINE
            w = _TWO_PI / self._amb_period
            self._pw = w
            self._pr = self._amb_c
            self._pa = self._angle_at(t)
            # Periodic steady state: amplitude ratio k/sqrt(k^2+w^2), lag atan(w/k).
            # Scaled by the larger of k, w so that neither square under- or
            # overflows (k = 1e-200 with w = 6e-300 has k*k + w*w == 0).
            self._ppsi = math.atan2(w, k)
            m = k if k > w else w
            kr = k / m
            wr = w / m
            self._pAr = self._amb_amp * kr / math.sqrt(kr * kr + wr * wr)

    def _temp(self, s):
        """Exact temperature (deg C) at s seconds into the current piece."""
        k = self._k
        x = k * s
        T0 = self._pT
        if x >= 0.5:  # settles exactly onto the ambient term for large k s
            e = _exp(-x)
            om = 1.0 - e
            sp = om / k  # k > 0 here; finite also when k*s overflows
            T = self._pr + (T0 - self._pr) * e
        else:  # also k = 0, and a NaN x (the result is NaN then)
            p1 = _phi1(x)
            om = x * p1  # 1 - exp(-k s)
            sp = s * p1  # (1 - exp(-k s)) / k, also for k = 0
            T = T0 + om * (self._pr - T0)
        T += self._pq * sp
        if self._pkind == _PIECE_LINEAR:
            # ambient slope b: particular term b*s - b*(1-exp(-ks))/k, written stably
            if self._pb != 0.0:
                if x >= 0.5:
                    T += self._pb * (s - sp)
                else:  # b * (k s^2 phi2), small factors first (b may be near 1e308)
                    T += self._pb * (x * s * _phi2(x))
        elif self._pAr != 0.0:
            th0 = self._pa - self._ppsi
            T += self._pAr * (_sin(th0 + self._pw * s) - _sin(th0) * (1.0 - om))
        return T

    def _ambient_in_piece(self, s):
        if self._pkind == _PIECE_LINEAR:
            return self._pr + self._pb * s
        return self._pr + self._amb_amp * _sin(self._pa + self._pw * s)

    def _ambient_slope_in_piece(self, s):
        if self._pkind == _PIECE_LINEAR:
            return self._pb
        return self._amb_amp * self._pw * _cos(self._pa + self._pw * s)

    def _slope(self, s, temp_c):
        """dT/dt (K/s) at s into the piece, from the ODE itself."""
        return -self._k * (temp_c - self._ambient_in_piece(s)) + self._pq

    def _eval(self, which, level, s):
        """Function and derivative for the root solver at s.

        which 0: f = T - level, f' = dT/dt; which 1: f = dT/dt, f' = d2T/dt2.
        Result in self._f, self._df (no tuple).
        """
        T = self._temp(s)
        d = self._slope(s, T)
        if which == 0:
            self._f = T - level
            self._df = d
        else:
            self._f = d
            self._df = -self._k * (d - self._ambient_slope_in_piece(s))

    def _split(self, lo, hi):
        """Bisection point of [lo, hi] (s into the piece).

        The middle; but when the bracket is more than 2**20 time constants
        long (a far horizon, a long sine sub-step, a fast liquid) the geometric
        mean of lo + 1/k and hi, so that the log of the bracket halves each
        step and MAX_ROOT_ITERATIONS reach a crossing anywhere in it (halving
        a [0, 1e30 s] bracket 64 times leaves 5e10 s, far from a crossing at
        500 s with k = 1/900).
        """
        k = self._k
        if k > 0.0 and (hi - lo) * k > 1048576.0:
            return math.sqrt(lo + 1.0 / k) * math.sqrt(hi)  # in (lo, hi)
        return lo + 0.5 * (hi - lo)

    def _solve(self, which, level, lo, hi, flo):
        """Root of f in [lo, hi] (s into the piece), f(lo)=flo and f(hi) of the other sign.

        Safeguarded Newton: a Newton step is taken when it stays inside the
        bracket and either shrinks fast enough or follows a bisection step (so
        a root near one end of a long bracket is reached by Newton, not by
        hundreds of halvings), a bisection step otherwise, so the bracket
        always shrinks. At most MAX_ROOT_ITERATIONS iterations; stops
        when the step is below a few ulps of the time. Bisection points are
        those of _split, so a bracket many time constants long is cut in its
        logarithm first. The first point is the Newton step from lo (its
        tangent), when that lies inside: a root far nearer lo than the
        bracket's rounding (1e-203 s in a 1e292 s bracket) is found at once.
        """
        base = abs(self._pt)
        dxold = hi - lo
        dx = dxold
        self._eval(which, level, lo)
        s = lo
        d = self._df
        if d != 0.0 and d - d == 0.0:
            s = lo - flo / d
        if not lo < s < hi:  # also NaN
            s = self._split(lo, hi)
        self._eval(which, level, s)
        f = self._f
        df = self._df
        bisected = True
        it = 0
        while it < MAX_ROOT_ITERATIONS:
            it += 1
            if f == 0.0:
                return s
            if f != f:
                return math.nan  # the temperature overflowed here: no root to trust
            if (f > 0.0) == (flo > 0.0):
                lo = s
            else:
                hi = s
            # Newton when its point lies inside the bracket (also
            # false for an infinite f or f', or f' = 0) and the step follows a
            # bisection or shrinks fast enough; bisection otherwise.
            newton = False
            if df != 0.0 and df - df == 0.0 and (bisected or abs(2.0 * f) <= abs(dxold * df)):
                s_new = s - f / df
                newton = lo <= s_new <= hi  # an end itself: the root is within its rounding
            dxold = dx
            if newton:
                dx = s - s_new
                s = s_new
                bisected = False
            else:
                s = self._split(lo, hi)
                dx = s - lo
                bisected = True
            # at the new point (a log step shrinks s a lot); never below a few
            # of the smallest floats, or a root at a denormal time never ends
            tol = 4.0 * _EPS * (base + abs(s)) + 4.0 * _TINY
            if hi - lo <= tol:
                return s
            if abs(dx) <= tol:
                # A step this small is convergence only beside a sign change:
                # in a flat tail (far horizon) Newton creeps by ulps far from
                # the root. Look 2 tol either side; if no sign change, shrink
                # the bracket by what was seen and bisect on.
                a = s - 2.0 * tol
                if a < lo:
                    a = lo
                b = s + 2.0 * tol
                if b > hi:
                    b = hi
                self._eval(which, level, a)
                fa = self._f
                self._eval(which, level, b)
                fb = self._f
                if fa != fa or fb != fb:
                    return math.nan
                if fa == 0.0 or fb == 0.0 or (fa > 0.0) != (fb > 0.0):
                    return s
                if (fa > 0.0) == (flo > 0.0):
                    lo = b
                else:
                    hi = a
                s = self._split(lo, hi)
                dx = s - lo
                bisected = True
            self._eval(which, level, s)
            f = self._f
            df = self._df
        return s

    def _root_between(self, level, s0, T0, s1, T1):
        """First crossing of level in [s0, s1] (s into the piece), or -1.0.

        Checks the ends, then the one turning point the piece can have
        (exact for linear ambient, where T is convex or concave).
        """
        f0 = T0 - level
        if f0 == 0.0:
            return s0
        f1 = T1 - level
        if f0 != f0 or f1 != f1:
            return math.nan  # overflowed: the caller reports it
        if f1 == 0.0 or (f1 > 0.0) != (f0 > 0.0):
            return self._solve(0, level, s0, s1, f0)
        d0 = self._slope(s0, T0)
        d1 = self._slope(s1, T1)
        # A crossing inside needs the curve to head towards the level first and
        # turn back before s1: the slope changes sign in between.
        if d0 == 0.0 or (d0 < 0.0) != (f0 > 0.0) or (d1 < 0.0) == (d0 < 0.0):
            return -1.0
        s_turn = self._solve(1, level, s0, s1, d0)
        f_turn = self._temp(s_turn) - level
        if f_turn == 0.0:
            return s_turn
        if (f_turn > 0.0) != (f0 > 0.0):
            return self._solve(0, level, s0, s_turn, f0)
        return -1.0

    def _first_root(self, level, length):
        """First crossing of level within [0, length] of the current piece.

        Returns s >= 0, -1.0 when there is none, -2.0 when the search stopped
        early: self._stop says why (REASON_WORK_CAP, or REASON_HORIZON when it
        would run past the largest float time) and self._reached_s how far it
        got. NaN when the arithmetic overflowed (inputs beyond float range).
        """
        T0 = self._pT
        self._reached_s = 0.0
        if T0 == level:
            return 0.0
        if self._pkind == _PIECE_LINEAR:
            k = self._k
            if length == _INF:
                if self._pb == 0.0:
                    return self._root_constant_tail(level)
                # Ramp without end: T -> +-inf along the ramp; find a finite
                # end beyond the turning point and the crossing. Each doubling
                # of the span counts as work.
                span = 1.0 / k if k > 0.0 else 1.0
                f0 = T0 - level
                while True:
                    if not self._tick():
                        return -2.0
                    T1 = self._temp(span)
                    if T1 != T1:
                        return math.nan
                    f1 = T1 - level
                    if (f1 > 0.0) != (f0 > 0.0) or f1 == 0.0:
                        break
                    d1 = self._slope(span, T1)
                    # beyond the turning point and moving away: never
                    if d1 != 0.0 and (d1 > 0.0) == (f1 > 0.0) and (self._pb > 0.0) == (f1 > 0.0):
                        break
                    span *= 2.0
                    if not _finite(span):
                        self._stop = REASON_HORIZON
                        return -2.0
                length = span
            return self._root_between(level, 0.0, T0, length, self._temp(length))
        return self._root_sine(level, length)

    def _root_constant_tail(self, level):
        """Crossing on an endless piece with constant ambient and duty (closed form).

        With ``d = dT/dt`` at the start, ``1 - exp(-k s) = z = k*gap/d``, so
        ``s = (gap/d) * (-ln(1 - z)/z)``: no equilibrium ``R + g*u/k`` to
        overflow for a tiny ``k``, and exact for ``k = 0`` (``s = gap/d``).
        May return ``inf`` (later than the largest float time).
        """
        k = self._k
        T0 = self._pT
        gap = level - T0
        d = self._pq - k * (T0 - self._pr)
        if d == 0.0 or (gap > 0.0) != (d > 0.0):
            return -1.0
        z = k * gap / d  # share of the way to the equilibrium the level needs
        if z != z:
            return math.nan
        if z >= 1.0:
            return -1.0
        return (gap / d) * _log_ratio(z)

    def _root_sine(self, level, length):
        """First crossing on a sinusoidal-ambient piece (see module doc)."""
        k = self._k
        period = self._amb_period
        sub = period / PERIODIC_SUBSTEPS
        skip = period
        eq = self._pr + self._pq / k
        amp = abs(self._pAr)
        gap = eq - level
        s = 0.0
        Ts = self._pT
        th0 = self._pa - self._ppsi
        while s < length:
            if not self._tick():
                self._reached_s = s
                return -2.0
            # Transient part C*exp(-k(t-s)) on top of the periodic steady state.
            c = Ts - eq - self._pAr * _sin(th0 + self._pw * s)
            if abs(gap) > amp + abs(c):
                return -1.0  # the transient only shrinks: never within this piece
            h = skip
            if h > length - s:
                h = length - s
            if not _finite(s + h):
                self._stop = REASON_HORIZON  # past the largest float time
                self._reached_s = s
                return -2.0
            c1 = c * _exp(-k * h)
            lo = gap - amp + min(c, c1)
            hi = gap + amp + max(c, c1)
            if lo > 0.0 or hi < 0.0:
                s += h
                Ts = self._temp(s)
                skip *= 2.0
                continue
            skip = period
            h = sub
            if h > length - s:
                h = length - s
            s1 = s + h
            T1 = self._temp(s1)
            r = self._root_between(level, s, Ts, s1, T1)
            if r >= 0.0 or r != r:
                return r
            s = s1
            Ts = T1
        return -1.0

    def _start_plan(self, start_c):
        """Reset cursors and thermostat/boost mode for a run starting at start_c.

        The cursors are found by _advance from before the first breakpoint
        (O(log n) looks, counted as work); False when that hit the work cap.
        """
        if self._amb_kind == AMBIENT_PIECEWISE:
            self._amb_i = self._advance(self._amb_times, -1, self._amb_now, 0.0)
            if self._amb_i == -2:
                return False
        if self._plan == PLAN_SCHEDULE:
            self._plan_i = self._advance(self._plan_times, -1, self._plan_now, 0.0)
            if self._plan_i == -2:
                return False
        elif self._plan == PLAN_THERMOSTAT:
            if start_c < self._on_below_c:
                self._mode = 1
            elif start_c > self._off_above_c:
                self._mode = 0
            else:
                self._mode = 1 if self._start_on else 0
        elif self._plan == PLAN_BOOST_HOLD:
            if start_c == self._hold_c:
                self._mode = 2
            else:
                self._mode = 1 if start_c < self._hold_c else 0
        return True

    def _switch_level(self):
        """Temperature at which the thermostat/boost plan changes mode (deg C)."""
        if self._plan == PLAN_THERMOSTAT:
            return self._off_above_c if self._mode == 1 else self._on_below_c
        return self._hold_c

    def _advanced(self, t):
        """t plus how far a stopped piece search got (s), kept at t if that overflows."""
        t1 = t + self._reached_s
        return t1 if _finite(t1) else t

    def _run(self, start_c, target_c, until_s, find_target):
        """Walk the pieces from now to until_s; first target crossing if find_target.

        Returns the crossing time (s) or -1.0; sets self.reason, self.searched_s,
        self.work and self._state_T (temperature at until_s when not searching).
        Every piece, sine sub-step, ramp doubling and breakpoint look beyond
        the first counts as work (see _tick); the walk stops at MAX_PIECES.
        Times that would pass the largest float stop with REASON_HORIZON, and
        temperatures that overflow with REASON_BAD_INPUT, so every number
        left behind is finite.
        """
        self.reason = REASON_NONE
        self._work = 0
        t = 0.0
        T = start_c
        switching = self._plan == PLAN_THERMOSTAT or self._plan == PLAN_BOOST_HOLD
        result = -1.0
        going = self._start_plan(start_c)
        if not going:
            self.reason = REASON_WORK_CAP
        while going:
            if not self._tick():
                self.reason = REASON_WORK_CAP
                break
            if self._mode == 2 and self._plan == PLAN_BOOST_HOLD:
                # Held at hold_c from here on (see set_plan_boost_hold).
                T = self._hold_c
                if find_target:
                    self.reason = REASON_HELD
                else:
                    t = until_s
                break
            t_end = self._next_break(t)
            if t_end < 0.0:
                self.reason = REASON_WORK_CAP
                break
            if t_end > until_s:
                t_end = until_s
            self._setup_piece(t, T, self._duty_now())
            length = t_end - t
            limit = length
            s_sw = -1.0
            if switching:
                s_sw = self._first_root(self._switch_level(), length)
                if s_sw == -2.0:
                    t = self._advanced(t)
                    self.reason = self._stop
                    break
                if s_sw != s_sw:
                    self.reason = REASON_BAD_INPUT
                    break
                if s_sw >= 0.0:
                    limit = s_sw
            s_hit = -1.0
            if find_target:
                s_hit = self._first_root(target_c, limit)
                if s_hit == -2.0:
                    t = self._advanced(t)
                    self.reason = self._stop
                    break
                if s_hit != s_hit:
                    self.reason = REASON_BAD_INPUT
                    break
            if s_sw >= 0.0 and s_hit < 0.0:
                if not _finite(t + s_sw):
                    self.reason = REASON_HORIZON
                    break
                t += s_sw
                T = self._switch_level()
                if self._plan == PLAN_BOOST_HOLD:
                    self._mode = 2
                else:
                    self._mode = 0 if self._mode == 1 else 1
                continue
            if s_hit >= 0.0:
                if not _finite(t + s_hit):
                    self.reason = REASON_HORIZON  # later than the largest float time
                    break
                result = t + s_hit
                t = result
                T = target_c
                break
            if t_end == _INF:
                # Endless piece and no crossing: proved never.
                self.reason = REASON_NEVER
                break
            T = self._temp(length)
            if not _finite(T):
                self.reason = REASON_BAD_INPUT  # the temperature overflowed
                break
            t = t_end
            if t >= until_s:
                if find_target:
                    self.reason = REASON_HORIZON
                break
        self.searched_s = t
        self.work = self._work
        self._state_T = T
        return result


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
        if not (_finite(ambient_c) and _finite(dt_s) and dt_s >= 0.0):
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
        f = _exp(-dt_s / self.memory_s)
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
            if (_finite(self.mean_c) and _finite(self.amplitude_c) and _finite(phase)
                    and _finite(_TWO_PI / self.period_s)):
                fc.set_ambient_periodic(self.mean_c, self.amplitude_c, self.period_s, phase)
                return AMBIENT_PERIODIC
        if self.level_c is None:
            return fc._amb_kind
        if (self.trend_s > 0.0 and self.trend_share >= self.trend_min_share
                and _finite(self.level_c) and _finite(self.slope_c_per_s)):
            fc.set_ambient_ramp(self.level_c, self.slope_c_per_s, self.trend_s)
            return AMBIENT_RAMP
        if _finite(self.mean_level_c):
            fc.set_ambient_constant(self.mean_level_c)
            return AMBIENT_CONSTANT
        return fc._amb_kind
