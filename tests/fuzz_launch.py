"""What every atheris fuzz target in tests/ shares: recording findings and starting libFuzzer.

Imported by tests/fuzz_trace_io.py, fuzz_profile.py, fuzz_calibrate.py and
fuzz_manifest.py (run as scripts: tests/ is their sys.path[0]).
"""
import atexit
import os
import shutil
import sys

import atheris


def record_finding(stats, distinct, key, data, keep=200):
    """Count a finding in ``stats``; keep the first input (``keep`` bytes) per distinct ``key``."""
    stats["findings"] += 1
    if key not in distinct:
        distinct[key] = data[:keep]


def exception_key(kind, exc):
    """The distinct-finding key of an exception: where, its type and its message's start."""
    return (kind, type(exc).__name__, str(exc)[:80])


def fuzz(one_case, work, report, seed_corpus, max_len):
    """Run libFuzzer on ``one_case`` with this process's arguments.

    ``work`` (a scratch folder) is removed and ``report()`` printed at exit.
    ``-max_len`` defaults to ``max_len`` bytes; without a corpus folder among
    the arguments, ``seed_corpus(folder)`` fills a fresh one under ``work``.
    """
    atexit.register(shutil.rmtree, work, True)
    atexit.register(report)
    argv = list(sys.argv)
    if not any(a.startswith("-max_len=") for a in argv):
        argv.append("-max_len=%d" % max_len)
    if not any(os.path.isdir(a) for a in argv[1:] if not a.startswith("-")):
        folder = os.path.join(work, "corpus")
        os.mkdir(folder)
        seed_corpus(folder)
        argv.append(folder)
    atheris.Setup(argv, one_case)
    atheris.Fuzz()
