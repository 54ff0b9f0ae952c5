"""Whether an audit's check learns rests on the move its forecast predicted, never on the move
observed (``answer.Audit.check``).

The audits measure the interval's forecast errors. Their gate (a move over ``need_c``, so
that the log error of the time is no noise) was on the observed move: a check learnt only
when the probe had moved far enough, so of the checks at a short horizon it kept those a
swing (the probe's direct view of cycling air, noise) had pushed along, all fast, and
dropped those it held back. Gated on the forecast's own move over the time taken, a check
learns whatever happened.

Reference: scipy ``solve_ivp`` (DOP853, rtol = atol = 1e-10) of the forecast's law
``dT/dt = -k (T - E)`` from the audit's level gives the move the forecast predicted over
the time taken; scipy ``brentq`` on its dense output the time that law takes for the
observed move, whose log ratio to the time taken is the error learnt. Our own invented
numbers (a drink cooling towards 4 C air, k = 1/2500 s).
"""
import math

from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from tinytherm.answer import AUDIT_LOG_CAP, Audit
from tinytherm.num import time_to_target_from_slope_s

LEVEL, E, K = 20.0, 4.0, 1.0 / 2500.0   # deg C, deg C, 1/s: the forecast's law at its start
AGE, NEED = 2000.0, 0.3                  # s: the fit's age at the forecast; deg C: the gate


class _Law:
    """The estimator's own law for the audits (``ThermalEstimator.forecast_s`` without a profile)."""

    def forecast_s(self, moved_c, level_c, slope, rate):
        return time_to_target_from_slope_s(moved_c, slope, rate)


def _law_solution(end_s, level=LEVEL, e=E):
    return solve_ivp(lambda t, y: [-K * (y[0] - e)], (0.0, end_s), [level], method="DOP853",
                     rtol=1e-10, atol=1e-10, dense_output=True)


def _check(took_s, observed_move_c, level=LEVEL, e=E):
    """An audit (the shortest: a horizon of 250 s at AGE) with a forecast started at AGE from
    ``level`` under the law towards ``e``, checked ``took_s`` later with the level moved by
    ``observed_move_c``; returns the audit."""
    a = Audit(0.125)
    a.check(_Law(), AGE, level, -K * (level - e), K, NEED)  # (starts the forecast)
    a.check(_Law(), AGE + took_s, level + observed_move_c, -K * (level - e), K, NEED)
    return a


def test_a_check_held_back_by_a_swing_still_learns():
    took = 300.0
    sol = _law_solution(took)
    predicted = float(sol.sol(took)[0]) - LEVEL
    assert predicted < -NEED  # (the forecast's move, solve_ivp: about -1.81 C, over the gate)
    observed = -0.28  # a swing of the air held the probe back: under the gate
    a = _check(took, observed)
    assert a.n == 1  # before the change: 0, the check never learnt
    t_law = brentq(lambda t: float(sol.sol(t)[0]) - (LEVEL + observed), 1e-6, took)
    assert math.isclose(a.var, math.log(took / t_law) ** 2, rel_tol=1e-6)  # (ln(300 / 44.1))


def test_a_check_pushed_along_by_a_swing_does_not_learn():
    # near its equilibrium (5 C towards 4 C air) the forecast moves little in 300 s
    took = 300.0
    sol = _law_solution(took, 5.0, 4.0)
    predicted = float(sol.sol(took)[0]) - 5.0
    assert -NEED < predicted < 0.0  # (solve_ivp: about -0.11 C, under the gate)
    t_law = brentq(lambda t: float(_law_solution(3000.0, 5.0, 4.0).sol(t)[0]) - 4.4, 1e-6, 3000.0)
    assert math.log(took / t_law) < -2.0  # (what it would have learnt: ln(300 / 2291), fast)
    a = _check(took, -0.6, 5.0, 4.0)  # a swing pushed the probe along: over the gate
    assert a.n == 0 and a.var == 0.0  # before the change: learnt that error
    assert a.age == AGE + took and a.level == 4.4  # (the next forecast starts all the same)


def test_a_rising_liquid_held_back_learns_the_capped_error():
    # a drink warming from 8 C towards 22 C air: the same gate on the forecast's move; the
    # observed 0.1 C would take the law about 18 s of the 300 (over a factor 8: the cap)
    ref = _law_solution(300.0, 8.0, 22.0)
    assert float(ref.sol(300.0)[0]) - 8.0 > NEED  # (about +1.58 C)
    t_law = brentq(lambda t: float(ref.sol(t)[0]) - 8.1, 1e-6, 300.0)
    assert math.log(300.0 / t_law) > AUDIT_LOG_CAP
    a = _check(300.0, 0.1, 8.0, 22.0)
    assert a.n == 1 and math.isclose(a.var, AUDIT_LOG_CAP ** 2)  # before: 0, never learnt
