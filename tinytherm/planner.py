"""Ready-by planning: when to start heating, what duty to use, whether cooling makes it.

All answers come from the model ``dT/dt = -k (T - R(t)) + g u`` with the
fitted ``k`` (1/s), ambient ``R`` (deg C; constant, or any schedule set on
``planner.forecast``) and heater gain ``g`` (K/s at full duty; negative for a
chiller, which the heating methods then plan symmetrically).

The key fact (superposition, exact for this linear model under any ambient):
heating at duty ``u`` for the last ``h`` seconds before the deadline ``D``
adds ``(g*u/k) * (1 - exp(-k*h))`` to the temperature the liquid would have
had at ``D`` with the heater off. So with ``T_off(D)`` the heater-off forecast
and ``gap = target - T_off(D)``:

* latest full-power start: ``h = -ln(1 - k*gap/g) / k``, start at ``D - h``;
* constant duty from now: ``u = k*gap / (g * (1 - exp(-k*D)))``.

Each method returns a :mod:`tinytherm.status` code and sets ``status``,
``reason`` (a ``tinytherm.forecast.REASON_*`` code) and its answers; it never
raises, and every answer it sets is a finite number or None (inputs that are
not numbers, or so extreme that the arithmetic overflows, give
``OUT_OF_REACH`` with REASON_BAD_INPUT). Work per call: one heater-off
forecast (bounded by ``forecast.MAX_PIECES``) plus O(1) closed forms, plus
one full-power crossing search when too slow; the cooling check is one
bounded crossing search. No lists or dicts are created.

Caution: a plan is an estimate. Heating controllers need an independent
thermal cut-out; an estimate is never a safety interlock.
"""
import math

from tinytherm import status
from tinytherm.ambient import _real
from tinytherm.forecast import (
    Forecast,
    REASON_NONE,
    REASON_NEVER,
    REASON_BAD_INPUT,
    REASON_TOO_SLOW,
    REASON_NO_DRIVE_NEEDED,
    REASON_LATE,
    REASON_BEYOND_EQUILIBRIUM,
    REASON_WORK_CAP,
)
from tinytherm.model import _phi1
from tinytherm.num import exp, finite
from tinytherm.piecewise import _log_ratio


