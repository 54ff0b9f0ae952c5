"""Run a firmware example under the unix port against a simulated world.

    micropython firmware_examples/fake/run.py EXAMPLE SCENARIO.json [LIB_DIR]

``EXAMPLE`` is a module in firmware_examples/ with a ``main()``. The fake
modules in this folder shadow ``machine``, ``time``, ``onewire`` and
``ds18x20``. A ``machine.deepsleep()`` ends the program like a reset does:
every module except the fakes is forgotten and ``main()`` starts again, so only
what the example put in RTC memory survives. The run stops when the scenario
is over. ``LIB_DIR`` replaces the repository's tinytherm/ by an installed copy.
"""
import sys

HERE = sys.argv[0].rsplit("/", 1)[0] if "/" in sys.argv[0] else "."
EXAMPLES = HERE.rsplit("/", 1)[0] if "/" in HERE else ".."
ROOT = EXAMPLES.rsplit("/", 1)[0] if "/" in EXAMPLES else "."
if len(sys.argv) > 3:
    sys.path.insert(0, sys.argv[3])  # an installed copy of the core (a mip target folder)
else:
    sys.path.insert(0, ROOT)   # the core from the repository: tinytherm/
sys.path.insert(0, EXAMPLES)   # board.py and the examples
sys.path.insert(0, HERE)       # the fakes shadow machine, time, ...

import _world  # noqa: E402

_world.load(sys.argv[2])
import machine  # noqa: E402

KEEP = ("_world", "machine", "time", "onewire", "ds18x20", "json", "math", "sys", "struct",
        "micropython", "gc", "builtins")


def forget_modules():
    for name in list(sys.modules.keys()):
        if name not in KEEP:
            del sys.modules[name]


def main():
    name = sys.argv[1]
    while True:
        forget_modules()
        try:
            mod = __import__(name)
            # "settings" in the scenario stand for the constants a user edits
            for key, value in _world.world.cfg.get("settings", {}).items():
                setattr(mod, key, value)
            mod.main()
            return 0
        except machine.DeepSleep:
            continue
        except _world.TraceEnd:
            print("== scenario over at %d s ==" % (_world.world.now_ms // 1000))
            _world.world.close()
            return 0


sys.exit(main())
