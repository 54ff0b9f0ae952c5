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

import families as F  # noqa: E402
import no_estimate_causes  # noqa: E402
from host_sim.replay.metrics import trace_metrics  # noqa: E402
from host_sim.sim import families as fam  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402


@pytest.mark.parametrize("family,sampling", [("mug", "dense"), ("topup", "sparse"),
                                             ("fridge", "dense")])
def test_shares_add_up_to_the_families_benchmark(family, sampling):
    unanswered = 0
    for seed in (1004, 1005, 1008):
        ft = fam.load_or_generate(family, seed, sensor_faults=True, sampling=sampling)
        tr = ft.truth
        eta, low, high, status = F.replay_estimator(
            ThermalEstimator, F.device_kwargs(ThermalEstimator, ft.heater is not None,
                                              tr["quantum_c"]),
            ft.time_s, ft.temp_c, tr["target_c"], ft.ambient_c, ft.heater)
        m = trace_metrics(ft.time_s, eta, tr["crossing_time_s"], low, high, status=status,
                          approach_start_s=tr["approach_start_s"])
        want = m["no_estimate_fraction"] if sampling == "dense" else m["no_estimate_from_third"]
        causes, rows = no_estimate_causes.trace_causes(family, seed, sampling)
        got = sum(causes.values()) / rows
        assert abs(got - want) < 1e-12, (seed, got, want)
        unanswered += sum(causes.values())
    assert unanswered > 0  # (these seeds have rows without an answer: something was sorted)
