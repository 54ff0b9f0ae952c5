#!/usr/bin/env python3
"""Measure the flash/RAM budget of the core on MicroPython and print the README table.

    .venv/bin/python benchmarks/device_budget.py [--updates 2000] [--heap 256K]

1. Compiles tinytherm/*.py with mpy-cross (tools/build_mpy.py) -> flash sizes.
2. Runs the unix ``micropython`` binary on the .mpy files (and, for
   comparison, on the .py sources) and measures with ``gc.mem_alloc()``:
   heap held after importing each module, the size of one instance of each
   public class, and the bytes allocated per ``update()`` (gc disabled while
   counting, so every transient float box is counted) and retained after a
   collection; also ``save()`` (the 128-byte state blob, after the first call
   has made its buffer) and ``restore()``.

The unix port is 64-bit and boxes every float (16 bytes each); a 32-bit board
with boxed float32 (e.g. ESP32) uses about half for pointer-sized objects, a
port with 30-bit immediate floats allocates no boxes at all. The figures are
what this script measured on the unix port, nothing else.
"""
import argparse
import ast
import os
import subprocess
import sys
import tempfile

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(ROOT, "tools"))
import build_mpy  # noqa: E402

# Runs under micropython; prints "key value" lines.
PROBE = r'''
import gc, sys, math
sys.path[:] = [LIBDIR]
gc.collect()
base = gc.mem_alloc()
for name in MODULES:
    gc.collect()
    a0 = gc.mem_alloc()
    __import__("tinytherm." + name)
    gc.collect()
    print("import", name, gc.mem_alloc() - a0)
gc.collect()
print("import_all", gc.mem_alloc() - base)
print("heap_free", gc.mem_free())

from tinytherm.estimator import ThermalEstimator
from tinytherm import sensors

def size_of(make):
    gc.collect()
    a0 = gc.mem_alloc()
    obj = make()
    gc.collect()
    return gc.mem_alloc() - a0, obj

def per_call(fn, n):
    gc.collect()
    gc.disable()
    a0 = gc.mem_alloc()
    for i in range(n):
        fn(i)
    a1 = gc.mem_alloc()
    gc.enable()
    gc.collect()
    a2 = gc.mem_alloc()
    return (a1 - a0) / n, a2 - a0

N = UPDATES
def report(name, per, kept):
    print("alloc " + name, per)
    print("kept " + name, kept)
def temp(i):
    return 22.0 + 60.0 * math.exp(-i * 2.0 / 1500.0) + 0.05 * math.sin(i * 1.7)

sz, est = size_of(lambda: ThermalEstimator())
print("instance ThermalEstimator", sz)
est.update(temp(0), 0.0)
per, kept = per_call(lambda i: est.update(temp(i), 2.0), N)
# the temp() call itself allocates; measure it alone and subtract
per0, kept0 = per_call(lambda i: temp(i), N)
report("ThermalEstimator.update", per - per0, kept)
per, kept = per_call(lambda i: est.predict(60.0), 200)
report("ThermalEstimator.predict", per, kept)
sz, first = size_of(lambda: est.save())
print("instance state blob buffer (kept by the first save())", sz)
saved = bytes(first)
per, kept = per_call(lambda i: est.save(), 200)
report("ThermalEstimator.save", per, kept)
woken = ThermalEstimator()
per, kept = per_call(lambda i: woken.restore(saved), 200)
report("ThermalEstimator.restore", per, kept)
print("blob_bytes", len(saved))

sz, est2 = size_of(lambda: ThermalEstimator(heater=True))
print("instance ThermalEstimator(heater=True)", sz)
est2.update(20.0, 0.0, None, 1.0)
per, kept = per_call(lambda i: est2.update(temp(i), 5.0, None, 1.0), N)
report("ThermalEstimator(heater=True).update", per - per0, kept)

sz, comp = size_of(lambda: sensors.LagCompensator(30.0))
print("instance LagCompensator", sz)
per, kept = per_call(lambda i: comp.update(temp(i), 2.0), N)
report("LagCompensator.update", per - per0, kept)

def ntc(i):
    r = sensors.divider_resistance_ohm(30000 + (i & 1023), 65535, 10000.0)
    return sensors.beta_temperature_c(r, 10000.0, 3950.0)
per, kept = per_call(ntc, N)
report("NTC counts->C (Beta)", per, kept)
per, kept = per_call(lambda i: sensors.digital_raw_verdict(0x0191 + (i & 15)), N)
report("digital_raw_verdict", per, kept)
'''


