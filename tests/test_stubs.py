"""Type stubs (tinytherm/*.pyi + py.typed) and static checks against MicroPython's stubs.

* The runtime imports nothing from ``typing`` (type hints live in the stubs).
* Every public function, class and method of a stubbed module has a stub entry
  with the same parameter names, in the same order, with defaults in the same
  places; the stub names nothing the runtime lacks. So stubs cannot drift.
* mypy accepts the stubs, type-checks the core sources against the MicroPython
  stdlib stubs (``micropython-stdlib-stubs``) plus the ESP32 port's module stubs
  (``micropython-esp32-stubs``: ``math``, ``micropython``, ``machine`` ...),
  and type-checks the firmware examples against our stubs and the port's.

Known exception, written down: the CPython fallback
``try: from micropython import const / except ImportError: def const(x)``
is reported by mypy as "All conditional function variants must have identical
signatures"; it is the standard idiom for code that runs on both runtimes, so
that one message on a ``def const`` line is ignored.
"""
import ast
import importlib
import inspect
import os
import shutil
import subprocess
import sys

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
PKG = os.path.join(ROOT, "tinytherm")
SITE = None
for entry in sys.path:
    if entry.endswith("site-packages") and os.path.isdir(os.path.join(entry, "stdlib")):
        SITE = entry
        break

# Modules whose stubs are required: everything the firmware examples use.
REQUIRED_STUBS = ("status", "model", "sensors", "estimator", "planner", "forecast")


def stub_modules():
    return sorted(f[:-4] for f in os.listdir(PKG) if f.endswith(".pyi") and f != "__init__.pyi")


def test_py_typed_and_required_stubs_exist():
    assert os.path.exists(os.path.join(PKG, "py.typed"))
    for name in REQUIRED_STUBS:
        assert os.path.exists(os.path.join(PKG, name + ".pyi")), name


def test_runtime_imports_nothing_from_typing():
    for f in sorted(os.listdir(PKG)):
        if not f.endswith(".py"):
            continue
        with open(os.path.join(PKG, f)) as fh:
            tree = ast.parse(fh.read())
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                names = [node.module or ""]
            else:
                continue
            for n in names:
                assert n.split(".")[0] not in ("typing", "typing_extensions", "__future__"), (f, n)
        # and no annotations that would need typing at run time
        for node in ast.walk(tree):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                assert node.returns is None, (f, node.name)
                for a in node.args.args + node.args.kwonlyargs:
                    assert a.annotation is None, (f, node.name, a.arg)


def _stub_params(fn):
    a = fn.args
    names = [x.arg for x in a.posonlyargs + a.args]
    n_defaults = len(a.defaults)
    has_default = [False] * (len(names) - n_defaults) + [True] * n_defaults
    return names, has_default


def _runtime_params(fn):
    sig = inspect.signature(fn)
    names = []
    has_default = []
    for p in sig.parameters.values():
        if p.kind in (p.VAR_POSITIONAL, p.VAR_KEYWORD, p.KEYWORD_ONLY):
            continue
        names.append(p.name)
        has_default.append(p.default is not p.empty)
    return names, has_default


def _stub_tree(name):
    with open(os.path.join(PKG, name + ".pyi")) as fh:
        tree = ast.parse(fh.read())
    funcs = {}
    classes = {}
    names = set()
    for node in tree.body:
        if isinstance(node, ast.FunctionDef):
            funcs[node.name] = node
        elif isinstance(node, ast.ClassDef):
            classes[node.name] = {n.name: n for n in node.body if isinstance(n, ast.FunctionDef)}
            classes[node.name]["__attrs__"] = {
                n.target.id for n in node.body
                if isinstance(n, ast.AnnAssign) and isinstance(n.target, ast.Name)}
        elif isinstance(node, ast.AnnAssign) and isinstance(node.target, ast.Name):
            names.add(node.target.id)
        elif isinstance(node, ast.ImportFrom):
            names.update(a.asname or a.name for a in node.names)
    return funcs, classes, names


