"""Hostile-input fuzz run of the forecast, the planner and the model, plus the work-cap figures.

    python benchmarks/fuzz_forecast.py [--calls 1000000] [--seed 1] [--mp-calls 100000]
                                       [--ratio-n 1000000] [--compare-commit REV]
                                       [--atheris-runs 0]

1. Seeded fuzz (CPython): the scenarios of ``tests/core/forecast_cases.py``
   (hostile floats, non-numbers, every ambient kind and heater plan, the
   planner, the AmbientTracker, the model functions) until ``--calls``
   checked calls have been made. Prints calls, scenarios, time, exceptions,
   non-finite outputs where finite is promised, other broken promises, setter
   refusals (ValueError, their documented answer), the largest ``work`` and
   the most breakpoint reads per unit of work.
   ``--moderate-calls``: the same with everyday magnitudes (|x| <= 200 or
   1e-6..1e6, still with non-numbers), where every crossing found must be
   confirmed by ``temperature_at_c``.
2. The same generator under the unix ``micropython`` binary for
   ``--mp-calls`` calls (0: skip), another seed.
3. Work against the number of coincident breakpoints, in this process: time
   per call with ``--ratio-n`` breakpoints at one instant divided by the time
   with 10 (piecewise ambient, duty schedule, ``latest_start``, thermostat
   plan over a piecewise ambient), with the ``work`` each reports. With
   ``--compare-commit`` the same cases also run on the forecast and planner
   of that commit (loaded from git), for a before/after, and five everyday
   calls are timed on both (the cost of the guards).
4. ``--atheris-runs N``: a coverage-guided run (atheris, libFuzzer) where the
   fuzzer's bytes choose the numbers and branches; the same checks, and a
   broken promise raises so libFuzzer keeps the input. Optional; runs last
   because libFuzzer ends the process.

Figures only; no pass/fail (the tests are tests/core/test_forecast_hostile.py
and tests/test_forecast_hostile_properties.py).
"""
import argparse
import importlib
import os
import re
import subprocess
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
for p in (os.path.join(ROOT, "tests", "core"), ROOT):
    if p not in sys.path:
        sys.path.insert(0, p)

from tqdm import tqdm  # noqa: E402

import forecast_cases as fcases  # noqa: E402
from prng import XorShift  # noqa: E402
from tinytherm import forecast as forecast_now  # noqa: E402
from tinytherm import planner as planner_now  # noqa: E402

FIGURES = ("calls", "scenarios", "exceptions", "nonfinite", "broken", "refused", "max_work",
           "max_planner_work", "max_reads_per_work", "model_calls", "model_inf", "tracked",
           "unconfirmed")


def fuzz_cpython(calls, seed, chunk=200, numbers=None, label="fuzz (CPython)"):
    """Scenarios until ``calls`` checked calls; returns (Stats, seconds).

    ``numbers`` replaces the generator's float source (e.g. fcases.moderate).
    """
    st = fcases.Stats()
    rng = XorShift(seed)
    base = fcases.hostile
    if numbers is not None:
        fcases.hostile = numbers
    t0 = time.perf_counter()
    try:
        with tqdm(total=calls, unit="call", desc=label) as bar:
            while st.calls < calls:
                before = st.calls
                fcases.run(rng, st, chunk)
                bar.update(min(st.calls, calls) - before)
    finally:
        fcases.hostile = base
    return st, time.perf_counter() - t0


MP_RUNNER = """
import sys, time
sys.path.insert(0, '.')
sys.path.insert(0, 'tests/core')
from prng import XorShift
import forecast_cases as fc
st = fc.Stats()
rng = XorShift(%d)
t0 = time.ticks_ms() if hasattr(time, 'ticks_ms') else 0
while st.calls < %d:
    fc.run(rng, st, 500)
    print('progress', st.calls)
t1 = time.ticks_ms() if hasattr(time, 'ticks_ms') else 0
print('result', %s, (t1 - t0) / 1000.0)
for m in st.messages:
    print('message', m)
"""


