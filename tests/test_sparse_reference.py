"""Readings minutes apart against outside references (CPython only).

- The sparse trace generator's closed form (tests/core/sparse_trace.py, used by
  the core tests on both runtimes) against scipy's ``solve_ivp`` (Radau, rtol =
  atol = 1e-12: DOP853's dense output was off by up to 3e-5 C between its long
  steps) on the same two equations, liquid and lagging probe.
- Its crossing against scipy's ``brentq`` on the solve_ivp solution.
- The estimator on solve_ivp traces read every 60-600 s: an answer from the
  third reading on, intervals that cover about as often as they say, and no
  early arrival after a pour with no direction given.
- A drink levelling off towards a drifting room (solve_ivp, crossing by brentq),
  read minutes apart: a target just beyond the fitted equilibrium, within the
  rate's own sd, gets an answer (``answer.REACH_SD``).
"""
import math
import os
import sys

import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "core"))

from sparse_trace import SparseTrace  # noqa: E402

from tinytherm import status as st  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402

# invented vessels: (liquid at t = 0, equilibrium, k 1/s, probe lag s, probe at t = 0);
# the fridge product tells the estimator where its air usually is (README: 4 +- 2 C)
SETTINGS = ({}, {}, {"ambient_prior_c": 4.0, "ambient_prior_sd_c": 2.0}, {"heater": True})
VESSELS = (
    (82.0, 21.0, 1.0 / 1500.0, 8.0, 82.0),     # a mug, probe in the drink
    (85.0, 20.0, 1.0 / 1800.0, 45.0, 20.0),    # a drink poured onto a cold strapped probe
    (24.0, 4.0, 1.0 / 4000.0, 20.0, 24.0),     # a drink in a fridge
    (18.0, 90.0, 1.0 / 6000.0, 10.0, 18.0),    # a bath heated at constant power
)


_SOLUTIONS = {}


def reference_solution(l0, eq, k, lag, p0, t_end):
    """scipy solve_ivp (Radau, rtol = atol = 1e-12) of dL/dt = -k (L - E), dP/dt = (L - P)/lag."""
    key = (l0, eq, k, lag, p0, t_end)
    if key not in _SOLUTIONS:
        def rhs(_t, y):
            return [-k * (y[0] - eq), (y[0] - y[1]) / lag]
        _SOLUTIONS[key] = solve_ivp(rhs, (0.0, t_end), [l0, p0], method="Radau", rtol=1e-12,
                                    atol=1e-12, dense_output=True)
    return _SOLUTIONS[key]


def test_closed_form_matches_solve_ivp():
    for l0, eq, k, lag, p0 in VESSELS:
        tr = SparseTrace(l0, eq, k, lag_s=lag, probe0_c=p0, seed=4)
        sol = reference_solution(l0, eq, k, lag, p0, 20000.0)
        for t in np.linspace(0.0, 20000.0, 401):
            liquid, probe = sol.sol(t)
            assert abs(tr.liquid_at(t) - liquid) < 1e-7
            assert abs(tr.probe_at(t) - probe) < 1e-7


def test_crossing_matches_brentq_on_solve_ivp():
    for (l0, eq, k, lag, p0), target in zip(VESSELS, (45.0, 50.0, 8.0, 55.0)):
        tr = SparseTrace(l0, eq, k, lag_s=lag, probe0_c=p0)
        sol = reference_solution(l0, eq, k, lag, p0, 30000.0)
        mine = tr.crossing_s(target)
        # the last crossing: bracket from just after the probe's turn (or 0) to the end
        grid = np.linspace(0.0, 30000.0, 30001)
        side = np.sign(sol.sol(grid)[1] - target)
        last = int(np.nonzero(side != side[-1])[0][-1])
        ref = brentq(lambda t: sol.sol(t)[1] - target, grid[last], grid[last + 1], xtol=1e-9)
        assert abs(mine - ref) < 1e-3, (mine, ref)


def solve_ivp_readings(vessel, seed, target, min_s=60.0, max_s=600.0, noise=0.05, q=0.0625):
    """Readings of the solve_ivp probe every min_s..max_s s (seeded), to 20 readings past the
    crossing; returns times, readings, noise-free probe values and the crossing (brentq)."""
    l0, eq, k, lag, p0 = vessel
    rng = np.random.default_rng(seed)
    sol = reference_solution(l0, eq, k, lag, p0, 40000.0)
    grid = np.linspace(0.0, 40000.0, 40001)
    side = np.sign(sol.sol(grid)[1] - target)
    last = int(np.nonzero(side != side[-1])[0][-1])
    crossing = brentq(lambda t: sol.sol(t)[1] - target, grid[last], grid[last + 1])
    times = [0.0]
    while times[-1] < crossing + 20 * max_s:
        times.append(times[-1] + rng.uniform(min_s, max_s))
    times = np.array(times)
    clean = sol.sol(times)[1]
    readings = np.round((clean + rng.normal(0.0, noise, len(times))) / q) * q
    return times, readings, clean, crossing


def replay(times, readings, target, settings, approach):
    est = ThermalEstimator(**settings)
    rows = []
    for i in range(len(times)):
        est.update(float(readings[i]), 0.0 if i == 0 else float(times[i] - times[i - 1]),
                   duty=1.0 if est.heater else 0.0)
        est.predict(target, approach)
        rows.append((est.status, est.eta_s, est.eta_low_s, est.eta_high_s))
    return rows


