"""The core estimator with some of its fixed choices as constructor keywords, for grids.

    python benchmarks/families.py --candidate knobs=benchmarks.estimator_knobs:Knobs \\
        --grid rise_bend=2,3,5 --seeds tune

The core keeps its fixed choices as module constants (no product needs another
value); a leave-one-family-out grid needs them per run. :class:`Knobs` sets the
named constants for the duration of each call and puts them back, so the core
and other candidates replayed in the same process are untouched. Benchmarks
only: the core never imports this module.
"""
import inspect
import os
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
if ROOT not in sys.path:
    sys.path.insert(0, ROOT)

from tinytherm import answer, estimator, settle  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402

# keyword -> (module, constant)
KNOBS = {
    "rise_bend": (settle, "RISE_BEND"),
    "rise_drop_sd": (settle, "RISE_DROP_SD"),
    "rise_arrive_min_s": (settle, "RISE_ARRIVE_MIN_S"),
    "turn_c": (estimator, "TURN_C"),
    "settle_s": (settle, "SETTLE_S"),
    "settle_bend": (settle, "SETTLE_BEND"),
}


class Knobs(ThermalEstimator):
    """:class:`~tinytherm.estimator.ThermalEstimator` taking the :data:`KNOBS` keywords too."""

    def __init__(self, **kwargs):
        self._knobs = []
        for name in list(kwargs):
            if name in KNOBS:
                module, const = KNOBS[name]
                self._knobs.append((module, const, float(kwargs.pop(name))))
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


# the signature the families benchmark reads (device_kwargs passes the probe's
# resolution only to a class that names quantum_c): the core's and the knobs
_SIG = inspect.signature(ThermalEstimator)
Knobs.__signature__ = _SIG.replace(parameters=list(_SIG.parameters.values()) + [
    inspect.Parameter(name, inspect.Parameter.KEYWORD_ONLY, default=None) for name in KNOBS])


class _Applied:
    """Set the constants on entry, put the old values back on exit."""

    def __init__(self, knobs):
        self.knobs = knobs
        self.saved = []

    def __enter__(self):
        self.saved = [(m, c, getattr(m, c)) for m, c, _ in self.knobs]
        for m, c, v in self.knobs:
            setattr(m, c, v)
        _derived()
        return self

    def __exit__(self, *exc):
        for m, c, v in self.saved:
            setattr(m, c, v)
        _derived()
        return False


def _derived():
    """The millisecond copies of the constants set (the core reads those)."""
    settle.RISE_ARRIVE_MIN_MS = int(settle.RISE_ARRIVE_MIN_S * 1000)
    settle.SETTLE_MS = int(settle.SETTLE_S * 1000)
