"""The core estimator with its fixed choices as constructor keywords, for grids.

    python benchmarks/families.py --seeds tune --no-real --out tune.csv \\
        --candidate knobs=benchmarks.estimator_knobs:Knobs \\
        --grid delta_var_factor=2,4,8 --grid equilibrium_slack=0.1,0.4
    python benchmarks/lofo_coverage.py tune.csv --method knobs

The core keeps its fixed choices as module constants (no product needs another
value); a leave-one-family-out grid needs them per run. A keyword is the
lower-case name of a number constant of :data:`MODULES` (``rise_bend`` sets
``tinytherm.settle.RISE_BEND``, ``turn_c`` sets ``tinytherm.estimator.TURN_C``;
:func:`knob_names` lists them all). :class:`Knobs` sets the named constants
for the duration of each call (constructor, ``update``, ``predict``) and puts
the core's values back, so the core and other candidates replayed in the same
process are untouched; constants derived from a knob (:data:`DERIVED`) follow
it. Benchmarks only: the core never imports this module.
"""
import inspect
import math
import os
import re
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
if ROOT not in sys.path:
    sys.path.insert(0, ROOT)

from tinytherm import answer, estimator, settle  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402

MODULES = (answer, estimator, settle)  # where a knob's constant is looked up, in this order

# constants the core derives from a knob at import: (module, derived, knob, function); the
# knob is looked up as a keyword is (answer._BLOCK_MS follows estimator.BLOCK_S)
DERIVED = (
    (answer, "_ARRIVE_MIN_MS", "ARRIVE_MIN_S", lambda s: int(s * 1000)),
    (settle, "RISE_ARRIVE_MIN_MS", "RISE_ARRIVE_MIN_S", lambda s: int(s * 1000)),
    (settle, "SETTLE_MS", "SETTLE_S", lambda s: int(s * 1000)),
    (estimator, "_BLOCK_MS", "BLOCK_S", lambda s: int(s * 1000)),
    (answer, "_BLOCK_MS", "BLOCK_S", lambda s: int(s * 1000)),
)


_ASSIGNED = re.compile(r"^([A-Z][A-Z0-9_]*) *=", re.M)


def _own_constants(module):
    """The finite number constants ``module`` assigns itself (not those it imports)."""
    names = _ASSIGNED.findall(inspect.getsource(module))
    return [n for n in names if type(getattr(module, n)) in (int, float)
            and math.isfinite(getattr(module, n))]


def knob_names():
    """Every keyword :class:`Knobs` takes, sorted (lower-case constant names)."""
    return sorted({n.lower() for module in MODULES for n in _own_constants(module)})


_FOUND = {}  # keyword -> _constant's answer (a module's source is read once, not per call)


def _constant(keyword):
    """``keyword`` -> (module, CONSTANT), or None when no module assigns that constant."""
    if keyword in _FOUND:
        return _FOUND[keyword]
    name = keyword.upper()
    found = None
    for module in MODULES:
        if name in _own_constants(module):
            found = module, name
            break
    _FOUND[keyword] = found
    return found


class Knobs(ThermalEstimator):
    """:class:`~tinytherm.estimator.ThermalEstimator` taking :func:`knob_names` keywords too.

    A knob's value keeps the constant's type (an int constant stays an int);
    ``None`` keeps the core's value. Other keywords go to the estimator.
    """

    def __init__(self, **kwargs):
        self._knobs = []
        for key in list(kwargs):
            where = _constant(key)
            if where is None:
                continue
            value = kwargs.pop(key)
            if value is None:
                continue
            module, name = where
            kind = type(getattr(module, name))
            self._knobs.append((module, name, kind(value)))
        with self._applied():
            super().__init__(**kwargs)

    def _applied(self):
        return _Applied(self._knobs)

    def update(self, *args, **kwargs):
        with self._applied():
            return super().update(*args, **kwargs)

    def predict(self, *args, **kwargs):
        with self._applied():
            return ThermalEstimator.predict(self, *args, **kwargs)


class _Applied:
    """Set the constants on entry, put the old values back on exit."""

    def __init__(self, knobs):
        self.knobs = knobs
        self.saved = []

    def __enter__(self):
        self.saved = [(m, c, getattr(m, c)) for m, c, _ in self.knobs]
        self.saved += [(m, d, getattr(m, d)) for m, d, _, _ in DERIVED]
        for m, c, v in self.knobs:
            setattr(m, c, v)
        for m, d, knob, f in DERIVED:
            setattr(m, d, f(getattr(*_constant(knob))))  # (the knob may live in another module)
        return self

    def __exit__(self, *exc):
        for m, c, v in reversed(self.saved):
            setattr(m, c, v)
        return False
