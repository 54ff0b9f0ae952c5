"""24 hours at 1 Hz of a faulty trace through the estimator, for a small MicroPython heap.

Run by tests/test_long_run.py as
``micropython -X heapsize=N tests/long_run_mp.py [hours] [lib]`` where ``lib``
holds the core and the trace generator precompiled by mpy-cross (as on a
device: compiling the sources needs more heap than running them). Works
under CPython too. The trace generator (tests/core/fault_trace.py)
runs inside the same interpreter. Every 600 readings the state goes through
save() -> restore() as on a deep-sleep wake. After each simulated hour the
heap in use after a full collection is recorded; the closing line reports the
figures:

    RESULT updates=... accepted=... rejected=... changes=... faults=...
           heap_first=... heap_min=... heap_max=... growth=...
"""
import gc
import sys

sys.path.insert(0, ".")
sys.path.insert(0, "tests/core")
if len(sys.argv) > 2:
    sys.path.insert(0, sys.argv[2])

from tinytherm import blob as bl  # noqa: E402
from tinytherm import status as st  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402

# Build the estimator before the trace generator is loaded: its attribute
# table needs a contiguous block that a heap fragmented by imports may lack.
gc.collect()
ESTIMATOR = ThermalEstimator()

from fault_trace import FaultTrace  # noqa: E402

NAN = float("nan")


def heap_in_use(est):
    # canonical state, so the figure compares like with like: the answer
    # fields cleared (a NaN target), no blob held
    est.predict(NAN)
    gc.collect()
    if hasattr(gc, "mem_alloc"):
        return gc.mem_alloc()
    return 0


def main(hours):
    gc.collect()
    trace = FaultTrace(seed=11, hours=hours, period_s=1.0)
    est = ESTIMATOR
    gc.collect()
    faults = 0
    restores_failed = 0
    accepted = 0
    rejected = 0
    woke = False
    changes = 0
    blob = None
    samples = []
    next_mark = 3600
    while trace.step():
        if woke:
            # the first reading after a wake carries the slept time in seconds
            verdict = est.update(trace.temp_c, trace.dt_s)
            woke = False
        else:
            verdict = est.update_ticks(trace.temp_c, trace.ticks_ms)
        if verdict:
            rejected += 1
        else:
            accepted += 1
        n = trace.count
        if n % 10 == 0:
            if est.predict(45.0) == st.SENSOR_FAULT:
                faults += 1
        if n % 600 == 0:
            blob = est.save()
            if est.restore(blob) != bl.RESTORED:
                restores_failed += 1
            woke = True
        if n >= next_mark:
            next_mark += 3600
            blob = None
            samples.append(heap_in_use(est))
    print("SAMPLES", " ".join([str(x) for x in samples]))
    # hour 1 is warm-up; compare the mean of the next half of the day with the last half
    rest = samples[1:]
    half = len(rest) // 2
    early = sum(rest[:half]) // half if half else 0
    late = sum(rest[half:]) // (len(rest) - half) if rest else 0
    print("RESULT updates=%d accepted=%d rejected=%d changes=%d faults=%d restores_failed=%d "
          "heap_min=%d heap_max=%d early_mean=%d late_mean=%d trend=%d hours=%d"
          % (trace.count, accepted, rejected, est.changes, faults, restores_failed,
             min(rest) if rest else 0, max(rest) if rest else 0, early, late, late - early,
             len(samples)))


main(float(sys.argv[1]) if len(sys.argv) > 1 else 24.0)
