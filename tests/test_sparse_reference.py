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
- A turn read minutes apart (solve_ivp, crossing by brentq): a mug topped up,
  its lagging probe's peak seeding the fit with the reading after it; one
  reading off by a spike the guard passed on a steep fall, dropped when the
  next comes back (``ThermalEstimator._finish_block``).
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


def read_apart(seed, end_s, lo_s, hi_s, probe_at, noise=0.05, q=0.0625):
    """Times from 0 s, each lo_s..hi_s s after the last (seeded), until one is past end_s;
    the probe's values there (``probe_at(times)``, deg C) and its readings: with Gaussian
    noise of sd ``noise``, quantised to ``q`` deg C. Returns times, readings, clean values."""
    rng = np.random.default_rng(seed)
    times = [0.0]
    while times[-1] < end_s:
        times.append(times[-1] + rng.uniform(lo_s, hi_s))
    times = np.array(times)
    clean = probe_at(times)
    readings = np.round((clean + rng.normal(0.0, noise, len(times))) / q) * q
    return times, readings, clean


def solve_ivp_readings(vessel, seed, target, min_s=60.0, max_s=600.0, noise=0.05, q=0.0625):
    """Readings of the solve_ivp probe every min_s..max_s s (seeded), to 20 readings past the
    crossing; returns times, readings, noise-free probe values and the crossing (brentq)."""
    l0, eq, k, lag, p0 = vessel
    sol = reference_solution(l0, eq, k, lag, p0, 40000.0)
    grid = np.linspace(0.0, 40000.0, 40001)
    side = np.sign(sol.sol(grid)[1] - target)
    last = int(np.nonzero(side != side[-1])[0][-1])
    crossing = brentq(lambda t: sol.sol(t)[1] - target, grid[last], grid[last + 1])
    times, readings, clean = read_apart(seed, crossing + 20 * max_s, min_s, max_s,
                                        lambda ts: sol.sol(ts)[1], noise, q)
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
    times, readings, _ = read_apart(seed, crossing, lo_s, hi_s, lambda ts: sol.sol(ts)[index])
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



def _poured_probe(l0, eq, k, lag, t_pour, l_after, t_end, index=1):
    """solve_ivp (Radau, rtol = atol = 1e-12) of dL/dt = -k (L - E), dP/dt = (L - P) / lag, the
    liquid set to ``l_after`` at ``t_pour`` (a top-up mixed at once), the probe continuous;
    returns the probe (``index`` 0: the liquid) as a function of time."""
    def rhs(_t, y):
        return [-k * (y[0] - eq), (y[0] - y[1]) / lag]
    before = solve_ivp(rhs, (0.0, t_pour), [l0, l0], method="Radau", rtol=1e-12, atol=1e-12,
                       dense_output=True)
    after = solve_ivp(rhs, (t_pour, t_end), [l_after, before.y[1, -1]], method="Radau",
                      rtol=1e-12, atol=1e-12, dense_output=True)
    return lambda t: float((before.sol(t) if t <= t_pour else after.sol(t))[index])


def _replay_from(times, readings, target, first, crossing):
    """Per reading from index ``first`` to the crossing: (status, eta, low, high, remaining s),
    no direction given."""
    est = ThermalEstimator()
    rows = []
    for i in range(len(times)):
        est.update(float(readings[i]), 0.0 if i == 0 else float(times[i] - times[i - 1]))
        est.predict(target)
        if i >= first and times[i] < crossing:
            rows.append((est.status, est.eta_s, est.eta_low_s, est.eta_high_s, crossing - times[i]))
    return rows


def _count(rows):
    """(answered, rows, shown with a time, covered): the truth within the interval."""
    answered = shown = covered = 0
    for status, eta, low, high, remaining in rows:
        answered += status in (st.TRACKING, st.ARRIVED)
        if status == st.TRACKING and eta > 0.0:
            shown += 1
            covered += low <= remaining <= high
    return answered, len(rows), shown, covered


