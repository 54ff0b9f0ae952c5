"""MicroPython side of benchmarks/core_benchmark.py (run by it; prints key=value).

Runs the same invented cooling trace through the core under the unix
``micropython`` binary: us per update, heap bytes allocated per update with the
GC disabled, bytes retained after 100,000 updates, instance size.
"""
import gc
import math
import sys
import time

sys.path.insert(0, ".")
from tinytherm.estimator import ThermalEstimator  # noqa: E402

MODES = (("known_ambient", {"ambient_c": 21.0}), ("estimated_ambient", {}),
         ("heater", {"ambient_c": 21.0, "heater": True}))


def reading(i):
    # invented mug: 82 C into a 21 C room, k = 1/1100 1/s, 2 s sampling, a
    # small deterministic ripple standing in for noise
    return 21.0 + 61.0 * math.exp(-i * 2.0 / 1100.0) + 0.03 * math.sin(i * 1.7)


def main():
    n = 3000
    temps = [reading(i) for i in range(n)]
    est = None
    for name, kw in MODES:
        est = None
        gc.collect()
        before = gc.mem_alloc()
        est = ThermalEstimator(**kw)
        gc.collect()
        size = gc.mem_alloc() - before
        for i in range(200):
            est.update(temps[i], 2.0, None, 0.5)
        gc.collect()
        gc.disable()
        a = gc.mem_alloc()
        # (400 updates with the collector off: the default unix heap holds them)
        for i in range(200, 600):
            est.update(temps[i], 2.0, None, 0.5)
        alloc = (gc.mem_alloc() - a) / 400.0
        gc.enable()
        t0 = time.ticks_us()
        for i in range(1200, n):
            est.update(temps[i], 2.0, None, 0.5)
        us = time.ticks_diff(time.ticks_us(), t0) / (n - 1200)
        gc.collect()
        a = gc.mem_alloc()
        t0 = time.ticks_us()
        est.predict(45.0)
        pus = time.ticks_diff(time.ticks_us(), t0)
        print("%s instance_bytes=%d alloc_per_update=%.1f us_per_update=%.2f predict_us=%d" % (
            name, size, alloc, us, pus))
    # retained growth: 100,000 updates (cooling, then a long hold), GC on;
    # heap in use is read every 25,000 updates (the first mark comes before
    # the answer fields hold floats, so growth is counted from the second)
    est = ThermalEstimator(ambient_c=21.0)
    marks = [0, 0, 0, 0, 0]
    for i in range(100001):
        j = i if i < n else n - 1
        est.update(temps[j] + 0.001 * (i & 7), 2.0)
        if i % 1000 == 0:
            est.predict(45.0)
        if i % 25000 == 0:
            gc.collect()
            marks[i // 25000] = gc.mem_alloc()
    print("heap_marks_every_25k=%s retained_growth_25k_to_100k=%d" % (
        "/".join(str(m) for m in marks), marks[4] - marks[1]))

main()