@pytest.mark.parametrize("name", stub_modules())
def test_stub_matches_runtime_signatures(name):
    mod = importlib.import_module("tinytherm." + name)
    funcs, classes, names = _stub_tree(name)
    public = {n: o for n, o in vars(mod).items() if not n.startswith("_")}
    for n, obj in public.items():
        if inspect.isfunction(obj) and obj.__module__ == mod.__name__:
            assert n in funcs, "%s.%s has no stub" % (name, n)
            assert _stub_params(funcs[n]) == _runtime_params(obj), "%s.%s" % (name, n)
        elif inspect.isclass(obj) and obj.__module__ == mod.__name__:
            assert n in classes, "%s.%s has no stub" % (name, n)
            stub_methods = classes[n]
            for m, fn in vars(obj).items():
                if inspect.isfunction(fn) and (not m.startswith("_") or m == "__init__"):
                    assert m in stub_methods, "%s.%s.%s has no stub" % (name, n, m)
                    assert _stub_params(stub_methods[m]) == _runtime_params(fn), \
                        "%s.%s.%s" % (name, n, m)
            for m in stub_methods:
                if m != "__attrs__":
                    assert m in vars(obj), "stub names %s.%s.%s, runtime lacks it" % (name, n, m)
        elif isinstance(obj, (int, float, tuple, str)):
            assert n in names, "%s.%s (constant) has no stub" % (name, n)
    for n in list(funcs) + list(classes):
        assert n in public, "stub names %s.%s, runtime lacks it" % (name, n)



def _stub_defaults(fn):
    """{parameter: stub default node} for the parameters that have one."""
    a = fn.args
    positional = a.posonlyargs + a.args
    pairs = list(zip(positional[len(positional) - len(a.defaults):], a.defaults))
    pairs += [(x, d) for x, d in zip(a.kwonlyargs, a.kw_defaults) if d is not None]
    return {x.arg: d for x, d in pairs}


def _default_differs(node, actual):
    """True when a stub default is a literal other than the runtime's (``...`` never differs)."""
    if isinstance(node, ast.Constant) and node.value is Ellipsis:
        return False
    try:
        written = ast.literal_eval(node)
    except ValueError:
        return False        # a name or an expression: the stub says "some default"
    if type(written) is not type(actual):
        return True
    return written != actual and not (isinstance(actual, float) and written == actual)


@pytest.mark.parametrize("name", stub_modules())
def test_stub_defaults_match_runtime_defaults(name):
    # The stubs show defaults to the user's editor: a literal there must be the real one
    # (python-control's habit: docs that cannot drift from the signatures).
    mod = importlib.import_module("tinytherm." + name)
    funcs, classes, _ = _stub_tree(name)
    pairs = [(n, funcs[n], getattr(mod, n)) for n in funcs if hasattr(mod, n)]
    for cls, methods in classes.items():
        for m, node in methods.items():
            if m != "__attrs__" and hasattr(mod, cls) and m in vars(getattr(mod, cls)):
                pairs.append(("%s.%s" % (cls, m), node, vars(getattr(mod, cls))[m]))
    for label, node, obj in pairs:
        if not inspect.isfunction(obj):
            continue
        params = inspect.signature(obj).parameters
        for arg, default in _stub_defaults(node).items():
            assert arg in params, "%s.%s: stub parameter %s" % (name, label, arg)
            assert not _default_differs(default, params[arg].default), \
                "%s.%s(%s): stub default %s, runtime %r" % (
                    name, label, arg, ast.unparse(default), params[arg].default)


def test_stub_default_check_can_fail():
    tree = ast.parse("def f(a: float = 0.35, b: int = ..., c: bool = True) -> None: ...")
    d = _stub_defaults(tree.body[0])
    assert _default_differs(d["a"], 0.36) and not _default_differs(d["a"], 0.35)
    assert not _default_differs(d["b"], 3)
    assert _default_differs(d["c"], 1) and not _default_differs(d["c"], True)

