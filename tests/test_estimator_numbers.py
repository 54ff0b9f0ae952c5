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
