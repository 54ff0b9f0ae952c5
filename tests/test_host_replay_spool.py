"""Replay metrics in memory that does not grow: the spool, the exact chunked figures.

Reference: numpy's own ``np.median`` and ``np.percentile`` (default "linear"
method) over all values at once; the chunked figures must equal them exactly,
not approximately, so the printed metrics cannot change.
"""
import math
import os
import subprocess
import sys

import numpy as np
import pytest

from host_sim import cli
from host_sim.replay import metrics, spool
from host_sim.replay.metrics import error_figures, trace_metrics
from host_sim.replay.spool import ColumnSpool
from host_sim.sim.scenarios import generate, write_scenario

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def _parts(values, size):
    def chunks():
        for i in range(0, len(values), size):
            yield values[i:i + size]
    return chunks


@pytest.mark.parametrize("collect", [2, 50, 1 << 16])
def test_quantiles_equal_numpy_median_and_percentile(monkeypatch, collect):
    # small _COLLECT forces the radix select through several rounds of bins
    monkeypatch.setattr(metrics, "_COLLECT", collect)
    rng = np.random.default_rng(11)
    for n in (1, 2, 3, 4, 5, 10, 11, 99, 1000, 1001, 4567):
        for values in (rng.random(n), np.exp(rng.normal(0.0, 4.0, n)),
                       np.round(rng.random(n) * 8.0) / 7.0,      # many ties
                       np.zeros(n), np.full(n, 0.1)):
            got = metrics._quantiles(_parts(values, 37), n)
            assert got == (float(np.median(values)), float(np.percentile(values, 90)))


def test_order_statistics_are_the_sorted_values():
    rng = np.random.default_rng(3)
    values = np.abs(rng.normal(0.0, 1.0, 3001)) * 10.0 ** rng.integers(-8, 8, 3001)
    ranks = [0, 1, 1500, 2999, 3000]
    monkey = metrics._COLLECT
    try:
        metrics._COLLECT = 8
        got = metrics._order_statistics(_parts(values, 100), len(values), ranks)
    finally:
        metrics._COLLECT = monkey
    expect = np.sort(values)
    assert got == {k: float(expect[k]) for k in ranks}


def _random_rows(rng, n):
    t = np.cumsum(rng.uniform(0.5, 4.0, n))
    crossing = float(t[int(n * 0.8)])
    rem = crossing - t
    eta = rem * np.exp(rng.normal(0.0, 0.2, n))
    eta[rng.random(n) < 0.1] = math.nan                   # no estimate
    late = int(n * 0.6)
    eta[late:] = rem[late:] * 1.01                        # trusted from 60 % of the rows
    low = eta * 0.8
    high = np.where(rng.random(n) < 0.2, math.inf, eta * 1.25)
    low[rng.random(n) < 0.1] = math.nan                   # estimate without interval
    return t, eta, low, high, crossing


@pytest.mark.parametrize("size", [1, 7, 64, 5000])
def test_chunked_figures_equal_the_whole_trace(monkeypatch, size):
    monkeypatch.setattr(metrics, "_COLLECT", 16)
    rng = np.random.default_rng(size)
    t, eta, low, high, crossing = _random_rows(rng, 3000)
    whole = trace_metrics(t, eta, crossing, low, high)
    # the one-chunk path is numpy's median/percentile over the evaluated rows
    mask, rel, _ = metrics.relative_errors(t, eta, crossing)
    rel_e = rel[mask][np.isfinite(rel[mask])]
    assert whole["median_rel_error"] == float(np.median(rel_e))
    assert whole["p90_rel_error"] == float(np.percentile(rel_e, 90))

    def chunks():
        for i in range(0, len(t), size):
            yield t[i:i + size], eta[i:i + size], low[i:i + size], high[i:i + size]
    parts = error_figures(chunks, crossing)
    for key in ("median_rel_error", "p90_rel_error", "time_to_trust", "coverage",
                "no_estimate_fraction", "evaluated_rows"):
        assert parts[key] == whole[key], key
    assert 0.0 < whole["time_to_trust"] < 1.0 and 0.0 < whole["coverage"] < 1.0
    last = np.nonzero(t < crossing)[0][-1]
    eta[last] = crossing - t[last] + 100.0        # last evaluated row bad: never trusted
    assert error_figures(chunks, crossing)["time_to_trust"] == 1.0
    assert trace_metrics(t, eta, crossing)["time_to_trust"] == 1.0


def test_spool_gives_back_every_row_exactly(tmp_path):
    rows = [(i * 0.1, math.nan if i % 3 == 0 else 1.0 / (i + 1), -float(i)) for i in range(23)]
    with ColumnSpool(3, block_rows=5) as sp:
        for row in rows:
            sp.append(*row)
        assert len(sp) == 23
        for _ in range(2):                            # readable more than once
            cols = [np.concatenate(c) for c in zip(*sp.chunks())]
            assert [len(c) for c in next(iter(sp.chunks()))] == [5, 5, 5]
            np.testing.assert_array_equal(np.column_stack(cols), np.array(rows))
        sp.append(1.0, 2.0, 3.0)                      # still growing after a read
        assert len(sp) == 24 and sum(len(c[0]) for c in sp.chunks()) == 24
    assert len(sp) == 0 and list(sp.chunks()) == []
    with pytest.raises(ValueError):
        ColumnSpool(2).append(1.0)


def test_short_spool_stays_in_memory():
    sp = ColumnSpool(2, block_rows=100)
    for i in range(99):
        sp.append(float(i), 2.0 * i)
    assert sp._file is None
    sp.append(99.0, 198.0)
    assert sp._file is not None                       # a full block went to disk
    sp.close()


def _replay_stdout(capsys, args):
    assert cli.main(args) == 0
    return capsys.readouterr().out


@pytest.mark.parametrize("kind,seed", [("mug", 4), ("kettle", 2)])
def test_cli_metrics_do_not_depend_on_the_block_size(tmp_path, capsys, monkeypatch, kind, seed):
    stem = tmp_path / kind
    write_scenario(generate(kind, seed), str(stem) + ".csv", str(stem) + ".json")
    import json
    target = json.loads((tmp_path / (kind + ".json")).read_text())["target_c"]
    out = str(tmp_path / "pred.csv")
    for extra in ([], ["--truth", str(stem) + ".json"]):
        args = ["replay", str(stem) + ".csv", "--target", str(target), "--out", out] + extra
        one_block = _replay_stdout(capsys, args)
        monkeypatch.setattr(spool, "BLOCK_ROWS", 13)      # many blocks on disk
        monkeypatch.setattr(metrics, "_COLLECT", 4)       # radix select to the last bits
        many_blocks = _replay_stdout(capsys, args)
        monkeypatch.undo()
        assert "accuracy, answers a device shows" in one_block
        assert many_blocks == one_block


def test_replay_cli_imports_no_scipy():
    # scipy alone costs ~50 MB of the replay's peak memory; only scenario
    # generation, calibration and the baselines need it
    code = ("import sys, host_sim.cli.dispatch as d; d.build_parser(); "
            "print(sorted(m for m in sys.modules if m.split('.')[0] == 'scipy'))")
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True,
                         text=True, timeout=120, check=True).stdout
    assert out.strip() == "[]"
