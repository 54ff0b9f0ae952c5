"""Numbers a host program passes: numpy scalars are numbers (CPython only).

Bug found by trying the estimator as a user would: a numpy float64 reading
was rejected as bad_input and a numpy target gave 'gathering' for ever.
"""
import math

import numpy as np

from tinytherm import status as st
from tinytherm.estimator import ThermalEstimator


def test_numpy_readings_targets_and_steps_are_numbers():
    plain = ThermalEstimator(ambient_c=np.float64(21.0).item())
    numpy = ThermalEstimator(ambient_c=21.0)
    for i in range(300):
        y = 21.0 + 59.0 * math.exp(-i * 2.0 / 900.0)
        assert numpy.update(np.float64(y), np.float32(0.0 if i == 0 else 2.0)) == st.ACCEPTED
        plain.update(y, 0.0 if i == 0 else 2.0)
    assert numpy.predict(np.float64(40.0)) == st.TRACKING
    plain.predict(40.0)
    assert numpy.eta_s == plain.eta_s
    # strings, bytes and bools are still no numbers
    for junk in ("50", b"50", True):
        assert numpy.update(junk, 2.0) == st.BAD_INPUT


def test_level_variance_moved_to_a_later_reading_is_the_delta_method():
    # reference: the level is linear in (mean, s, k) with gradient (1, t, -x), so its
    # variance is J P J^T (the delta method, written out here with numpy)
    est = ThermalEstimator(ambient_c=21.0)
    for i in range(400):
        est.update(21.0 + 59.0 * math.exp(-i * 2.0 / 900.0) + 0.05 * math.sin(i), 0.0 if i == 0 else 2.0)
    est.predict(40.0)
    reg = est.reg
    cov = np.array([[reg.var_my, 0.0, 0.0], [0.0, reg.pss, reg.psk], [0.0, reg.psk, reg.pkk]])
    for dt, dx in ((0.0, 0.0), (30.0, 90.0), (120.0, -400.0)):
        grad = np.array([1.0, reg.t + dt, -(reg.x + dx)])
        assert math.isclose(reg.var_level(dt, dx), float(grad @ cov @ grad), rel_tol=1e-9)
    assert reg.var_level(120.0, 0.0) != reg.var_level()
