"""Benchmark of the on-device core: speed, heap and size, with a peer in the same run.

Prints one table. Figures, not pass/fail: run it yourself with

    .venv/bin/python benchmarks/core_benchmark.py

- CPython us/update: median of repeats of the full update path over an invented
  2 s cooling trace (white noise), three estimator modes;
- the same trace through filterpy's ExtendedKalmanFilter on the 3-state model
  [T, k, R] (the usual EKF for this job), in the same process, as a ratio; and
  the accuracy of both (relative error of k and of the time to 25 C at the end);
- MicroPython (unix port) us/update, heap bytes allocated per update (GC
  disabled), instance size and retained growth over 100,000 updates, from
  benchmarks/mp_core_bench.py run under the ``micropython`` binary;
- the total size of the core compiled to .mpy with mpy-cross.
"""
import math
import os
import statistics
import subprocess
import sys
import tempfile
import time

import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)

from tinytherm.estimator import ThermalEstimator  # noqa: E402

K_TRUE = 1.0 / 1100.0
AMBIENT = 21.0
START = 82.0
DT = 2.0
N = 900


def trace(seed=5):
    rng = np.random.default_rng(seed)
    t = np.arange(N) * DT
    clean = AMBIENT + (START - AMBIENT) * np.exp(-K_TRUE * t)
    return [float(v) for v in clean + rng.normal(0.0, 0.05, N)]


def tool(name):
    here = os.path.join(os.path.dirname(sys.executable), name)
    return here if os.path.exists(here) else name


def time_core(ys, kwargs, repeats=7):
    runs = []
    for _ in range(repeats):
        est = ThermalEstimator(**kwargs)
        upd = est.update
        t0 = time.perf_counter()
        upd(ys[0], 0.0, None, 0.5)
        for y in ys[1:]:
            upd(y, DT, None, 0.5)
        runs.append((time.perf_counter() - t0) / len(ys) * 1e6)
    est.predict(40.0)
    return statistics.median(runs), est


def make_ekf():
    from filterpy.kalman import ExtendedKalmanFilter

    class CoolingEKF(ExtendedKalmanFilter):
        """x = [T, k, R]; T <- R + (T - R) exp(-k dt), k and R random walks."""

        def predict_x(self, u=0):
            temp, k, amb = self.x[:, 0]
            e = math.exp(-k * DT)
            self.F = np.array([[e, -DT * (temp - amb) * e, 1.0 - e], [0, 1, 0], [0, 0, 1]])
            self.x = np.array([[amb + (temp - amb) * e], [k], [amb]])

    ekf = CoolingEKF(dim_x=3, dim_z=1)
    ekf.x = np.array([[START], [1.0 / 1800.0], [21.0]])
    ekf.P = np.diag([0.25, (1.0 / 1800.0) ** 2, 64.0])
    ekf.R = np.array([[0.05 ** 2]])
    ekf.Q = np.diag([1e-6, 1e-14, 1e-8])
    return ekf


def time_ekf(ys, repeats=3):
    h = np.array([[1.0, 0.0, 0.0]])

    def hjac(x):
        return h

    def hx(x):
        return x[:1]

    runs = []
    for _ in range(repeats):
        ekf = make_ekf()
        t0 = time.perf_counter()
        for y in ys:
            # predict() runs the nonlinear predict_x and the Jacobian F;
            # (filterpy's predict_update would propagate x linearly with F)
            ekf.predict()
            ekf.update(np.array([[y]]), hjac, hx)
        runs.append((time.perf_counter() - t0) / len(ys) * 1e6)
    return statistics.median(runs), ekf


def eta_truth(last_index, target):
    temp = AMBIENT + (START - AMBIENT) * math.exp(-K_TRUE * last_index * DT)
    return math.log((temp - AMBIENT) / (target - AMBIENT)) / K_TRUE


def run_micropython():
    proc = subprocess.run([tool("micropython"), "benchmarks/mp_core_bench.py"], cwd=ROOT,
                          capture_output=True, text=True, timeout=900)
    if proc.returncode:
        return {}, proc.stdout + proc.stderr
    rows = {}
    for line in proc.stdout.splitlines():
        parts = line.split()
        if parts and "=" not in parts[0]:
            rows[parts[0]] = dict(p.split("=") for p in parts[1:])
        else:
            rows["_growth"] = dict(p.split("=") for p in parts)
    return rows, ""


ESTIMATOR_PATH = ("__init__.py", "estimator.py", "status.py", "guard.py", "change.py", "num.py",
                  "blob.py", "crc.py")


def mpy_sizes():
    """Bytes of .mpy: (the estimator's import closure, every module of tinytherm/)."""
    closure = 0
    total = 0
    with tempfile.TemporaryDirectory() as tmp:
        for f in sorted(os.listdir(os.path.join(ROOT, "tinytherm"))):
            if f.endswith(".py"):
                out = os.path.join(tmp, f[:-3] + ".mpy")
                subprocess.run([tool("mpy-cross"), "-o", out, os.path.join(ROOT, "tinytherm", f)],
                               check=True)
                size = os.path.getsize(out)
                total += size
                if f in ESTIMATOR_PATH:
                    closure += size
    return closure, total


def main():
    ys = trace()
    print("Core benchmark: %d readings, 2 s apart, invented cooling trace (k = 1/1100 1/s)" % N)
    ekf_us, ekf = time_ekf(ys)
    print()
    print("%-22s %12s %14s" % ("CPython", "us/update", "EKF / core"))
    results = {}
    for name, kw in (("known_ambient", {"ambient_c": AMBIENT}), ("estimated_ambient", {}),
                     ("heater", {"ambient_c": AMBIENT, "heater": True})):
        us, est = time_core(ys, kw)
        results[name] = est
        print("%-22s %12.2f %13.1fx" % (name, us, ekf_us / us))
    print("%-22s %12.2f %14s" % ("filterpy EKF [T,k,R]", ekf_us, "1.0x"))
    print()
    target = 25.0
    truth = eta_truth(N - 1, target)
    est = results["estimated_ambient"]
    est.predict(target)
    ekf_temp, ekf_k, ekf_r = ekf.x[:, 0]
    ekf_eta = math.log((ekf_temp - ekf_r) / (target - ekf_r)) / ekf_k
    print("Accuracy at the last reading (same trace, ambient estimated by both):")
    print("  core: k error %+.2f %%, time to 25 C error %+.2f %%" % (
        100 * (est.rate_per_s / K_TRUE - 1), 100 * (est.eta_s / truth - 1)))
    print("  EKF : k error %+.2f %%, time to 25 C error %+.2f %%" % (
        100 * (ekf_k / K_TRUE - 1), 100 * (ekf_eta / truth - 1)))
    print()
    rows, err = run_micropython()
    if err:
        print("micropython run failed:\n" + err)
    else:
        print("%-22s %12s %16s %15s" % ("MicroPython unix", "us/update", "heap B/update",
                                        "instance B"))
        for name in ("known_ambient", "estimated_ambient", "heater"):
            r = rows[name]
            print("%-22s %12s %16s %15s" % (name, r["us_per_update"], r["alloc_per_update"],
                                            r["instance_bytes"]))
        g = rows["_growth"]
        print("retained heap growth over updates 25,000..100,000: %s B (marks %s)" % (
            g["retained_growth_25k_to_100k"], g["heap_marks_every_25k"]))
    closure, total = mpy_sizes()
    print(".mpy (mpy-cross): estimator with what it imports %d bytes; all of tinytherm/ %d bytes"
          % (closure, total))


if __name__ == "__main__":
    main()
