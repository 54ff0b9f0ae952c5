"""A drink in cycling air, the air measured, read by a probe that partly sees the air.

A strap-on probe reads the drink and, in part, the air itself: ``P = (1 - w) L + w A``
(lagged). With an air sensor the fit's law is driven by the measured air, but it had
no term for that direct view, so the fitted slope carried the air's swing
(``w dA/dt``) and the answer extrapolated today's phase of it. The regression's air
column (``fit.AIR_COLUMN``, prior sd ``estimator.AIR_VIEW_SD``) fits ``w``, and the
answer takes the air ahead at its mean for that term too (``answer._work_out``), and an
arrival needs the liquid, the probe's level less ``w (A - M)``, past the target as well
(``answer._arrived``: a probe pulled towards cold air by its view of it is no arrival).

Reference physics: scipy ``solve_ivp`` (Radau, rtol = atol = 1e-10) of
``dL/dt = -k (L - A(t))``, ``dP/dt = ((1 - w) L + w A(t) - P) / lag``,
``A(t) = room + amp sin(2 pi t / period + 1)``; the probe's crossing by scipy
``brentq``. The air sensor reads ``A(t)`` with noise, quantised. Our own invented
drinks and rooms. Measured (8 noise seeds each) before the column -> with it: the cold
drink's shown rows 2,123 -> 2,518 of 2,536, coverage 0.708 -> 0.810, median |ln
(true / eta)| 0.576 -> 0.234; the hot drink's coverage 0.524 -> 0.715, median 0.219 ->
0.161.
"""
import math

import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from probe_rows import drink_in_cycling_air
from tinytherm import status as st
from tinytherm.estimator import ThermalEstimator

# drink at t = 0, room mean, swing amplitude (deg C), period (s), k (1/s), the air's
# share of the probe, probe lag (s), target (deg C), seconds between readings
COLD = (5.0, 22.0, 2.0, 1800.0, 1.0 / 4000.0, 0.25, 30.0, 16.0, 10.0)
HOT = (70.0, 21.0, 3.0, 2400.0, 1.0 / 3000.0, 0.2, 40.0, 35.0, 10.0)


def _replay(drink):
    """(rows, shown, covered, median |ln(true remaining / eta)|) over 8 noise seeds."""
    l0, room, amp, period, k, w, lag, target, dt = drink

    sol, air = drink_in_cycling_air(l0, room, amp, period, k, w, lag, 40000.0)
    grid = np.arange(0.0, 40000.0, 5.0)
    d = 1.0 if target > l0 else -1.0
    i = int(np.nonzero((sol.sol(grid)[1] - target) * d >= 0.0)[0][0])
    crossing = brentq(lambda t: sol.sol(t)[1] - target, grid[i - 1], grid[i], xtol=1e-9)
    assert 3000.0 < crossing < 3500.0  # (the scenarios as written: about 3,220 s)
    rows = shown = covered = 0
    errors = []
    for seed in range(8):
        rng = np.random.default_rng(900 + seed)
        times = np.arange(0.0, crossing, dt)
        probe = np.round((sol.sol(times)[1] + rng.normal(0.0, 0.05, len(times))) / 0.0625) * 0.0625
        amb = np.round((np.array([air(t) for t in times]) + rng.normal(0.0, 0.05, len(times)))
                       / 0.0625) * 0.0625
        est = ThermalEstimator(quantum_c=0.0625)
        for j, t in enumerate(times):
            est.update(float(probe[j]), 0.0 if j == 0 else dt, ambient_c=float(amb[j]))
            est.predict(target)
            if t < 60.0:
                continue  # (the benchmark's warm-up)
            rows += 1
            assert est.status != st.ARRIVED  # (the probe is short of the target throughout)
            if est.status == st.TRACKING and est.eta_s > 0.0:
                shown += 1
                covered += est.eta_low_s <= crossing - t <= est.eta_high_s
                errors.append(abs(math.log(max(crossing - t, 1.0) / max(est.eta_s, 1.0))))
    return rows, shown, covered, float(np.median(errors))



def replay_read_through_air(sol, air, end_s, dt, seed, target):
    """Replays the solved drink to ``end_s`` (s), read every ``dt`` s by the probe and an
    air sensor (noise sd 0.05 C, a 0.0625 C quantum: a common digital probe's; common
    practice, no source; numpy's generator of ``seed``) into a default estimator with the
    air measured. Yields ``(t, liquid_c, est, arrived)`` for each reading."""
    rng = np.random.default_rng(seed)
    times = np.arange(0.0, end_s, dt)
    states = sol.sol(times)
    probe = np.round((states[1] + rng.normal(0.0, 0.05, len(times))) / 0.0625) * 0.0625
    amb = np.round((np.array([air(t) for t in times]) + rng.normal(0.0, 0.05, len(times)))
                   / 0.0625) * 0.0625
    est = ThermalEstimator(quantum_c=0.0625)
    for j, t in enumerate(times):
        est.update(float(probe[j]), 0.0 if j == 0 else dt, ambient_c=float(amb[j]))
        yield float(t), float(states[0][j]), est, est.predict(target) == st.ARRIVED


