"""The equilibrium's drift (tinytherm.answer, tinytherm.num.time_to_target_drift_s) against
outside references (CPython only).

References: scipy.integrate.solve_ivp (DOP853, rtol = atol = 1e-10) integrates
the law with a drifting equilibrium, ``dT/dt = -k (T - E0 - b t)``, and
scipy.optimize.brentq finds the true crossing of the target on its dense
output. The scenario (an equilibrium cooling at 0.5 mC/s while a liquid
approaches it: a chiller's tub and its contents cooling together) is invented.
"""
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from tinytherm import answer
from tinytherm import status as st
from tinytherm.num import time_to_target_drift_s
from tinytherm.estimator import ThermalEstimator


def drifting_law(k, e0, b, t0_c, horizon_s):
    """Dense solution of dT/dt = -k (T - e0 - b t), T(0) = t0_c (scipy solve_ivp)."""
    sol = solve_ivp(lambda t, y: [-k * (y[0] - e0 - b * t)], (0.0, horizon_s), [t0_c],
                    method="DOP853", rtol=1e-10, atol=1e-10, dense_output=True)
    return lambda t: sol.sol(t)[0]


def first_crossing(temp, target_c, horizon_s, step_s=1.0):
    """The first time the solution reaches ``target_c`` (brentq in the first bracket), or None."""
    ts = np.arange(0.0, horizon_s, step_s)
    side = np.sign(temp(ts) - target_c)
    change = np.nonzero(side != side[0])[0]
    if not len(change):
        return None
    i = change[0]
    return brentq(lambda t: float(temp(t)) - target_c, ts[i - 1], ts[i], xtol=1e-9, rtol=1e-12)


@pytest.mark.parametrize("gap, k, e_off, b", [
    (-10.0, 1.0 / 600.0, -20.0, 0.0),        # a fixed equilibrium: the closed form
    (-10.0, 1.0 / 600.0, -12.0, 5e-4),       # cooling, the equilibrium warming (concave)
    (-10.0, 1.0 / 600.0, -9.0, -1e-3),       # the target past E, reached as E cools on
    (-3.0, 1.0 / 300.0, -1.0, -0.05),        # E falling faster than the liquid (convex)
    (8.0, 1.0 / 900.0, 20.0, -2e-3),         # heating towards an equilibrium that cools
    (8.0, 1.0 / 900.0, 6.0, 5e-3),           # heating, the target reached as E rises
])
def test_time_matches_solve_ivp_and_brentq(gap, k, e_off, b):
    level = 50.0
    temp = drifting_law(k, level + e_off, b, level, 40000.0)
    truth = first_crossing(temp, level + gap, 40000.0)
    slope = k * e_off  # dT/dt at t = 0
    got = time_to_target_drift_s(gap, slope, k, b)
    assert truth is not None
    assert got == pytest.approx(truth, rel=1e-7, abs=1e-6)


@pytest.mark.parametrize("gap, k, e_off, b", [
    (-10.0, 1.0 / 600.0, -12.0, 5e-3),      # the equilibrium warms away before the target
    (-10.0, 1.0 / 600.0, -9.0, 1e-4),       # the target past E, E moving away
    (8.0, 1.0 / 900.0, 6.0, -1e-3),
])
def test_never_reached_is_none(gap, k, e_off, b):
    level = 50.0
    temp = drifting_law(k, level + e_off, b, level, 40000.0)
    assert first_crossing(temp, level + gap, 40000.0) is None
    assert time_to_target_drift_s(gap, k * e_off, k, b) is None


def test_bad_input_is_none():
    assert time_to_target_drift_s(-1.0, -0.01, 0.0, 1e-3) is None       # no rate: no E
    assert time_to_target_drift_s(-1.0, 0.01, 1e-3, 1e-3) is None       # moving away
    assert time_to_target_drift_s(-1.0, -0.01, 1e-3, math.nan) is None
    assert time_to_target_drift_s(0.0, -0.01, 1e-3, 1e-3) == 0.0


