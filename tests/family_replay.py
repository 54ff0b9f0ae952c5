"""The core's replay of one physics-family trace as benchmarks/families.py scores it.

The smoke tests of the diagnosis scripts (young_fits, no_estimate_causes) check that
their rows add up to the families benchmark's figures; this is that figure, from
``host_sim.replay.metrics.trace_metrics`` on the default estimator's replay.
"""
import os
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(ROOT, "benchmarks"))

import families as F  # noqa: E402
from host_sim.replay.metrics import trace_metrics  # noqa: E402
from host_sim.sim import families as fam  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402


def core_trace_metrics(family, seed, sampling):
    """``trace_metrics`` of the default ``ThermalEstimator`` (the benchmark's device settings)
    replayed over one family trace (``sensor_faults`` on; ``sampling`` dense or sparse)."""
    ft = fam.load_or_generate(family, seed, sensor_faults=True, sampling=sampling)
    tr = ft.truth
    eta, low, high, status = F.replay_estimator(
        ThermalEstimator, F.device_kwargs(ThermalEstimator, ft.heater is not None,
                                          tr["quantum_c"]),
        ft.time_s, ft.temp_c, tr["target_c"], ft.ambient_c, ft.heater)
    return trace_metrics(ft.time_s, eta, tr["crossing_time_s"], low, high, status=status,
                         approach_start_s=tr.get("approach_start_s"))
