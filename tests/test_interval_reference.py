"""The 80 % interval against reference physics (issue 17, item 4): two checks.

1. The model-error term. On an exact first-order cooling curve (readings
   without noise) the audits find no error and the fit's own variance is tiny,
   so the interval's ln-time sd is the model-error term: the fitted rate k off
   by ``answer.RATE_MODEL_SD`` of itself, through the sensitivity
   d ln(eta) / d ln(k) at the measured slope. Reference for that sensitivity:
   the law ``dT/dt = s - k (T - T_now)`` integrated by scipy.integrate.solve_ivp
   (DOP853, rtol = atol = 1e-11) for k (1 +- 1e-3), the crossing found by
   scipy.optimize.brentq, the central difference of ln(time). Our own numbers
   (a liquid at 80 C cooling towards 20 C with k = 1/900 s, no source).

2. After a heat-up's start. Reference: scipy.integrate.solve_ivp (DOP853, rtol = atol = 1e-10) integrates
the physics; scipy.optimize.brentq finds the true crossing on its dense
output. The scenario: water heated by an element with its own heat capacity
(the element warms first, so the water's rate rises over its first half
minute or so), a small loss to the room and a probe with a few seconds of
lag; 12-bit readings (0.0625 C) with 0.05 C Gaussian noise every second, the
heater's duty given. Our own scenario (numbers invented for the test, no
source), drawn over 12 seeded runs.

The fit's first forecasts, made while the element still warms and the fit is
seconds old, miss by a factor 2 or more; they say nothing of the grown fit's
forecasts, which are within a few per cent. Before the audits ignored
forecasts over more than ``answer.AUDIT_YOUNG`` times the age of the fit that
made them, those first misses set the interval for the rest of the heat-up:
over the second half of the approach the 80 % interval spanned a median
factor of 3.98 (high / low; 90th percentile 34) while covering the truth on
every row. Measured after: a median factor of 1.22, coverage 0.98.
"""

import numpy as np
import math

import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from tinytherm import answer
from tinytherm import status as st
from tinytherm.estimator import ThermalEstimator

RUNS = 12
ROOM_C = 20.0
TARGET_C = 90.0


def heat_up(rng):
    """(times, readings, crossing time) of one drawn heat-up."""
    water_j_per_k = rng.uniform(1.0, 1.7) * 4186.0
    element_j_per_k = rng.uniform(300.0, 600.0)
    contact_w_per_k = rng.uniform(12.0, 30.0)     # element lag 10-50 s
    power_w = rng.uniform(1800.0, 2400.0)
    loss_w_per_k = rng.uniform(1.5, 4.0)
    lag_s = rng.uniform(3.0, 8.0)
    start_c = rng.uniform(10.0, 20.0)

    def rhs(_t, y):
        element, water, probe = y
        flow = contact_w_per_k * (element - water)
        return [(power_w - flow) / element_j_per_k,
                (flow - loss_w_per_k * (water - ROOM_C)) / water_j_per_k,
                (water - probe) / lag_s]

    sol = solve_ivp(rhs, (0.0, 900.0), [start_c] * 3, method="DOP853", rtol=1e-10,
                    atol=1e-10, dense_output=True)
    crossing_s = brentq(lambda t: sol.sol(t)[2] - TARGET_C, 1.0, 900.0, xtol=1e-9)
    times = np.arange(0.0, crossing_s + 20.0, 1.0)
    clean = sol.sol(times)[2]
    readings = np.round((clean + rng.normal(0.0, 0.05, len(times))) / 0.0625) * 0.0625
    return times, readings, clean, crossing_s


