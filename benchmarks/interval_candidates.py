"""Estimator candidates for the interval settings, for ``benchmarks/families.py --grid``.

    python benchmarks/families.py --seeds tune --no-real --out tune.csv \\
        --candidate iv=benchmarks.interval_candidates:IntervalCandidate \\
        --grid audit_prior_var=0.02,0.04 --grid audit_fade=0.5,1000 \\
        --grid equilibrium_slack=0,0.1,0.2
    python benchmarks/lofo_coverage.py tune.csv

:class:`IntervalCandidate` is the core estimator with the module constants
of the interval (``tinytherm.answer.AUDIT_PRIOR_VAR``, ``AUDIT_FADE``,
``EQUILIBRIUM_SLACK``) set
from keywords. The constants are module globals: they are set when an
instance is made, so candidates must be replayed one at a time per process
(``families.py`` does: each worker replays a trace's methods in turn).
"""
import os
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
if ROOT not in sys.path:
    sys.path.insert(0, ROOT)

from tinytherm import answer  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402

_DEFAULTS = {"AUDIT_PRIOR_VAR": answer.AUDIT_PRIOR_VAR, "AUDIT_FADE": answer.AUDIT_FADE,
             "EQUILIBRIUM_SLACK": answer.EQUILIBRIUM_SLACK}


class IntervalCandidate(ThermalEstimator):
    """The core with ``audit_prior_var`` ((log time)^2), ``audit_fade`` (x fit age) and
    ``equilibrium_slack`` (share of the distance to the fitted equilibrium) set."""

    def __init__(self, audit_prior_var=None, audit_fade=None, equilibrium_slack=None, **kwargs):
        answer.AUDIT_PRIOR_VAR = (_DEFAULTS["AUDIT_PRIOR_VAR"] if audit_prior_var is None
                                  else float(audit_prior_var))
        answer.AUDIT_FADE = _DEFAULTS["AUDIT_FADE"] if audit_fade is None else float(audit_fade)
        answer.EQUILIBRIUM_SLACK = (_DEFAULTS["EQUILIBRIUM_SLACK"] if equilibrium_slack is None
                                    else float(equilibrium_slack))
        super().__init__(**kwargs)
