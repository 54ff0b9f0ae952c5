"""The reading guard gives the same verdict for every edge input on CPython and MicroPython.

``tests/core/guard_verdicts.py`` prints the verdicts (and elapsed ms, gap) for
a fixed list of edge inputs: floats at the range's ends, ints beyond the float
range (MicroPython converts them to inf where CPython raises), non-numbers,
tiny and huge time steps, tick values beyond the wrap. Both runtimes must print
exactly the same lines.
"""
import subprocess
import sys

from test_on_micropython import ROOT, run_micropython


def test_guard_verdicts_identical_on_both_runtimes():
    cp = subprocess.run([sys.executable, "tests/core/guard_verdicts.py"], cwd=ROOT,
                        capture_output=True, text=True, timeout=120)
    mp = run_micropython(["tests/core/guard_verdicts.py"], timeout=120)
    assert cp.returncode == 0, cp.stderr
    assert mp.returncode == 0, mp.stdout + mp.stderr
    lines = cp.stdout.splitlines()
    assert len(lines) == 34 * 2 + 25 * 2 + 15
    assert mp.stdout.splitlines() == lines
    # and the list really spans the verdicts (not one answer for everything)
    verdicts = {line.split()[3] for line in lines if line.startswith("temp")}
    assert verdicts >= {"0", "1", "2", "3", "8"}, verdicts