@pytest.mark.parametrize("approach", [0, 1], ids=["default", "approach"])
def test_interval_after_the_start_up_is_narrow_and_covers(approach):
    rng = np.random.default_rng(5)
    ratios = []
    coverage = []
    for _ in range(RUNS):
        times, readings, clean, crossing_s = heat_up(rng)
        est = ThermalEstimator(heater=True)
        rows = inside = 0
        prev = None
        for t, y, c in zip(times, readings, clean):
            est.update(float(y), 0.0 if prev is None else float(t - prev), duty=1.0)
            prev = t
            est.predict(TARGET_C, approach)
            # no arrival while the probe's true signal is clearly short of the target
            assert not (est.status == st.ARRIVED and TARGET_C - c > 0.3), (t, c)
            if t < 0.5 * crossing_s or t >= crossing_s or est.status != st.TRACKING:
                continue
            remaining = crossing_s - t
            assert 0.0 <= est.eta_low_s <= est.eta_s <= est.eta_high_s
            rows += 1
            inside += est.eta_low_s <= remaining <= est.eta_high_s
            ratios.append(est.eta_high_s / max(est.eta_low_s, 1e-9))
        assert rows > 0
        coverage.append(inside / rows)
    # honest: the truth inside on most rows (80 % asked; every run counts alike)
    assert sum(coverage) / RUNS >= 0.75, coverage
    # and informative: the interval spans well under a factor 2 (3.98 before)
    assert float(np.median(ratios)) < 2.0, float(np.median(ratios))


def reference_rate_sensitivity(level_c, slope_c_per_s, rate_per_s, target_c):
    """d ln(time to target) / d ln(k) at a fixed slope, by solve_ivp and brentq."""
    def time_for(k):
        sol = solve_ivp(lambda _t, y: [slope_c_per_s - k * (y[0] - level_c)], (0.0, 1e5),
                        [level_c], method="DOP853", rtol=1e-11, atol=1e-11, dense_output=True)
        return brentq(lambda t: sol.sol(t)[0] - target_c, 1e-6, 0.999e5, xtol=1e-10)
    h = 1e-3
    return ((math.log(time_for(rate_per_s * (1.0 + h))) - math.log(time_for(rate_per_s * (1.0 - h))))
            / (math.log(1.0 + h) - math.log(1.0 - h)))


@pytest.mark.parametrize("target_c", [45.0, 30.0, 24.0, 22.0])
def test_model_error_term_is_the_rate_sensitivity(target_c):
    room, start, k, step, end = 20.0, 80.0, 1.0 / 900.0, 5.0, 600.0
    est = ThermalEstimator(quantum_c=0.001)
    for i in range(int(end / step) + 1):
        est.update(room + (start - room) * math.exp(-k * i * step), 0.0 if i == 0 else step)
    assert est.predict(target_c) == st.TRACKING
    level = room + (start - room) * math.exp(-k * end)
    sens = reference_rate_sensitivity(level, -k * (level - room), k, target_c)
    model = answer.RATE_MODEL_SD * abs(sens)
    # the model term is added to the (here tiny) audited variance: at least it, barely more
    # (measured: 0.025 / 0.022 at 45 C, 0.172 / 0.170 at 30 C, 0.856 / 0.853 at 22 C)
    assert 0.98 * model <= est.eta_rel_sd <= 1.05 * model + 0.02, (est.eta_rel_sd, model)


@pytest.mark.parametrize("approach", [0, 1], ids=["default", "approach"])
def test_interval_forgets_the_start_ups_errors(approach):
    """3. The interval follows the grown fit's errors, not the start-up's (AUDIT_FORGET).

    The heat-ups of check 2 (solve_ivp physics, brentq crossings). Over the second
    half of the approach the true log error ln(eta / remaining) has an 80th percentile
    of 0.027 in |.|; the 80 % interval's half-width ln(high / eta) = 1.28 sd was a
    median 0.095 (3.5 times it) while the audits kept the first minute's checks at full
    weight, 0.038 (1.4 times) with older checks weighing (age then / age now)^2 less.
    Coverage 0.98 -> 0.97 over those rows.
    """
    rng = np.random.default_rng(5)
    errors, halves, coverage = [], [], []
    for _ in range(RUNS):
        times, readings, _clean, crossing_s = heat_up(rng)
        est = ThermalEstimator(heater=True)
        rows = inside = 0
        prev = None
        for t, y in zip(times, readings):
            est.update(float(y), 0.0 if prev is None else float(t - prev), duty=1.0)
            prev = t
            est.predict(TARGET_C, approach)
            if (t < 0.5 * crossing_s or t >= crossing_s or est.status != st.TRACKING
                    or not est.eta_s > 0.0):
                continue
            remaining = crossing_s - t
            rows += 1
            inside += score_row(est, remaining, errors, halves)
        assert rows > 0
        coverage.append(inside / rows)
    assert sum(coverage) / RUNS >= 0.75, coverage
    q80 = float(np.quantile(errors, 0.8))
    assert float(np.median(halves)) <= 2.0 * q80, (float(np.median(halves)), q80)


