"""The freeze manifest (freeze/manifest.py), checked as far as the unix port can.

A firmware build is not possible here, so the test plays the build's part:

* it executes the manifest with a stand-in for MicroPython's manifest API
  (``include``, ``package``, ``module``, ``options`` with ``defaults``; the
  same semantics as tools/manifestfile.py of MicroPython: relative paths from
  the manifest's folder, options default to None) and collects the files;
* every file named exists, the core set is the root package.json's list and
  each option adds its part's list;
* each file compiles with mpy-cross at the manifest's opt level, and the .mpy
  set alone (a temporary folder with no .py sources) imports and runs a short
  estimator run under the unix micropython, checked against the closed form
  ``T(t) = R + (T0 - R) exp(-k t)`` (Newton's law of cooling).

What stays unchecked: that the bytecode then runs from flash on a board
(that needs a firmware build for a real port).
"""
import json
import math
import os
import subprocess
import sys

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
FREEZE = os.path.join(ROOT, "freeze")
PARTS = ("profile", "air", "forecast", "planner", "sensors")


class _Options:
    """``options`` of a MicroPython manifest: include() keywords, then defaults, else None."""

    def __init__(self, **kwargs):
        self._kwargs = kwargs
        self._defaults = {}

    def defaults(self, **kwargs):
        self._defaults = kwargs

    def __getattr__(self, name):
        return self._kwargs.get(name, self._defaults.get(name, None))


def run_manifest(**options):
    """Execute freeze/manifest.py; returns ([(source path, frozen name, opt)], includes)."""
    frozen = []
    includes = []

    def package(package_path, files=None, base_path=".", opt=None):
        base = os.path.abspath(base_path)
        if files is None:
            raise AssertionError("list the files: a bare package() would freeze stubs too")
        for f in files:
            name = package_path + "/" + f
            frozen.append((os.path.join(base, package_path, f), name, opt))

    def module(module_path, base_path=".", opt=None):
        frozen.append((os.path.join(os.path.abspath(base_path), module_path), module_path, opt))

    def include(path, **kwargs):
        includes.append(path)
        if not path.startswith("$("):
            raise AssertionError("the manifest includes only the port's manifest: " + path)

    api = {"package": package, "module": module, "include": include,
           "metadata": lambda **kw: None, "options": _Options(**options)}
    cwd = os.getcwd()
    os.chdir(FREEZE)  # paths in a manifest are relative to its folder
    try:
        with open("manifest.py") as fh:
            exec(compile(fh.read(), "freeze/manifest.py", "exec"), api)
    finally:
        os.chdir(cwd)
    return frozen, includes


def _listed(path):
    with open(os.path.join(ROOT, path)) as fh:
        return {dest for dest, _ in json.load(fh)["urls"]}


def test_manifest_names_the_core_and_each_part_on_request():
    frozen, includes = run_manifest()
    assert includes == ["$(PORT_DIR)/boards/manifest.py"]
    names = {name for _, name, _ in frozen}
    assert names == _listed("package.json")
    assert "tinytherm/estimator.py" in names and "tinytherm/forecast.py" not in names
    for src, name, opt in frozen:
        assert os.path.isfile(src), src
        assert os.path.normpath(src) == os.path.join(ROOT, name)
        assert opt == 3
    everything = set(names)
    for part in PARTS:
        with_part = {name for _, name, _ in run_manifest(**{part: True})[0]}
        assert with_part == names | _listed("packages/%s/package.json" % part), part
        everything |= with_part
    all_modules = {"tinytherm/" + f for f in os.listdir(os.path.join(ROOT, "tinytherm"))
                   if f.endswith(".py")}
    assert everything == all_modules


def _tool(name):
    path = os.path.join(os.path.dirname(sys.executable), name)
    if not os.path.exists(path):
        pytest.fail(name + " not found: install the dev extra")
    return path


def test_frozen_core_compiles_and_runs_from_mpy_alone(tmp_path):
    frozen, _ = run_manifest()
    dest = tmp_path / "tinytherm"
    dest.mkdir()
    for src, name, opt in frozen:
        target = str(tmp_path / (name[:-3] + ".mpy"))
        proc = subprocess.run([_tool("mpy-cross"), "-O%d" % opt, "-s", name, "-o", target, src],
                              capture_output=True, text=True)
        assert proc.returncode == 0, proc.stderr
    assert not [f for f in os.listdir(str(dest)) if not f.endswith(".mpy")]
    # cooling curve of an invented mug: R = 22 C, T0 = 82 C, k = 1/1500 1/s, 10 s readings
    code = (
        "import sys\n"
        "sys.path[:] = [%r]\n"
        "import math\n"
        "from tinytherm.estimator import ThermalEstimator\n"
        "from tinytherm import status\n"
        "import tinytherm.estimator as m\n"
        "print('file', m.__file__)\n"
        "e = ThermalEstimator(ambient_c=22.0)\n"
        "for i in range(1, 121):\n"
        "    e.update(22.0 + 60.0 * math.exp(-i * 10.0 / 1500.0), 10.0)\n"
        "e.predict(40.0)\n"
        "print('eta', e.status == status.TRACKING, e.eta_s)\n" % str(tmp_path))
    proc = subprocess.run([_tool("micropython"), "-c", code], cwd=str(tmp_path),
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    lines = dict(line.split(" ", 1) for line in proc.stdout.splitlines())
    assert lines["file"].endswith("tinytherm/estimator.mpy"), lines
    tracking, eta = lines["eta"].split()
    assert tracking == "True", lines
    # closed form: 40 = 22 + 60 exp(-k t)  ->  t = 1500 ln(60/18); 1200 s have passed
    truth_s = 1500.0 * math.log(60.0 / 18.0) - 1200.0
    assert abs(float(eta) - truth_s) <= 0.05 * truth_s, (eta, truth_s)
