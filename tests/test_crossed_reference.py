"""A cooling drink read minutes apart: an answer once the readings have passed the target.

A drink cooling towards a fridge or a room, read every 2 minutes by a noisy
lagging probe: the fitted level and the latest two readings pass the target a
reading or more before the arrival's tests do (its block mean must stand
:data:`tinytherm.answer.ARRIVE_Z` sd past the target). Those readings get an
answer, eta 0 with an interval to the line's tolerance (status TRACKING, never
ARRIVED), not "no estimate"; and no arrival nor eta 0 while the probe is still
more than the arrival line's tolerance (:data:`tinytherm.answer.ARRIVE_TOL_C`)
short of the target.

Reference physics: scipy ``solve_ivp`` (Radau, rtol = atol = 1e-10) of
``dL/dt = -k (L - R)``, ``dP/dt = (L - P) / lag``; the probe's crossing of the
target by scipy ``brentq``. Our own invented drinks and rooms.
"""
import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from tinytherm import status as st
from tinytherm.answer import ARRIVE_TOL_C
from tinytherm.estimator import ThermalEstimator

# (liquid and probe at t = 0, surroundings, k 1/s, probe lag s, target): deg C, 1/s, s, deg C
DRINKS = (
    (22.0, 5.0, 1.0 / 3000.0, 40.0, 10.0),   # a bottle cooling in a fridge
    (30.0, 20.0, 1.0 / 5000.0, 30.0, 25.0),  # a warm drink cooling in a room
)


def _rows(drink, seed, approach, dt_s=120.0, noise_c=0.2):
    """(rows past the crossing, of them with no estimate, early rows) of one trace that
    goes on 8 readings past the probe's crossing."""
    l0, room, k, lag, target = drink
    end = 40000.0
    sol = solve_ivp(lambda _t, y: [-k * (y[0] - room), (y[0] - y[1]) / lag], (0.0, end),
                    [l0, l0], method="Radau", rtol=1e-10, atol=1e-10, dense_output=True)
    grid = np.arange(0.0, end, 10.0)
    i = int(np.nonzero(sol.sol(grid)[1] <= target)[0][0])
    crossing = brentq(lambda t: sol.sol(t)[1] - target, grid[i - 1], grid[i], xtol=1e-9)
    rng = np.random.default_rng(seed)
    times = np.arange(0.0, crossing + 8 * dt_s, dt_s)
    readings = sol.sol(times)[1] + rng.normal(0.0, noise_c, len(times))
    est = ThermalEstimator()
    past = none = early = 0
    for j, t in enumerate(times):
        est.update(float(readings[j]), 0.0 if j == 0 else dt_s)
        s = est.predict(target, approach)
        if t >= crossing:
            past += 1
            none += s not in (st.TRACKING, st.ARRIVED)
        elif (s == st.ARRIVED or (s == st.TRACKING and est.eta_s == 0.0)) and \
                sol.sol(t)[1] > target + ARRIVE_TOL_C:
            early += 1
    return past, none, early


def test_readings_past_the_target_get_an_answer_before_the_arrival():
    for drink in DRINKS:
        for approach in (0, -1):
            tot = np.zeros(3)
            for seed in range(16):
                tot += _rows(drink, 900 + seed, approach)
            past, none, early = tot
            assert early == 0, (drink, approach, early)
            # before the rule: 0.16 and 0.16 of the rows past the crossing had no
            # estimate; after: 0.07 and 0.09
            assert none <= 0.10 * past, (drink, approach, none / past)
