"""benchmarks/median_phases.py scores the rows benchmarks/families.py scores (CPython only).

Its phase tables are only worth reading if each trace's rows give the families
benchmark's figures: per trace, the median of the core's relative errors must be the
``median_rel_error`` of ``host_sim.replay.metrics.trace_metrics`` on the same replay, and
the window refit's (``exp_recent``) that of the benchmark's own replay of the baseline.
"""
import math
import os
import sys

import numpy as np
import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(ROOT, "benchmarks"))

import families as F  # noqa: E402
import median_phases  # noqa: E402
from family_replay import core_trace_metrics  # noqa: E402
from host_sim.replay.baselines import make_family_baselines  # noqa: E402
from host_sim.replay.metrics import trace_metrics  # noqa: E402
from host_sim.sim import families as fam  # noqa: E402


@pytest.mark.parametrize("family,sampling", [("bath", "sparse"), ("pot", "sparse")])
def test_per_trace_medians_match_the_families_benchmark(family, sampling):
    for seed in (1000, 1001):
        rows = median_phases.trace_rows(family, seed, sampling)
        assert rows
        core = [r["rc"] for r in rows if math.isfinite(r["rc"])]
        ref = core_trace_metrics(family, seed, sampling)
        assert float(np.median(core)) == pytest.approx(ref["median_rel_error"], abs=1e-12)
        ft = fam.load_or_generate(family, seed, sensor_faults=True, sampling=sampling)
        tr = ft.truth
        eta, status = F.replay_baseline(make_family_baselines()[2], ft.time_s, ft.temp_c,
                                        tr["target_c"])
        base = trace_metrics(ft.time_s, eta, tr["crossing_time_s"], status=status,
                             approach_start_s=tr.get("approach_start_s"))
        refit = [r["rb"] for r in rows if math.isfinite(r["rb"])]
        assert float(np.median(refit)) == pytest.approx(base["median_rel_error"], abs=1e-12)
        # every phase lies in the approach (after its start, before the crossing)
        assert all(0.0 <= r["ph"] < 1.0 for r in rows)
