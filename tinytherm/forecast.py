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

A :class:`Forecast` is three small parts, each in its own module:

* ``forecast.ambient``, an :class:`tinytherm.ambient.AmbientSchedule`:
  constant, ramp, piecewise-linear or periodic ambient
  (:class:`tinytherm.ambient.AmbientTracker` picks one from readings);
* ``forecast.heater``, a :class:`tinytherm.heater_plan.HeaterPlan`: constant
  duty, duty schedule, boost-hold or thermostat;
* ``forecast.solver``, a :class:`tinytherm.piecewise.PieceSolver`: the exact
  closed form on one piece and its crossings.

This module walks the pieces: time is cut at every breakpoint (and at every
thermostat or boost switch, found by root solving); on each piece the duty is
constant and the ambient linear or sinusoidal, so the solver's closed form is
exact (details in DEVELOPERS.md).

Work per call is capped: at most ``MAX_PIECES`` units of work per call, and
at most ``MAX_ROOT_ITERATIONS`` iterations per root solve (two solves per
piece at most, three for the thermostat). A unit is a piece, a sinusoid
sub-step, a doubling of an endless ramp's search span, or one look at a
breakpoint beyond the first per piece (many breakpoints at the same time, or a
start far into a schedule, are skipped by galloping and bisection, every look
counted). A call that hits the cap says so (``reason == REASON_WORK_CAP``)
instead of running on, and ``work`` is the count. No lists, dicts or tuples
are created per call; the state lives in fixed attributes of the parts.
"""
import math

from tinytherm import status
from tinytherm.ambient import (  # noqa: F401  (re-exported: the forecast's public names)
    AMBIENT_CONSTANT, AMBIENT_PERIODIC, AMBIENT_PIECEWISE, AMBIENT_RAMP,
    AmbientSchedule, AmbientTracker, _real,
)
from tinytherm.heater_plan import (  # noqa: F401
    MODE_HOLDING, PLAN_BOOST_HOLD, PLAN_DUTY, PLAN_SCHEDULE, PLAN_THERMOSTAT, HeaterPlan,
)
from tinytherm.num import finite
from tinytherm.piecewise import (  # noqa: F401
    MAX_PIECES, MAX_ROOT_ITERATIONS, PERIODIC_SUBSTEPS,
    REASON_BAD_INPUT, REASON_BEYOND_EQUILIBRIUM, REASON_HELD, REASON_HORIZON,
    REASON_LATE, REASON_NEVER, REASON_NO_DRIVE_NEEDED, REASON_NONE, REASON_TOO_SLOW,
    REASON_WORK_CAP, PieceSolver,
)

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

_INF = math.inf


def reason_name(code):
    """Lower-case name of a reason code; ``"unknown"`` for anything else."""
    if 0 <= code < len(REASON_NAMES):
        return REASON_NAMES[code]
    return "unknown"


class Forecast:
    """Forecasts of the liquid temperature under an ambient schedule and a heater plan.

    ``rate_per_s`` is ``k`` (1/s, >= 0), ``gain_k_per_s`` is ``g`` (K/s at full
    duty; negative for a chiller), ``ambient_c`` the initial constant ambient
    (deg C). Change them with :meth:`set_model` and the ``set_ambient_*`` /
    ``set_plan_*`` methods; ask with :meth:`temperature_at_c` and
    :meth:`time_to_target_s`. The parts are ``ambient``, ``heater`` and
    ``solver`` (see the module doc): read them, change them through these
    methods.

    After :meth:`time_to_target_s`: ``status`` (a :mod:`tinytherm.status`
    code), ``reason`` (a ``REASON_*`` code), ``eta_s`` (seconds from now or
    None), ``searched_s`` (how far the search got, s) and ``work`` (units of
    work used, <= ``MAX_PIECES``; see the module doc).
    """

    def __init__(self, rate_per_s=0.0, gain_k_per_s=0.0, ambient_c=20.0):
        self.solver = PieceSolver()
        self.set_model(rate_per_s, gain_k_per_s)
        self.ambient = AmbientSchedule(ambient_c)
        self.heater = HeaterPlan()
        self._state_T = 0.0   # temperature at the end of the last run, deg C
        # answers
        self.status = status.GATHERING
        self.reason = REASON_NONE
        self.eta_s = None
        self.searched_s = 0.0
        self.work = 0

    @property
    def rate_per_s(self):
        """``k`` in 1/s (read-only; set with :meth:`set_model`)."""
        return self.solver.k

    @property
    def gain_k_per_s(self):
        """``g`` in K/s at full duty (read-only; set with :meth:`set_model`)."""
        return self.solver.g

    # ------------------------------------------------------------------ setup
    def set_model(self, rate_per_s, gain_k_per_s=0.0):
        """Set ``k`` (1/s, finite, >= 0) and ``g`` (K/s at full duty). Raises ValueError."""
        rate_per_s = _real(rate_per_s)
        gain_k_per_s = _real(gain_k_per_s)
        if not (finite(rate_per_s) and rate_per_s >= 0.0 and finite(gain_k_per_s)):
            raise ValueError("rate_per_s must be finite and >= 0, gain_k_per_s finite")
        self.solver.k = rate_per_s
        self.solver.g = gain_k_per_s

    def set_ambient_constant(self, ambient_c):
        """Constant ambient ``ambient_c`` (deg C)."""
        self.ambient.set_constant(ambient_c)

    def set_ambient_ramp(self, level_c, slope_c_per_s, ramp_s=_INF):
        """Ambient ``level_c + slope_c_per_s * min(t, ramp_s)`` (deg C, K/s, s).

        The usual extrapolation of a measured ambient: its recent level and
        trend, frozen after ``ramp_s`` seconds.
        """
        self.ambient.set_ramp(level_c, slope_c_per_s, ramp_s)

    def set_ambient_piecewise(self, times_s, values_c, now_s=0.0):
        """Piecewise-linear ambient through ``(times_s[i], values_c[i])`` (s, deg C).

        ``times_s`` must be non-decreasing (equal times make a step); both are
        read in place, not copied, so do not change them while forecasting.
        ``now_s`` is where now falls on the same clock. Held at the first value
        before the first time and at the last value after the last time.
        Validation reads every breakpoint once (O(n)) and keeps the lowest and
        highest value, so no later call reads them all again.
        """
        self.ambient.set_piecewise(times_s, values_c, now_s)

    def set_ambient_periodic(self, mean_c, amplitude_c, period_s, phase_rad=0.0):
        """Ambient ``mean_c + amplitude_c * sin(2*pi*t/period_s + phase_rad)``.

        deg C, K, s (> 0), rad; ``phase_rad`` is the angle at now (t = 0).
        ``2*pi/period_s`` must be finite (a period above about 3.5e-308 s).
        """
        self.ambient.set_periodic(mean_c, amplitude_c, period_s, phase_rad)

    def set_plan_duty(self, duty):
        """Constant heater duty in [0, 1] (0 = heater off)."""
        self.heater.set_duty(duty)

    def set_plan_schedule(self, times_s, duties, now_s=0.0):
        """Piecewise-constant duty: ``duties[i]`` from ``times_s[i]`` to ``times_s[i+1]``.

        Times in seconds on the caller's clock (non-decreasing), duties in
        [0, 1]; the duty is 0 before ``times_s[0]`` and the last duty holds
        after the last time. Read in place, not copied. ``now_s`` is where now
        falls on that clock.
        """
        self.heater.set_schedule(times_s, duties, now_s)

    def set_plan_boost_hold(self, hold_c):
        """Full power until ``hold_c`` (deg C), then held there.

        Starting above ``hold_c`` the heater stays off until the liquid has
        cooled to it. The hold phase assumes the heater can hold, i.e. that
        ``0 <= k*(hold_c - R)/g <= 1`` at every ambient; check with
        :meth:`hold_is_sustainable`.
        """
        self.heater.set_boost_hold(hold_c)

    def set_plan_thermostat(self, on_below_c, off_above_c, start_on=True):
        """On/off thermostat: full power until ``off_above_c``, off until ``on_below_c``.

        deg C, ``on_below_c < off_above_c`` (the hysteresis band). Starting
        inside the band the heater is on when ``start_on`` is true. Meant for a
        heater (``g > 0``); switching is ideal (no sensor lag).
        """
        self.heater.set_thermostat(on_below_c, off_above_c, start_on)

    # ---------------------------------------------------------------- queries
    def ambient_at_c(self, t_s):
        """Ambient in deg C at ``t_s`` seconds from now (O(log n) for breakpoints).

        NaN for a ``t_s`` that is not a number (a periodic ambient: not finite).
        """
        return self.ambient.at_c(t_s)

    def hold_is_sustainable(self):
        """True when the boost-hold plan can hold ``hold_c`` at every ambient value.

        Needs ``0 <= k*(hold_c - R)/g <= 1`` over the whole ambient range
        (O(1): the piecewise range is kept when the breakpoints are set).
        Never raises.
        """
        amb = self.ambient
        amb.range_c()
        g = self.solver.g
        k = self.solver.k
        hold_c = self.heater.hold_c
        if g == 0.0:
            return amb.lo_c == amb.hi_c == hold_c
        d1 = k * (hold_c - amb.lo_c) / g
        d2 = k * (hold_c - amb.hi_c) / g
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
        if not (finite(t_s) and t_s >= 0.0 and finite(start_c)):
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
        if not (finite(start_c) and finite(target_c) and horizon_s == horizon_s
                and horizon_s >= 0.0):
            return self._no_answer(status.OUT_OF_REACH, REASON_BAD_INPUT)
        if start_c == target_c:
            self._no_answer(status.ARRIVED, REASON_NONE)
            self.eta_s = 0.0
            return 0.0
        heater = self.heater
        if heater.kind == PLAN_THERMOSTAT and self.solver.g > 0.0:
            # With a heater the thermostat keeps T within
            # [min(start, on_below, R_min), max(start, off_above, R_max)].
            amb = self.ambient
            amb.range_c()
            if (target_c > max(start_c, heater.off_above_c, amb.hi_c)
                    or target_c < min(start_c, heater.on_below_c, amb.lo_c)):
                return self._no_answer(status.OUT_OF_REACH, REASON_NEVER)
        found = self._run(start_c, target_c, horizon_s, True)
        if found >= 0.0:
            self.status = status.TRACKING
            self.eta_s = found
            return found
        self.status = status.OUT_OF_REACH
        return None

    # ------------------------------------------------------------- internals
    def _no_answer(self, code, reason):
        """An answer found without a run: status and reason set, nothing searched."""
        self.status = code
        self.reason = reason
        self.searched_s = 0.0
        self.work = 0
        return None

    def _start(self, start_c):
        """Reset the cursors and the switching plan's mode for a run starting at start_c.

        The cursors are found by the solver's advance from before the first
        breakpoint (O(log n) looks, counted as work); False when that hit the
        work cap.
        """
        amb = self.ambient
        heater = self.heater
        solver = self.solver
        if amb.kind == AMBIENT_PIECEWISE:
            amb.cursor = solver.advance(amb.times_s, -1, amb.now_s, 0.0)
            if amb.cursor == -2:
                return False
        kind = heater.kind
        if kind == PLAN_SCHEDULE:
            heater.cursor = solver.advance(heater.times_s, -1, heater.now_s, 0.0)
            if heater.cursor == -2:
                return False
        elif kind != PLAN_DUTY:
            heater.start_mode(start_c)
        return True

    def _next_break(self, t):
        """Time (s from now) of the next ambient/duty breakpoint after t (inf if none).

        -1.0 when the work cap stopped the cursor (see PieceSolver.advance).
        """
        nb = _INF
        amb = self.ambient
        kind = amb.kind
        if kind == AMBIENT_RAMP:
            if t < amb.ramp_s:
                nb = amb.ramp_s
        elif kind == AMBIENT_PIECEWISE:
            tt = amb.times_s
            i = self.solver.advance(tt, amb.cursor, amb.now_s, t)  # skips steps
            if i == -2:
                return -1.0
            amb.cursor = i
            if i + 1 < len(tt):
                nb = tt[i + 1] - amb.now_s
        heater = self.heater
        if heater.kind == PLAN_SCHEDULE:
            tt = heater.times_s
            i = self.solver.advance(tt, heater.cursor, heater.now_s, t)
            if i == -2:
                return -1.0
            heater.cursor = i
            if i + 1 < len(tt):
                x = tt[i + 1] - heater.now_s
                if x < nb:
                    nb = x
        return nb

    def _advanced(self, t):
        """t plus how far a stopped piece search got (s), kept at t if that overflows."""
        t1 = t + self.solver.reached_s
        return t1 if finite(t1) else t

    def _run(self, start_c, target_c, until_s, find_target):
        """Walk the pieces from now to until_s; first target crossing if find_target.

        Returns the crossing time (s) or -1.0; sets self.reason, self.searched_s,
        self.work and self._state_T (temperature at until_s when not searching).
        Every piece, sine sub-step, ramp doubling and breakpoint look beyond
        the first counts as work (see PieceSolver.tick); the walk stops at
        MAX_PIECES. Times that would pass the largest float stop with
        REASON_HORIZON, and temperatures that overflow with REASON_BAD_INPUT,
        so every number left behind is finite.
        """
        solver = self.solver
        heater = self.heater
        self.reason = REASON_NONE
        solver.work = 0
        t = 0.0
        T = start_c
        boost = heater.kind == PLAN_BOOST_HOLD
        switching = boost or heater.kind == PLAN_THERMOSTAT
        result = -1.0
        going = self._start(start_c)
        if not going:
            self.reason = REASON_WORK_CAP
        while going:
            if not solver.tick():
                self.reason = REASON_WORK_CAP
                break
            if boost and heater.mode == MODE_HOLDING:
                # Held at hold_c from here on (see set_plan_boost_hold).
                T = heater.hold_c
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
            solver.setup(t, T, heater.duty_now(), self.ambient)
            length = t_end - t
            limit = length
            s_sw = -1.0
            if switching:
                s_sw = solver.first_root(heater.switch_level_c(), length)
                if s_sw == -2.0:
                    t = self._advanced(t)
                    self.reason = solver.stop
                    break
                if s_sw != s_sw:
                    self.reason = REASON_BAD_INPUT
                    break
                if s_sw >= 0.0:
                    limit = s_sw
            s_hit = -1.0
            if find_target:
                s_hit = solver.first_root(target_c, limit)
                if s_hit == -2.0:
                    t = self._advanced(t)
                    self.reason = solver.stop
                    break
                if s_hit != s_hit:
                    self.reason = REASON_BAD_INPUT
                    break
            if s_sw >= 0.0 and s_hit < 0.0:
                if not finite(t + s_sw):
                    self.reason = REASON_HORIZON
                    break
                t += s_sw
                T = heater.switch_level_c()
                heater.switched()
                continue
            if s_hit >= 0.0:
                if not finite(t + s_hit):
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
            T = solver.temp(length)
            if not finite(T):
                self.reason = REASON_BAD_INPUT  # the temperature overflowed
                break
            t = t_end
            if t >= until_s:
                if find_target:
                    self.reason = REASON_HORIZON
                break
        self.searched_s = t
        self.work = solver.work
        self._state_T = T
        return result
