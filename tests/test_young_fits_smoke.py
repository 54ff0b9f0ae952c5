"""benchmarks/young_fits.py counts the rows benchmarks/families.py scores (CPython only).

The readings-group table is only worth reading if its rows are the ones the
families benchmark counts: per trace, the share of rows young_fits records as
covered must equal the coverage of ``host_sim.replay.metrics.trace_metrics``
on the same replay (the source of every coverage figure in docs/benchmarks.md).
"""
import os
import sys

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(ROOT, "benchmarks"))

import families as F  # noqa: E402
import young_fits  # noqa: E402
from host_sim.replay.metrics import trace_metrics  # noqa: E402
from host_sim.sim import families as fam  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402


@pytest.mark.parametrize("family,sampling", [("pot", "sparse"), ("bath", "sparse"),
                                             ("mug", "dense")])
def test_rows_and_coverage_match_the_families_benchmark(family, sampling):
    checked = 0
    for seed in (1000, 1001, 1002):
        ft = fam.load_or_generate(family, seed, sensor_faults=True, sampling=sampling)
        tr = ft.truth
        eta, low, high, status = F.replay_estimator(
            ThermalEstimator, F.device_kwargs(ThermalEstimator, ft.heater is not None,
                                              tr["quantum_c"]),
            ft.time_s, ft.temp_c, tr["target_c"], ft.ambient_c, ft.heater)
        ref = trace_metrics(ft.time_s, eta, tr["crossing_time_s"], low, high, status=status,
                            approach_start_s=tr.get("approach_start_s"))
        rows = young_fits.trace_rows(family, seed, sampling)
        if ref["coverage"] is None:
            assert not rows
            continue
        assert rows
        assert sum(r[1] for r in rows) / len(rows) == pytest.approx(ref["coverage"], abs=1e-12)
        # the sides agree with the coverage (a row with no readings group raised above)
        assert all((r[2] == 0) == r[1] for r in rows)
        checked += 1
    assert checked >= 2
