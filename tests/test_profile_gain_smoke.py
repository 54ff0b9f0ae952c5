"""The profile benchmark runs in CI at a small size (the figures are in docs/profiles.md).

benchmarks/profile_gain.py calibrates a profile on some simulated uses of a
vessel (host_sim.sim.vessels, our own inventions) and replays other uses with and
without it, and with another vessel's profile. This checks that the whole
chain runs and reports its figures; the target ratios are printed by the
benchmark, not asserted here (a benchmark's figures are not pass/fail).
"""
import os
import re
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def test_profile_gain_small_run_reports_every_row():
    proc = subprocess.run([sys.executable, "benchmarks/profile_gain.py", "--train", "4",
                           "--test", "3", "--vessels", "kettle", "--folds", "2"],
                          cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, proc.stderr[-2000:]
    out = proc.stdout
    for row in ("device, no profile", "device WITH the profile", "(wrong)"):
        assert row in out, out
    m = re.search(r"ratios to no profile: with ([0-9.]+) .* wrong ([0-9.]+)", out)
    assert m, out
    assert float(m.group(1)) > 0.0 and float(m.group(2)) > 0.0
