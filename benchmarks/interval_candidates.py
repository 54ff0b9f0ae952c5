"""Estimator candidates for the interval settings, for ``benchmarks/families.py --grid``.

    python benchmarks/families.py --seeds tune --no-real --out tune.csv \\
        --candidate iv=benchmarks.interval_candidates:IntervalCandidate \\
        --grid delta_var_factor=4,16,36 --grid audit_fade=0.5,1000 \\
        --grid equilibrium_slack=0,0.1
    python benchmarks/lofo_coverage.py tune.csv

:class:`IntervalCandidate` is the core estimator with module constants of
the interval (``tinytherm.answer.DELTA_VAR_FACTOR``, ``AUDIT_PRIOR_VAR``,
``AUDIT_FADE``, ``EQUILIBRIUM_SLACK``) set from keywords. The constants are
module globals: they are set when an instance is made, so candidates must be
replayed one at a time per process (``families.py`` does: each worker
replays a trace's methods in turn).
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
            "audit_fade": "AUDIT_FADE", "equilibrium_slack": "EQUILIBRIUM_SLACK"}
_DEFAULTS = {name: getattr(answer, name) for name in KEYWORDS.values()}


class IntervalCandidate(ThermalEstimator):
    """The core with the interval's constants given as keywords (``None``: the core's value).

    ``delta_var_factor`` (times the delta-method variance: the audits' prior),
    ``audit_prior_var`` ((log time)^2, the least prior), ``audit_fade`` (x the
    fit's age) and ``equilibrium_slack`` (share of the distance to the fitted
    equilibrium).
    """

    def __init__(self, delta_var_factor=None, audit_prior_var=None, audit_fade=None,
                 equilibrium_slack=None, **kwargs):
        given = {"delta_var_factor": delta_var_factor, "audit_prior_var": audit_prior_var,
                 "audit_fade": audit_fade, "equilibrium_slack": equilibrium_slack}
        for key, name in KEYWORDS.items():
            value = given[key]
            setattr(answer, name, _DEFAULTS[name] if value is None else float(value))
        super().__init__(**kwargs)