def first_arrival(sol, air, crossing, dt, seed, target, liquid_then, falling):
    """One seed's replay (``replay_read_through_air``) to 3,000 s past the probe's ``crossing``
    (s): the first arrival's time (None: none), the early rows (arrived while the liquid is
    short of ``liquid_then``, deg C, by more than the benchmark's 0.3 C margin, the way it
    moves: ``falling`` or rising) and the rows before the crossing fitted with the air's
    share judged as no air column (``est.reg.g`` 0)."""
    first = None
    early = pinned = 0
    for t, liquid, est, arrived in replay_read_through_air(sol, air, crossing + 3000.0, dt,
                                                            seed, target):
        if arrived:
            first = t if first is None else first
            early += liquid > liquid_then + 0.3 if falling else liquid < liquid_then - 0.3
        pinned += t < crossing and est.reg.ok and est.reg.g == 0.0
    return first, early, pinned


def test_a_cold_drink_read_partly_through_the_air_is_answered_and_covered():
    rows, shown, covered, median = _replay(COLD)
    # before the air's column: 2,123 of 2,536 rows shown, 0.708 covered, median 0.576
    assert shown >= 0.95 * rows, (shown, rows)
    assert 0.75 <= covered / shown <= 0.9, covered / shown
    assert median <= 0.3, median


def test_a_hot_drink_read_partly_through_the_air_is_covered():
    rows, shown, covered, median = _replay(HOT)
    # before: 0.524 covered, median 0.219 (every row shown before and after)
    assert shown >= 0.95 * rows, (shown, rows)
    assert 0.65 <= covered / shown <= 0.9, covered / shown
    assert median <= 0.19, median


# a drink cooling in a fridge whose air cycles (a skewed swing: a second harmonic), the
# probe strapped on and seeing a fifth of the air: start, air mean, swing, period (s), k
# (1/s), the air's share, probe lag (s), target (deg C), seconds between readings
FRIDGE = (20.0, 4.0, 2.0, 1800.0, 1.0 / 3000.0, 0.2, 40.0, 8.0, 10.0)


def test_a_probe_pulled_by_the_cold_air_does_not_arrive_before_the_liquid():
    """No ``ARRIVED`` while the liquid is short of its value at the probe's first crossing by
    more than the benchmark's margin (0.3 C, ``host_sim.replay.metrics.early_margin_c``),
    and an arrival within 300 s of that crossing, in every one of 8 noise seeds.

    Reference physics: scipy ``solve_ivp`` (Radau, rtol = atol = 1e-10) of the liquid and
    the lagged probe ``(1 - w) L + w A(t)``; the probe's first crossing of the target by
    scipy ``brentq``. Measured at b9b607b (no air column): 43 early rows, each seed's first
    arrival 650-730 s before the crossing; with the column and the liquid's arrival test
    (the level less ``w (A - M)``): none, the first arrival 3 s before to 27 s after it."""
    l0, mean, amp, period, k, w, lag, target, dt = FRIDGE

    sol, air = drink_in_cycling_air(l0, mean, amp, period, k, w, lag, 30000.0, second=0.3)
    grid = np.arange(0.0, 30000.0, 5.0)
    i = int(np.nonzero(sol.sol(grid)[1] <= target)[0][0])
    crossing = brentq(lambda t: sol.sol(t)[1] - target, grid[i - 1], grid[i], xtol=1e-9)
    liquid_then = float(sol.sol(crossing)[0])
    assert 3700.0 < crossing < 4000.0  # (the scenario as written: about 3,863 s)
    early = 0
    for seed in range(8):
        first, e, _ = first_arrival(sol, air, crossing, dt, 700 + seed, target, liquid_then, True)
        early += e
        assert first is not None and first <= crossing + 300.0, (seed, first, crossing)
    assert early == 0, early


# a cold drink set down in a warm room whose air cycles, the probe strapped on as it is set
# down (at the air's temperature) and read every 300 s: on its way down to the drink the
# probe passes a target the drink reaches only an hour later, warming
STRAPPED = (5.0, 28.0, 3.0, 1800.0, 1.0 / 5000.0, 0.2, 150.0, 20.5, 300.0)