class ReadyByPlanner:
    """Plans heating or cooling so the liquid is at a target by a deadline.

    ``rate_per_s`` ``k`` (1/s, >= 0), ``ambient_c`` (deg C, constant; for a
    varying ambient call ``planner.forecast.set_ambient_*``),
    ``gain_k_per_s`` ``g`` (K/s at full duty).

    Answers (seconds from now, or None):
    ``start_in_s`` / ``heat_for_s`` (latest full-power start and how long it
    runs), ``duty`` (constant duty), ``eta_s`` (cooling arrival),
    ``earliest_s`` (earliest arrival at full power when too slow),
    ``off_at_deadline_c`` (heater-off temperature at the deadline, deg C).
    ``work``: units of forecast work the last call used, summed over its
    forecast runs (at most two, so at most ``2 * forecast.MAX_PIECES``).
    """

    def __init__(self, rate_per_s=0.0, ambient_c=20.0, gain_k_per_s=0.0):
        self.forecast = Forecast(rate_per_s, gain_k_per_s, ambient_c)
        self.status = status.GATHERING
        self._clear()

    def set_model(self, rate_per_s, ambient_c, gain_k_per_s):
        """Fitted ``k`` (1/s), constant ambient (deg C) and ``g`` (K/s). Raises ValueError."""
        self.forecast.set_model(rate_per_s, gain_k_per_s)
        self.forecast.set_ambient_constant(ambient_c)

    def _clear(self):
        self.reason = REASON_NONE
        self.start_in_s = None
        self.heat_for_s = None
        self.duty = None
        self.eta_s = None
        self.earliest_s = None
        self.off_at_deadline_c = None
        self.on_time = False
        self.work = 0

    def _answer(self, code, reason):
        self.status = code
        self.reason = reason
        return code

    def _gap_at_deadline(self, start_c, target_c, deadline_s):
        """target minus the heater-off temperature at the deadline (K), or None."""
        fc = self.forecast
        fc.set_plan_duty(0.0)
        t_off = fc.temperature_at_c(deadline_s, start_c)
        self.work += fc.work
        if t_off != t_off:  # NaN: the forecast's reason says why
            return None
        self.off_at_deadline_c = t_off
        return target_c - t_off  # may overflow: see _heater_request

    def _heater_request(self, start_c, target_c, deadline_s):
        """Start a heater request: clear the answer, check inputs, gap at the deadline.

        Returns the gap (K, see _gap_at_deadline), or None with the
        OUT_OF_REACH answer already set (bad input, or the forecast's reason).
        """
        self._clear()
        if not self._inputs_ok(start_c, target_c, deadline_s):
            self._answer(status.OUT_OF_REACH, REASON_BAD_INPUT)
            return None
        gap = self._gap_at_deadline(start_c, target_c, deadline_s)
        if gap is None:
            self._answer(status.OUT_OF_REACH, self.forecast.reason)
        elif not finite(gap):
            self._answer(status.OUT_OF_REACH, REASON_BAD_INPUT)
            return None
        return gap

    def _inputs_ok(self, start_c, target_c, deadline_s):
        return finite(start_c) and finite(target_c) and finite(deadline_s) and deadline_s >= 0.0

    def latest_start(self, start_c, target_c, deadline_s):
        """Latest moment to switch on full power so the liquid is at ``target_c`` at the deadline.

        ``start_c`` now (deg C), ``target_c`` (deg C), ``deadline_s`` (seconds
        after now). Until the start the heater is off. On success (``TRACKING``)
        ``start_in_s`` is seconds from now and ``heat_for_s`` the full-power
        time. ``ARRIVED`` with REASON_NO_DRIVE_NEEDED: with the heater off it
        is already at or past the target at the deadline (past means too
        warm: ``off_at_deadline_c`` says how warm). ``OUT_OF_REACH`` with
        REASON_BEYOND_EQUILIBRIUM (full power levels off short of the target)
        or REASON_TOO_SLOW (``earliest_s`` is the earliest arrival, starting
        now). Returns the status code.
        """
        start_c = _real(start_c)
        target_c = _real(target_c)
        deadline_s = _real(deadline_s)
        gap = self._heater_request(start_c, target_c, deadline_s)
        if gap is None:
            return self.status
        fc = self.forecast
        g = fc.gain_k_per_s
        k = fc.rate_per_s
        if g == 0.0:
            if gap <= 0.0:
                return self._answer(status.ARRIVED, REASON_NO_DRIVE_NEEDED)
            return self._answer(status.OUT_OF_REACH, REASON_BEYOND_EQUILIBRIUM)
        if gap == 0.0 or (gap > 0.0) != (g > 0.0):
            return self._answer(status.ARRIVED, REASON_NO_DRIVE_NEEDED)
        z = k * gap / g  # share of the full-power rise g/k that is needed
        if z >= 1.0:
            return self._answer(status.OUT_OF_REACH, REASON_BEYOND_EQUILIBRIUM)
        heat_s = (gap / g) * _log_ratio(z)  # -ln(1 - z)/k, exact also for k -> 0
        if not (heat_s <= deadline_s):  # also inf: longer than the largest float time
            if finite(heat_s):
                self.heat_for_s = heat_s
            self._earliest(start_c, target_c)
            return self._answer(status.OUT_OF_REACH, REASON_TOO_SLOW)
        self.heat_for_s = heat_s
        self.start_in_s = deadline_s - heat_s
        self.on_time = True
        return self._answer(status.TRACKING, REASON_NONE)

    def _earliest(self, start_c, target_c):
        fc = self.forecast
        fc.set_plan_duty(1.0)
        self.earliest_s = fc.time_to_target_s(start_c, target_c)
        self.work += fc.work
        fc.set_plan_duty(0.0)

    def constant_duty(self, start_c, target_c, deadline_s):
        """Constant duty from now that puts the liquid at ``target_c`` exactly at the deadline.

        deg C, deg C, seconds from now. ``TRACKING`` with ``duty`` in [0, 1];
        ``ARRIVED`` with REASON_NO_DRIVE_NEEDED and ``duty = 0.0`` when the
        heater is not needed; ``OUT_OF_REACH`` with REASON_TOO_SLOW (duty
        would exceed 1; ``earliest_s`` set) or REASON_BEYOND_EQUILIBRIUM.
        With a constant ambient the approach is monotone, so the deadline is
        also the first arrival; under a varying ambient it is the temperature
        at the deadline that is planned. Returns the status code.
        """
        start_c = _real(start_c)
        target_c = _real(target_c)
        deadline_s = _real(deadline_s)
        gap = self._heater_request(start_c, target_c, deadline_s)
        if gap is None:
            return self.status
        fc = self.forecast
        g = fc.gain_k_per_s
        k = fc.rate_per_s
        if gap == 0.0 or (g == 0.0 and gap < 0.0) or (g != 0.0 and (gap > 0.0) != (g > 0.0)):
            self.duty = 0.0
            return self._answer(status.ARRIVED, REASON_NO_DRIVE_NEEDED)
        if g == 0.0 or k * gap / g >= 1.0:
            return self._answer(status.OUT_OF_REACH, REASON_BEYOND_EQUILIBRIUM)
        if deadline_s == 0.0:
            self._earliest(start_c, target_c)
            return self._answer(status.OUT_OF_REACH, REASON_TOO_SLOW)
        # u = k*gap / (g*(1 - exp(-kD))) = gap / (g * D * phi1(kD)), divided
        # step by step (g*D can underflow to 0) and for large kD without phi1
        # (phi1 -> 0 when k*D overflows); an overflow to inf is "too slow".
        x = k * deadline_s
        if x < 0.5:
            duty = gap / g / deadline_s / _phi1(x)
        else:
            duty = (k * gap / g) / (1.0 - exp(-x))
        if not (duty <= 1.0):
            self._earliest(start_c, target_c)
            return self._answer(status.OUT_OF_REACH, REASON_TOO_SLOW)
        self.duty = duty
        self.on_time = True
        return self._answer(status.TRACKING, REASON_NONE)

    def cooling(self, start_c, target_c, deadline_s):
        """With the heater off: does the liquid reach ``target_c`` by the deadline, and when?

        deg C, deg C, seconds from now; works for cooling down and for
        warming up passively (a chilled drink in a warm room). ``ARRIVED``
        (already there, ``eta_s = 0.0``); ``TRACKING`` (``eta_s`` <= deadline,
        ``on_time`` true); ``OUT_OF_REACH`` with REASON_LATE (``eta_s`` is
        after the deadline), REASON_NEVER (the target lies at or beyond where
        it levels off), or REASON_WORK_CAP. Returns the status code.
        """
        self._clear()
        fc = self.forecast
        start_c = _real(start_c)
        target_c = _real(target_c)
        deadline_s = _real(deadline_s)
        if not self._inputs_ok(start_c, target_c, deadline_s):
            return self._answer(status.OUT_OF_REACH, REASON_BAD_INPUT)
        fc.set_plan_duty(0.0)
        eta = fc.time_to_target_s(start_c, target_c)
        self.work += fc.work
        if eta is None:
            reason = fc.reason
            if reason != REASON_WORK_CAP and reason != REASON_BAD_INPUT:
                reason = REASON_NEVER
            return self._answer(status.OUT_OF_REACH, reason)
        self.eta_s = eta
        if eta == 0.0:
            self.on_time = True
            return self._answer(status.ARRIVED, REASON_NONE)
        if eta > deadline_s:
            return self._answer(status.OUT_OF_REACH, REASON_LATE)
        self.on_time = True
        return self._answer(status.TRACKING, REASON_NONE)
