"""Heater plans for the forecast: what duty ``u(t)`` (0..1) the heater runs at.

* a constant duty;
* a piecewise-constant duty schedule (read in place, on the caller's clock,
  with ``now_s`` saying where now falls on it);
* boost-hold: full power until a hold temperature, then held there;
* an on/off thermostat with hysteresis.

The two switching plans (boost-hold, thermostat) change duty when the liquid
crosses a level; :class:`tinytherm.forecast.Forecast` finds those crossings
and tells the plan (:attr:`HeaterPlan.mode`). Runs unchanged on CPython and
MicroPython; no containers are created after construction.
"""
import math

try:
    from micropython import const
except ImportError:  # CPython
    def const(x):
        return x

from tinytherm.ambient import _real
from tinytherm.num import finite

PLAN_DUTY = const(0)         # constant duty
PLAN_SCHEDULE = const(1)     # piecewise-constant duty schedule
PLAN_BOOST_HOLD = const(2)   # full power until hold_c, then held at hold_c
PLAN_THERMOSTAT = const(3)   # on/off with hysteresis

# mode of a switching plan during a run
MODE_OFF = const(0)
MODE_ON = const(1)
MODE_HOLDING = const(2)      # boost-hold: held at hold_c from here on


class HeaterPlan:
    """The heater plan a forecast assumes (see the module doc).

    Set with one of the ``set_*`` methods (each raises ValueError for an
    argument it cannot use and then leaves the plan as it was). The
    attributes are the forecast's inputs and run state: read them, set them
    only through the methods.
    """

    def __init__(self):
        self.kind = PLAN_DUTY
        self.duty = 0.0          # constant duty, 0..1
        self.times_s = None      # schedule times (caller's clock, s)
        self.duties = None       # schedule duties, 0..1
        self.now_s = 0.0         # where now falls on the caller's clock, s
        self.cursor = 0          # index into the schedule during a run
        self.hold_c = 0.0        # boost-hold level, deg C
        self.on_below_c = 0.0    # thermostat band, deg C
        self.off_above_c = 0.0
        self.start_on = True     # thermostat state when starting inside the band
        self.mode = MODE_OFF     # switching plans: MODE_* during a run

    def set_duty(self, duty):
        """Constant heater duty in [0, 1] (0 = heater off)."""
        duty = _real(duty)
        if not (duty == duty and 0.0 <= duty <= 1.0):
            raise ValueError("duty must be in [0, 1]")
        self.kind = PLAN_DUTY
        self.duty = duty
        self.times_s = None
        self.duties = None

    def set_schedule(self, times_s, duties, now_s=0.0):
        """``duties[i]`` (0..1) from ``times_s[i]`` to ``times_s[i+1]`` (s, non-decreasing)."""
        now_s = _real(now_s)
        n = len(times_s)
        if n < 1 or len(duties) != n or not finite(now_s):
            raise ValueError("need >= 1 step, equal lengths, finite now_s")
        prev = -math.inf
        i = 0
        while i < n:
            t = _real(times_s[i])
            d = _real(duties[i])
            if not (finite(t) and d == d and 0.0 <= d <= 1.0):
                raise ValueError("finite times and duties in [0, 1] required")
            if t < prev:
                raise ValueError("times_s must be non-decreasing")
            prev = t
            i += 1
        self.kind = PLAN_SCHEDULE
        self.times_s = times_s
        self.duties = duties
        self.now_s = now_s

    def set_boost_hold(self, hold_c):
        """Full power until ``hold_c`` (deg C), then held there."""
        hold_c = _real(hold_c)
        if not finite(hold_c):
            raise ValueError("hold_c must be finite")
        self.kind = PLAN_BOOST_HOLD
        self.hold_c = hold_c
        self.times_s = None
        self.duties = None

    def set_thermostat(self, on_below_c, off_above_c, start_on=True):
        """Full power until ``off_above_c``, off until ``on_below_c`` (deg C, on < off)."""
        on_below_c = _real(on_below_c)
        off_above_c = _real(off_above_c)
        if not (finite(on_below_c) and finite(off_above_c) and on_below_c < off_above_c):
            raise ValueError("need finite on_below_c < off_above_c")
        self.kind = PLAN_THERMOSTAT
        self.on_below_c = on_below_c
        self.off_above_c = off_above_c
        self.start_on = bool(start_on)
        self.times_s = None
        self.duties = None

    def start_mode(self, start_c):
        """Set ``mode`` for a run starting at ``start_c`` (deg C; switching plans only)."""
        if self.kind == PLAN_THERMOSTAT:
            if start_c < self.on_below_c:
                self.mode = MODE_ON
            elif start_c > self.off_above_c:
                self.mode = MODE_OFF
            else:
                self.mode = MODE_ON if self.start_on else MODE_OFF
        elif self.kind == PLAN_BOOST_HOLD:
            if start_c == self.hold_c:
                self.mode = MODE_HOLDING
            else:
                self.mode = MODE_ON if start_c < self.hold_c else MODE_OFF

    def switch_level_c(self):
        """Temperature at which the thermostat/boost plan changes mode (deg C)."""
        if self.kind == PLAN_THERMOSTAT:
            return self.off_above_c if self.mode == MODE_ON else self.on_below_c
        return self.hold_c

    def switched(self):
        """The liquid reached :meth:`switch_level_c`: hold (boost) or toggle (thermostat)."""
        if self.kind == PLAN_BOOST_HOLD:
            self.mode = MODE_HOLDING
        else:
            self.mode = MODE_OFF if self.mode == MODE_ON else MODE_ON

    def duty_now(self):
        """Duty of the current piece, 0..1, from the plan state."""
        kind = self.kind
        if kind == PLAN_DUTY:
            return self.duty
        if kind == PLAN_SCHEDULE:
            i = self.cursor
            if i < 0:
                return 0.0
            return self.duties[i]
        return 1.0 if self.mode == MODE_ON else 0.0
