"""Short bounded runs of the calibrate and manifest fuzz targets (tests/fuzz_calibrate.py,
tests/fuzz_manifest.py).

Longer runs print their figures the same way; these only check that each target
runs, exercises both outcomes and finds nothing in its seed corpus and a few more
cases.
"""
import os
import re
import subprocess
import sys

HERE = os.path.dirname(os.path.abspath(__file__))


def _run(script, runs):
    proc = subprocess.run([sys.executable, os.path.join(HERE, script), "-atheris_runs=%d" % runs,
                           "-seed=12345"], cwd=os.path.dirname(HERE), capture_output=True,
                          text=True, timeout=600)
    return proc, proc.stdout + proc.stderr


def test_calibrate_fuzz_run_finds_nothing():
    proc, out = _run("fuzz_calibrate.py", 30)
    m = re.search(r"cases run (\d+), findings (\d+) \(distinct \d+\); exit 0: (\d+), "
                  r"exit 2: (\d+); slowest case ([0-9.]+) s; peak memory (\d+) MB", out)
    assert m, out[-2000:]
    cases, findings, ok, err = map(int, m.groups()[:4])
    assert proc.returncode == 0, out[-2000:]
    assert cases == 30 and findings == 0, out[-2000:]
    assert ok + err == cases and err > 0


def test_manifest_fuzz_run_finds_nothing():
    proc, out = _run("fuzz_manifest.py", 200)
    m = re.search(r"cases run (\d+), findings (\d+) \(distinct \d+\); items read (\d+); "
                  r"fleet exit 0: (\d+), exit 1: (\d+), exit 2: (\d+)", out)
    assert m, out[-2000:]
    cases, findings, items, ok, failed, err = map(int, m.groups())
    assert proc.returncode == 0, out[-2000:]
    assert cases == 200 and findings == 0, out[-2000:]
    assert ok + failed + err == cases and items > 0 and ok > 0 and failed > 0 and err > 0