def fuzz_micropython(calls, seed):
    """The same generator under .venv/bin/micropython; returns (dict of figures, messages)."""
    exe = os.path.join(os.path.dirname(sys.executable), "micropython")
    fields = ", ".join("st." + f for f in FIGURES)
    code = MP_RUNNER % (seed, calls, fields)
    proc = subprocess.Popen([exe, "-c", code], cwd=ROOT, stdout=subprocess.PIPE, text=True)
    result = None
    messages = []
    with tqdm(total=calls, unit="call", desc="fuzz (MicroPython)") as bar:
        done = 0
        for line in proc.stdout:
            if line.startswith("progress"):
                n = min(int(line.split()[1]), calls)
                bar.update(n - done)
                done = n
            elif line.startswith("result"):
                result = line.split()[1:]
            elif line.startswith("message"):
                messages.append(line[8:].strip())
    proc.wait()
    if result is None:
        raise SystemExit("micropython run gave no result (exit %d)" % proc.returncode)
    figures = dict(zip(FIGURES + ("seconds",), (float(x) for x in result)))
    return figures, messages


def export_commit(rev):
    """Write commit ``rev``'s core to a temporary package; returns (folder, package name).

    Every core module of that commit goes to ``FOLDER/tinytherm_at_<rev>/``
    with its ``tinytherm`` imports renamed, so a commit from before or after
    a module split loads with its own parts, beside the working tree's core.
    """
    def show(path):
        return subprocess.run(["git", "show", "%s:%s" % (rev, path)], cwd=ROOT, check=True,
                              capture_output=True, text=True).stdout
    names = subprocess.run(["git", "ls-tree", "--name-only", rev, "tinytherm/"], cwd=ROOT,
                           check=True, capture_output=True, text=True).stdout.split()
    alias = "tinytherm_at_" + re.sub(r"\W", "_", rev)
    base = tempfile.mkdtemp(prefix="tinytherm_commit-")
    os.mkdir(os.path.join(base, alias))
    for path in names:
        if path.endswith(".py"):
            src = re.sub(r"\btinytherm\b(?=[. ])", alias, show(path))
            with open(os.path.join(base, alias, os.path.basename(path)), "w") as fh:
                fh.write(src)
    return base, alias


def load_commit(rev):
    """(forecast, planner) modules of commit ``rev``, loaded from git without touching the tree."""
    base, alias = export_commit(rev)
    sys.path.insert(0, base)
    return (importlib.import_module(alias + ".forecast"),
            importlib.import_module(alias + ".planner"))


def _case_calls(fmod, pmod, name, n):
    """A zero-argument call for one work case with n coincident breakpoints."""
    tt = [100.0] * n
    vv = [21.0] * n
    if name == "piecewise ambient":
        fc = fmod.Forecast(1.0 / 600.0, 0.01, 20.0)
        fc.set_ambient_piecewise(tt, vv)
        fc.set_plan_duty(1.0)
        return fc, (lambda: fc.time_to_target_s(20.0, 25.0))
    if name == "duty schedule":
        fc = fmod.Forecast(1.0 / 600.0, 0.01, 20.0)
        fc.set_plan_schedule([50.0] * n, [1.0] * n)
        return fc, (lambda: fc.time_to_target_s(20.0, 25.0))
    if name == "latest_start":
        pl = pmod.ReadyByPlanner(1.0 / 600.0, 20.0, 0.01)
        pl.forecast.set_ambient_piecewise([300.0] * n, vv)
        # the planner's own work (both forecast runs) where it reports one
        return (pl if hasattr(pl, "work") else pl.forecast), (
            lambda: pl.latest_start(20.0, 24.0, 3000.0))
    fc = fmod.Forecast(1.0 / 600.0, 0.01, 20.0)  # thermostat over a piecewise ambient
    fc.set_ambient_piecewise(tt, vv)
    fc.set_plan_thermostat(22.0, 23.0)
    return fc, (lambda: fc.time_to_target_s(20.0, 22.5))


CASES = ("piecewise ambient", "duty schedule", "latest_start", "thermostat plan")


def time_per_call(call, min_s=0.2):
    """Median seconds per call over 7 batches of at least ``min_s / 7`` each."""
    reps = 1
    while True:
        t0 = time.perf_counter()
        for _ in range(reps):
            call()
        if time.perf_counter() - t0 >= min_s / 7.0:
            break
        reps *= 2
    times = []
    for _ in range(7):
        t0 = time.perf_counter()
        for _ in range(reps):
            call()
        times.append((time.perf_counter() - t0) / reps)
    times.sort()
    return times[3]


