"""Answers and intervals on a simulated family against reference physics.

Reference: scipy.integrate.solve_ivp (DOP853, rtol = atol = 1e-10) integrates
the physics; scipy.optimize.brentq finds the true crossing on its dense
output. The family: wort chilled by an immersion coil in a recirculated tub
of iced water. The tub warms with the heat it takes (the wort and the tub
meet near their mixed temperature) and both then drift slowly towards the
room: a second, slow mode a first-order fit cannot see, so the fit's
equilibrium sits a little short of targets the wort does reach (issue 17,
item 5). Our own scenario (numbers invented for the test, no source); the
probe is 12-bit (0.0625 C) with 0.05 C Gaussian noise, read every 10 s, and
the device emulated in float32 (``struct`` 'f') in the second run.

Checked over 24 seeded runs with crossings 10-40 min away, in float64 and
float32: no early arrival; where the target lies just beyond the fitted
equilibrium (within ``answer.EQUILIBRIUM_SLACK`` of the distance to it) the
estimator answers (``tracking``, no upper bound) instead of ``out_of_reach``,
and the lower bound of those answers holds (the true crossing is not
sooner) on at least 95 % of them (measured: 71 of 71 rows at the chosen
slack 0.1; at a slack of 0.4, 257 of 259, the two misses by 10 s with 15 s to go).
"""
import math
import os
import sys

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

sys.path.insert(0, os.path.join(os.path.dirname(__file__), "core"))
from support import round_instance_floats, to_float32  # noqa: E402

from tinytherm import status as st  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402

ROOM_C = 15.0
RUNS = 24
SAMPLE_S = 10.0


def wort_run(rng):
    """(times, readings, clean sensor signal, target, crossing) of one drawn run."""
    wort_j_per_k = rng.uniform(15.0, 35.0) * 4000.0
    tub_j_per_k = rng.uniform(30.0, 70.0) * 4186.0
    coil_w_per_k = rng.uniform(250.0, 600.0)
    tub_loss_w_per_k = rng.uniform(15.0, 40.0)
    pot_loss_w_per_k = rng.uniform(3.0, 8.0)
    lag_s = rng.uniform(10.0, 30.0)
    start_c = rng.uniform(85.0, 98.0)

    def rhs(_t, y):
        wort, tub, probe = y
        coil = coil_w_per_k * (wort - tub)
        return [(-coil - pot_loss_w_per_k * (wort - ROOM_C)) / wort_j_per_k,
                (coil - tub_loss_w_per_k * (tub - ROOM_C)) / tub_j_per_k,
                (wort - probe) / lag_s]

    end_s = 3000.0
    sol = solve_ivp(rhs, (0.0, end_s), [start_c, rng.uniform(1.0, 6.0), start_c],
                    method="DOP853", rtol=1e-10, atol=1e-10, dense_output=True)
    crossing_s = rng.uniform(600.0, 2400.0)
    target = round(float(sol.sol(crossing_s)[2]) * 2.0) / 2.0  # a 0.5 C step, as a product sets it
    crossing_s = brentq(lambda t: sol.sol(t)[2] - target, 1.0, end_s, xtol=1e-9)
    times = np.arange(0.0, crossing_s + 120.0, SAMPLE_S)
    clean = sol.sol(times)[2]
    readings = np.round((clean + rng.normal(0.0, 0.05, len(times))) / 0.0625) * 0.0625
    return times, readings, clean, target, crossing_s


def replay(times, readings, target, rounder=None):
    """Per-row (status, eta, low, high) of the default estimator."""
    est = ThermalEstimator()
    out = []
    prev = None
    for t, y in zip(times, readings):
        est.update(float(y), 0.0 if prev is None else float(t - prev))
        prev = t
        if rounder is not None:
            round_instance_floats(est, rounder)
        est.predict(target)
        out.append((est.status, est.eta_s, est.eta_low_s, est.eta_high_s))
    return out


@pytest.mark.parametrize("rounder", [None, to_float32], ids=["float64", "float32"])
def test_wort_just_beyond_the_fitted_equilibrium_is_answered_with_an_open_interval(rounder):
    rng = np.random.default_rng(1717)
    open_rows = held = 0
    for _ in range(RUNS):
        times, readings, clean, target, crossing_s = wort_run(rng)
        rows = replay(times, readings, target, rounder)
        for t, c, (code, eta, low, high) in zip(times, clean, rows):
            # early arrival: ARRIVED while the true probe signal is clearly above the target
            assert not (code == st.ARRIVED and c - target > 0.3), (t, c, target)
            if t < 60.0 or t >= crossing_s or code != st.TRACKING or high != math.inf:
                continue
            open_rows += 1
            assert 0.0 <= low <= eta, (t, low, eta)
            held += low <= crossing_s - t
    # (before the slack every one of these rows was out_of_reach or settling: none)
    assert open_rows >= 20, open_rows
    assert held >= 0.95 * open_rows, (held, open_rows)
