"""The answer: status, time to the target and its interval, from a solved fit.

Worked out once per block close (and when the target changes), then counted
down between blocks (:meth:`Answer.count_down`), so a product that asks
every reading pays a few float operations, not a solve.

Closed form (:func:`tinytherm.model.time_to_target_from_slope_s`) with ``D``
the distance to the target, ``s`` the slope now and ``k`` the rate::

    eta = -log1p(-k D / s) / k        (D / s when k = 0)

Its variance by the delta method over the fit's covariance, plus the audits'
forecast-error variance at that horizon (:mod:`tinytherm.audit`); the
interval is ``eta * exp(+-z sd)`` with ``sd`` the total sd of ln(eta).

Runs unchanged on CPython and MicroPython.
"""
import math

from tinytherm import status as st

INF = math.inf


class Answer:
    """What ``predict`` tells the product (all ``None`` when unknown); the
    estimator carries these fields itself (it derives from this class).

    ``status`` (a :mod:`tinytherm.status` code), ``eta_s``, ``eta_low_s``,
    ``eta_high_s`` (seconds after the latest reading; ``eta_high_s`` may be
    ``inf``), ``eta_rel_sd`` (sd of ln eta), ``rate_per_s`` (1/s),
    ``equilibrium_c``, ``ambient_est_c``, ``temp_est_c`` (deg C) and
    ``gain_k_per_s`` (K/s at full duty).

    The cache: the fit generation, target and approach it was worked out
    for, the fit's age then (ms), and the reading (counts) at or beyond
    which it becomes an arrival.
    """

    def forget(self):
        """Invalidate the cache (the next ``predict`` works the answer out)."""
        self._for_gen = -1
        self._for_target = None
        self._for_approach = 0
        self._for_age_ms = 0
        self._arrive_dir = 0    # +1 / -1: arrival once the reading is >= / <= arrive_c
        self._arrive_c = 0      # counts

    def clear(self, code):
        self.status = code
        self.eta_s = None
        self.eta_low_s = None
        self.eta_high_s = None
        self.eta_rel_sd = None
        self.rate_per_s = None
        self.equilibrium_c = None
        self.ambient_est_c = None
        self.gain_k_per_s = 0.0
        self.temp_est_c = None

    def arrive(self):
        self.status = st.ARRIVED
        self.eta_s = 0.0
        self.eta_low_s = 0.0
        self.eta_high_s = 0.0

    def count_down(self, age_ms, force=False):
        """Move the cached times on to a fit ``age_ms`` old.

        False when the time would pass 0 (the answer must be worked out
        again), unless ``force``: then it stops at 0.
        """
        if self.eta_s is None or self.status == st.ARRIVED:
            return True
        el = (age_ms - self._for_age_ms) * 0.001
        if el <= 0.0:
            return True
        eta = self.eta_s - el
        if not eta > 0.0:
            if not force:
                return False
            eta = 0.0
        self.eta_s = eta
        low = self.eta_low_s - el
        self.eta_low_s = low if low > 0.0 else 0.0
        self.eta_high_s -= el
        self._for_age_ms = age_ms
        return True


def eta_rel_var(gap, slope, k, eta, reg, gk):
    """Delta-method variance of ln(eta), eta = time_to_target_from_slope_s(gap, slope, k).

    ``gap`` (deg C) is the distance from the fitted level; the level and the
    slope are linear in the fit's (mean, s, k, g): d level = (1, t, -x, v),
    d slope = (0, 1, gk, 0). ``reg``: the :class:`tinytherm.fit.Regression`.
    """
    q = k * gap / slope
    if -1e-4 < q < 1e-4:
        de_dk = gap * gap / (slope * slope) * (0.5 + q / 1.5)
    else:
        de_dk = (math.log(1.0 - q) + q / (1.0 - q)) / (k * k)
    de_dl = -1.0 / (slope * (1.0 - q))      # d eta / d level
    de_ds = gap * de_dl / slope             # d eta / d slope
    a_s = de_dl * reg.t + de_ds
    a_k = -de_dl * reg.x + de_ds * gk + de_dk
    var = (de_dl * de_dl * reg.var_my + a_s * a_s * reg.pss + a_k * a_k * reg.pkk
           + 2.0 * a_s * a_k * reg.psk)
    if reg.heater:
        a_g = de_dl * reg.v
        var += a_g * (a_g * reg.pgg + 2.0 * (a_s * reg.psg + a_k * reg.pkg))
    if not var > 0.0 or not eta > 0.0:
        return 0.0
    return var / (eta * eta)


def spread(z_sd):
    """exp(z_sd), inf beyond exp(50) (dimensionless)."""
    return math.exp(z_sd) if z_sd < 50.0 else INF