def test_stub_instance_attributes_exist_at_runtime():
    from tinytherm.estimator import ThermalEstimator
    from tinytherm.planner import ReadyByPlanner
    from tinytherm.forecast import Forecast
    from tinytherm.sensors import LagCompensator
    from tinytherm.guard import ReadingGuard
    from tinytherm.change import ChangeDetector
    for mod, obj in (("estimator", ThermalEstimator()), ("planner", ReadyByPlanner()),
                     ("forecast", Forecast()), ("sensors", LagCompensator(10.0)),
                     ("guard", ReadingGuard()), ("change", ChangeDetector())):
        # (class-level names such as STATE_SIZE and properties are not instance attributes)
        attrs = _stub_instance_attrs(mod, type(obj).__name__) - set(dir(type(obj)))
        public = {k for k in vars(obj) if not k.startswith("_")}
        assert attrs == public, (mod, attrs ^ public)


def _stub_base_module(mod, base):
    """The stub module a base class named in ``mod``'s stub is imported from (or ``mod``)."""
    with open(os.path.join(PKG, mod + ".pyi")) as fh:
        tree = ast.parse(fh.read())
    for node in tree.body:
        if isinstance(node, ast.ImportFrom) and node.module.startswith("tinytherm."):
            if any((a.asname or a.name) == base for a in node.names):
                return node.module.split(".", 1)[1], dict((a.asname or a.name, a.name)
                                                          for a in node.names)[base]
    return mod, base


def _stub_instance_attrs(mod, cls):
    """The annotated attributes of a stub class and of its stub base classes, in turn."""
    with open(os.path.join(PKG, mod + ".pyi")) as fh:
        tree = ast.parse(fh.read())
    node = [n for n in tree.body if isinstance(n, ast.ClassDef) and n.name == cls][0]
    attrs = _stub_tree(mod)[1][cls]["__attrs__"]
    for base in node.bases:
        if isinstance(base, ast.Name):
            attrs = attrs | _stub_instance_attrs(*_stub_base_module(mod, base.id))
    return attrs


def test_stub_instance_attrs_follow_base_classes():
    # The estimator's stub inherits the answer fields from status.Answer's stub; the check
    # must see them, or a field dropped from both the runtime and status.pyi would pass.
    inherited = _stub_instance_attrs("estimator", "ThermalEstimator")
    assert "eta_s" in inherited and "guard" in inherited
    assert _stub_base_module("estimator", "Answer") == ("status", "Answer")


def mypy(args, cwd, mypypath=None):
    exe = os.path.join(os.path.dirname(sys.executable), "mypy")
    env = dict(os.environ)
    if mypypath:
        env["MYPYPATH"] = mypypath
    proc = subprocess.run([exe, "--no-incremental", "--cache-dir", os.devnull,
                           "--no-error-summary", "--hide-error-context"] + args,
                          cwd=cwd, capture_output=True, text=True, env=env, timeout=300)
    return proc


def _mp_stub_dir(tmp_path):
    """A MYPYPATH folder holding the port's module stubs (math, micropython, machine ...)."""
    if SITE is None or not os.path.exists(os.path.join(SITE, "micropython.pyi")):
        pytest.fail("micropython-stdlib-stubs / micropython-esp32-stubs missing: "
                    "install the dev extra")
    d = tmp_path / "mpstubs"
    d.mkdir()
    for f in ("math", "micropython", "machine", "time", "gc", "onewire", "struct", "_onewire"):
        src = os.path.join(SITE, f + ".pyi")
        if os.path.exists(src):
            os.symlink(src, str(d / (f + ".pyi")))
    os.symlink(os.path.join(SITE, "_mpy_shed"), str(d / "_mpy_shed"))
    return str(d)