def test_a_share_of_the_air_no_probe_has_is_judged_as_no_air_column():
    """A probe's share of the air lies in 0..1 (it reads a mixture of the liquid and the air;
    common practice, no source). Three readings 300 s apart, the probe falling from the air
    to the drink, fitted the share at -1.5 to -5.9 and arrived at the third reading (16 early
    rows over 8 seeds at c216fcb, the fit without the column none): such a fit is judged
    as if it had no air column (``fit.Regression.solve``, the share 0), never arriving
    while the liquid is short of its value at the probe's crossing by more than the
    benchmark's margin (0.3 C), and arriving within three readings of that crossing.

    Reference physics: scipy ``solve_ivp`` (Radau, rtol = atol = 1e-10) of the liquid and
    the lagged probe ``(1 - w) L + w A(t)``, the probe starting in the air; the probe's
    crossing of the target on its way up by scipy ``brentq``."""
    l0, mean, amp, period, k, w, lag, target, dt = STRAPPED
    sol, air = drink_in_cycling_air(l0, mean, amp, period, k, w, lag, 12000.0, probe_in_air=True)
    grid = np.arange(0.0, 12000.0, 5.0)
    probe_exact = sol.sol(grid)[1]
    low = int(np.argmin(probe_exact))
    i = low + int(np.nonzero(probe_exact[low:] >= target)[0][0])
    crossing = brentq(lambda t: sol.sol(t)[1] - target, grid[i - 1], grid[i], xtol=1e-9)
    liquid_then = float(sol.sol(crossing)[0])
    assert probe_exact[0] > target + 5.0 and 4800.0 < crossing < 5200.0  # (about 4,975 s)
    early = pinned = 0
    for seed in range(8):
        first, e, p = first_arrival(sol, air, crossing, dt, 500 + seed, target, liquid_then, False)
        early += e
        pinned += p
        assert first is not None and first <= crossing + 3.0 * dt, (seed, first, crossing)
    assert pinned > 0  # (the share was out of 0..1 before the crossing: judged without it)
    assert early == 0, early


def test_a_steady_air_leaves_the_arrival_at_the_crossing():
    """With a measured air that barely moves (a 0.2 C swing) the probe's share of it cannot be
    identified and its fit wanders either side of 0 (-0.05 to 0.07 near the crossing here):
    judged as a fit without the air column below 0, it still arrives within 30 s of the
    probe's crossing (refusing the arrival on such a share, eb0e14f, held it 234-314 s past
    the crossing in 7 of these 8 seeds), and never before it.

    Reference physics: scipy ``solve_ivp`` (Radau, rtol = atol = 1e-10) of a drink cooling
    towards its room's mean air (the swing, 1000 s long, would move it by 0.02 C: left out),
    the probe lagging it by 1 s and seeing none of the air; the probe's crossing by scipy
    ``brentq``. Readings 2 s apart, noise 0.03 C, steps 1/16 C; the air read exactly."""
    l0, room, amp, period, k, lag, target, dt = 81.0, 21.0, 0.2, 1000.0, 1.0 / 1500.0, 1.0, 40.0, 2.0
    sol = solve_ivp(lambda t, y: [-k * (y[0] - room), (y[0] - y[1]) / lag], (0.0, 4000.0),
                    [l0, l0], method="Radau", rtol=1e-10, atol=1e-10, dense_output=True,
                    max_step=20.0)
    grid = np.arange(0.0, 4000.0, 5.0)
    i = int(np.nonzero(sol.sol(grid)[1] <= target)[0][0])
    crossing = brentq(lambda t: sol.sol(t)[1] - target, grid[i - 1], grid[i], xtol=1e-9)
    liquid_then = float(sol.sol(crossing)[0])
    assert 1700.0 < crossing < 1800.0  # (about 1,727 s)
    for seed in range(8):
        rng = np.random.default_rng(800 + seed)
        times = np.arange(0.0, crossing + 600.0, dt)
        states = sol.sol(times)
        probe = np.round((states[1] + rng.normal(0.0, 0.03, len(times))) / 0.0625) * 0.0625
        est = ThermalEstimator(quantum_c=0.0625)
        first = None
        for j, t in enumerate(times):
            est.update(float(probe[j]), 0.0 if j == 0 else dt,
                       ambient_c=room + amp * math.sin(2.0 * math.pi * t / period))
            if est.predict(target) == st.ARRIVED and first is None:
                first = t
                assert states[0][j] <= liquid_then + 0.3, (seed, t, crossing)
        assert first is not None and abs(first - crossing) <= 30.0, (seed, first, crossing)
