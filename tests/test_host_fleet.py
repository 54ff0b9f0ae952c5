"""Fleet replay: streaming pieces, the same results in-process and on 1 or 2 dask
workers, faults, the A/B against another core, and the command-line contract.

References: the per-trace figures are checked against host_sim.replay.replay.replay()
plus host_sim.replay.metrics.trace_metrics (the single-trace path, exact equality);
quantiles against numpy.percentile / numpy.median (the linear method); the
synthetic traces follow Newton's law of cooling, T = R + (T0 - R) exp(-t/tau)
(closed form of dT/dt = -(T - R)/tau).
"""
import csv
import os
import shutil
import subprocess
import sys

import numpy as np
import pytest

from host_sim.cli import main
from host_sim.fleet import run as fleet
from host_sim.fleet import core as fleet_core
from host_sim.fleet import metrics as fleet_metrics
from host_sim.replay import metrics, spool
from host_sim.replay.replay import CrossingFinder, RunningMedian, crossing_from_trace, replay, replay_rows
from host_sim.replay.trace_io import read_trace
from host_sim.replay.trace_reader import iter_trace_rows

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
REQUIRED = ("path", "target", "rows", "median_rel_error", "p90_rel_error", "coverage",
            "no_estimate", "early_arrival", "first_answer_s", "error")


def cooling_trace(path, seed, rows=240, dt=2.0, t0_c=80.0, ambient_c=21.0, tau_s=900.0,
                  sd_c=0.05, heater=False):
    """Write a seeded Newton-cooling trace (closed form plus white noise)."""
    rng = np.random.default_rng(seed)
    t = np.arange(rows) * dt + rng.uniform(0.0, 0.2, rows)
    t[0] = 0.0
    y = ambient_c + (t0_c - ambient_c) * np.exp(-t / tau_s) + rng.normal(0.0, sd_c, rows)
    with open(path, "w") as handle:
        handle.write("time_s,temp_c%s\n" % (",heater" if heater else ""))
        for ti, yi in zip(t, y):
            handle.write("%.3f,%.4f%s\n" % (ti, yi, ",0.5" if heater else ""))
    return t, y


@pytest.fixture(scope="module")
def fleet_dir(tmp_path_factory):
    """Six short traces, one malformed, one missing, in a manifest with two tags."""
    d = tmp_path_factory.mktemp("fleet")
    lines = ["path,target,product,fw"]
    for i in range(6):
        cooling_trace(d / ("t%d.csv" % i), seed=i, tau_s=600.0 + 150.0 * i,
                      t0_c=70.0 + 3 * i)
        lines.append("t%d.csv,%s,%s,%s" % (i, 58.0 + 3 * i, "mug" if i % 2 else "pot",
                                           "1.0" if i < 3 else "1.1"))
    (d / "bad.csv").write_text("time_s,temp_c\n0,70\n2,seventy\n")
    lines.append("bad.csv,50,mug,1.1")
    lines.append("nothere.csv,50,pot,1.0")
    lines.append("t0.csv,,pot,1.0")               # no target and no --target
    (d / "manifest.csv").write_text("\n".join(lines) + "\n")
    return d


def test_streaming_crossing_and_median_equal_the_array_versions():
    rng = np.random.default_rng(3)
    for n in range(1, 40):
        for _ in range(20):
            t = np.cumsum(rng.uniform(0.5, 3.0, n))
            y = rng.choice([9.0, 9.6, 10.0, 10.4, 11.0], n) + rng.normal(0, 0.01, n)
            f = CrossingFinder(10.0, band_c=0.5)
            for ti, yi in zip(t, y):
                f.add(ti, yi)
            assert f.result() == crossing_from_trace(t, y, 10.0, band_c=0.5)
    y = list(rng.normal(size=9))
    pad = np.concatenate([[y[0]] * 2, y, [y[-1]] * 2])
    want = np.median(np.lib.stride_tricks.sliding_window_view(pad, 5), axis=1)   # numpy
    rm = RunningMedian(5)
    got = [g for g in (rm.push(i, v) for i, v in enumerate(y)) if g] + rm.finish()
    assert [g[0] for g in got] == list(range(9))
    assert np.array_equal([g[1] for g in got], want)


def test_replay_rows_streams_the_file_as_replay_does(tmp_path):
    path = tmp_path / "h.csv"
    cooling_trace(path, seed=5, heater=True)
    whole = replay(read_trace(path), 50.0)
    estimator = whole.settings.estimator(has_heater=True, any_duty=True)
    with iter_trace_rows(path) as rows:
        pairs = list(replay_rows(rows, 50.0, estimator, whole.settings))
    assert whole.estimator_kwargs["heater"] is True and estimator.heater is True
    assert [pred for _, pred in pairs] == whole.rows
    with iter_trace_rows(path) as rows:             # each pair holds the row it answers
        assert [row for row, _ in pairs] == list(rows)