def run_probe(libdir, modules, updates, heap):
    script = PROBE.replace("LIBDIR", repr(libdir)).replace("MODULES", repr(modules)) \
        .replace("UPDATES", str(updates))
    with tempfile.NamedTemporaryFile("w", suffix=".py", delete=False) as fh:
        fh.write(script)
        path = fh.name
    try:
        mp = os.path.join(os.path.dirname(sys.executable), "micropython")
        proc = subprocess.run([mp, "-X", "heapsize=" + heap, path], capture_output=True,
                              text=True, timeout=600)
    finally:
        os.unlink(path)
    if proc.returncode != 0:
        raise SystemExit("micropython failed:\n" + proc.stdout + proc.stderr)
    out = {}
    for line in proc.stdout.splitlines():
        key, _, value = line.rpartition(" ")
        out[key] = float(value)
    return out


def core_imports(name):
    """Core modules that tinytherm/<name>.py imports (from its source)."""
    with open(os.path.join(ROOT, "tinytherm", name + ".py")) as fh:
        tree = ast.parse(fh.read())
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.module == "tinytherm":
            found.extend(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and \
                node.module.startswith("tinytherm."):
            found.append(node.module.split(".")[1])
        elif isinstance(node, ast.Import):
            found.extend(a.name.split(".")[1] for a in node.names
                         if a.name.startswith("tinytherm."))
    return sorted(set(found))


def import_order(names):
    """Modules in an order where each one's core imports come first, so each
    module's heap figure is its own (dependencies already counted)."""
    order = []

    def visit(n, path):
        if n in order or n not in names:
            return
        if n in path:
            raise SystemExit("import cycle: %s" % " -> ".join(path + [n]))
        for dep in core_imports(n):
            visit(dep, path + [n])
        order.append(n)
    for n in ["__init__"] + sorted(names):
        visit(n, [])
    return order


def main(argv=None):
    ap = argparse.ArgumentParser(description="Measure the core's flash/RAM budget on MicroPython")
    ap.add_argument("--updates", type=int, default=2000, help="updates to average over")
    ap.add_argument("--heap", default="8M", help="micropython heap size (-X heapsize)")
    ap.add_argument("--commit", default=None,
                    help="commit to print when the tree is not a git checkout (a git archive export)")
    args = ap.parse_args(argv)

    with tempfile.TemporaryDirectory() as tmp:
        print("compiling with mpy-cross ...", file=sys.stderr)
        rows = build_mpy.build(tmp)
        names = [r[0][:-3] for r in rows]
        mods = [n for n in import_order(names) if n != "__init__"]
        print("measuring .mpy imports and updates ...", file=sys.stderr)
        mpy = run_probe(tmp, mods, args.updates, args.heap)
        print("measuring .py imports ...", file=sys.stderr)
        src = run_probe(ROOT, mods, args.updates, args.heap)

    print("Measured at commit %s%s" % ((args.commit, "") if args.commit else commit_id()))
    print()
    print("Flash and import heap (unix port, 64-bit; heap %s)" % args.heap)
    print()
    print("| module | .py bytes | .mpy bytes | heap after import, .mpy (B) | from .py (B) |")
    print("| --- | ---: | ---: | ---: | ---: |")
    size = {r[0][:-3]: r for r in rows}
    for n in mods:
        print("| %s | %d | %d | %d | %d |" % (n, size[n][1], size[n][2], mpy["import " + n],
                                              src["import " + n]))
    print("| **all** | %d | %d | %d | %d |" % (sum(r[1] for r in rows), sum(r[2] for r in rows),
                                               mpy["import_all"], src["import_all"]))
    print()
    print("Instances and per-call allocation (.mpy, %d calls)" % args.updates)
    print()
    print("| what | bytes |")
    print("| --- | ---: |")
    for key in sorted(mpy):
        if key.startswith("instance "):
            print("| one %s | %d |" % (key[len("instance "):], mpy[key]))
    for key in sorted(mpy):
        if key.startswith("alloc "):
            name = key[len("alloc "):]
            print("| allocated per call: %s (retained after gc: %d B) | %.0f |" % (
                name, mpy["kept " + name], mpy[key]))
    print("| saved state blob (save() length) | %d |" % mpy["blob_bytes"])
    return 0


def commit_id():
    """(short commit, " + uncommitted changes in tinytherm/" or "") of the measured tree."""
    try:
        head = subprocess.run(["git", "rev-parse", "--short", "HEAD"], cwd=ROOT,
                              capture_output=True, text=True, timeout=30).stdout.strip()
        dirty = subprocess.run(["git", "status", "--porcelain", "--", "tinytherm"], cwd=ROOT,
                               capture_output=True, text=True, timeout=30).stdout.strip()
    except OSError:
        return "unknown", ""
    return head or "unknown", " + uncommitted changes in tinytherm/" if dirty else ""


if __name__ == "__main__":
    sys.exit(main())