def score_row(est, remaining_s, errors, halves):
    """Append the answer's |ln(eta / remaining_s)| to ``errors`` and its upper half-width
    ln(high / eta) to ``halves``; True when the interval holds ``remaining_s`` (s)."""
    errors.append(abs(math.log(est.eta_s / remaining_s)))
    halves.append(math.log(est.eta_high_s / est.eta_s))
    return est.eta_low_s <= remaining_s <= est.eta_high_s


def cooling_read_every_2_s(rng, target_c):
    """(times, readings, crossing time) of a drink cooling by Newton's law read through a
    lagging probe: integrated by scipy.integrate.solve_ivp (DOP853, rtol = atol = 1e-10),
    the probe's crossing of ``target_c`` found by scipy.optimize.brentq on its dense output.
    Our own numbers (k 1/1500-1/900 per s, probe lag 4-12 s, 0.05 C noise, 0.0625 C steps)."""
    room_c, start_c = 21.0, 85.0
    k = rng.uniform(1.0 / 1500.0, 1.0 / 900.0)
    lag_s = rng.uniform(4.0, 12.0)
    sol = solve_ivp(lambda _t, y: [-k * (y[0] - room_c), (y[0] - y[1]) / lag_s], (0.0, 4000.0),
                    [start_c, start_c], method="DOP853", rtol=1e-10, atol=1e-10,
                    dense_output=True)
    crossing_s = brentq(lambda t: sol.sol(t)[1] - target_c, 1.0, 4000.0, xtol=1e-9)
    times = np.arange(0.0, crossing_s, 2.0)
    readings = np.round((sol.sol(times)[1] + rng.normal(0.0, 0.05, len(times))) / 0.0625) * 0.0625
    return times, readings, crossing_s


def test_no_model_term_within_the_age_of_a_fit_its_readings_explain():
    """4. A law that explains its readings (its residual within the measured noise's
    chi-square band) needs no model term for a time within the fit's age: its audits'
    checks measure what a bend does there. The drinks of :func:`cooling_read_every_2_s`
    (solve_ivp physics, brentq crossings), 8 seeded runs, to 50 C. On the rows whose time
    is within the fit's age (after 40 % of the approach) the 80th percentile of the true
    |ln(eta / remaining)| is 0.011; the interval's half-width ln(high / eta) was a median
    0.043 (4 times it) with the model term added at every horizon, 0.026 (2.5 times)
    without it there; coverage 0.99 -> 0.98. A time beyond the fit's age keeps the term:
    the interval's sd at least RATE_MODEL_SD times d ln(eta) / d ln(k), the sensitivity
    by solve_ivp and brentq (:func:`reference_rate_sensitivity`).
    """
    rng = np.random.default_rng(3)
    errors, halves, coverage, beyond = [], [], [], []
    for _ in range(8):
        times, readings, crossing_s = cooling_read_every_2_s(rng, 50.0)
        est = ThermalEstimator(quantum_c=0.0625)
        rows = inside = 0
        prev = None
        for t, y in zip(times, readings):
            est.update(float(y), 0.0 if prev is None else float(t - prev))
            prev = t
            if est.predict(50.0) != st.TRACKING or not est.eta_s > 0.0 or t < 0.4 * crossing_s:
                continue
            remaining = crossing_s - t
            if est.eta_s > t:  # (the fit is as old as the readings: no restart on a cooling)
                if len(beyond) < 40 and int(t) % 20 == 0:
                    k = est.rate_per_s
                    slope = k * (est.equilibrium_c - est.temp_est_c)
                    sens = reference_rate_sensitivity(est.temp_est_c, slope, k, 50.0)
                    beyond.append(est.eta_rel_sd / (answer.RATE_MODEL_SD * abs(sens)))
                continue
            rows += 1
            inside += score_row(est, remaining, errors, halves)
        assert rows > 0
        coverage.append(inside / rows)
    assert sum(coverage) / len(coverage) >= 0.8, coverage
    q80 = float(np.quantile(errors, 0.8))
    assert float(np.median(halves)) <= 3.0 * q80, (float(np.median(halves)), q80)
    assert beyond and min(beyond) >= 0.98, beyond
