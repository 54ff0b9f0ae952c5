"""Coverage-guided fuzzing of the fleet manifest reader and the fleet command (atheris).

Run as a script (not collected by pytest; tests/test_host_hostile_fuzz.py runs a
short bounded run)::

    .venv/bin/python tests/fuzz_manifest.py -atheris_runs=20000 [CORPUS_DIR ...]

Each case is raw bytes. The first byte picks the options (bit 0: ``--target 60``,
bit 1: ``--skip-bad``, bit 2: ``--allow-failures``); the rest is the manifest,
written beside two traces it may name (``good.csv``, accepted, and
``kelvin.csv``, refused). Every case goes through
:func:`host_sim.fleet.run.load_items` and ``cli.main(["fleet", ...,
"--workers", "0"])`` with stdout and stderr captured. A *finding* is any
exception other than ValueError from the reader; any exception or an exit status
other than 0/1/2 from the CLI, an exit 2 without exactly one ``error:`` line;
an exit 0 with a failed trace without ``--allow-failures``; or a text cell of
RESULTS.csv that a spreadsheet would run as a formula. Findings are counted (not
fatal); the figures are printed at the end.
"""
import contextlib
import csv
import io
import os
import sys
import tempfile

import atheris
from fuzz_launch import exception_key, fuzz, record_finding
import matplotlib  # noqa: F401 - imported before instrumenting: only our modules are traced
import numpy  # noqa: F401
import pyarrow  # noqa: F401
import scipy.optimize  # noqa: F401
import scipy.signal  # noqa: F401
import tqdm  # noqa: F401

import tinytherm.estimator  # noqa: F401

with atheris.instrument_imports():
    from host_sim import cli
    from host_sim.fleet.run import load_items

STATS = {"cases": 0, "findings": 0, "items": 0, "exit0": 0, "exit1": 0, "exit2": 0}
DISTINCT = {}
WORK = tempfile.mkdtemp(prefix="tinytherm-fuzz-manifest-")
MANIFEST = os.path.join(WORK, "m.csv")
OUT = os.path.join(WORK, "R.csv")
FORMULA = ("=", "+", "-", "@", "\t", "\r")


def _finding(kind, exc, data):
    record_finding(STATS, DISTINCT, exception_key(kind, exc), data)


def _text_cells_safe(path):
    with open(path, newline="", encoding="utf-8") as handle:
        rows = list(csv.reader(handle))
    for row in rows[1:]:
        for cell in row:
            if cell.startswith(FORMULA):
                try:
                    float(cell)          # a number such as -0.5 is not a formula
                except ValueError:
                    return False
    return True


def one_case(data):
    """Run one fuzz case (bytes); record findings, never raise."""
    STATS["cases"] += 1
    flags = data[0] if data else 0
    with open(MANIFEST, "wb") as handle:
        handle.write(data[1:])
    target = 60.0 if flags & 1 else None
    try:
        items, _ = load_items(MANIFEST, target, bool(flags & 2))
        STATS["items"] += len(items)
    except ValueError:
        pass
    except Exception as exc:     # noqa: BLE001 - anything else is a finding
        _finding("reader", exc, data)
    argv = ["fleet", MANIFEST, "--out", OUT, "--workers", "0", "--quiet", "--no-plots"]
    if flags & 1:
        argv += ["--target", "60"]
    if flags & 2:
        argv.append("--skip-bad")
    if flags & 4:
        argv.append("--allow-failures")
    for name in os.listdir(WORK):
        if name.startswith("R"):
            os.remove(os.path.join(WORK, name))
    out, err = io.StringIO(), io.StringIO()
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            code = cli.main(argv)
    except BaseException as exc:     # noqa: BLE001
        _finding("cli", exc, data)
        return
    if code in (0, 1, 2):
        STATS["exit%d" % code] += 1
    else:
        _finding("cli-exit", ValueError("exit %r" % code), data)
        return
    if code == 2:
        lines = [ln for ln in err.getvalue().splitlines() if ln.startswith("error: ")]
        if len(lines) != 1:
            _finding("cli-message", ValueError("%d error lines" % len(lines)), data)
        return
    if "0 failed" not in out.getvalue() and code == 0 and not flags & 4:
        _finding("exit-0-with-failures", ValueError("exit 0 with failed traces"), data)
    if not _text_cells_safe(OUT):
        _finding("formula", ValueError("a RESULTS.csv cell starts like a formula"), data)


def report():
    print("fuzz_manifest: cases run %d, findings %d (distinct %d); items read %d; "
          "fleet exit 0: %d, exit 1: %d, exit 2: %d"
          % (STATS["cases"], STATS["findings"], len(DISTINCT), STATS["items"], STATS["exit0"],
             STATS["exit1"], STATS["exit2"]), flush=True)
    for (kind, name, msg), sample in list(DISTINCT.items())[:10]:
        print("  %s %s: %s  input %r" % (kind, name, msg, sample), flush=True)


def setup_traces():
    """The traces a fuzzed manifest may name, beside it; and the seed manifests."""
    here = os.path.dirname(os.path.abspath(__file__))
    sys.path.insert(0, os.path.join(here, "hostile_inputs"))
    import corpus
    with open(os.path.join(WORK, "good.csv"), "wb") as handle:
        handle.write(corpus.good(n=80))
    for name, data, _, _, _ in corpus.cases():
        if name == "kelvin.csv":
            with open(os.path.join(WORK, "kelvin.csv"), "wb") as handle:
                handle.write(data)
    return corpus


def seed_corpus(folder, corpus):
    for name, data, _, _, _ in corpus.manifest_cases():
        if len(data) <= 8192:
            text = data.replace(b"utf8_bom.csv", b"good.csv").replace(b"crlf.csv", b"good.csv")
            with open(os.path.join(folder, name), "wb") as handle:
                handle.write(b"\x00" + text)
    for name, body in (("plain.csv", b"\x00path,target,product\ngood.csv,60,mug\n"
                                     b"kelvin.csv,60,pot\n"),
                       ("target.csv", b"\x05path,fw\ngood.csv,1.0\n")):
        with open(os.path.join(folder, name), "wb") as handle:
            handle.write(body)


def main():
    corpus = setup_traces()
    fuzz(one_case, WORK, report, lambda folder: seed_corpus(folder, corpus), 4096)


if __name__ == "__main__":
    main()
