"""Estimator candidates for the interval settings, for ``benchmarks/families.py --grid``.

    python benchmarks/families.py --seeds tune --no-real --out tune.csv \\
        --candidate iv=benchmarks.interval_candidates:IntervalCandidate \\
        --grid delta_var_factor=4,16,36 --grid equilibrium_slack=0.2,0.4
    python benchmarks/lofo_coverage.py tune.csv

:class:`IntervalCandidate` is the core estimator with module constants of
the interval (``tinytherm.answer.DELTA_VAR_FACTOR``, ``AUDIT_PRIOR_VAR``,
``EQUILIBRIUM_SLACK``) given as keywords. The constants are module globals:
each call of the candidate sets its values and puts the core's back when it
returns, so a core replayed in the same process keeps its own.
"""
import os
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
if ROOT not in sys.path:
    sys.path.insert(0, ROOT)

from tinytherm import answer  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402

# keyword -> the module constant it sets
KEYWORDS = {"delta_var_factor": "DELTA_VAR_FACTOR", "audit_prior_var": "AUDIT_PRIOR_VAR",
            "equilibrium_slack": "EQUILIBRIUM_SLACK"}
_CORE = {name: getattr(answer, name) for name in KEYWORDS.values()}


class IntervalCandidate(ThermalEstimator):
    """The core with the interval's constants given as keywords (``None``: the core's value).

    ``delta_var_factor`` (times the delta-method variance: the audits' prior),
    ``audit_prior_var`` ((log time)^2, the least prior) and
    ``equilibrium_slack`` (share of the distance to the fitted equilibrium).
    """

    def __init__(self, delta_var_factor=None, audit_prior_var=None, equilibrium_slack=None,
                 **kwargs):
        given = {"delta_var_factor": delta_var_factor, "audit_prior_var": audit_prior_var,
                 "equilibrium_slack": equilibrium_slack}
        self._mine = {name: _CORE[name] if given[key] is None else float(given[key])
                      for key, name in KEYWORDS.items()}
        super().__init__(**kwargs)

    def _with_mine(self, method, *args, **kwargs):
        for name, value in self._mine.items():
            setattr(answer, name, value)
        try:
            return method(self, *args, **kwargs)
        finally:
            for name, value in _CORE.items():
                setattr(answer, name, value)

    def update(self, *args, **kwargs):
        return self._with_mine(ThermalEstimator.update, *args, **kwargs)

    def predict(self, *args, **kwargs):
        return self._with_mine(ThermalEstimator.predict, *args, **kwargs)