def test_evaluate_trace_equals_replay_plus_trace_metrics(fleet_dir):
    for i in range(6):
        path = str(fleet_dir / ("t%d.csv" % i))
        target = 58.0 + 3 * i
        trace = read_trace(path)
        res = replay(trace, target)
        crossing = crossing_from_trace(trace.time_s, trace.temp_c, target)
        assert crossing is not None
        want = metrics.trace_metrics(trace.time_s, res.shown_eta(), crossing,
                                     res.shown_eta("eta_low_s"), res.shown_eta("eta_high_s"),
                                     status=res.column("status"))
        got = fleet_core.evaluate_trace({"path": path, "target_c": target}, {"settings": {}})
        assert got["error"] == ""
        assert got["crossing_s"] == crossing and got["rows"] == len(trace)
        for key in ("median_rel_error", "p90_rel_error", "coverage", "no_estimate_fraction",
                    "time_to_trust", "evaluated_rows", "first_answer_s"):
            assert got[key] == want[key], key
        # early arrivals: the 5-reading running median stands in for the true signal
        pad = np.concatenate([[trace.temp_c[0]] * 2, trace.temp_c, [trace.temp_c[-1]] * 2])
        med = np.median(np.lib.stride_tricks.sliding_window_view(pad, 5), axis=1)
        assert got["early_arrival"] == metrics.early_arrivals(res.column("status"), med,
                                                              target, 0.0)
        assert sum(n for _, _, n in got["profile"]) == round(
            want["evaluated_rows"] * (1.0 - want["no_estimate_fraction"]))


def test_long_traces_are_scored_exactly_from_the_spool(fleet_dir, monkeypatch):
    path = str(fleet_dir / "t4.csv")
    target = 70.0
    trace = read_trace(path)
    res = replay(trace, target)
    crossing = crossing_from_trace(trace.time_s, trace.temp_c, target)
    # blocks of 10 rows on disk and a radix select down to bins of 8 values: the
    # path a trace of millions of rows takes
    monkeypatch.setattr(spool, "BLOCK_ROWS", 10)
    monkeypatch.setattr(metrics, "_COLLECT", 8)
    scorer = fleet_metrics.TraceScorer(target, crossing)
    for row in res.rows:
        scorer.add(row)
    assert scorer._keep.rows > 100 and scorer._keep._file is not None
    got = scorer.result()
    want = metrics.trace_metrics(trace.time_s, res.shown_eta(), crossing,
                                 res.shown_eta("eta_low_s"), res.shown_eta("eta_high_s"))
    assert got["metrics_exact"]
    rel = np.array([abs(e - (crossing - t)) / max(crossing - t, 30.0)
                    for t, e, s in zip(trace.time_s, res.column("eta_s"), res.column("status"))
                    if trace.time_s[0] + 60.0 <= t < crossing and e is not None
                    and s in ("tracking", "arrived")])
    # reference: numpy's median and percentile over all the rows at once
    assert got["median_rel_error"] == float(np.median(rel))
    assert got["p90_rel_error"] == float(np.percentile(rel, 90))
    for key in ("median_rel_error", "p90_rel_error", "coverage", "no_estimate_fraction",
                "time_to_trust", "evaluated_rows"):
        assert got[key] == want[key], key


def _csv(path):
    with open(path, newline="") as handle:
        return list(csv.reader(handle))


def test_same_results_in_process_and_on_one_and_two_workers(fleet_dir, tmp_path):
    items, tags = fleet.load_items(str(fleet_dir / "manifest.csv"))
    variants = {"cand": fleet.make_variant(None, [])}
    runs = {
        "inproc": fleet.run_fleet(items, variants, workers=0, progress=False),
        "reversed": fleet.run_fleet(items[::-1], variants, workers=0, progress=False),
        "w1": fleet.run_fleet(items, variants, workers=1, processes=False, progress=False),
        "w2": fleet.run_fleet(items, variants, workers=2, processes=False, progress=False,
                              chunk_size=1),
    }
    outs = {}
    for name, results in runs.items():
        out = tmp_path / name / "res.csv"
        out.parent.mkdir()
        from host_sim.fleet import report as fleet_report
        fleet_report.write_all(str(out), items, tags, variants, results, plots=False)
        outs[name] = (_csv(out), _csv(tmp_path / name / "res_by_tag.csv"))
    assert outs["inproc"] == outs["reversed"] == outs["w1"] == outs["w2"]
    table = outs["inproc"][0]
    head = table[0]
    assert all(c in head for c in REQUIRED + ("product", "fw"))
    rows = [dict(zip(head, r)) for r in table[1:]]
    assert [r["path"] for r in rows] == ["t%d.csv" % i for i in range(6)] + [
        "bad.csv", "nothere.csv", "t0.csv"]
    for r in rows[:6]:
        assert r["error"] == "" and int(r["rows"]) == 240 and float(r["median_rel_error"]) >= 0
    assert "not a number" in rows[6]["error"] and "seventy" in rows[6]["error"]
    assert "no such file" in rows[7]["error"]
    assert "no target" in rows[8]["error"]
    assert all(r["median_rel_error"] == "" for r in rows[6:])