def test_a_top_up_read_minutes_apart_is_answered_from_the_reading_after_the_probe_peak():
    # a mug cooling from 70 C in a 21 C room (k 1/2400 s), topped up to 75 C at 1500 s, its
    # probe lagging 30 s, read every 60-600 s, target 40 C, no direction given. The pour reads
    # as a turn up, the probe's peak (where a lagging probe reads its liquid: dP/dt = 0) as
    # the turn down: the fit starts at the peak with the reading after it (before: at that
    # reading alone, two readings gathering: 67 of 83 rows answered from the second reading
    # after the pour; after 78, 67 covered). Our own invented mug; reference: solve_ivp, brentq
    target, t_pour = 40.0, 1500.0
    probe = _poured_probe(70.0, 21.0, 1.0 / 2400.0, 30.0, t_pour, 75.0, 20000.0)
    grid = np.arange(t_pour, 20000.0, 1.0)
    values = np.array([probe(t) for t in grid])
    peak = int(np.argmax(values))
    i = peak + int(np.nonzero(values[peak:] <= target)[0][0])
    crossing = brentq(lambda t: probe(t) - target, grid[i - 1], grid[i], xtol=1e-9)
    answered = rows = shown = covered = 0
    for seed in range(12):
        times, readings, _ = read_apart(seed, crossing + 1200.0, 60.0, 600.0,
                                        lambda ts: np.array([probe(t) for t in ts]))
        first = int(np.nonzero(times > t_pour)[0][0]) + 1  # the second reading after the pour
        a, n, s, c = _count(_replay_from(times, readings, target, first, crossing))
        answered, rows, shown, covered = answered + a, rows + n, shown + s, covered + c
    assert rows >= 80, rows
    assert answered >= 0.9 * rows, (answered, rows)
    assert 0.75 <= covered / shown < 1.0, (covered, shown)


def test_a_spike_on_a_steep_fall_read_minutes_apart_is_dropped_when_the_next_comes_back():
    # a wort cooling from 90 C towards a 12 C coil (k 1/1200 s), probe lag 10 s, read every
    # 60-300 s, target 20 C; the sixth reading 8 C too high, within the guard's window of
    # three (its scale the fall's own steps). The spike reads as a turn up (the fit seeded
    # with the reading before and the spike), the next reading back beyond the first of the
    # fit: the spike is dropped, the fit goes on from that first reading and the latest
    # (before: a fit begun at the spike, gathering or out of reach with the spike in it: 82 of
    # 116 rows answered from the reading after it; after: 112, 102 covered).
    # Our own invented wort; reference: solve_ivp (Radau) and brentq
    l0, eq, k, lag, target = 90.0, 12.0, 1.0 / 1200.0, 10.0, 20.0

    def rhs(_t, y):
        return [-k * (y[0] - eq), (y[0] - y[1]) / lag]
    sol = solve_ivp(rhs, (0.0, 20000.0), [l0, l0], method="Radau", rtol=1e-12, atol=1e-12,
                    dense_output=True)
    grid = np.arange(0.0, 20000.0, 1.0)
    i = int(np.nonzero(sol.sol(grid)[1] <= target)[0][0])
    crossing = brentq(lambda t: sol.sol(t)[1] - target, grid[i - 1], grid[i], xtol=1e-9)
    answered = rows = shown = covered = 0
    for seed in range(12):
        times, readings, _ = read_apart(seed, crossing + 1200.0, 60.0, 300.0,
                                        lambda ts: sol.sol(ts)[1])
        readings[5] += 8.0
        a, n, s, c = _count(_replay_from(times, readings, target, 6, crossing))
        answered, rows, shown, covered = answered + a, rows + n, shown + s, covered + c
    assert rows >= 100, rows
    assert answered >= 0.9 * rows, (answered, rows)
    assert 0.75 <= covered / shown < 1.0, (covered, shown)