def work_ratios(fmod, pmod, big_n, label):
    rows = []
    for name in tqdm(CASES, desc="work vs coincident breakpoints (%s)" % label):
        fc_small, small = _case_calls(fmod, pmod, name, 10)
        fc_big, big = _case_calls(fmod, pmod, name, big_n)
        t_small = time_per_call(small)
        t_big = time_per_call(big)
        rows.append((name, t_big / t_small, fc_small.work, fc_big.work, t_small, t_big))
    return rows


def ordinary_calls(fmod, pmod):
    """Everyday calls (name, zero-argument call) for the cost of the hostile-input guards."""
    out = []
    fc = fmod.Forecast(1.0 / 900.0, 0.0, 21.0)
    out.append(("constant cooling", lambda: fc.time_to_target_s(85.0, 60.0)))
    f2 = fmod.Forecast(1.0 / 1200.0, 0.05, 20.0)
    f2.set_plan_thermostat(60.0, 62.0)
    out.append(("thermostat", lambda: f2.time_to_target_s(20.0, 61.5)))
    f3 = fmod.Forecast(1.0 / 600.0, 0.0, 4.0)
    f3.set_ambient_periodic(4.0, 1.5, 2400.0)
    out.append(("periodic ambient", lambda: f3.time_to_target_s(20.0, 6.0)))
    f4 = fmod.Forecast(1.0 / 600.0, 0.02, 20.0)
    f4.set_plan_schedule([60.0 * i for i in range(50)], [0.5 * (i % 2) for i in range(50)])
    out.append(("schedule, 50 steps", lambda: f4.time_to_target_s(20.0, 35.0)))
    pl = pmod.ReadyByPlanner(1.0 / 900.0, 20.0, 0.05)
    out.append(("latest_start", lambda: pl.latest_start(20.0, 60.0, 3600.0)))
    return out


def atheris_run(runs, seed):
    """Coverage-guided: atheris picks the numbers (ConsumeFloat hits NaN, inf, denormals)."""
    import atheris

    atheris.instrument_all()  # tinytherm is already imported: instrument what is loaded
    st = fcases.Stats()
    t0 = time.perf_counter()
    done = [0]

    class BytesRng:
        """Stand-in for XorShift: the fuzzer's bytes as the random stream."""

        def __init__(self, fdp):
            self.fdp = fdp

        def next_u32(self):
            return self.fdp.ConsumeIntInRange(0, 0xFFFFFFFF)

        def uniform(self, lo=0.0, hi=1.0):
            return lo + (hi - lo) * self.fdp.ConsumeProbability()

    def one(data):
        fdp = atheris.FuzzedDataProvider(data)
        rng = BytesRng(fdp)
        # now and then a float straight from the fuzzer (any finite double;
        # NaN, inf and non-numbers still come from maybe_junk)
        base = fcases.hostile

        def hostile(r, signed=True):
            if fdp.ConsumeBool():
                x = fdp.ConsumeFloat()
                if x - x == 0.0:
                    return x if signed else abs(x)
            return base(r, signed)

        fcases.hostile = hostile
        try:
            fcases.run(rng, st, 1)
        finally:
            fcases.hostile = base
        if st.failures():
            raise RuntimeError("; ".join(st.messages))
        done[0] += 1
        if done[0] == runs:  # libFuzzer exits the process after the last run: report now
            print_stats("atheris (coverage-guided), %d runs" % runs, _as_dict(st),
                        time.perf_counter() - t0)
            for m in st.unconfirmed_examples:
                print("    unconfirmed:", m[:300])
            sys.stdout.flush()

    atheris.Setup([sys.argv[0], "-runs=%d" % runs, "-seed=%d" % seed, "-max_len=2048",
                   "-artifact_prefix=" + os.path.join(tempfile.gettempdir(), "fuzz_forecast-")],
                  one)
    atheris.Fuzz()  # does not return


