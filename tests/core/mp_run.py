"""Run one core test module's ``test_*`` functions without pytest.

Used to run the core tests under the unix ``micropython`` binary (and it works
under CPython too)::

    micropython tests/core/mp_run.py test_model

Prints one line per failure and closes with ``N passed, N failed``; the exit
status is 1 when anything failed or nothing ran.
"""
import sys

sys.path.insert(0, ".")
sys.path.insert(0, "tests/core")


def run(module_name):
    module = __import__(module_name)
    names = sorted(n for n in dir(module) if n.startswith("test_"))
    passed = 0
    failed = 0
    for name in names:
        func = getattr(module, name)
        if not callable(func):
            continue
        try:
            func()
            passed += 1
        except Exception as exc:  # report every failure, keep going
            failed += 1
            print("FAIL", module_name + "." + name, type(exc).__name__, exc)
            if hasattr(sys, "print_exception"):
                sys.print_exception(exc)
    print("%d passed, %d failed" % (passed, failed))
    return passed, failed


if __name__ == "__main__":
    p, f = run(sys.argv[1])
    sys.exit(1 if (f or not p) else 0)
