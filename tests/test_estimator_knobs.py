"""benchmarks/estimator_knobs.Knobs: the core's constants as keywords, the core untouched.

Checks of the grid tool the leave-one-family-out choices use (the core itself
is the reference: no outside source is needed for "the same answer").
"""
import math
import os
import sys

import pytest

sys.path.insert(0, os.path.join(os.path.dirname(os.path.dirname(__file__)), "benchmarks"))
from estimator_knobs import Knobs, knob_names  # noqa: E402

from tinytherm import answer, estimator, settle  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402

WATCHED = ((answer, "DELTA_VAR_FACTOR"), (answer, "RATE_MODEL_SD"),
           (settle, "RISE_ARRIVE_MIN_S"), (settle, "RISE_ARRIVE_MIN_MS"),
           (settle, "SETTLE_S"), (settle, "SETTLE_MS"),
           (estimator, "DETECT_MIN_BLOCKS"))


def cool(est, n=200, step=5.0):
    """A liquid cooling from 80 C towards 20 C (k = 1/900 s) with a small ripple."""
    for i in range(n):
        est.update(20.0 + 60.0 * math.exp(-i * step / 900.0) + 0.05 * math.sin(i),
                   0.0 if i == 0 else step)
    est.predict(30.0)
    return est


def test_names_are_the_modules_own_number_constants():
    names = knob_names()
    for name in ("delta_var_factor", "audit_prior_var", "equilibrium_slack", "rate_model_sd",
                 "audit_young", "rise_bend", "turn_c", "block_s", "settle_s", "settle_bend"):
        assert name in names
    # imported names (SCALE, DUTY_SCALE, GAP_RESTART), tuples and infinities are no knobs
    for name in ("scale", "duty_scale", "gap_restart", "audit_fractions", "inf"):
        assert name not in names
    with pytest.raises(TypeError):
        Knobs(no_such_knob=1.0)  # (an unknown keyword reaches the estimator, which refuses it)


def test_a_knob_changes_its_run_only_and_the_core_keeps_its_values():
    before = [getattr(m, c) for m, c in WATCHED]
    core = cool(ThermalEstimator())
    wide = cool(Knobs(delta_var_factor=400.0, rate_model_sd=1.0, rise_arrive_min_s=10.0))
    same = cool(Knobs(delta_var_factor=None))
    assert wide.eta_s == pytest.approx(core.eta_s, rel=1e-12)  # the time is the fit's
    assert wide.eta_rel_sd > 2.0 * core.eta_rel_sd
    assert (same.eta_rel_sd, same.eta_low_s) == (core.eta_rel_sd, core.eta_low_s)
    assert [getattr(m, c) for m, c in WATCHED] == before
    # a core replayed after the candidate gives the core's answer again
    assert cool(ThermalEstimator()).eta_rel_sd == core.eta_rel_sd


def test_derived_and_int_constants_follow_inside_a_call():
    est = Knobs(detect_min_blocks=7.0, rise_arrive_min_s=12.5, settle_s=600.0)
    with est._applied():
        assert estimator.DETECT_MIN_BLOCKS == 7 and type(estimator.DETECT_MIN_BLOCKS) is int
        assert settle.RISE_ARRIVE_MIN_MS == 12500 and settle.SETTLE_MS == 600000
    assert settle.RISE_ARRIVE_MIN_MS == int(settle.RISE_ARRIVE_MIN_S * 1000)
    assert settle.SETTLE_MS == int(settle.SETTLE_S * 1000)


def test_the_answers_block_length_follows_the_estimators():
    # answer._BLOCK_MS is estimator._BLOCK_MS (BLOCK_S), kept in answer to spare an import of
    # the estimator module (one source: checked here, and moved together by the knob)
    assert answer._BLOCK_MS == estimator._BLOCK_MS == int(estimator.BLOCK_S * 1000)
    est = Knobs(block_s=20.0)
    with est._applied():
        assert answer._BLOCK_MS == estimator._BLOCK_MS == 20000
    assert answer._BLOCK_MS == estimator._BLOCK_MS == 40000
