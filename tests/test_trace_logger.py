"""firmware_examples/trace_logger.py under the unix micropython, read back by host_sim.replay.trace_io.

The liquid follows the closed form ``T(t) = R + (T0 - R) exp(-k t)`` (Newton's
law of cooling), read through the fake NTC with probe lag and ADC noise
(firmware_examples/fake/). The logged files must be traces the host reader
accepts, within the size cap and the file count, continuous across the parts
of a session; a torn last row (power lost mid-write) is skipped and counted
by ``read_trace(skip_bad=True)``; a power-on starts a new session and never
appends to the torn file.
"""
import json
import math
import os
import subprocess
import sys

import numpy as np
import pytest

from host_sim.replay.trace_io import read_trace
from host_sim.replay.trace_reader import TraceError

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
RUNNER = os.path.join(ROOT, "firmware_examples", "fake", "run.py")
START_C, ROOM_C, RATE = 82.0, 22.0, 1.0 / 1500.0


def micropython():
    path = os.path.join(os.path.dirname(sys.executable), "micropython")
    if not os.path.exists(path):
        pytest.fail("micropython not found: install the dev extra")
    return path


def truth_c(t):
    return ROOM_C + (START_C - ROOM_C) * math.exp(-RATE * t)


def run_logger(tmp_path, logs, end_s, settings=None):
    trace = tmp_path / "liquid.csv"
    with open(trace, "w") as fh:
        fh.write("t_s,liquid_c\n")
        for t in range(0, int(end_s) + 60):
            fh.write("%d,%.6f\n" % (t, truth_c(t)))
    cfg = {"trace": str(trace), "end_s": end_s, "adc_noise_counts": 2.0, "probe_lag_s": 5.0,
           "seed": 11, "settings": dict({"LOG_DIR": str(logs), "MAX_FILE_BYTES": 1024,
                                         "MAX_FILES": 3, "SAMPLE_S": 5}, **(settings or {}))}
    scen = tmp_path / "scenario.json"
    scen.write_text(json.dumps(cfg))
    proc = subprocess.run([micropython(), RUNNER, "trace_logger", str(scen)], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stdout[-2000:] + proc.stderr
    assert "== scenario over" in proc.stdout, proc.stdout[-2000:]
    return proc.stdout


def test_logger_rotates_within_the_cap_and_the_reader_accepts_every_file(tmp_path):
    logs = tmp_path / "logs"
    out = run_logger(tmp_path, logs, end_s=1500)
    assert "session 0" in out
    names = sorted(os.listdir(logs))
    # 301 rows of ~17 bytes need 6 files of 1 KB; only the newest 3 are kept
    assert names == ["tt0000_03.csv", "tt0000_04.csv", "tt0000_05.csv"], names
    assert all(os.path.getsize(logs / n) <= 1024 for n in names)
    traces = [read_trace(str(logs / n)) for n in names]   # strict: every row parses
    seq_start = []
    for n, tr in zip(names, traces):
        assert tr.skipped_rows == 0
        with open(logs / n) as fh:
            first = fh.readline()
            header = fh.readline().strip()
            rows = [line.strip().split(",") for line in fh]
        assert first.startswith("# tinytherm trace_logger session 0 part ")
        assert header == "time_s,temp_c,seq"
        seq_start.append(int(rows[0][2]))
        assert [int(r[2]) for r in rows] == list(range(seq_start[-1], seq_start[-1] + len(rows)))
        # readings against the truth: the NTC path, 2 counts of ADC noise and a
        # 5 s probe lag (about 5 s x 0.04 K/s = 0.2 K at the start) stay within 0.35 K
        err = tr.temp_c - np.array([truth_c(t) for t in tr.time_s])
        assert np.max(np.abs(err)) < 0.35, np.max(np.abs(err))
        assert np.all(np.diff(tr.time_s) == 5.0)
    # the parts join: time and seq run on from one file to the next
    for i in range(1, len(traces)):
        assert traces[i].time_s[0] - traces[i - 1].time_s[-1] == 5.0
        assert seq_start[i] == seq_start[i - 1] + len(traces[i - 1])
    assert traces[-1].time_s[-1] == 1500.0


def test_torn_last_row_is_skipped_and_counted_and_power_on_starts_a_new_session(tmp_path):
    logs = tmp_path / "logs"
    run_logger(tmp_path, logs, end_s=400, settings={"MAX_FILE_BYTES": 65536})
    (name,) = os.listdir(logs)
    path = logs / name
    full = read_trace(str(path))
    assert len(full) == 81
    data = path.read_bytes()
    # power lost in the middle of writing the last row: cut inside its temperature
    last = data.rstrip(b"\n").rsplit(b"\n", 1)[1]
    cut = len(data) - 1 - len(last) + last.index(b",") + 3
    path.write_bytes(data[:cut])
    with pytest.raises(TraceError):
        read_trace(str(path))
    torn = read_trace(str(path), skip_bad=True)
    assert torn.skipped_rows == 1 and len(torn) == 80
    assert np.array_equal(torn.temp_c, full.temp_c[:80])
    # the next power-on writes session 1 and leaves the torn file as it was
    out = run_logger(tmp_path, logs, end_s=100, settings={"MAX_FILE_BYTES": 65536})
    assert "session 1" in out
    assert sorted(os.listdir(logs)) == ["tt0000_00.csv", "tt0001_00.csv"]
    assert path.read_bytes() == data[:cut]
    assert len(read_trace(str(logs / "tt0001_00.csv"))) == 21


def test_logger_class_writes_ambient_and_duty_columns_on_micropython(tmp_path):
    logs = tmp_path / "logs"
    code = (
        "import sys\nsys.path.insert(0, 'firmware_examples/fake')\n"
        "sys.path.insert(0, 'firmware_examples')\nsys.path.insert(0, '.')\n"
        "from trace_logger import TraceLogger\n"
        "log = TraceLogger(%r, ambient=True, heater=True, max_file_bytes=300, max_files=2)\n"
        "for i in range(30):\n"
        "    amb = None if i %% 7 == 3 else 20.0 + 0.01 * i\n"
        "    temp = None if i == 5 else 15.0 + 0.5 * i\n"
        "    log.log(2.0 * i, temp, ambient_c=amb, duty=1.0 if i < 20 else 0.25)\n"
        "log.log(1.0, 40.0)\n"
        "log.close()\n"
        "print(log.rows, log.dropped, log.session, log.part, log.files())\n" % str(logs))
    proc = subprocess.run([micropython(), "-c", code], cwd=ROOT, capture_output=True, text=True,
                          timeout=60)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    rows, dropped, session, part = proc.stdout.split()[:4]
    # row 5 had no temperature, the last call went back in time
    assert (rows, dropped, session) == ("29", "2", "0")
    names = sorted(os.listdir(logs))
    assert len(names) == 2 and names[-1] == "tt0000_%02d.csv" % int(part)
    seen = []
    for n in names:
        assert os.path.getsize(logs / n) <= 300
        tr = read_trace(str(logs / n))
        assert tr.has_ambient and tr.has_heater
        for t, c, a, d in zip(tr.time_s, tr.temp_c, tr.ambient_c, tr.heater):
            i = int(round(t / 2.0))
            seen.append(i)
            assert c == pytest.approx(15.0 + 0.5 * i, abs=1e-3)
            if i % 7 == 3:
                assert math.isnan(a)
            else:
                assert a == pytest.approx(20.0 + 0.01 * i, abs=1e-3)
            assert d == (1.0 if i < 20 else 0.25)
    assert seen == sorted(seen) and seen[-1] == 29 and 5 not in seen
