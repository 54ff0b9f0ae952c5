"""benchmarks/no_estimate_causes.py sorts the rows benchmarks/families.py counts (CPython only).

Its shares are only worth reading if they add up to the families benchmark's
no-estimate figures: per trace, the rows it sorts over the rows it evaluates
must equal ``no_estimate_fraction`` (dense) or ``no_estimate_from_third``
(sparse) of ``host_sim.replay.metrics.trace_metrics`` on the same replay (the
source of every no-estimate figure in docs/benchmarks.md).
"""
import os
import sys

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(ROOT, "benchmarks"))

import no_estimate_causes  # noqa: E402
from family_replay import core_trace_metrics  # noqa: E402


@pytest.mark.parametrize("family,sampling", [("mug", "dense"), ("topup", "sparse"),
                                             ("fridge", "dense")])
def test_shares_add_up_to_the_families_benchmark(family, sampling):
    unanswered = 0
    for seed in (1004, 1005, 1008):
        m = core_trace_metrics(family, seed, sampling)
        want = m["no_estimate_fraction"] if sampling == "dense" else m["no_estimate_from_third"]
        causes, rows = no_estimate_causes.trace_causes(family, seed, sampling)
        got = sum(causes.values()) / rows
        assert abs(got - want) < 1e-12, (seed, got, want)
        unanswered += sum(causes.values())
    assert unanswered > 0  # (these seeds have rows without an answer: something was sorted)
