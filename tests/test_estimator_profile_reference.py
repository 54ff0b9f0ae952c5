"""The profile's answer laws against scipy (CPython only).

- ``VesselProfile.law_s``: the time under ``dT/dt = -a' |T - E|^n sign(T - E)``
  with ``a'`` the typical ``a`` scaled by this liquid's rate, against the
  crossing found by scipy's ``solve_ivp`` (an event on the target) for the
  typical law (an infinite slope variance), the data's scale (zero) and
  the precision-weighted scale between them.
- The precision-weighted scale itself: the posterior mean of a normal prior
  ``ln r ~ N(0, rate_log_sd^2)`` and a normal measurement ``ln r_hat`` with
  variance ``slope_rel_var`` (the normal-normal conjugate update; from
  memory, e.g. Gelman et al., Bayesian Data Analysis, ch. 2).
- The heated closed form of tests/core/test_estimator_profile.py (an
  exponential towards ``E + g u / k``) against ``solve_ivp`` and ``brentq``.
"""
import math

import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from tinytherm.profile import DIFF_REF_C, VesselProfile

PROF = VesselProfile(rate_per_s=1.0 / 1400.0, rate_log_sd=0.12, eq_offset_c=-4.0,
                     rate_exponent=1.6)
ROOM_C = 21.0


def crossing_s(a, n, e, start, target):
    """solve_ivp (DOP853, tight tolerances) of the passive power law to the target."""
    def rhs(t, y):
        d = y[0] - e
        return [-a * math.copysign(abs(d) ** n, d)]

    def hit(t, y):
        return y[0] - target
    hit.terminal = True
    sol = solve_ivp(rhs, (0.0, 1e6), [start], method="DOP853", rtol=1e-11, atol=1e-11,
                    events=hit)
    return float(sol.t_events[0][0])


@pytest.mark.parametrize("level,target", [(80.0, 50.0), (60.0, 35.0), (40.0, 30.0)])
@pytest.mark.parametrize("speed", [0.5, 1.0, 2.5])
def test_law_s_against_solve_ivp(level, target, speed):
    n = PROF.rate_exponent
    a = PROF.rate_per_s / DIFF_REF_C ** (n - 1.0)
    e = ROOM_C + PROF.eq_offset_c
    slope = -speed * a * (level - e) ** n          # this liquid's rate: speed x the typical
    typical = crossing_s(a, n, e, level, target)
    data = crossing_s(speed * a, n, e, level, target)
    gap = target - level
    assert PROF.law_s(gap, level, slope, ROOM_C, math.inf) == pytest.approx(typical, rel=1e-8)
    assert PROF.law_s(gap, level, 0.0, ROOM_C) == pytest.approx(typical, rel=1e-8)
    assert PROF.law_s(gap, level, slope, ROOM_C) == pytest.approx(data, rel=1e-8)
    # between them: the posterior mean of ln(rate ratio), prior N(0, sd^2), measurement var v
    v = 0.02
    w_prior = 1.0 / PROF.rate_log_sd ** 2
    w_data = 1.0 / v
    ln_r = (0.0 * w_prior + math.log(speed) * w_data) / (w_prior + w_data)
    shrunk = crossing_s(math.exp(ln_r) * a, n, e, level, target)
    assert PROF.law_s(gap, level, slope, ROOM_C, v) == pytest.approx(shrunk, rel=1e-8)


def test_law_s_has_no_time_away_from_its_equilibrium():
    # moving away from E, or a target beyond it: no time
    assert PROF.law_s(-10.0, 60.0, +0.05, ROOM_C) is None
    assert PROF.law_s(-50.0, 60.0, -0.05, ROOM_C) is None


def test_rate_z_is_the_log_rate_ratio_in_sds():
    n = PROF.rate_exponent
    a = PROF.rate_per_s / DIFF_REF_C ** (n - 1.0)
    e = ROOM_C + PROF.eq_offset_c
    slope = -3.0 * a * (70.0 - e) ** n
    z = PROF.rate_z(70.0, slope, ROOM_C, 0.01)
    assert z == pytest.approx(math.log(3.0) / math.sqrt(0.12 ** 2 + 0.01), rel=1e-9)
    assert PROF.rate_z(70.0, -slope, ROOM_C, 0.01) is None


def test_heated_closed_form_against_solve_ivp():
    k, g, u, start, target = 1.0 / 12000.0, 0.05, 0.8, 15.0, 45.0
    top = ROOM_C + g * u / k
    closed = math.log((top - start) / (top - target)) / k
    sol = solve_ivp(lambda t, y: [-k * (y[0] - ROOM_C) + g * u], (0.0, 5000.0), [start],
                    method="DOP853", rtol=1e-11, atol=1e-11, dense_output=True)
    ref = brentq(lambda t: sol.sol(t)[0] - target, 1.0, 5000.0, xtol=1e-10)
    assert closed == pytest.approx(ref, rel=1e-8)


def test_priors_with_heat_level_off_beyond_the_ambient():
    # the tangent law with heat dT/dt = -k (T - E) + g u levels off g u / k beyond E
    prof = VesselProfile(heater=True, rate_per_s=1.0 / 12000.0, rate_log_sd=0.2,
                         gain_k_per_s=0.05, gain_rel_sd=0.15)
    dist0, sd0, kp, _, _, _ = prof.priors(-5.0, 1e-3)
    dist, sd, kp2, _, _, _ = prof.priors(-5.0, 1e-3, 0.8)
    assert kp2 == kp
    assert dist - dist0 == pytest.approx(0.05 * 0.8 / kp, rel=1e-12)
    assert sd > sd0
