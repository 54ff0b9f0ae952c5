"""Heap bytes allocated per ReadingGuard.check / check_ticks on MicroPython.

Run from the repository root with the unix port::

    .venv/bin/micropython benchmarks/guard_alloc.py

Invented trace (demo data): a liquid cooling slowly from 60 C towards a 21 C
room (k = 1/3000 1/s), read every 2.0 s through a 0.0625 C quantiser with a
small deterministic ripple, so most readings repeat the previous value for a
few samples, as a 12-bit probe on a slow cool does. 1000 readings per path,
the collector off, ``gc.mem_alloc()`` read before and after. Under CPython it
prints the verdict counts only (there is no ``gc.mem_alloc``).
"""
import gc
import math
import sys

sys.path.insert(0, ".")
from tinytherm import status  # noqa: E402
from tinytherm.guard import ReadingGuard  # noqa: E402

N = 1000
Q = 0.0625


def trace():
    out = []
    for i in range(N):
        t = 21.0 + 39.0 * math.exp(-i * 2.0 / 3000.0) + 0.02 * math.sin(i * 1.3)
        out.append(math.floor(t / Q + 0.5) * Q)
    return out


def run_dt(g, temps):
    accepted = 0
    for i in range(N):
        if g.check(temps[i], 2.0) == status.ACCEPTED:
            accepted += 1
    return accepted


def run_ticks(g, temps):
    accepted = 0
    ticks = 1000
    for i in range(N):
        if g.check_ticks(temps[i], ticks) == status.ACCEPTED:
            accepted += 1
        ticks += 2000
    return accepted


def measure(name, runner, window):
    temps = trace()
    g = ReadingGuard(spike_window=window)
    g.check(temps[0], 0.0)  # warm the attribute caches outside the measurement
    g.reset()
    has_mem = hasattr(gc, "mem_alloc")
    gc.collect()
    if has_mem:
        gc.disable()
        before = gc.mem_alloc()
    accepted = runner(g, temps)
    if has_mem:
        used = gc.mem_alloc() - before
        gc.enable()
        print("%s window=%d accepted=%d/%d bytes_per_check=%.1f" % (
            name, window, accepted, N, used / N))
    else:
        print("%s window=%d accepted=%d/%d (no gc.mem_alloc on this runtime)" % (
            name, window, accepted, N))


for w in (3, 5, 0):
    measure("check(dt_s=2.0)", run_dt, w)
    measure("check_ticks(2000 ms)", run_ticks, w)