K = 1.0 / 600.0
E0 = 12.0
B = -5e-4          # deg C/s: the equilibrium cooling on
START = 90.0
TARGET = 11.0      # below where a fixed-equilibrium fit levels off
DT = 2.0


def answers_at(est, probe, target_c, asks, row):
    """Feed ``est`` the probe ``probe(t)`` (deg C, t in s) read every ``DT`` s in 1/16 C
    steps; at each of ``asks`` (s) ask for ``target_c`` (deg C) and keep ``row(t, code,
    est)``, ``t`` the latest reading's time (s)."""
    readings = np.round(probe(np.arange(0.0, asks[-1] + DT, DT)) * 16.0) / 16.0
    out = []
    i = 0
    for ask in asks:
        while i * DT <= ask:
            est.update(float(readings[i]), 0.0 if i == 0 else DT)
            i += 1
        out.append(row((i - 1) * DT, est.predict(target_c), est))
    return out


def replay(asks):
    """The estimator fed the drifting law (1/16 C steps, every 2 s); its answers at ``asks``."""
    temp = drifting_law(K, E0, B, START, 8000.0)
    out = answers_at(ThermalEstimator(), temp, TARGET, asks,
                     lambda t, code, est: (t, code, est.eta_s, est.eta_low_s, est.eta_high_s))
    return out, first_crossing(temp, TARGET, 8000.0)


def bounded_covering_errors(asks):
    """Sorted relative errors of the answers at ``asks`` (s), each checked to be tracking
    with a bounded interval that holds the reference's remaining time."""
    answers, crossing = replay(asks)
    assert crossing is not None
    errors = []
    for t, code, eta, low, high in answers:
        rem = crossing - t
        assert code == st.TRACKING, (t, code)
        assert low <= rem <= high < math.inf, (t, low, eta, high, rem)
        errors.append(abs(eta - rem) / rem)
    return sorted(errors)


