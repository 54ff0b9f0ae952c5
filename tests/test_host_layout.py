"""The host package's layout: every module imports, no import cycle, rooms depend one way, small modules.

The import graph is read from the source (every ``import``/``from ... import`` of a
``host_sim`` module, also those inside functions), so a cycle hidden behind a
lazy import is found too.
"""
import ast
import importlib
import os
import pkgutil

import pytest

import host_sim

ROOT = os.path.dirname(host_sim.__file__)
MAX_LINES = 600
# Rooms from the bottom up: a module may import its own room and the rooms below it.
# The trace format and the replay are at the bottom: the simulators write traces, the
# calibration replays them, the fleet replays many, the command line drives them all.
RANKS = {"replay": 0, "sim": 1, "calibrate": 2, "fleet": 2, "cli": 3}


def _modules():
    names = ["host_sim"]
    for info in pkgutil.walk_packages(host_sim.__path__, "host_sim."):
        names.append(info.name)
    return sorted(names)


MODULES = _modules()


def _path(name):
    rel = name.split(".")[1:]
    base = os.path.join(ROOT, *rel)
    return os.path.join(base, "__init__.py") if os.path.isdir(base) else base + ".py"


def _imports(name):
    """The host_sim modules ``name`` imports (resolved to modules, not to names in them)."""
    with open(_path(name), encoding="utf-8") as handle:
        tree = ast.parse(handle.read())
    found = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            targets = [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            targets = [node.module + "." + alias.name for alias in node.names]
            targets = [t if t in MODULES else node.module for t in targets]
        else:
            continue
        found.update(t for t in targets if t in MODULES and t != name)
    return found


def _room(name):
    parts = name.split(".")
    return parts[1] if len(parts) > 2 or (len(parts) == 2 and parts[1] in RANKS) else None


def test_every_host_module_imports():
    assert len(MODULES) > 30          # the walk found the rooms, not just the top package
    for name in MODULES:
        if name == "host_sim.__main__":
            continue                  # runs the CLI on import
        importlib.import_module(name)


def test_no_import_cycle():
    graph = {name: _imports(name) for name in MODULES}
    state = {}

    def visit(node, path):
        state[node] = "open"
        for nxt in sorted(graph[node]):
            if state.get(nxt) == "open":
                cycle = path[path.index(nxt):] + [nxt]
                pytest.fail("import cycle: " + " -> ".join(cycle))
            if nxt not in state:
                visit(nxt, path + [nxt])
        state[node] = "done"

    for name in MODULES:
        if name not in state:
            visit(name, [name])


def test_rooms_depend_one_way():
    wrong = []
    for name in MODULES:
        room = _room(name)
        if room is None:
            continue
        for target in _imports(name):
            other = _room(target)
            if other is not None and other != room and RANKS[other] >= RANKS[room]:
                wrong.append("%s imports %s" % (name, target))
    assert not wrong, wrong


def test_the_rooms_exist_and_the_flat_modules_are_gone():
    rooms = {_room(name) for name in MODULES} - {None}
    assert rooms == set(RANKS)
    flat = [name for name in MODULES if name.count(".") == 1 and _room(name) is None]
    assert sorted(flat) == ["host_sim.__main__"], flat


def test_no_host_module_over_the_line_limit():
    long = {}
    for name in MODULES:
        with open(_path(name), encoding="utf-8") as handle:
            lines = sum(1 for _ in handle)
        if lines > MAX_LINES:
            long[name] = lines
    assert not long, long


def test_the_checks_see_a_cycle_and_a_wrong_way_import(monkeypatch):
    """The graph reader itself: a cycle written into two modules' sources is reported."""
    real = _imports
    fake = {"host_sim.replay.metrics": {"host_sim.cli.options"},
            "host_sim.cli.options": {"host_sim.replay.metrics"}}
    monkeypatch.setitem(globals(), "_imports", lambda name: fake.get(name, real(name)))
    with pytest.raises(pytest.fail.Exception, match="import cycle"):
        test_no_import_cycle()
    with pytest.raises(AssertionError, match="replay.metrics imports host_sim.cli.options"):
        test_rooms_depend_one_way()
