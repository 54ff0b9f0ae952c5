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

import young_fits  # noqa: E402
from family_replay import core_trace_metrics  # noqa: E402


@pytest.mark.parametrize("family,sampling", [("pot", "sparse"), ("bath", "sparse"),
                                             ("mug", "dense")])
def test_rows_and_coverage_match_the_families_benchmark(family, sampling):
    checked = 0
    for seed in (1000, 1001, 1002):
        ref = core_trace_metrics(family, seed, sampling)
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
