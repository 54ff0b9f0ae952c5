"""The estimator's never-raise promises under a short seeded fuzz run, on both runtimes.

tests/fuzz_estimator.py is the generator (junk readings, times, ambients,
duties, targets, save -> restore round trips, resealed junk blobs); the long
runs and their figures are in docs/benchmarks.md. No outside reference: these are
the module's own promises (never raise, finite answers, a restore that
succeeds does not change the next answer).
"""
import os
import re
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(ROOT, "tests"))
from test_on_micropython import find_tool  # noqa: E402


def _run(cmd):
    proc = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True, timeout=300)
    m = re.search(r"^FUZZ (.*)$", proc.stdout, re.M)
    assert m, proc.stdout + proc.stderr
    fig = dict((k, int(v)) for k, v in re.findall(r"(\w+)=(\d+)", m.group(1)))
    return fig, proc.stdout


def test_fuzz_cpython():
    fig, out = _run([sys.executable, "tests/fuzz_estimator.py", "30000", "3"])
    assert fig["cases"] == 30000 and fig["restores"] > 500, out
    assert fig["exceptions"] == 0 and fig["nonfinite"] == 0, out
    assert fig["changed_by_restore"] == 0, out


def test_fuzz_micropython():
    fig, out = _run([find_tool("micropython"), "-X", "heapsize=4M", "tests/fuzz_estimator.py",
                     "5000", "4"])
    assert fig["cases"] == 5000 and fig["restores"] > 100, out
    assert fig["exceptions"] == 0 and fig["nonfinite"] == 0, out
    assert fig["changed_by_restore"] == 0, out
