"""A short bounded run of the coverage-guided fuzzer (tests/fuzz_trace_io.py).

Longer runs print their figures the same way (see docs/robustness.md); this one only
checks that the fuzz target runs and finds nothing in a few hundred cases.
"""
import os
import re
import subprocess
import sys

HERE = os.path.dirname(os.path.abspath(__file__))


def test_fuzz_run_finds_no_exceptions():
    proc = subprocess.run([sys.executable, os.path.join(HERE, "fuzz_trace_io.py"),
                           "-atheris_runs=400", "-seed=12345"], cwd=os.path.dirname(HERE),
                          capture_output=True, text=True, timeout=300)
    out = proc.stdout + proc.stderr
    m = re.search(r"cases run (\d+), exceptions/findings (\d+) \(distinct (\d+)\); "
                  r"reader rows (\d+); CLI exit 0: (\d+), exit 2: (\d+)", out)
    assert m, out[-2000:]
    cases, findings, _, rows, ok, err = map(int, m.groups())
    assert proc.returncode == 0, out[-2000:]
    assert cases == 400 and findings == 0, out[-2000:]
    assert ok + err == cases
    assert ok > 0 and rows > 0          # the seeds include good traces: the replay path ran
