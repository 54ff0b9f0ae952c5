"""The ETA table of replay and demo, the early-arrival line, and honest cells (issue 19).

A newcomer replaying a trace wants the ETA over time as demo shows it: minutes,
the status, the ETA with its interval, the error in % and the true time left
when the crossing is known, and the early-arrival count in the summary; the
prediction CSV stays as it was. Cells say "--" where a device shows no answer
(a settling estimate with an interval of 0..inf is none), and time-to-trust is
never printed as "1.00" beside "1.00 = never" when the answers held for the
last seconds. The figures checked here are recomputed from PRED.csv and the
truth file (the table's own definition), not pinned numbers of the estimator.
"""
import csv
import math
import re

import numpy as np
import pytest

from host_sim import cli
from host_sim.cli.eta_table import MAX_ROWS, TABLE_ROWS, EtaTable, auto_step_s
from host_sim.cli.options import TRUST_FLOOR_S, format_trust
from host_sim.fleet.core import evaluate_trace
from host_sim.replay.metrics import FLOOR_S, trace_metrics
from host_sim.replay.trace_io import PREDICTION_COLUMNS
from host_sim.sim.scenarios import generate, write_scenario
from tinytherm import status as st

ROW = re.compile(r"^\s+(-?[\d.]+)\s+(-?[\d.]+)\s+([a-z_]+)\s+(\S+)\s+(\S+(?: \S+)?)"
                 r"(?:\s+(\S+)\s+(\S+))?(?:\s+<- .*)?$")


def run(argv, capsys):
    code = cli.main([str(a) for a in argv])
    cap = capsys.readouterr()
    return code, cap.out, cap.err


@pytest.fixture(scope="module")
def mug(tmp_path_factory):
    d = tmp_path_factory.mktemp("mug")
    gen = generate("mug", 3)
    write_scenario(gen, d / "mug.csv", d / "mug.json")
    return gen, d / "mug.csv", d / "mug.json"


def table_rows(out):
    lines = out.splitlines()
    start = [i for i, ln in enumerate(lines) if ln.startswith("ETA over time")]
    assert len(start) == 1, out
    rows = []
    for ln in lines[start[0] + 3:]:
        m = ROW.match(ln)
        if not m:
            break
        rows.append(m.groups())
    return rows


