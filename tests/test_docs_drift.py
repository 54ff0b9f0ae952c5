"""README's option tables cannot drift from the code they document.

* Every README table headed ``| `Name` argument | default | ...`` documents the
  constructor of the public core class ``Name``: its rows must name every
  parameter of ``inspect.signature(Name.__init__)``, in order, with the same
  defaults (``required`` for a parameter without one). The names are read from
  the signature, so the test follows any change of the constructor; only the
  README has to be updated with it. (The ``.pyi`` stubs are held to the same
  signatures, names and defaults, by ``tests/test_stubs.py``.)
* README's ``| replay option |`` table names exactly the options of
  ``python -m host_sim replay --help``, and the estimator arguments it maps
  options to exist in the constructor's signature.
* Every relative link of README.md, DEVELOPERS.md and docs/*.md points at a
  file that exists and, with ``#anchor``, at a heading of that file.
"""
import ast
import importlib
import inspect
import math
import operator
import os
import re
import subprocess
import sys

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
PKG = os.path.join(ROOT, "tinytherm")

# Every public core class whose constructor README must document.
MUST_DOCUMENT = ("ThermalEstimator",)


def readme():
    with open(os.path.join(ROOT, "README.md")) as f:
        return f.read()


def tables(text):
    """Markdown tables as lists of rows, each a list of cell strings."""
    found, rows = [], []
    for line in text.splitlines() + [""]:
        if line.startswith("|"):
            cells = [c.strip() for c in line.strip().strip("|").split("|")]
            if not all(set(c) <= set("-: ") for c in cells):    # skip the |---| line
                rows.append(cells)
        elif rows:
            found.append(rows)
            rows = []
    return found


def constructor_tables(text):
    """{class name: [(argument name, default text), ...]} from README, in row order."""
    out = {}
    for rows in tables(text):
        head = re.fullmatch(r"`(\w+)` argument", rows[0][0])
        if not head:
            continue
        assert rows[0][1] == "default", rows[0]
        entries = []
        for cells in rows[1:]:
            names = re.findall(r"`(\w+)`", cells[0])
            defaults = re.findall(r"`([^`]*)`", cells[1]) or [cells[1]]
            assert names and len(names) == len(defaults), \
                "row %r: %d names, %d defaults" % (cells[0], len(names), len(defaults))
            entries.extend(zip(names, defaults))
        out[head.group(1)] = entries
    return out


def core_class(name):
    """The public class ``name`` of a tinytherm module (the one defining it)."""
    for f in sorted(os.listdir(PKG)):
        if f.endswith(".py") and not f.startswith("_"):
            mod = importlib.import_module("tinytherm." + f[:-3])
            obj = vars(mod).get(name)
            if inspect.isclass(obj) and obj.__module__ == mod.__name__:
                return obj
    raise AssertionError("README documents %s, no tinytherm module defines it" % name)


_OPS = {ast.Add: operator.add, ast.Sub: operator.sub, ast.Mult: operator.mul,
        ast.Div: operator.truediv, ast.USub: operator.neg}


def literal(text):
    """A default as README writes it: a literal, or plain arithmetic such as ``1/1800``."""
    def value(node):
        if isinstance(node, ast.Constant):
            return node.value
        if isinstance(node, ast.UnaryOp) and type(node.op) in _OPS:
            return _OPS[type(node.op)](value(node.operand))
        if isinstance(node, ast.BinOp) and type(node.op) in _OPS:
            return _OPS[type(node.op)](value(node.left), value(node.right))
        raise ValueError("not a literal default: %r" % text)
    return value(ast.parse(text, mode="eval").body)


def same_default(documented, actual):
    if type(documented) is not type(actual):
        return False
    if isinstance(actual, float):
        return math.isclose(documented, actual, rel_tol=1e-12, abs_tol=0.0)
    return documented == actual


def test_readme_documents_the_required_constructors():
    documented = constructor_tables(readme())
    for name in MUST_DOCUMENT:
        assert name in documented, "README has no `%s` argument table" % name


