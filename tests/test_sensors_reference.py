"""Sensor front-ends checked against reference numerics (CPython only).

numpy.linalg.solve for the Steinhart-Hart 3x3 system, scipy.optimize.brentq
for inverting the Beta and Steinhart-Hart equations.
"""
import math

import numpy as np
from scipy.optimize import brentq

from tinytherm.sensors import (
    SteinhartHart,
    beta_resistance_ohm,
    beta_temperature_c,
    steinhart_hart_resistance_ohm,
    steinhart_hart_temperature_c,
)

SH10K = (1.129148e-3, 2.34125e-4, 8.76741e-8)  # published 10k set (from memory)


def test_fit_matches_numpy_linear_solve():
    # Points from a 10k/3950 part's Beta curve perturbed by a few ohms, so the
    # cubic term is non-zero; numpy.linalg.solve is the reference.
    pts = [(0.0, 33500.0), (25.0, 10000.0), (80.0, 1270.0)]
    sh = SteinhartHart(*[v for p in pts for v in p])
    m = np.array([[1.0, math.log(r), math.log(r) ** 3] for _, r in pts])
    y = np.array([1.0 / (t + 273.15) for t, _ in pts])
    a, b, c = np.linalg.solve(m, y)
    assert math.isclose(sh.a, a, rel_tol=1e-9)
    assert math.isclose(sh.b, b, rel_tol=1e-9)
    assert math.isclose(sh.c, c, rel_tol=1e-6)


def test_beta_temperature_matches_brentq():
    for r in (700.0, 2000.0, 10000.0, 25000.0, 90000.0):
        ref = brentq(lambda t: beta_resistance_ohm(t, 10000.0, 3950.0) - r, -60.0, 200.0,
                     xtol=1e-12)
        assert abs(beta_temperature_c(r, 10000.0, 3950.0) - ref) < 1e-8


def test_steinhart_hart_resistance_matches_brentq():
    for t in (-20.0, 0.0, 37.0, 60.0, 100.0):
        ref = math.exp(brentq(
            lambda lr: steinhart_hart_temperature_c(math.exp(lr), *SH10K) - t, 3.0, 14.0,
            xtol=1e-14))
        assert math.isclose(steinhart_hart_resistance_ohm(t, *SH10K), ref, rel_tol=1e-9)
