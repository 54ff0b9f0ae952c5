"""A pot on a hob read minutes apart: the first answers' intervals (CPython only).

A pot heated on an element that warms first (the element's and the pan base's
heat capacity between the power and the liquid) reads an accelerating curve
for its first minutes: the fit of its first readings is the exact straight line
(k pinned at 0), and readings minutes apart give that line no measure of its own
misfit (no residual degree of freedom, the noise never measured, no audit checked
yet). Its interval was the delta-method floor, 2 % sd, and held the crossing on
a tenth of the rows of at most four readings. While no audit has checked and the
noise is still its prior, the pinned line's prior is at least
``answer.LINE_PRIOR_VAR`` (leave-one-family-out on the tune seeds,
docs/benchmarks.md). Read a block apart, it stays that prior after the shortest
audit's first check: only checks at the answer's own horizon replace it, by their
count (a stock pot on a heavy hotplate, fits of 5-8 readings).

Reference physics: scipy ``solve_ivp`` (Radau, rtol = atol = 1e-10) of the
liquid, the element and a lagging probe; the crossing by scipy ``brentq`` on
its dense output. Water's heat capacity 4186 J/(kg K) is a handbook value
(from memory); the pots, elements and losses are our own invention.
"""
import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from tinytherm import status as st
from tinytherm.estimator import ThermalEstimator

AIR_C = 20.0
START_C = 15.0
TARGET_C = 85.0
LOSS_W_PER_K = 4.0
PROBE_LAG_S = 20.0
LO_S, HI_S = 60.0, 600.0   # s between readings (the families' sparse grid)
ELEMENT_W_PER_K = 30.0
# invented pots: (water kg, element W, the element's lag s)
POTS = ((2.0, 1500.0, 60.0), (3.0, 2000.0, 120.0), (1.5, 1200.0, 200.0), (4.0, 1800.0, 280.0))


def heat_up(mass_kg, power_w, element_lag_s):
    """solve_ivp of the liquid, the element (its heat capacity over its conductance to the
    liquid: its lag) and the probe (first-order lag): states deg C, time s."""
    c_liquid = 4186.0 * mass_kg            # J/K
    h = ELEMENT_W_PER_K                    # W/K, element to liquid
    c_element = element_lag_s * h          # J/K

    def rhs(_t, y):
        liquid, element, probe = y
        to_liquid = h * (element - liquid)
        return [(to_liquid - LOSS_W_PER_K * (liquid - AIR_C)) / c_liquid,
                (power_w - to_liquid) / c_element,
                (liquid - probe) / PROBE_LAG_S]
    return solve_ivp(rhs, (0.0, 20000.0), [START_C] * 3, method="Radau", rtol=1e-10,
                     atol=1e-10, dense_output=True)


def young_rows(sol, seed, fewest=1, most=4, lo_s=LO_S, hi_s=HI_S):
    """Readings every ``lo_s``-``hi_s`` s (seeded, 0.05 C noise, 1/16 C steps) to the probe's
    crossing (brentq); per shown answer of a fit of ``fewest``-``most`` readings: (inside,
    high / low)."""
    grid = np.linspace(0.0, 20000.0, 20001)
    i = int(np.nonzero(sol.sol(grid)[2] >= TARGET_C)[0][0])
    crossing = brentq(lambda t: sol.sol(t)[2] - TARGET_C, grid[i - 1], grid[i], xtol=1e-9)
    rng = np.random.default_rng(seed)
    times = [0.0]
    while times[-1] < crossing:
        times.append(times[-1] + rng.uniform(lo_s, hi_s))
    times = np.array(times)
    readings = np.round((sol.sol(times)[2] + rng.normal(0.0, 0.05, len(times))) / 0.0625) * 0.0625
    est = ThermalEstimator(heater=True)
    rows = []
    for j in range(len(times)):
        est.update(float(readings[j]), 0.0 if j == 0 else float(times[j] - times[j - 1]),
                   duty=1.0)
        est.predict(TARGET_C)
        if (times[j] < crossing and est.status == st.TRACKING and est.eta_s > 0.0
                and fewest <= est.blocks.readings <= most):
            rows.append((est.eta_low_s <= crossing - times[j] <= est.eta_high_s,
                         est.eta_high_s / est.eta_low_s))
    return rows


def _check_held_and_bounded(rows, least_rows):
    """At least ``least_rows`` rows (inside, high / low) of ``young_rows``; 3 in 4 of them
    hold the crossing, every interval finite, high / low under 4 in the median."""
    inside = sum(r[0] for r in rows)
    widths = [r[1] for r in rows]
    assert len(rows) >= least_rows, len(rows)
    assert inside >= 0.75 * len(rows), (inside, len(rows))
    assert all(np.isfinite(widths)), widths
    assert float(np.median(widths)) < 4.0, float(np.median(widths))


def test_first_answers_of_a_pot_read_minutes_apart_hold_the_crossing():
    rows = []
    for pot in POTS:
        sol = heat_up(*pot)
        for seed in range(10):
            rows += young_rows(sol, seed)
    # 37 rows; 4 inside (0.11) with the 2 % floor of before, 36 (0.97) with LINE_PRIOR_VAR
    # 0.15: the 80 % interval holds the crossing on most of them, and is no union of
    # everything (high / low 2.7 in the median: sd 0.39 either side), never open-ended
    _check_held_and_bounded(rows, 30)


# invented stock pots on heavy hotplates: (water kg, element W, the element's lag s); their
# heat-up takes 20-40 readings 60-300 s apart, so the line is still pinned when the shortest
# audit has checked once or twice and the longer ones not yet
STOCK_POTS = ((8.0, 2000.0, 400.0), (10.0, 2500.0, 600.0), (6.0, 1500.0, 500.0),
              (12.0, 3000.0, 800.0))


def test_a_pinned_line_read_minutes_apart_keeps_its_prior_after_the_first_audit():
    rows = []
    for pot in STOCK_POTS:
        sol = heat_up(*pot)
        for seed in range(10):
            rows += young_rows(sol, seed, 5, 8, 60.0, 300.0)
    # 160 rows of 5-8 readings; 82 inside (0.51) when the prior switched off at the shortest
    # audit's first check (the longest audit, at the answer's horizon, unchecked: 2 % sd),
    # 142 (0.89) with LINE_PRIOR_VAR kept until the checks at that horizon replace it;
    # high / low 2.44 -> 2.70 in the median (sd 0.39 at most either side), never open-ended
    _check_held_and_bounded(rows, 120)
