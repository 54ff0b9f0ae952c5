"""Cost of the forecast's layout on MicroPython: this tree against a git commit, one process.

    python benchmarks/forecast_parts_mp.py --commit 3c781ab [--rounds 9] [--calls 200]

Both cores are loaded side by side under the unix ``micropython`` (the
commit's as a renamed package, see fuzz_forecast.export_commit) and the same
everyday calls are timed on each: best of ``--rounds`` interleaved rounds of
``--calls`` calls, printed as now/commit ratios with the times, plus the heap
one call allocates, and the heap ``import ...forecast`` and ``import
...planner`` leave allocated (``gc.mem_alloc()`` after ``gc.collect()``;
.py sources compiled on the device, so bytecode counts too). Figures only,
no pass/fail; the machine's load moves the times, the ratios less so.
"""
import argparse
import os
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from fuzz_forecast import export_commit  # noqa: E402

SCRIPT = """
import gc, sys, time
sys.path[:] = [%(base)r, %(root)r]

OLD = __import__(%(alias)r + ".forecast").forecast
NEW = __import__("tinytherm.forecast").forecast
OLDP = __import__(%(alias)r + ".planner").planner
NEWP = __import__("tinytherm.planner").planner

def cases(F, P):
    fc = F.Forecast(1.0 / 900.0, 0.0, 20.0)
    f2 = F.Forecast(1.0 / 900.0, 0.0, 20.0)
    f2.set_ambient_periodic(20.0, 3.0, 1800.0, 0.5)
    f3 = F.Forecast(1.0 / 1800.0, 0.05, 20.0)
    f3.set_plan_thermostat(55.0, 60.0)
    tt = [i * 120.0 for i in range(50)]
    dd = [(i %% 3) / 2.0 for i in range(50)]
    f4 = F.Forecast(1.0 / 1800.0, 0.05, 20.0)
    f4.set_plan_schedule(tt, dd)
    pl = P.ReadyByPlanner(1.0 / 1800.0, 20.0, 0.05)
    return (("constant cooling", lambda: fc.time_to_target_s(80.0, 40.0)),
            ("periodic ambient", lambda: f2.time_to_target_s(80.0, 30.0)),
            ("thermostat, 4 h", lambda: f3.temperature_at_c(14400.0, 20.0)),
            ("schedule, 50 steps", lambda: f4.temperature_at_c(6000.0, 20.0)),
            ("latest_start", lambda: pl.latest_start(20.0, 60.0, 7200.0)))

def per_call_us(fn, n):
    t0 = time.ticks_us()
    for _ in range(n):
        fn()
    return time.ticks_diff(time.ticks_us(), t0) / n

def alloc(fn):
    gc.collect()
    a = gc.mem_alloc()
    fn()
    return gc.mem_alloc() - a

print("time per call, now / %(rev)s (best of %(rounds)d rounds of %(calls)d calls):")
for (name, fo), (_, fn) in zip(cases(OLD, OLDP), cases(NEW, NEWP)):
    if fo() != fn():
        print("  %%-20s answers differ: %%r vs %%r" %% (name, fo(), fn()))
    best_o = best_n = 1e30
    for _ in range(%(rounds)d):
        best_o = min(best_o, per_call_us(fo, %(calls)d))
        best_n = min(best_n, per_call_us(fn, %(calls)d))
    print("  %%-20s %%5.2fx  (%%.1f us -> %%.1f us)   heap per call %%d -> %%d B" %% (
        name, best_n / best_o, best_o, best_n, alloc(fo), alloc(fn)))
"""

# One fresh process per package and module: names interned by one import
# would make a second import in the same process look cheaper.
HEAP = """
import gc, sys
sys.path[:] = [%(base)r, %(root)r]
gc.collect()
a = gc.mem_alloc()
import %(module)s
gc.collect()
print(gc.mem_alloc() - a)
"""


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--commit", required=True, help="git commit to compare against")
    ap.add_argument("--rounds", type=int, default=9, help="interleaved timing rounds")
    ap.add_argument("--calls", type=int, default=200, help="calls per round")
    args = ap.parse_args(argv)
    base, alias = export_commit(args.commit)
    exe = os.path.join(os.path.dirname(sys.executable), "micropython")
    code = SCRIPT % dict(base=base, root=ROOT, alias=alias, rev=args.commit,
                         rounds=args.rounds, calls=args.calls)
    proc = subprocess.run([exe, "-c", code], capture_output=True, text=True, cwd=ROOT)
    sys.stdout.write(proc.stdout)
    if proc.returncode != 0:
        sys.stderr.write(proc.stderr)
        return proc.returncode
    print("heap after import, one process each (bytes; .py sources compiled on the device):")
    for pkg in (alias, "tinytherm"):
        row = []
        for mod in ("forecast", "planner"):
            heap = subprocess.run([exe, "-c", HEAP % dict(base=base, root=ROOT,
                                                          module=pkg + "." + mod)],
                                  capture_output=True, text=True, cwd=ROOT)
            row.append(heap.stdout.strip() or heap.stderr.strip()[-200:])
        print("  %-28s forecast %6s   planner (with forecast) %6s" % (pkg, row[0], row[1]))
    return 0


if __name__ == "__main__":
    sys.exit(main())