def test_a_top_up_past_the_target_read_minutes_apart_is_no_arrival_from_the_reading_before_it():
    # a mug cooling from 70 C in a 21 C room (k 1/2400 s), probe lag 30 s, read every
    # 120-420 s, target 46 C, no direction given: it cools past 46 C (~1,650 s), is topped up
    # to 62 C at 2,000 s and cools to 46 C again. The last reading before the pour is a turn's
    # extreme (the rise after it the pour's): the fit restarted from it and the reading after
    # rises through 46 C, but the liquid jumped after that reading; no "arrived" while the
    # liquid is above 46 C by more than max(0.3 C, 3 noise sd) (the benchmark's rule) from the
    # second reading after the pour (the first the pour shows in; before the guard: 2 rows on
    # 2 of 40 runs). Our own invented mug; reference: solve_ivp (Radau), brentq
    target, t_pour, k = 46.0, 2000.0, 1.0 / 2400.0
    liquid = _poured_probe(70.0, 21.0, k, 30.0, t_pour, 62.0, 9000.0, index=0)
    probe = _poured_probe(70.0, 21.0, k, 30.0, t_pour, 62.0, 9000.0)
    back = brentq(lambda t: liquid(t) - target, t_pour + 1.0, 9000.0, xtol=1e-9)
    # (the closed form: 46 C again 2400 ln(41 / 25) s after the pour)
    assert abs(back - t_pour - 2400.0 * math.log(41.0 / 25.0)) < 1e-3, back
    early = []
    shown_after = 0
    for seed in range(40):
        times, readings, _ = read_apart(seed, back + 1500.0, 120.0, 420.0,
                                        lambda ts: np.array([probe(t) for t in ts]))
        first = int(np.nonzero(times > t_pour)[0][0]) + 1
        est = ThermalEstimator()
        for i in range(len(times)):
            est.update(float(readings[i]), 0.0 if i == 0 else float(times[i] - times[i - 1]))
            est.predict(target)
            if i >= first and est.status == st.ARRIVED:
                if liquid(times[i]) - target > 0.3:
                    early.append((seed, i))
                else:
                    shown_after += 1
    assert not early, early
    assert shown_after > 0, shown_after  # (the arrival after the liquid's own crossing: shown)


def test_a_fit_restarted_where_the_probe_met_the_drink_read_minutes_apart_answers_from_two():
    # a probe taken from hot water (95 C) into a 60 C mug cooling in a 21 C room (k 1/2400 s),
    # probe lag 60 s, read every 60-180 s, target 40 C, no direction given: the fit bends
    # through more than SETTLE_BEND time constants by SETTLE_S (the probe's fall) and restarts
    # where the probe met the drink (tinytherm.settle); read a block apart, its second reading
    # answers, as a fit seeded at a turn (before: gathering at that reading in 30 of 30 runs).
    # No early arrival, the shown intervals cover the probe's crossing 0.75-1.0.
    # Our own invented mug; reference: solve_ivp (Radau), brentq
    l0, eq, k, lag, target = 60.0, 21.0, 1.0 / 2400.0, 60.0, 40.0
    sol = reference_solution(l0, eq, k, lag, 95.0, 6000.0)
    crossing = _crossing(sol, 1, target, -1, 6000.0)
    # (the liquid's own crossing, closed form: 2400 ln(39 / 19) s; the probe's a lag later)
    liquid_crossing = 2400.0 * math.log(39.0 / 19.0)
    assert 0.0 < crossing - liquid_crossing < 2.0 * lag, (crossing, liquid_crossing)
    second = answered = shown = covered = 0
    early = []
    for seed in range(30):
        times, readings, _ = read_apart(seed, crossing + 600.0, 60.0, 180.0,
                                        lambda ts: sol.sol(ts)[1])
        est = ThermalEstimator()
        restarted = False
        for i in range(len(times)):
            est.update(float(readings[i]), 0.0 if i == 0 else float(times[i] - times[i - 1]))
            est.predict(target)
            restarted = restarted or (i > 0 and est.blocks.readings == 1)
            if est.status == st.ARRIVED and sol.sol(times[i])[0] - target > 0.3:
                early.append((seed, i))
            if times[i] >= crossing:
                continue
            if restarted and est.blocks.readings == 2:
                second += 1
                answered += est.status in (st.TRACKING, st.ARRIVED)
            if est.status == st.TRACKING and est.eta_s > 0.0:
                shown += 1
                covered += est.eta_low_s <= crossing - times[i] <= est.eta_high_s
    assert not early, early
    assert second >= 25, second
    assert answered >= 0.9 * second, (answered, second)
    assert 0.75 <= covered / shown < 1.0, (covered, shown)
