"""The air's cycle mean (tinytherm.fit.Inputs) against numpy's trapezoid integral.

Reference: ``numpy.trapezoid`` (the composite trapezoid rule) over the air
readings, in the counts the core keeps (1/256 C), between the readings at
which the core saw two successive upward crossings; the core keeps the mean
with 8 fractional bits, so the two agree within half of 1/256 of a count.
The air is a noisy, skewed cycle read at irregular steps (invented values,
a fridge's compressor cycle).
"""
import math

import numpy as np

from tinytherm.fit import SCALE, Inputs, to_counts


def test_cycle_means_match_numpy_trapezoid():
    rng = np.random.default_rng(3)
    steps_ms = rng.integers(2000, 30000, size=3000)
    t_ms = np.concatenate([[0], np.cumsum(steps_ms)])
    phase = 2.0 * math.pi * t_ms / 1.9e6
    air = 4.0 + 1.8 * np.sin(phase) + 0.5 * np.sin(2.0 * phase + 0.7) + rng.normal(0.0, 0.06, len(t_ms))
    inp = Inputs(None)
    start = None
    checked = 0
    for i, a in enumerate(air):
        was = inp.air.side if inp.air is not None else 0
        inp.reference(float(a), 0 if i == 0 else int(t_ms[i] - t_ms[i - 1]), False)
        if was <= 0 and inp.air.side == 1:
            if start is not None:
                counts = np.array([to_counts(float(x)) for x in air[start:i + 1]], dtype=float)
                span = t_ms[start:i + 1]
                mean = np.trapezoid(counts, span) / (span[-1] - span[0])
                assert inp.air.has_mean
                assert abs(inp.air.mean / 256.0 - mean) <= 0.5 / 256.0 + 1e-9, (i, inp.air.mean / 256.0, mean)
                checked += 1
            start = i
    assert checked >= 15, checked
    # and in deg C the mean is the cycle's own (4 C; the noise and the skew average out)
    assert abs(inp.air.mean / 256.0 / SCALE - 4.0) < 0.1