def test_replay_prints_the_eta_over_time_in_minutes(mug, tmp_path, capsys):
    gen, trace, truth = mug
    target = gen.truth["target_c"]
    crossing = gen.truth["crossing_time_s"]
    pred = tmp_path / "p.csv"
    code, out, _ = run(["replay", trace, "--target", target, "--out", pred, "--truth", truth],
                       capsys)
    assert code == 0
    rows = table_rows(out)
    span = gen.time_s[-1] - gen.time_s[0]
    assert 10 <= len(rows) <= TABLE_ROWS + 1 + 2      # + the first row, + the events
    with open(pred, newline="") as fh:
        reader = csv.DictReader(fh)
        assert reader.fieldnames == list(PREDICTION_COLUMNS)   # machine output unchanged
        preds = list(reader)
    by_time = {round((float(p["time_s"]) - float(preds[0]["time_s"])) / 60.0, 1): p
               for p in preds}
    checked = 0
    for minute, _, status, eta, band, left, err in rows:
        p = by_time[float(minute)]
        assert status == p["status"]
        t = float(p["time_s"])
        rem = crossing - t
        if rem > 0:
            assert float(left) == pytest.approx(rem / 60.0, abs=0.051)
        else:
            assert left == "passed"
        if status in ("tracking", "arrived") and rem > 0:
            eta_s = float(p["eta_s"])
            assert float(eta) == pytest.approx(eta_s / 60.0, abs=0.051)
            want = 100.0 * (eta_s - rem) / max(rem, FLOOR_S)
            assert float(err) == pytest.approx(want, abs=0.51)
            checked += 1
        elif status not in ("tracking", "arrived"):
            assert eta == "--" and band == "--" and err in ("--", None)
    assert checked >= 5
    # the step: whole minutes, at most TABLE_ROWS rows over the trace
    step = auto_step_s(span)
    assert step % 60.0 == 0.0 and span / step <= TABLE_ROWS
    assert "a row every %d min" % (step // 60) in out
    early = [ln for ln in out.splitlines() if ln.startswith("early arrivals: ")]
    assert len(early) == 1


def test_replay_early_arrivals_are_fleets(tmp_path, capsys):
    # a drink that reads the room before the pour: arrived rows after the crossing are
    # honest; the count is fleet's early_arrival for the same trace and approach
    gen = generate("mug", 7)
    write_scenario(gen, tmp_path / "m.csv", tmp_path / "m.json")
    target = gen.truth["target_c"]
    for approach in ("either", "cool"):
        code, out, _ = run(["replay", tmp_path / "m.csv", "--target", target, "--out",
                            tmp_path / "p.csv", "--approach", approach], capsys)
        assert code == 0
        said = int(re.search(r"early arrivals: (\d+) row", out).group(1))
        fleet = evaluate_trace({"path": str(tmp_path / "m.csv"), "target_c": target},
                               {"settings": ["approach=%s" % approach]})
        assert fleet["error"] == ""
        assert said == fleet["early_arrival"]
        assert said == 0          # the room reading before the pour is not an approach


def test_every_and_no_table(mug, tmp_path, capsys):
    gen, trace, truth = mug
    base = ["replay", trace, "--target", gen.truth["target_c"], "--out", tmp_path / "p.csv"]
    code, out, _ = run(base + ["--every", "300"], capsys)
    assert code == 0
    minutes = [float(r[0]) for r in table_rows(out) if "<-" not in r]
    plain = [m for m in minutes if abs(m / 5.0 - round(m / 5.0)) < 0.1]
    assert len(plain) >= 4 and "a row every 5 min" in out
    before = (tmp_path / "p.csv").read_bytes()
    code, out, _ = run(base + ["--no-table"], capsys)
    assert code == 0 and "ETA over time" not in out and "early arrivals" in out
    assert (tmp_path / "p.csv").read_bytes() == before          # the table changes no output


def test_table_is_bounded_on_a_long_trace():
    table = EtaTable(1.0)
    for i in range(100000):
        table.offer(float(i), 60.0, st.TRACKING, 100.0, 50.0, 200.0, "e" if i % 7 == 0 else "")
    assert len(table.rows) == MAX_ROWS and table.left_out > 0
    assert "left out" in table.lines()[-2]
    assert auto_step_s(31 * 60.0) == 120.0 and auto_step_s(8.6 * 3600) == 1200.0
    assert auto_step_s(1e9) >= 1e9 / TABLE_ROWS


def test_cells_say_no_answer_honestly():
    table = EtaTable(60.0)
    table.offer(0.0, 70.0, st.SETTLING, 0.0, 0.0, math.inf)        # the old "0 0..inf"
    table.offer(60.0, 69.0, st.TRACKING, 600.0, 300.0, math.inf)   # no upper end
    table.offer(120.0, 68.0, st.TRACKING, 600.0, 0.0, math.inf)    # nothing known
    table.offer(180.0, 67.0, st.TRACKING, 600.0, 480.0, 720.0)
    text = "\n".join(table.lines(900.0))
    assert "inf" not in text and "0.0..inf" not in text
    rows = table.lines(900.0)[3:7]
    assert rows[0].split()[2:4] == ["settling", "--"]
    assert ">= 5.0" in rows[1]
    assert rows[2].split()[3:5] == ["10.0", "--"]
    assert "8.0..12.0" in rows[3]


def test_demo_never_prints_unbounded_cells_or_a_share_that_reads_as_never(capsys):
    for kind, seed in (("fridge", 1), ("bath", 9), ("kettle", 7), ("mug", 7)):
        code, out, _ = run(["demo", "--kind", kind, "--seed", seed], capsys)
        assert code == 0
        assert "inf" not in out.replace("information", ""), (kind, out)
        trust = re.findall(r"time-to-trust (\S+)", out)
        assert trust and "1.00" not in trust, (kind, trust)
        assert table_rows(out)


def test_time_to_trust_near_one_is_not_never():
    # exact answers except one 40 s miss 4 s before the crossing, then exact again
    t = np.arange(0.0, 1000.0, 2.0)
    crossing = 990.0
    eta = crossing - t
    at = int(np.searchsorted(t, crossing - 4.0))
    eta[at] += 40.0
    figs = trace_metrics(t, eta, crossing, floor_s=TRUST_FLOOR_S)
    assert figs["time_to_trust"] == pytest.approx((t[at + 1] - t[0]) / crossing)
    assert figs["time_to_trust"] > 0.995                 # printed "1.00" before
    assert figs["trusted_for_s"] == pytest.approx(crossing - t[at + 1])
    text = format_trust(figs)
    assert text == "0.998 (the last 2 s)"
    # the same miss on the last row: never, and the miss is named
    eta = crossing - t
    last = int(np.nonzero(t < crossing)[0][-1])
    eta[last] += 40.0
    figs = trace_metrics(t, eta, crossing, floor_s=TRUST_FLOOR_S)
    assert figs["time_to_trust"] == 1.0 and figs["trusted_for_s"] is None
    assert figs["trust_miss_before_s"] == pytest.approx(crossing - t[last])
    assert figs["trust_miss_s"] == pytest.approx(40.0)
    assert format_trust(figs) == "never (an answer 2 s before the crossing was 40 s off)"
    # no answer on the last row
    eta = (crossing - t).astype(float)
    eta[last] = np.nan
    figs = trace_metrics(t, eta, crossing, floor_s=TRUST_FLOOR_S)
    assert format_trust(figs) == "never (no answer shown 2 s before the crossing)"


def test_benchmark_table_says_what_a_share_of_one_means():
    from host_sim.cli.benchmark import format_table, run_suite
    table = format_table("tune", run_suite("tune", per_kind=1, jobs=1, progress=False), 1)
    shares = [float(ln.split("|")[5]) for ln in table.splitlines()
              if ln.startswith("| ") and "| core |" in ln]
    assert shares
    note = [ln for ln in table.splitlines() if ln.startswith("time-to-trust: ")]
    assert len(note) == 1 and "1.00 means more than half the traces never" in note[0]
    assert "within 10 %" in note[0] and "30 s floor" in note[0]


def test_a_table_piped_into_head_ends_quietly():
    # the replay and demo tables are longer than a screen: `| head` must not end in a
    # traceback (BrokenPipeError)
    import os
    import subprocess
    import sys
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    proc = subprocess.Popen([sys.executable, "-m", "host_sim", "demo", "--every", "5"],
                            cwd=root, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    proc.stdout.close()                 # the reader leaves before the first line
    err = proc.stderr.read().decode()
    proc.wait(timeout=120)
    assert "Traceback" not in err and "BrokenPipe" not in err, err
