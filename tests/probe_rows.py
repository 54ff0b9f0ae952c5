"""A noisy, quantised probe fed to the estimator, its rows counted as the benchmark counts them.

The reference tests give the probe's exact curve (scipy ``solve_ivp``) and its
crossing (scipy ``brentq``); this module adds the sensor (Gaussian noise, then
the probe's steps) and counts, from the benchmark's 60 s warm-up to the
crossing, the rows answered, shown and covered by the shown interval.
"""
import math

import numpy as np
from scipy.integrate import solve_ivp

from tinytherm import status as st
from tinytherm.estimator import ThermalEstimator

WARM_UP_S = 60.0  # s: the benchmark's warm-up (rows before it are not counted)


def counted_rows(probe, crossing_s, target_c, seed, dt_s, noise_c, quantum_c, each_row=None):
    """(rows, answered, shown, covered) of one replay up to the crossing.

    ``probe(times)``: the probe's exact reading, deg C, at an array of times (s).
    Read every ``dt_s`` s from 0 to ``crossing_s`` (s) with noise of sd ``noise_c``
    (deg C, numpy generator from ``seed``) in steps of ``quantum_c`` (deg C), by a
    ``ThermalEstimator(quantum_c=quantum_c)`` asked for ``target_c`` (deg C) after
    each reading. Answered: tracking or arrived; shown: tracking with a time
    above 0; covered: a shown row whose interval holds the time left to the
    crossing. ``each_row(est)`` is called on every counted row (its checks).
    """
    rng = np.random.default_rng(seed)
    times = np.arange(0.0, crossing_s, dt_s)
    readings = np.round((probe(times) + rng.normal(0.0, noise_c, len(times))) / quantum_c) * quantum_c
    est = ThermalEstimator(quantum_c=quantum_c)
    rows = answered = shown = covered = 0
    for j, t in enumerate(times):
        est.update(float(readings[j]), 0.0 if j == 0 else dt_s)
        est.predict(target_c)
        if t < WARM_UP_S:
            continue
        rows += 1
        if each_row is not None:
            each_row(est)
        answered += est.status in (st.TRACKING, st.ARRIVED)
        if est.status == st.TRACKING and est.eta_s > 0.0:
            shown += 1
            covered += est.eta_low_s <= crossing_s - t <= est.eta_high_s
    return rows, answered, shown, covered


def drink_in_cycling_air(l0_c, room_c, amp_c, period_s, k_per_s, w, lag_s, end_s, second=0.0,
                         probe_in_air=False):
    """(solution, air) of a drink in cycling air, read by a probe that partly sees the air.

    scipy ``solve_ivp`` (Radau, rtol = atol = 1e-10, steps of at most 20 s) from 0 to
    ``end_s`` (s) of ``dL/dt = -k (L - A(t))``, ``dP/dt = ((1 - w) L + w A(t) - P) / lag``,
    the probe starting at its mixture (``probe_in_air``: at the air's temperature, a probe
    strapped on as the drink is set down); ``A(t) = room + amp (sin x + second sin 2x)``,
    ``x = 2 pi t / period + 1`` (deg C, s, 1/s; ``w`` the air's share of the probe).
    ``solution.sol(t)`` gives ``[L, P]``; ``air(t)`` the air, deg C.
    """
    def air(t):
        x = 2.0 * math.pi * t / period_s + 1.0
        return room_c + amp_c * (math.sin(x) + second * math.sin(2.0 * x))

    def rhs(t, y):
        return [-k_per_s * (y[0] - air(t)), ((1.0 - w) * y[0] + w * air(t) - y[1]) / lag_s]

    p0 = air(0.0) if probe_in_air else (1.0 - w) * l0_c + w * air(0.0)
    sol = solve_ivp(rhs, (0.0, end_s), [l0_c, p0], method="Radau",
                    rtol=1e-10, atol=1e-10, dense_output=True, max_step=20.0)
    return sol, air