@pytest.mark.parametrize("name", sorted(constructor_tables(readme())))
def test_constructor_table_matches_signature(name):
    entries = constructor_tables(readme())[name]
    params = [p for p in inspect.signature(core_class(name).__init__).parameters.values()
              if p.name != "self" and p.kind not in (p.VAR_POSITIONAL, p.VAR_KEYWORD)]
    assert [n for n, _ in entries] == [p.name for p in params], \
        "README's %s table and the signature differ (names or order)" % name
    for (arg, text), p in zip(entries, params):
        if p.default is p.empty:
            assert text == "required", "%s(%s): README gives a default" % (name, arg)
        else:
            assert same_default(literal(text), p.default), \
                "%s(%s): README says %s, the code %r" % (name, arg, text, p.default)


def test_literal_and_same_default_can_fail():
    # the comparison is strict: type and value (a probe that the check can fail)
    assert literal("1/1800") == 1.0 / 1800.0 and literal("-55.0") == -55.0
    assert literal("None") is None and literal("True") is True
    assert not same_default(1, 1.0) and not same_default(True, 1)
    assert not same_default(0.35, 0.36) and same_default(None, None)
    with pytest.raises(ValueError):
        literal("KNOWN_AMBIENT_SD_C")
    broken = "| `Foo` argument | default | meaning |\n|---|---|---|\n| `a`, `b` | `1` | x |\n"
    with pytest.raises(AssertionError):
        constructor_tables(broken)


def replay_help():
    env = dict(os.environ, PYTHONPATH=ROOT + os.pathsep + os.environ.get("PYTHONPATH", ""))
    proc = subprocess.run([sys.executable, "-m", "host_sim", "replay", "--help"], cwd=ROOT,
                          env=env, capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    return proc.stdout


def test_replay_option_table_matches_the_cli():
    rows = [t for t in tables(readme()) if t[0][0] == "replay option"]
    assert len(rows) == 1, "README needs one `| replay option |` table"
    documented = [flag for cells in rows[0][1:] for flag in re.findall(r"`(--[\w-]+)", cells[0])]
    assert len(documented) == len(set(documented)), "a replay option is listed twice"
    offered = set(re.findall(r"^  (?:-\w, )?(--[\w-]+)", replay_help(), re.M)) - {"--help"}
    assert offered, "no options parsed from replay --help"
    assert set(documented) == offered, (
        "README lacks %s; README names %s that replay lacks"
        % (sorted(offered - set(documented)), sorted(set(documented) - offered)))
    # options passed to the estimator name constructor arguments that exist
    params = set(inspect.signature(core_class("ThermalEstimator").__init__).parameters)
    mapped = [c for c in rows[0][1:] if "the estimator's" in c[1]]
    assert mapped, "the replay table says which options set the estimator's arguments"
    for cells in mapped:
        names = re.findall(r"`(\w+)`", cells[1].split("the estimator's", 1)[1])
        assert names and set(names) <= params, (names, sorted(params))


DOCS = ["README.md", "DEVELOPERS.md"] + sorted(
    os.path.join("docs", f) for f in os.listdir(os.path.join(ROOT, "docs")) if f.endswith(".md"))


def anchors(path):
    """GitHub's heading anchors of a markdown file (lower case, punctuation dropped)."""
    with open(path) as f:
        text = re.sub(r"```.*?```", "", f.read(), flags=re.S)
    return {re.sub(r"[^\w\- ]", "", h.strip().lower()).replace(" ", "-")
            for h in re.findall(r"^#+ (.+)$", text, re.M)}


@pytest.mark.parametrize("doc", DOCS)
def test_relative_links_resolve(doc):
    with open(os.path.join(ROOT, doc)) as f:
        text = re.sub(r"```.*?```", "", f.read(), flags=re.S)
    for link in re.findall(r"\]\(([^)\s]+)\)", text):
        if re.match(r"[a-z]+:", link):
            continue
        target, _, anchor = link.partition("#")
        path = os.path.normpath(os.path.join(ROOT, os.path.dirname(doc), target)) if target \
            else os.path.join(ROOT, doc)
        assert os.path.exists(path), "%s: %s" % (doc, link)
        if anchor:
            assert anchor in anchors(path), "%s: no heading for #%s" % (doc, anchor)


def test_anchor_check_can_fail(tmp_path):
    page = tmp_path / "p.md"
    page.write_text("# Top\n## On the device (current estimator)\n")
    assert anchors(str(page)) == {"top", "on-the-device-current-estimator"}