def test_drifting_equilibrium_covers_the_crossing():
    # with a fixed equilibrium the fit levels off short of the target (11.0-11.4 C
    # here): open-ended or very wide times off by 36-160 %, and from 2600 s intervals
    # that miss; from 2000 s the drift bounds every interval, each covers the true
    # crossing, and the times are off by 16-35 %
    errors = bounded_covering_errors([float(t) for t in range(2000, 2701, 100)])
    assert errors[len(errors) // 2] <= 0.3, errors


def test_drift_from_a_fit_bent_through_one_time_constant():
    # the longest audit's forecast started once the fit had bent through DRIFT_BEND = 1
    # time constant (600 s here): from 1320 s every interval is bounded and covers the
    # true crossing, the times off by 14 % (median). With DRIFT_BEND 2
    # every one of these was open-ended or missed: the drift was measured from 2000 s
    errors = bounded_covering_errors([float(t) for t in range(1320, 1781, 20)])
    assert errors[len(errors) // 2] <= 0.2, errors


def test_no_drift_is_the_fixed_law():
    # DRIFT_BEND beyond any fit (a knob of benchmarks/estimator_knobs.py): the answer of
    # a fixed equilibrium, open-ended at 2000 s here and missing the crossing at 2600 s
    # (the check above fails with it)
    saved = answer.DRIFT_BEND
    try:
        answer.DRIFT_BEND = 1e9
        answers, crossing = replay((2000.0, 2600.0))
    finally:
        answer.DRIFT_BEND = saved
    assert answers[0][4] == math.inf
    t, _, _, low, high = answers[1]
    assert not low <= crossing - t <= high


# Before the drift can be measured. References: scipy.integrate.solve_ivp (DOP853,
# rtol = atol = 1e-10) integrates an invented wort chiller, the wort losing heat as
# dT/dt = -c (T - T_in(t))^(5/4) (free convection on the coil: h ~ dT^(1/4), laminar
# Nu ~ Ra^(1/4), from memory) to an inlet warming as T_in = 12 + 5 (1 - exp(-t / 1000 s)),
# read by a probe lagging 40 s; scipy.optimize.brentq finds the wort's true crossing.
CHILL_C = 7e-4     # 1/(s K^(1/4))
CHILL_TARGET = 19.0


def chiller_probe_and_crossing(horizon_s=20000.0):
    def rhs(t, y):
        d = y[0] - (12.0 + 5.0 * (1.0 - math.exp(-t / 1000.0)))
        return [-CHILL_C * math.copysign(abs(d) ** 1.25, d), (y[0] - y[1]) / 40.0]
    sol = solve_ivp(rhs, (0.0, horizon_s), [90.0, 90.0], method="DOP853", rtol=1e-10,
                    atol=1e-10, dense_output=True)
    crossing = first_crossing(lambda t: sol.sol(t)[0], CHILL_TARGET, horizon_s)
    return (lambda t: sol.sol(t)[1]), crossing


def chiller_answers(asks):
    """(time s, status, eta_low_s, eta_high_s) at ``asks``: the probe read every 2 s, 1/16 C steps."""
    probe, crossing = chiller_probe_and_crossing()
    out = answers_at(ThermalEstimator(), probe, CHILL_TARGET, asks,
                     lambda t, code, est: (t, code, est.eta_low_s, est.eta_high_s))
    return out, crossing


CHILL_ASKS = (260.0, 280.0, 300.0, 320.0)  # fits bent through 0.3-1 time constants


def test_young_fit_upper_end_covers_the_crossing():
    # the fit's law answers 650-960 s; the wort takes 2030-2090 s (the inlet warms and the
    # coil's coefficient falls with the difference). Without the unseen bend's upper end
    # (answer.UNSEEN_BEND) every interval here ended at 980-1770 s, short of the crossing
    answers, crossing = chiller_answers(CHILL_ASKS)
    assert crossing is not None
    for t, code, low, high in answers:
        rem = crossing - t
        assert code == st.TRACKING, (t, code)
        assert low <= rem <= high, (t, low, high, rem)


def test_young_fit_without_the_unseen_bend_misses():
    saved = answer.UNSEEN_BEND
    try:
        answer.UNSEEN_BEND = 0.0  # (0: the upper end from the audits and the model term only)
        answers, crossing = chiller_answers(CHILL_ASKS)
    finally:
        answer.UNSEEN_BEND = saved
    for t, code, low, high in answers:
        assert code == st.TRACKING and high < crossing - t, (t, code, high, crossing - t)


# A fit not bent yet (k x age under UNSEEN_FROM), the ambient hint in it (the liquid over
# 2 of its sd from it) and its equilibrium beyond the hint all the same: the upper end is
# the time under the law levelling off at the hint (answer._work_out). The readings' first
# minutes are the lagging probe's start (its slope still building), so the fit runs as a
# straight line. References: scipy.integrate.solve_ivp (DOP853, rtol = atol = 1e-10) and
# scipy.optimize.brentq, as above; the liquids and their numbers are invented.
HINT_ASKS = tuple(float(t) for t in range(80, 241, 20))  # fits bent through under 0.3


def hint_answers(rhs, y0, target_c, asks, ambient_prior_c=21.0):
    """(time s, status, eta_low_s, eta_high_s, k x age) at ``asks`` and the true crossing:
    the probe (the last state) read every 2 s in 1/16 C steps."""
    sol = solve_ivp(rhs, (0.0, 20000.0), y0, method="DOP853", rtol=1e-10, atol=1e-10,
                    dense_output=True)
    crossing = first_crossing(lambda t: sol.sol(t)[0], target_c, 20000.0)
    out = answers_at(ThermalEstimator(ambient_prior_c=ambient_prior_c),
                     lambda t: sol.sol(t)[-1], target_c, asks,
                     lambda t, code, est: (t, code, est.eta_low_s, est.eta_high_s,
                                           est.reg.k * est.audits.age_ms * 0.001))
    return out, crossing


def test_unbent_fit_past_the_hint_covers_a_warming_coolant():
    # the coil above (inlet warming 12 -> 17 C, free convection on the coil, probe lag
    # 40 s), its 19 C target beyond the hint's 21 C equilibrium: open-ended. Before, every
    # interval here ended at 770-1560 s with the crossing 2110-2270 s away
    answers, crossing = chiller_answers(HINT_ASKS)
    for t, code, low, high in answers:
        assert code == st.TRACKING, (t, code)
        assert low <= crossing - t <= high == math.inf, (t, low, high, crossing - t)


def test_unbent_fit_past_the_hint_bounds_a_fixed_coolant():
    # a coil in a 5 C coolant, dT/dt = -c (T - 5)^(5/4) (free convection on the coil, as
    # above), read by a probe lagging 40 s; target 30 C, crossing at 748 s. The upper end
    # is the time under the law levelling off at 21 C: finite, and it covers. Before, the
    # intervals at 220 and 240 s ended at 475 and 490 s, 528 and 508 s before the crossing
    def rhs(t, y):
        d = y[0] - 5.0
        return [-6.3e-4 * math.copysign(abs(d) ** 1.25, d), (y[0] - y[1]) / 40.0]
    answers, crossing = hint_answers(rhs, [90.0, 90.0], 30.0, (200.0, 220.0, 240.0, 260.0))
    for t, code, low, high, bent in answers:
        assert code == st.TRACKING and bent < answer.UNSEEN_FROM, (t, code, bent)
        assert low <= crossing - t <= high < math.inf, (t, low, high, crossing - t)


def test_fit_short_of_the_hint_keeps_its_interval():
    # Newton cooling towards 20 C (between the liquid and the hint: the rule does not
    # apply), time constant 900 s, probe lag 10 s, target 45 C: finite intervals that cover
    def rhs(t, y):
        return [-(y[0] - 20.0) / 900.0, (y[0] - y[1]) / 10.0]
    answers, crossing = hint_answers(rhs, [85.0, 85.0], 45.0, HINT_ASKS)
    for t, code, low, high, bent in answers:
        assert code == st.TRACKING and bent < answer.UNSEEN_FROM, (t, code, bent)
        assert low <= crossing - t <= high < math.inf, (t, low, high, crossing - t)


# A wort and the tub of water its coil recirculates through: they meet within minutes at
# about 35 C, then both cool together towards an 18 C room through the tub's walls (the
# slow mode, about 0.5 mC/s). The fit bent through many time constants rests on its
# equilibrium, its slope turned back against the falling readings; the target below the
# meeting point is reached only as that equilibrium cools on (invented: 20 kg of wort,
# 40 kg of water, 150 W/K through the coil, 5 and 3 W/K to the room, probe lag 20 s).
TUB_CW, TUB_CR, TUB_H, TUB_L, TUB_LW, TUB_ROOM = 84000.0, 168000.0, 150.0, 5.0, 3.0, 18.0


def tub_answers(target_c, every_s):
    """(asked, shown, covered) of a reading every ``every_s`` s from 1500 s to the wort's
    crossing of ``target_c`` (scipy solve_ivp of the two tanks and the probe; brentq)."""
    def rhs(_t, y):
        w, r, p = y
        return [(-TUB_H * (w - r) - TUB_LW * (w - TUB_ROOM)) / TUB_CW,
                (TUB_H * (w - r) - TUB_L * (r - TUB_ROOM)) / TUB_CR, (w - p) / 20.0]
    sol = solve_ivp(rhs, (0.0, 20000.0), [95.0, 5.0, 95.0], method="DOP853", rtol=1e-10,
                    atol=1e-10, dense_output=True)
    crossing = brentq(lambda t: sol.sol(t)[0] - target_c, 500.0, 20000.0)
    t = np.arange(0.0, crossing, every_s)
    rng = np.random.default_rng(5)
    temp = np.round((sol.sol(t)[2] + rng.normal(0.0, 0.05, len(t))) / 0.0625) * 0.0625
    est = ThermalEstimator()
    asked = shown = covered = 0
    for i in range(len(t)):
        est.update(float(temp[i]), 0.0 if i == 0 else every_s)
        est.predict(target_c)
        if t[i] > 1500.0:
            asked += 1
            if est.status == st.TRACKING:
                shown += 1
                covered += est.eta_low_s <= crossing - t[i] <= est.eta_high_s
    return asked, shown, covered


@pytest.mark.parametrize("target_c, every_s, least, cover", [
    # crossing at 3818 s; before: 94 of 231 asks answered. 191 with the turned fit's rule,
    # 187 covered; 215 and 199 with the drift kept beyond E (test_kept_drift_... below): 24
    # asks after the longest audit began again at 1550 s answer at its span's drift then
    # (-0.16 mC/s, E falling 0.4 mC/s by 1680 s), as the measured drift's answers before
    # them did (1510-1540 s: missed long too)
    (33.0, 10.0, 0.8, 0.9),
    (32.0, 10.0, 0.65, 0.95),   # 5987 s; before: 92 of 448
    (32.0, 120.0, 0.5, 0.95),   # before: 6 of 37
])
def test_turned_fit_answers_at_its_drift(target_c, every_s, least, cover):
    asked, shown, covered = tub_answers(target_c, every_s)
    assert shown >= least * asked, (shown, asked)
    assert covered >= cover * shown, (covered, shown)


# The longest audit starts again at every check (each half of the fit's age); until its
# new span is DRIFT_MIN_S long it measures no drift. A target beyond the fitted
# equilibrium was out of reach there, though the drift its last whole span measured
# carried E on past it: the coil above (answer._work_out, Audit.drift), its 19 C target
# beyond the fitted E (21.5-19.8 C here) but reached at 2349 s (solve_ivp, brentq).
KEPT_ASKS = tuple(float(t) for t in range(800, 881, 20)) + tuple(
    float(t) for t in range(1200, 1301, 20))


def test_kept_drift_answers_beyond_the_equilibrium():
    # before, each of these eleven asks was out_of_reach, between answers at the measured
    # drift at 760 and 920 s, 1160 and 1320 s; now each is tracking with an interval that
    # holds the crossing. (The drift kept answers them with a bounded interval alone; with
    # the reach counting the rate's model error on a misfit, test_reach_reference, the
    # slack answers them first, open-ended above: either way not out of reach.)
    answers, crossing = chiller_answers(KEPT_ASKS)
    for t, code, low, high in answers:
        assert code == st.TRACKING, (t, code)
        assert low <= crossing - t <= high, (t, low, high, crossing - t)


def test_kept_drift_survives_save_and_restore():
    # the kept drift is saved (a passive fit: after the settle byte): an estimator restored
    # from the blob at each ask gives the same answer to the last bit
    probe, _ = chiller_probe_and_crossing()
    readings = np.round(probe(np.arange(0.0, 1301.0, DT)) * 16.0) / 16.0
    est = ThermalEstimator()
    for i, temp in enumerate(readings):
        est.update(float(temp), 0.0 if i == 0 else DT)
        if i * DT in KEPT_ASKS:
            copy = ThermalEstimator()
            assert copy.restore(bytes(est.save())) == 0
            assert copy.audits.a[2].drift == est.audits.a[2].drift != 0.0
            assert copy.predict(CHILL_TARGET) == est.predict(CHILL_TARGET) == st.TRACKING
            assert (copy.eta_s, copy.eta_low_s, copy.eta_high_s) == (
                est.eta_s, est.eta_low_s, est.eta_high_s)