# Error codes that mean "this code uses something the MicroPython port does not
# have, or calls it wrongly". mypy's inference on unannotated code also reports
# Optional attributes used after a runtime check it cannot follow ([index],
# [arg-type], [union-attr], [operator] on None); those are not portability findings and are
# not counted for the core.
PORTABILITY_CODES = ("[attr-defined]", "[name-defined]", "[import-not-found]",
                     "[import-untyped]", "[call-arg]", "[call-overload]", "[misc]",
                     "[valid-type]", "[syntax]")


def _errors(out, prefix, codes=None):
    bad = []
    lines = out.splitlines()
    for i, line in enumerate(lines):
        if not line.startswith(prefix) or ": error:" not in line:
            continue
        if codes is not None and not any(c in line for c in codes):
            continue
        if "All conditional function variants must have identical signatures" in line:
            path, lineno = line.split(":")[:2]
            with open(os.path.join(ROOT if prefix != "tinytherm/" else TMP_CORE[0],
                                   path)) as fh:
                src = fh.read().splitlines()[int(lineno) - 1]
            if src.strip().startswith("def const("):
                continue
        bad.append(line)
    return bad


TMP_CORE = [None]


def test_mypy_accepts_the_stubs(tmp_path):
    stubs = [os.path.join("tinytherm", f) for f in sorted(os.listdir(PKG)) if f.endswith(".pyi")]
    proc = mypy(["--strict"] + stubs, ROOT)
    assert proc.returncode == 0, proc.stdout + proc.stderr


def test_mypy_core_against_micropython_stdlib_stubs(tmp_path):
    core = tmp_path / "core"
    shutil.copytree(PKG, str(core / "tinytherm"),
                    ignore=shutil.ignore_patterns("*.pyi", "__pycache__", "py.typed"))
    TMP_CORE[0] = str(core)
    proc = mypy(["--custom-typeshed-dir", SITE, "--check-untyped-defs", "tinytherm"],
                str(core), _mp_stub_dir(tmp_path))
    out = proc.stdout + proc.stderr
    assert "tinytherm/" in out or proc.returncode == 0, out  # it did look at the core
    bad = _errors(proc.stdout, "tinytherm/", PORTABILITY_CODES)
    assert not bad, "\n".join(bad)


def test_mypy_check_catches_a_cpython_only_call(tmp_path):
    # The check above must be able to fail: math.fsum and math.isqrt exist in
    # CPython but not in the MicroPython stubs.
    src = tmp_path / "probe" / "tinytherm"
    src.mkdir(parents=True)
    (src / "__init__.py").write_text("")
    (src / "bad.py").write_text(
        "import math\n\n\ndef f(xs):\n    return math.fsum(xs) + math.isqrt(4)\n")
    TMP_CORE[0] = str(tmp_path / "probe")
    proc = mypy(["--custom-typeshed-dir", SITE, "--check-untyped-defs", "tinytherm"],
                str(tmp_path / "probe"), _mp_stub_dir(tmp_path))
    bad = _errors(proc.stdout, "tinytherm/", PORTABILITY_CODES)
    assert any("fsum" in b for b in bad), proc.stdout
    assert any("isqrt" in b for b in bad), proc.stdout


def test_mypy_firmware_examples_against_stubs(tmp_path):
    files = sorted(os.path.join("firmware_examples", f)
                   for f in os.listdir(os.path.join(ROOT, "firmware_examples"))
                   if f.endswith(".py"))
    assert len(files) >= 4
    # ds18x20 is a frozen driver without a published stub: ignore it alone.
    cfg = tmp_path / "mypy.ini"
    cfg.write_text("[mypy]\n[mypy-ds18x20]\nignore_missing_imports = True\n")
    proc = mypy(["--config-file", str(cfg), "--custom-typeshed-dir", SITE,
                 "--check-untyped-defs"] + files,
                ROOT, _mp_stub_dir(tmp_path) + os.pathsep + ROOT)
    bad = _errors(proc.stdout, "firmware_examples/")
    assert not bad, proc.stdout