def print_stats(label, d, seconds):
    print("%s: %d calls in %d scenarios, %.1f s (%.0f calls/s)" % (
        label, d["calls"], d["scenarios"], seconds, d["calls"] / max(seconds, 1e-9)))
    print("  exceptions %d, non-finite %d, other broken promises %d, setter refusals %d" % (
        d["exceptions"], d["nonfinite"], d["broken"], d["refused"]))
    print("  max work %d per Forecast call (cap %d), %d per planner call (cap %d), "
          "max breakpoint reads per unit of work %.1f" % (
              d["max_work"], forecast_now.MAX_PIECES, d["max_planner_work"],
              2 * forecast_now.MAX_PIECES, d["max_reads_per_work"]))
    print("  model calls %d, of which returned +-inf %d (documented for k <= 0, or beyond the "
          "largest float)" % (d["model_calls"], d["model_inf"]))
    print("  crossings found %d, not confirmed by temperature_at_c within the float conditioning %d"
          % (d["tracked"], d["unconfirmed"]))


def _as_dict(st):
    return dict((f, getattr(st, f)) for f in FIGURES)


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--calls", type=int, default=1000000, help="checked calls on CPython")
    ap.add_argument("--seed", type=int, default=1, help="seed of the CPython run")
    ap.add_argument("--moderate-calls", type=int, default=200000,
                    help="checked calls with everyday magnitudes (|x| <= 1e6), CPython (0: skip)")
    ap.add_argument("--mp-calls", type=int, default=100000,
                    help="checked calls under micropython (0: skip)")
    ap.add_argument("--mp-seed", type=int, default=2, help="seed of the micropython run")
    ap.add_argument("--ratio-n", type=int, default=1000000,
                    help="coincident breakpoints for the slowdown figure (against 10)")
    ap.add_argument("--compare-commit", default=None,
                    help="also time the work cases on the forecast/planner of this git commit")
    ap.add_argument("--atheris-runs", type=int, default=0, help="atheris iterations (0: skip)")
    args = ap.parse_args(argv)

    if args.calls > 0:
        st, secs = fuzz_cpython(args.calls, args.seed)
        print_stats("CPython fuzz, seed %d" % args.seed, _as_dict(st), secs)
        for m in st.messages + st.unconfirmed_examples:
            print("   ", m[:300])
    if args.moderate_calls > 0:
        st, secs = fuzz_cpython(args.moderate_calls, args.seed + 100, numbers=fcases.moderate,
                                label="fuzz, everyday magnitudes")
        print_stats("CPython, everyday magnitudes, seed %d" % (args.seed + 100), _as_dict(st),
                    secs)
        for m in st.messages + st.unconfirmed_examples:
            print("   ", m[:300])
    if args.mp_calls > 0:
        d, messages = fuzz_micropython(args.mp_calls, args.mp_seed)
        print_stats("MicroPython fuzz, seed %d" % args.mp_seed, d, d["seconds"])
        for m in messages:
            print("   ", m[:300])
    if args.ratio_n > 0:
        runs = [("now", forecast_now, planner_now)]
        if args.compare_commit:
            fmod, pmod = load_commit(args.compare_commit)
            runs.append((args.compare_commit, fmod, pmod))
        if args.compare_commit:
            print("time per everyday call, now / %s (the cost of the guards):" % args.compare_commit)
            for (name, new), (_, old) in zip(ordinary_calls(forecast_now, planner_now),
                                             ordinary_calls(runs[1][1], runs[1][2])):
                t_new = time_per_call(new)
                t_old = time_per_call(old)
                print("  %-18s %5.2fx   (%.1f us -> %.1f us)" % (name, t_new / t_old, t_old * 1e6,
                                                              t_new * 1e6))
        for label, fmod, pmod in runs:
            print("time per call with %d coincident breakpoints / with 10 (%s):" % (
                args.ratio_n, label))
            for name, ratio, w_small, w_big, t_small, t_big in work_ratios(
                    fmod, pmod, args.ratio_n, label):
                print("  %-18s %9.1fx   work %d -> %d   (%.1f us -> %.1f us)" % (
                    name, ratio, w_small, w_big, t_small * 1e6, t_big * 1e6))
    if args.atheris_runs > 0:
        sys.stdout.flush()
        atheris_run(args.atheris_runs, args.seed)  # last: libFuzzer ends the process


if __name__ == "__main__":
    main()