def test_sparse_solve_ivp_traces_answer_from_the_third_reading_with_sane_intervals():
    targets = (45.0, 50.0, 8.0, 55.0)
    directions = (-1, -1, -1, 1)
    inside = shown = rows_after_third = answered = 0
    widths = []
    for vessel, target, direction, settings in zip(VESSELS, targets, directions, SETTINGS):
        for seed in range(6):
            times, readings, clean, crossing = solve_ivp_readings(vessel, 100 + seed, target)
            for approach in (0, direction):
                out = replay(times, readings, target, settings, approach)
                assert out[2][0] == st.TRACKING, (vessel, seed, approach, out[:4])
                for (status, eta, low, high), t in zip(out[2:], times[2:]):
                    if t >= crossing:
                        break
                    rows_after_third += 1
                    answered += status in (st.TRACKING, st.ARRIVED)
                    if status == st.TRACKING and eta > 0.0:
                        shown += 1
                        inside += low <= crossing - t <= high
                        widths.append(high / low)
    # an answer on at least 95 % of the readings from the third to the crossing, and
    # 80 % intervals that cover (on these exact first-order curves they are on the
    # wide side: 0.985 when this test was written) but are no union of everything:
    # high / low at most 4 in the median (a factor 2 either side)
    assert answered >= 0.95 * rows_after_third, (answered, rows_after_third)
    assert 0.70 <= inside / shown < 1.0, (inside, shown)
    assert float(np.median(widths)) <= 4.0, float(np.median(widths))


def test_no_early_arrival_after_a_pour_on_solve_ivp_traces():
    # a drink poured onto a probe at room temperature, no direction given: the probe
    # rises through every target below the pour; never "arrived" while it is more
    # than max(0.3 C, 3 noise sd) above the target (the benchmark's rule)
    for lag in (5.0, 20.0, 45.0, 60.0):
        vessel = (85.0, 20.0, 1.0 / 1800.0, lag, 20.0)
        for target in (35.0, 50.0, 65.0):
            for seed, (lo, hi) in enumerate(((60.0, 600.0), (60.0, 120.0), (10.0, 10.0))):
                times, readings, clean, _ = solve_ivp_readings(vessel, seed, target, lo, hi)
                out = replay(times, readings, target, {}, 0)
                early = [i for i, row in enumerate(out)
                         if row[0] == st.ARRIVED and clean[i] - target > 0.3]
                assert not early, (lag, target, (lo, hi), early[:3], math.nan)


def _crossing(sol, index, target, direction, t_end):
    """The first crossing of state ``index`` through ``target`` (brentq on the solve_ivp output)."""
    grid = np.linspace(0.0, t_end, int(t_end) + 1)
    i = int(np.nonzero((sol.sol(grid)[index] - target) * direction >= 0.0)[0][0])
    return brentq(lambda t: sol.sol(t)[index] - target, grid[i - 1], grid[i], xtol=1e-9)


def _sparse_rows(sol, index, target, direction, seed, settings, lo_s, hi_s, duty=0.0):
    """Replay readings of the solve_ivp probe every lo_s..hi_s s (seeded, 0.05 C noise, 12-bit)
    up to the crossing; per reading from the third on: (status, eta, low, high, remaining s)."""
    crossing = _crossing(sol, index, target, direction, 40000.0)
    rng = np.random.default_rng(seed)
    times = [0.0]
    while times[-1] < crossing:
        times.append(times[-1] + rng.uniform(lo_s, hi_s))
    times = np.array(times)
    readings = np.round((sol.sol(times)[index] + rng.normal(0.0, 0.05, len(times))) / 0.0625) * 0.0625
    est = ThermalEstimator(**settings)
    rows = []
    for i in range(len(times)):
        est.update(float(readings[i]), 0.0 if i == 0 else float(times[i] - times[i - 1]), duty=duty)
        est.predict(target)
        if i >= 2 and times[i] < crossing:
            rows.append((est.status, est.eta_s, est.eta_low_s, est.eta_high_s, crossing - times[i]))
    return rows


def test_a_drink_in_a_drifting_room_read_minutes_apart_is_answered_from_the_third_reading():
    # a drink levelling off towards a room whose air drifts by 0.6-0.8 C an hour, read every
    # 1-10 minutes: the fitted equilibrium lags the drift and often lies just short of the
    # target while the rate's own sd reaches it. Such a target is no longer left without an
    # answer: it is answered with no upper bound (answered from the third reading: 0.89 of
    # the rows before, 0.96 after). Our own invented rooms; reference: solve_ivp and brentq
    answered = rows = 0
    for l0, r0, drift_c_per_h, k, target in ((30.0, 20.0, -0.6, 1 / 2500, 19.0),
                                             (8.0, 18.0, 0.8, 1 / 3000, 19.0)):
        def rhs(t, y, r0=r0, drift=drift_c_per_h / 3600.0, k=k):
            return [-k * (y[0] - r0 - drift * t), (y[0] - y[1]) / 20.0]
        sol = solve_ivp(rhs, (0.0, 40000.0), [l0, l0], method="Radau", rtol=1e-10, atol=1e-10,
                        dense_output=True)
        for seed in range(8):
            for status, eta, low, high, remaining in _sparse_rows(
                    sol, 1, target, 1 if target > l0 else -1, 300 + seed, {}, 60.0, 600.0):
                rows += 1
                answered += status in (st.TRACKING, st.ARRIVED)
                if status == st.TRACKING and eta > 0.0:
                    assert 0.0 < low <= eta <= high  # (an open end: high is inf)
    assert rows >= 300, rows
    assert answered >= 0.95 * rows, (answered, rows)

