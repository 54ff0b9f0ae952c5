"""Coverage-guided fuzzing of the calibrate command (atheris / libFuzzer).

Run as a script (not collected by pytest; tests/test_host_hostile_fuzz.py runs a
short bounded run)::

    .venv/bin/python tests/fuzz_calibrate.py -atheris_runs=2000 [CORPUS_DIR ...]

Each case is raw bytes. The first byte picks the options (bit 0: ``--strict``,
bit 1: ``--fahrenheit``, bits 2-3: the time unit, bit 4: ``--no-checks``, bit 5:
a second copy of the trace, so that cross-validation runs); the rest is the
trace file, given to ``cli.main(["calibrate", ...])`` with stdout and stderr
captured. A *finding* is any exception, an exit status other than 0/2, an exit 2
without exactly one ``error:`` line, or an exit 0 without the profile written.
Findings are counted (not fatal); the figures are printed at the end: cases
run, findings, distinct findings, exits 0 and 2, the slowest case (s) and the
peak memory of the process (MB), so that "bounded time and memory" is measured.
Without a corpus directory the script seeds a scratch one from
tests/hostile_inputs (each file behind a 0x00 options byte) and two good traces.
"""
import contextlib
import io
import os
import resource
import sys
import tempfile
import time

import atheris
from fuzz_launch import exception_key, fuzz, record_finding
import matplotlib  # noqa: F401 - imported before instrumenting: only our modules are traced
import numpy  # noqa: F401
import scipy.optimize  # noqa: F401
import scipy.signal  # noqa: F401
import tqdm  # noqa: F401

import tinytherm.estimator  # noqa: F401

with atheris.instrument_imports():
    from host_sim import cli
    import host_sim.calibrate.pipeline  # noqa: F401

STATS = {"cases": 0, "findings": 0, "ok": 0, "error": 0, "slowest_s": 0.0}
DISTINCT = {}
WORK = tempfile.mkdtemp(prefix="tinytherm-fuzz-cal-")
TRACE = os.path.join(WORK, "case.csv")
TRACE2 = os.path.join(WORK, "copy.csv")
OUT = os.path.join(WORK, "p.json")
UNITS = ("s", "ms", "min", "s")


def _finding(kind, exc, data):
    record_finding(STATS, DISTINCT, exception_key(kind, exc), data)


def one_case(data):
    """Run one fuzz case (bytes); record findings, never raise."""
    STATS["cases"] += 1
    flags = data[0] if data else 0
    body = data[1:]
    for path in (TRACE, TRACE2):
        with open(path, "wb") as handle:
            handle.write(body)
    if os.path.exists(OUT):
        os.remove(OUT)
    argv = ["calibrate", TRACE] + ([TRACE2] if flags & 32 else []) + [
        "--out", OUT, "--no-plots", "--folds", "2", "--time-unit", UNITS[(flags >> 2) & 3]]
    if flags & 1:
        argv.append("--strict")
    if flags & 2:
        argv.append("--fahrenheit")
    if flags & 16:
        argv.append("--no-checks")
    out, err = io.StringIO(), io.StringIO()
    start = time.perf_counter()
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            code = cli.main(argv)
    except BaseException as exc:     # noqa: BLE001 - anything else is a finding
        _finding("cli", exc, data)
        return
    finally:
        STATS["slowest_s"] = max(STATS["slowest_s"], time.perf_counter() - start)
    if code == 0:
        STATS["ok"] += 1
        if not os.path.exists(OUT):
            _finding("no-profile", ValueError("exit 0 without the profile"), data)
    elif code == 2:
        STATS["error"] += 1
        lines = [ln for ln in err.getvalue().splitlines() if ln.startswith("error: ")]
        if len(lines) != 1:
            _finding("cli-message", ValueError("%d error lines" % len(lines)), data)
    else:
        _finding("cli-exit", ValueError("exit %r" % code), data)


def report():
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    print("fuzz_calibrate: cases run %d, findings %d (distinct %d); exit 0: %d, exit 2: %d; "
          "slowest case %.2f s; peak memory %.0f MB"
          % (STATS["cases"], STATS["findings"], len(DISTINCT), STATS["ok"], STATS["error"],
             STATS["slowest_s"], peak_mb), flush=True)
    for (kind, name, msg), sample in list(DISTINCT.items())[:10]:
        print("  %s %s: %s  input %r" % (kind, name, msg, sample), flush=True)


def seed_corpus(folder):
    """Fill ``folder`` with the hostile corpus and two good traces, behind an options byte."""
    here = os.path.dirname(os.path.abspath(__file__))
    sys.path.insert(0, os.path.join(here, "hostile_inputs"))
    import corpus
    for name, data, _, _, _ in corpus.cases() + corpus.calibrate_cases():
        if len(data) <= 8192:
            with open(os.path.join(folder, name), "wb") as handle:
                handle.write(b"\x00" + data)
    for name, flags in (("good.csv", 0), ("good_two.csv", 32)):
        with open(os.path.join(folder, name), "wb") as handle:
            handle.write(bytes([flags]) + corpus.good(n=120))


def main():
    fuzz(one_case, WORK, report, seed_corpus, 8192)


if __name__ == "__main__":
    main()
