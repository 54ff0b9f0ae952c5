"""Coverage-guided fuzzing of the trace reader and the replay CLI (atheris / libFuzzer).

Run as a script (not collected by pytest; tests/test_host_cli_fuzz.py runs a short
bounded run)::

    .venv/bin/python tests/fuzz_trace_io.py -atheris_runs=20000 [CORPUS_DIR ...]

Each case is raw bytes. The first byte picks the options (skip_bad, fahrenheit,
time unit, verdict column); the rest is the file. Every case goes through
``iter_trace_rows`` (the streaming reader, on a binary stream) and, from the same
bytes written to a file, through ``cli.main(["replay", ...])`` with stdout and
stderr captured. A *finding* is any exception other than TraceError from the
reader, any exception or exit status other than 0/2 from the CLI, or an exit 2
without exactly one ``error:`` line. Findings are counted (not fatal) and the
figures are printed at the end: cases run, findings, distinct findings.
Without a corpus directory the script seeds a scratch one from
tests/hostile_inputs (each file behind a 0x00 options byte) and two good traces;
libFuzzer writes new inputs into the first directory given, so never pass
tests/hostile_inputs itself.
"""
import contextlib
import io
import os
import sys
import tempfile

import atheris
from fuzz_launch import exception_key, fuzz, record_finding
import numpy  # noqa: F401 - imported before instrumenting: only our modules are traced
import tqdm  # noqa: F401

import host_sim.sim.scenarios  # noqa: F401
import tinytherm.estimator  # noqa: F401

with atheris.instrument_imports():
    from host_sim import cli
    from host_sim.replay.trace_reader import TraceError, iter_trace_rows

STATS = {"cases": 0, "findings": 0, "reader_rows": 0, "cli_ok": 0, "cli_error": 0}
DISTINCT = {}
WORK = tempfile.mkdtemp(prefix="tinytherm-fuzz-")
TRACE = os.path.join(WORK, "case.csv")
OUT = os.path.join(WORK, "pred.csv")
UNITS = ("s", "ms", "min", "s")


def _finding(kind, exc, data):
    record_finding(STATS, DISTINCT, exception_key(kind, exc), data)


def one_case(data):
    """Run one fuzz case (bytes); record findings, never raise."""
    STATS["cases"] += 1
    flags = data[0] if data else 0
    body = data[1:]
    skip_bad, fahrenheit = bool(flags & 1), bool(flags & 2)
    unit = UNITS[(flags >> 2) & 3]
    try:
        reader = iter_trace_rows(io.BytesIO(body), fahrenheit=fahrenheit, skip_bad=skip_bad,
                                 time_unit=unit, name="case.csv")
        for _ in reader:
            STATS["reader_rows"] += 1
    except TraceError:
        pass
    except Exception as exc:     # noqa: BLE001 - anything else is a finding
        _finding("reader", exc, data)
    with open(TRACE, "wb") as handle:
        handle.write(body)
    argv = ["replay", TRACE, "--target", "60", "--out", OUT, "--time-unit", unit]
    if skip_bad:
        argv.append("--skip-bad")
    if fahrenheit:
        argv.append("--fahrenheit")
    if flags & 16:
        argv.append("--verdict")
    if flags & 32:
        argv.append("--no-checks")
    out, err = io.StringIO(), io.StringIO()
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            code = cli.main(argv)
    except Exception as exc:     # noqa: BLE001
        _finding("cli", exc, data)
        return
    if code == 0:
        STATS["cli_ok"] += 1
    elif code == 2:
        STATS["cli_error"] += 1
        lines = [ln for ln in err.getvalue().splitlines() if ln.startswith("error: ")]
        if len(lines) != 1:
            _finding("cli-message", ValueError("%d error lines" % len(lines)), data)
    else:
        _finding("cli-exit", ValueError("exit %r" % code), data)


def report():
    print("fuzz_trace_io: cases run %d, exceptions/findings %d (distinct %d); reader rows %d; "
          "CLI exit 0: %d, exit 2: %d" % (STATS["cases"], STATS["findings"], len(DISTINCT),
                                           STATS["reader_rows"], STATS["cli_ok"],
                                           STATS["cli_error"]), flush=True)
    for (kind, name, msg), sample in list(DISTINCT.items())[:10]:
        print("  %s %s: %s  input %r" % (kind, name, msg, sample), flush=True)


def seed_corpus(folder):
    """Fill ``folder`` with the hostile corpus and two good traces, behind an options byte."""
    here = os.path.dirname(os.path.abspath(__file__))
    sys.path.insert(0, os.path.join(here, "hostile_inputs"))
    import corpus
    for name, data, _, _, _ in corpus.cases():
        with open(os.path.join(folder, name), "wb") as handle:
            handle.write(b"\x00" + data)
    for name, flags in (("good.csv", 0), ("good_verdict_skip.csv", 17)):
        with open(os.path.join(folder, name), "wb") as handle:
            handle.write(bytes([flags]) + corpus.good(n=120))


def main():
    # matplotlib is not needed: the fuzzed CLI never gets --plot; traces are
    # text, and megabyte inputs only slow it down
    fuzz(one_case, WORK, report, seed_corpus, 4096)


if __name__ == "__main__":
    main()