def _die_once(chunk, variants):
    """Task that kills its worker process the first time it runs (marker file)."""
    marker = variants["cand"]["settings"].pop("_marker")
    if not os.path.exists(marker):
        with open(marker, "w") as handle:
            handle.write("died")
        os._exit(1)
    return fleet.evaluate_chunk(chunk, variants)


def test_a_worker_that_dies_is_retried(fleet_dir, tmp_path):
    import cloudpickle
    cloudpickle.register_pickle_by_value(sys.modules[__name__])
    items, _ = fleet.load_items(str(fleet_dir / "manifest.csv"))
    items = items[:2]
    variants = {"cand": {"core": None, "settings": {"_marker": str(tmp_path / "died")},
                         "heater": "auto"}}
    got = fleet.run_fleet(items, variants, workers=1, processes=True, progress=False,
                          chunk_size=2, task=_die_once)
    assert (tmp_path / "died").exists()          # the first attempt did kill the worker
    want = fleet.run_fleet(items, {"cand": fleet.make_variant(None, [])}, workers=0,
                           progress=False)
    for it in items:
        assert got[it.index]["cand"]["error"] == ""
        assert got[it.index]["cand"]["median_rel_error"] == want[it.index]["cand"]["median_rel_error"]


def _raise_on_t3(chunk, variants):
    """Task that raises whenever its chunk holds t3.csv."""
    if any(spec["path"].endswith("t3.csv") for _, spec in chunk):
        raise MemoryError("t3 is too much")
    return fleet.evaluate_chunk(chunk, variants)


def test_a_failing_chunk_is_split_so_only_its_culprit_fails(fleet_dir):
    import cloudpickle
    cloudpickle.register_pickle_by_value(sys.modules[__name__])
    items, _ = fleet.load_items(str(fleet_dir / "manifest.csv"))
    variants = {"cand": fleet.make_variant(None, [])}
    got = fleet.run_fleet(items[:6], variants, workers=1, processes=False, progress=False,
                          chunk_size=3, task=_raise_on_t3, retries=0)
    errors = {os.path.basename(it.spec["path"]): got[it.index]["cand"]["error"]
              for it in items[:6]}
    assert "MemoryError: t3 is too much" in errors.pop("t3.csv")
    assert set(errors.values()) == {""}


def test_ab_against_another_core_in_a_child_process(fleet_dir, tmp_path):
    other = tmp_path / "released"
    shutil.copytree(os.path.join(ROOT, "tinytherm"), other / "tinytherm")
    with open(other / "tinytherm" / "__init__.py", "a") as handle:
        handle.write('\n__version__ = "0.0.0-copy"\n')
    out = tmp_path / "ab.csv"
    # baseline: the copied core with a longer settle time; candidate: this checkout's
    code = main(["fleet", str(fleet_dir / "manifest.csv"), "--out", str(out), "--workers", "0",
                 "--quiet", "--allow-failures", "--baseline-core", str(other), "--baseline-set",
                 "interval=0.9", "--worse-by", "-1", "--plot-worse", "2"])
    assert code == 0
    rows = [dict(zip(_csv(out)[0], r)) for r in _csv(out)[1:]]
    report = (tmp_path / "ab_report.md").read_text()
    assert "0.0.0-copy" in report and str(other / "tinytherm") in report
    # the same code with the same settings gives the same answer in the child
    child = fleet_core.core_process(str(other))
    assert child.info()["file"] == str(other / "tinytherm")
    spec = {"path": str(fleet_dir / "t1.csv"), "target_c": 61.0}
    assert child.evaluate(spec, {"settings": {}}) == fleet_core.evaluate_trace(spec, {"settings": {}})
    import tinytherm
    assert os.path.dirname(tinytherm.__file__) == os.path.join(ROOT, "tinytherm")
    # the worse list: every replayed trace (worse-by -1), worst first, two plots linked
    deltas = [float(r["delta_median_rel_error"]) for r in rows if r["worse"] == "1"]
    assert len(deltas) == 6
    section = report.split("## Traces that got worse", 1)[1]
    worse = [ln for ln in section.splitlines() if ln.startswith("- t")]
    assert len(worse) == 6
    listed = [float(ln.split(" (")[1].split(")")[0]) for ln in worse]
    assert listed == sorted(listed, reverse=True)
    plots = [r["plot"] for r in rows if r["plot"]]
    assert len(plots) == 2 and all((tmp_path / p).read_bytes()[:4] == b"\x89PNG" for p in plots)
    assert report.count("[replay plot](") == 2


