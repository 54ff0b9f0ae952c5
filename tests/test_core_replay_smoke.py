"""benchmarks/core_replay.py replays the core as benchmarks/families.py does (CPython only).

The quick core-only check is only worth running if its per-trace figures are the
families benchmark's: the same traces, the same scoring, default settings and
approach given, and its summary's means are those of its own CSV.
"""
import csv
import math
import os
import sys

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(ROOT, "benchmarks"))

import core_replay  # noqa: E402
import families as F  # noqa: E402


def test_core_replay_scores_as_the_families_benchmark(tmp_path, capsys):
    out = tmp_path / "core.csv"
    baselines = F.make_family_baselines
    assert core_replay.main(["--per-family", "1", "--jobs", "1", "--out", str(out)]) == 0
    assert F.make_family_baselines is baselines  # (restored for the rest of the process)
    with open(out) as fh:
        rows = list(csv.DictReader(fh))
    dense = [r for r in rows if r["sampling"] == "dense"]
    sparse = [r for r in rows if r["sampling"] == "sparse"]
    # one trace per family, two settings each; no baseline rows
    assert {r["method"] for r in rows} == {"core[approach=0]", "core[approach=1]"}
    assert len(dense) == 2 * len(F.fam.FAMILIES)
    assert len(sparse) == 2 * len(F.fam.sparse_families())
    # the first dense mug trace scored by families.py's own job, with its baselines
    plan = F.estimator_plan([], F.parse_grid(["approach=0,1"]), "core")
    job = F.run_job(("tune", "mug", F.SEED_BASE["tune"], plan, True, "dense"))
    for method, metrics in job["metrics"].items():
        if not method.startswith("core"):
            continue
        mine = [r for r in dense if r["family"] == "mug" and r["method"] == method]
        assert len(mine) == 1
        for key in ("coverage", "no_estimate_fraction", "median_rel_error", "early_arrival"):
            want = float(metrics[key])
            got = float(mine[0][key])
            assert (math.isnan(want) and math.isnan(got)) or got == pytest.approx(want, rel=1e-9)
    printed = capsys.readouterr().out
    line = [ln for ln in printed.splitlines() if ln.startswith("dense core[approach=0]:")]
    assert len(line) == 1
    cov = core_replay.mean_of([r for r in dense if r["method"] == "core[approach=0]"], "coverage")
    assert ("| all %.3f/" % cov) in line[0]


def test_mean_of_leaves_out_blanks_and_nan():
    rows = [{"x": "0.5"}, {"x": ""}, {"x": "nan"}, {"x": "1.5"}]
    assert core_replay.mean_of(rows, "x") == pytest.approx(1.0)
    assert math.isnan(core_replay.mean_of([{"x": ""}], "x"))
