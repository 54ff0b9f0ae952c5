"""24 hours at 1 Hz under ``micropython -X heapsize=90K``.

The core and the trace generator are precompiled with ``mpy-cross -O3``, as
they would be for a device with a small heap: compiling sources needs more
heap than running them, and -O3 leaves the source line numbers out of the
bytecode (tracebacks show no lines; the core validates with exceptions, never
with ``assert``, so nothing else changes). Measured with the estimator in
parts: the smallest heap in 1K steps that runs this test is 84K after the
equilibrium's drift, the reach and the profile's young-fit law were merged (a
2 h run, the library in a path as long as pytest's tmp path; under pytest the
24 h run at 84K failed importing the saved-state module: the threshold moves
with the path and the heap's fragmentation); 81K at c4310b4,
with the library in a short folder path and in one as long as pytest's tmp
path (81K and 82K at 04deed4, after the settle part; 78K at b1556f1; 80K at
a3dfd7f, after the air, sparse-reading and profile work of issue 17; 76K
before it: the import closure takes about 50K of bytecode and tables on this
64-bit port; the saved-state module, and the frame's modules blob and crc,
are loaded at the first save, and this script imports blob at its start;
benchmarks/device_budget.py prints the figures of a product that never
saves). At 47c2110, with the library under /tmp as a device keeps it under a short
path (the fixture below): 84K ran the day in 7 of 7 random 8-letter folders, 85K
failed in 1 of them (the edge moves with the heap's fragmentation, not in order),
86K ran in all. At f66a26a (the measured air's column: smallest heap 74K -> 76K)
84K and 85K fail and 86K runs (one short folder); 90K leaves a 4K margin over it
so that no folder name fails CI.
A MemoryError in restore() is raised, never taken for a damaged blob.
The trace is generated inside MicroPython (tests/long_run_mp.py). Figures are
printed; the assertions check: no MemoryError, every reading processed, every
save/restore cycle accepted, and no retained heap growth beyond the scatter of
MicroPython's conservative collector (trend between the two halves of the day
at most 256 bytes, spread at most 512 bytes).
"""
import os
import re
import shutil
import subprocess
import sys
import tempfile

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(ROOT, "tests"))
from test_on_micropython import find_tool  # noqa: E402


@pytest.fixture
def short_lib():
    # A device keeps its modules under a short path ("/lib"); each module's path is a
    # string in the heap, so under pytest's long tmp path the same day needs 1-2K more
    # (measured at 47c2110: 84K runs with the library 27 characters deep, 85K at 77,
    # 86K at 137). The library is built under /tmp, its path about 20 characters.
    root = tempfile.mkdtemp(prefix="tt", dir="/tmp" if os.path.isdir("/tmp") else None)
    yield os.path.join(root, "lib")
    shutil.rmtree(root, ignore_errors=True)


def _build(lib):
    cross = find_tool("mpy-cross")
    os.makedirs(os.path.join(lib, "tinytherm"))
    for name in sorted(os.listdir(os.path.join(ROOT, "tinytherm"))):
        if name.endswith(".py"):
            src = os.path.join(ROOT, "tinytherm", name)
            out = os.path.join(lib, "tinytherm", name[:-3] + ".mpy")
            subprocess.run([cross, "-O3", "-o", out, src], check=True)
    for name in ("fault_trace", "prng"):
        src = os.path.join(ROOT, "tests", "core", name + ".py")
        subprocess.run([cross, "-O3", "-o", os.path.join(lib, name + ".mpy"), src], check=True)


@pytest.mark.parametrize("heap", ["90K"])
def test_day_at_one_hertz_in_small_heap(short_lib, heap):
    lib = short_lib
    _build(lib)
    cmd = [find_tool("micropython"), "-X", "heapsize=" + heap, "tests/long_run_mp.py", "24", lib]
    proc = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True, timeout=300)
    out = proc.stdout + proc.stderr
    print(out)
    assert proc.returncode == 0 and "MemoryError" not in out, out
    m = re.search(r"^RESULT (.*)$", proc.stdout, re.M)
    assert m, out
    fig = dict((k, int(v)) for k, v in re.findall(r"(\w+)=(-?\d+)", m.group(1)))
    assert fig["updates"] > 85000  # 24 h at ~1 Hz minus a 20-minute gap
    assert fig["accepted"] + fig["rejected"] == fig["updates"]
    assert fig["rejected"] > 300 and fig["changes"] >= 10  # faults and fills were there
    assert fig["restores_failed"] == 0
    assert fig["hours"] >= 23
    assert abs(fig["trend"]) <= 256, fig
    assert fig["heap_max"] - fig["heap_min"] <= 512, fig


def test_too_small_heap_fails_cleanly(short_lib):
    # The boundary is real: 72K runs out of memory (measured: 76K and 77K do too,
    # in a path as long as pytest's).
    lib = short_lib
    _build(lib)
    cmd = [find_tool("micropython"), "-X", "heapsize=72K", "tests/long_run_mp.py", "1", lib]
    proc = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True, timeout=120)
    assert proc.returncode != 0 and "MemoryError" in proc.stdout + proc.stderr
