"""Fleet replay figures (printed, never pass/fail).

Scaling: ``--traces`` synthetic traces (Newton cooling plus white noise,
``--rows`` readings 2 s apart each; our own invented traces) in a manifest
with two tags, replayed in this process (the peer) and on a LocalCluster of 1
and 2 single-threaded worker processes reached through its scheduler address
(the ``--scheduler`` path). Prints traces per second, the speed-up against
the in-process peer, and each worker's peak resident memory (VmHWM) after
the run and before it. Results of all runs are compared for equality.

Memory: one generated trace of ``--memory-rows`` rows (a slow cooling that
crosses the target near the end, so nearly every row is evaluated), replayed
and scored by the streaming path (:func:`host_sim.fleet.core.evaluate_trace`,
reading the trace and writing the prediction CSV row by row) in a fresh
process; its peak resident memory is printed beside the same run on a
trace ten times shorter, and beside the in-memory path (``read_trace`` +
``replay`` + ``trace_metrics``) on ``--peer-rows`` rows.

    python benchmarks/fleet_scaling.py                      # both, full size
    python benchmarks/fleet_scaling.py --traces 500 --memory-rows 200000
"""
import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, ROOT)


def write_fleet(folder, n, rows):
    """``n`` short traces and their manifest; returns the manifest path."""
    import numpy as np
    lines = ["path,target,product,fw"]
    for i in range(n):
        rng = np.random.default_rng(i)
        t0, amb = rng.uniform(60.0, 90.0), rng.uniform(15.0, 25.0)
        tau = rng.uniform(300.0, 1200.0)
        t = np.arange(rows) * 2.0
        y = amb + (t0 - amb) * np.exp(-t / tau) + rng.normal(0.0, 0.05, rows)
        target = amb + (t0 - amb) * np.exp(-0.6 * t[-1] / tau)    # crossed at 60 %
        name = "t%05d.csv" % i
        with open(os.path.join(folder, name), "w") as handle:
            handle.write("time_s,temp_c\n")
            handle.write("".join("%.1f,%.4f\n" % p for p in zip(t, y)))
        lines.append("%s,%.3f,%s,%s" % (name, target, ("mug", "pot", "bath")[i % 3],
                                        "1.%d" % (i % 2)))
    path = os.path.join(folder, "manifest.csv")
    with open(path, "w") as handle:
        handle.write("\n".join(lines) + "\n")
    return path


def _peak_rss_mb():
    """This process's peak resident memory, MB: VmHWM (Linux), else ru_maxrss.

    ru_maxrss survives exec on Linux, so a child started from a big parent
    would report the parent's peak; VmHWM belongs to the new address space.
    """
    try:
        with open("/proc/self/status") as handle:
            for line in handle:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) / 1024.0
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def scaling(n, rows):
    import logging

    from dask.distributed import Client, LocalCluster

    from host_sim.fleet import run as fleet
    folder = tempfile.mkdtemp(prefix="fleet_bench_")
    t = time.perf_counter()
    manifest = write_fleet(folder, n, rows)
    print("wrote %d traces of %d rows (%.0f s of readings each) in %.1f s"
          % (n, rows, 2.0 * (rows - 1), time.perf_counter() - t))
    items, _ = fleet.load_items(manifest)
    variants = {"cand": fleet.make_variant(None, [])}
    runs = {}
    t = time.perf_counter()
    runs[0] = fleet.run_fleet(items, variants, workers=0, progress=False)
    base_s = time.perf_counter() - t
    print("in this process (peer, no dask): %7.1f s  %7.1f traces/s" % (base_s, n / base_s))
    print("  load average (1 min) after the run: %.1f on %d CPU(s)"
          % (os.getloadavg()[0], os.cpu_count()))
    speeds = {}
    for workers in (1, 2):
        cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                               dashboard_address=None, silence_logs=logging.ERROR)
        try:
            with Client(cluster) as client:
                idle = client.run(_peak_rss_mb)
            t = time.perf_counter()
            runs[workers] = fleet.run_fleet(items, variants, scheduler=cluster.scheduler_address,
                                            progress=False,
                                            chunk_size=fleet.default_chunk_size(n, workers))
            wall = time.perf_counter() - t
            with Client(cluster) as client:
                peaks = client.run(_peak_rss_mb)
        finally:
            cluster.close()
        speeds[workers] = n / wall
        print("  load average (1 min) after the run: %.1f on %d CPU(s)"
              % (os.getloadavg()[0], os.cpu_count()))
        print("%d worker(s): %7.1f s  %7.1f traces/s  (%.2f x the in-process peer)  peak RSS "
              "per worker %s MB (%s MB before the run)"
              % (workers, wall, n / wall, base_s / wall,
                 ", ".join("%.0f" % v for v in sorted(peaks.values())),
                 ", ".join("%.0f" % v for v in sorted(idle.values()))))
    print("2 workers / 1 worker: %.2f x" % (speeds[2] / speeds[1]))
    same = all(json.dumps(runs[w], sort_keys=True) == json.dumps(runs[0], sort_keys=True)
               for w in (1, 2))
    print("results identical in-process, 1 and 2 workers: %s" % same)
    import shutil
    shutil.rmtree(folder)