def test_cli_contract_subprocess_outputs_and_parquet(fleet_dir, tmp_path):
    out = tmp_path / "RESULTS.csv"
    proc = subprocess.run([sys.executable, "-m", "host_sim", "fleet",
                           str(fleet_dir / "manifest.csv"), "--out", str(out), "--workers", "1",
                           "--threads", "--target", "57", "--allow-failures"], cwd=ROOT, capture_output=True,
                          text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    table = _csv(out)
    assert all(c in table[0] for c in REQUIRED)
    rows = [dict(zip(table[0], r)) for r in table[1:]]
    assert len(rows) == 9 and rows[8]["error"] == "" and rows[8]["target"] == "57"
    import pyarrow.parquet as pq
    pt = pq.read_table(tmp_path / "RESULTS.parquet").to_pylist()
    assert [r["path"] for r in pt] == [r["path"] for r in rows]
    for a, b in zip(pt, rows):
        if b["median_rel_error"]:
            assert a["median_rel_error"] == pytest.approx(float(b["median_rel_error"]), rel=1e-5)
        else:
            assert a["median_rel_error"] is None
    by_tag = [dict(zip(_csv(tmp_path / "RESULTS_by_tag.csv")[0], r))
              for r in _csv(tmp_path / "RESULTS_by_tag.csv")[1:]]
    assert {(r["tag"], r["value"]) for r in by_tag} == {
        ("(all)", ""), ("product", "mug"), ("product", "pot"), ("fw", "1.0"), ("fw", "1.1")}
    mugs = [float(r["median_rel_error"]) for r in rows if r["product"] == "mug" and
            r["median_rel_error"]]
    mug_row = [r for r in by_tag if r["value"] == "mug"][0]
    assert float(mug_row["median_rel_error"]) == pytest.approx(float(np.median(mugs)), rel=1e-5)
    for png in ("RESULTS_error_vs_elapsed.png", "RESULTS_errors_by_tag.png"):
        assert (tmp_path / png).read_bytes()[:4] == b"\x89PNG"


def test_folder_and_glob_inputs(fleet_dir):
    items, tags = fleet.load_items(str(fleet_dir), target_c=50.0)
    names = sorted(os.path.basename(it.path) for it in items)
    # a folder: every CSV but the manifest
    assert tags == [] and names == ["bad.csv"] + ["t%d.csv" % i for i in range(6)]
    globbed, _ = fleet.load_items(str(fleet_dir / "t*.csv"), target_c=50.0)
    assert [os.path.basename(it.path) for it in globbed] == ["t%d.csv" % i for i in range(6)]
    res = fleet.run_fleet(globbed, {"cand": fleet.make_variant(None, [])}, workers=0,
                          progress=False)
    assert all(r["cand"]["error"] == "" for r in res.values())
    with pytest.raises(ValueError):
        fleet.make_variant(None, ["no_such_setting=1"])


def test_fleet_docs_block_runs(tmp_path):
    """docs/fleet.md (linked from the README): its sh blocks run as written."""
    with open(os.path.join(ROOT, "README.md")) as handle:
        assert "(docs/fleet.md)" in handle.read().split("## Fleet replay on a dask cluster")[1]
    with open(os.path.join(ROOT, "docs", "fleet.md")) as handle:
        section = handle.read().split("\n## ", 1)[0]
    import re
    blocks = re.findall(r"```sh\n(.*?)```", section, re.S)
    assert blocks
    bindir = tmp_path / "bin"
    bindir.mkdir()
    wrapper = bindir / "python"            # "python" in the README is this interpreter
    wrapper.write_text('#!/bin/sh\nexec "%s" "$@"\n' % sys.executable)
    wrapper.chmod(0o755)
    env = dict(os.environ, PATH=str(bindir) + os.pathsep + os.environ["PATH"],
               PYTHONPATH=ROOT + os.pathsep + os.environ.get("PYTHONPATH", ""))
    for block in blocks:
        proc = subprocess.run(["bash", "-euc", block], cwd=tmp_path, env=env,
                              capture_output=True, text=True, timeout=300)
        assert proc.returncode == 0, block + "\n" + proc.stdout + proc.stderr
    rows = _csv(tmp_path / "results.csv")
    assert all(c in rows[0] for c in REQUIRED) and len(rows) == 3
    assert all(r[rows[0].index("error")] == "" for r in rows[1:])
    assert (tmp_path / "ab_report.md").read_text().count("## Traces that got worse") == 1