def write_long_trace(path, rows):
    """A slow cooling, 1 s sampling, crossing its target at 90 % of the trace."""
    import math
    import random
    rng = random.Random(11)
    tau = rows * 0.9 / 2.25        # the target is reached at t = 0.9 rows
    target = 20.0 + 60.0 * math.exp(-2.25)
    with open(path, "w") as handle:
        handle.write("time_s,temp_c\n")
        buf = []
        for i in range(rows):
            buf.append("%d,%.4f\n" % (i, 20.0 + 60.0 * math.exp(-i / tau) + rng.gauss(0.0, 0.05)))
            if len(buf) == 10000:
                handle.write("".join(buf))
                buf = []
        handle.write("".join(buf))
    return target


CHILD = """
import json, sys, time
sys.path.insert(0, %r)
mode, path, target, out = sys.argv[1], sys.argv[2], float(sys.argv[3]), sys.argv[4]
t = time.perf_counter()
if mode == "stream":
    from host_sim.fleet.core import evaluate_trace
    res = evaluate_trace({"path": path, "target_c": target}, {"settings": {}}, out)
    figs = {k: res[k] for k in ("rows", "median_rel_error", "evaluated_rows", "metrics_exact",
                                "error")}
else:
    from host_sim.replay.metrics import trace_metrics
    from host_sim.replay.replay import crossing_from_trace, replay
    from host_sim.replay.trace_io import read_trace, write_predictions
    tr = read_trace(path)
    r = replay(tr, target)
    write_predictions(out, r.rows)
    c = crossing_from_trace(tr.time_s, tr.temp_c, target)
    m = trace_metrics(tr.time_s, r.shown_eta(), c, r.shown_eta("eta_low_s"),
                      r.shown_eta("eta_high_s"))
    figs = {"rows": len(tr), "median_rel_error": m["median_rel_error"],
            "evaluated_rows": m["evaluated_rows"]}
figs["wall_s"] = time.perf_counter() - t
sys.path.insert(0, %r)
from fleet_scaling import _peak_rss_mb
figs["peak_mb"] = _peak_rss_mb()
print(json.dumps(figs))
""" % (ROOT, os.path.join(ROOT, "benchmarks"))


def memory(rows, peer_rows):
    folder = tempfile.mkdtemp(prefix="fleet_mem_")
    try:
        for mode, n in (("stream", rows // 10), ("stream", rows), ("in-memory", peer_rows)):
            path = os.path.join(folder, "long.csv")
            t = time.perf_counter()
            target = write_long_trace(path, n)
            made = time.perf_counter() - t
            out = os.path.join(folder, "pred.csv")
            proc = subprocess.run([sys.executable, "-c", CHILD, mode, path, repr(target), out],
                                  capture_output=True, text=True)
            if proc.returncode != 0:
                print("%s on %d rows failed: %s" % (mode, n, proc.stderr.strip()[-500:]))
                continue
            figs = json.loads(proc.stdout.strip().splitlines()[-1])
            print("%-9s %10d rows: peak RSS %7.1f MB, %6.0f s (%.1f us/row; trace written "
                  "in %.0f s), evaluated rows %s, median rel. error %s%s"
                  % (mode, n, figs["peak_mb"], figs["wall_s"], 1e6 * figs["wall_s"] / n, made,
                     figs["evaluated_rows"], figs["median_rel_error"],
                     "" if figs.get("metrics_exact", True) else " (binned quantiles)"))
            os.remove(out)
            os.remove(path)
    finally:
        import shutil
        shutil.rmtree(folder)


def main():
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--traces", type=int, default=10000)
    p.add_argument("--rows", type=int, default=300, help="rows per scaling trace")
    p.add_argument("--memory-rows", type=int, default=10000000)
    p.add_argument("--peer-rows", type=int, default=1000000,
                   help="rows for the in-memory peer of the memory run")
    p.add_argument("--only", choices=("scaling", "memory"))
    args = p.parse_args()
    import platform
    rev = subprocess.run(["git", "rev-parse", "--short", "HEAD"], cwd=ROOT,
                         capture_output=True, text=True).stdout.strip()
    print("fleet benchmark at %s, Python %s, %d CPU(s)" % (
        rev or os.environ.get("FLEET_BENCH_REV", "(not a git checkout)"),
        platform.python_version(), os.cpu_count()))
    if args.only in (None, "scaling"):
        scaling(args.traces, args.rows)
    if args.only in (None, "memory"):
        memory(args.memory_rows, args.peer_rows)


if __name__ == "__main__":
    main()
