"""The online estimator on clean and noisy first-order traces (both runtimes).

Synthetic traces here are made from the closed form (invented parameters);
the outside-world checks (scipy least_squares, the Cramer-Rao bound) are in
tests/test_estimator_reference.py.
"""
import math

from support import XorShift, close, round_instance_floats, to_float30, to_float32
from tinytherm import status as st
from tinytherm.estimator import ThermalEstimator, normal_quantile


def cooling_trace(est, seconds, dt=2.0, k=1.0 / 900.0, ambient=22.0, start=85.0, noise=0.0,
                  seed=1, measured_ambient=False, rounder=None, jitter=0.0):
    """Feed est a cooling curve; returns the elapsed time in seconds."""
    rng = XorShift(seed)
    t = 0.0
    first = True
    while t <= seconds:
        temp = ambient + (start - ambient) * math.exp(-k * t)
        if noise:
            temp += rng.gauss(noise)
        est.update(temp, 0.0 if first else step, ambient if measured_ambient else None)
        if rounder is not None:
            round_instance_floats(est, rounder)
        first = False
        step = dt * (1.0 + jitter * (rng.uniform() - 0.5)) if jitter else dt
        t += step
    return t - step


def test_normal_quantile_matches_table():
    # Standard normal table values (any statistics handbook): z(0.9) = 1.2816,
    # z(0.95) = 1.6449, z(0.975) = 1.9600.
    assert abs(normal_quantile(0.9) - 1.2816) < 5e-4
    assert abs(normal_quantile(0.95) - 1.6449) < 5e-4
    assert abs(normal_quantile(0.975) - 1.9600) < 5e-4
    assert abs(normal_quantile(0.1) + 1.2816) < 5e-4


def test_known_ambient_recovers_rate_and_eta():
    est = ThermalEstimator(ambient_c=22.0)
    t = cooling_trace(est, 300.0)
    est.predict(50.0)
    assert est.status == st.TRACKING
    assert close(est.rate_per_s, 1.0 / 900.0, 0.005)
    temp_now = 22.0 + 63.0 * math.exp(-t / 900.0)
    truth = 900.0 * math.log((temp_now - 22.0) / (50.0 - 22.0))
    assert abs(est.eta_s - truth) < 0.01 * truth
    assert est.eta_low_s <= est.eta_s <= est.eta_high_s


def test_unknown_ambient_recovered():
    est = ThermalEstimator(ambient_prior_c=20.0)
    cooling_trace(est, 900.0, noise=0.03, seed=4)
    est.predict(40.0)
    assert abs(est.ambient_est_c - 22.0) < 1.0
    assert close(est.rate_per_s, 1.0 / 900.0, 0.05)
    assert est.status in (st.TRACKING, st.SETTLING)


def test_measured_ambient_and_irregular_steps():
    est = ThermalEstimator()
    cooling_trace(est, 400.0, dt=3.0, jitter=0.8, measured_ambient=True, seed=9)
    est.predict(50.0)
    assert close(est.rate_per_s, 1.0 / 900.0, 0.01)
    assert est.ambient_est_c == 22.0


def test_heater_gain_estimated():
    # dT/dt = -k (T - R) + g u with u switching: invented bath, k = 1/3000 1/s,
    # g = 0.02 K/s. Exact solution per constant-duty interval.
    k = 1.0 / 3000.0
    g = 0.02
    est = ThermalEstimator(ambient_c=20.0, heater=True)
    temp = 20.0
    first = True
    for i in range(900):
        duty = 1.0 if (i // 60) % 2 == 0 else 0.3
        if not first:
            eq = 20.0 + g * duty / k
            temp = eq + (temp - eq) * math.exp(-k * 2.0)
        est.update(temp, 0.0 if first else 2.0, None, duty)
        first = False
    est.predict(60.0)
    assert close(est.rate_per_s, k, 0.05)
    assert close(est.gain_k_per_s, g, 0.02)


def test_ticks_wrap_gives_same_answer_as_dt():
    a = ThermalEstimator(ambient_c=22.0)
    b = ThermalEstimator(ambient_c=22.0)
    ticks = (1 << 30) - 50000  # wraps 25 readings in
    for i in range(200):
        temp = 22.0 + 60.0 * math.exp(-i * 2.0 / 900.0)
        a.update(temp, 0.0 if i == 0 else 2.0)
        b.update_ticks(temp, ticks)
        ticks = (ticks + 2000) & 0x3FFFFFFF
    a.predict(45.0)
    b.predict(45.0)
    assert close(a.eta_s, b.eta_s, 1e-9)


def test_predict_never_raises_in_any_state():
    est = ThermalEstimator()
    for target in (50.0, float("nan"), float("inf"), -1e300):
        assert est.predict(target) == st.GATHERING
    est.update(60.0, 0.0)
    assert est.predict(50.0) == st.GATHERING
    # flat readings: no information, no crash
    for _ in range(100):
        est.update(60.0, 1.0)
    code = est.predict(50.0)
    assert code in (st.SETTLING, st.OUT_OF_REACH, st.GATHERING, st.TRACKING)
    assert est.eta_s is None or est.eta_s >= 0.0


def test_arrived_and_out_of_reach():
    est = ThermalEstimator(ambient_c=22.0)
    cooling_trace(est, 300.0)
    assert est.predict(90.0) == st.ARRIVED  # already cooler than 90 C
    assert est.eta_s == 0.0
    assert est.predict(15.0) == st.OUT_OF_REACH  # below the room: never
    assert est.eta_s is None
    assert abs(est.equilibrium_c - 22.0) < 0.05  # free equilibrium, the known ambient a hint


def test_bad_readings_rejected_and_counted():
    est = ThermalEstimator(ambient_c=22.0)
    assert est.update(float("nan"), 0.0) == st.NOT_FINITE
    assert est.update(500.0, 0.0) == st.OUT_OF_RANGE
    assert est.update(60.0, 0.0) == st.ACCEPTED
    assert est.update(59.9, -1.0) == st.TIME_BACKWARDS
    assert est.update(59.9, 0.0) == st.DUPLICATE_TIME
    assert est.update(59.9, 1.0, None, 2.0) == st.BAD_INPUT
    assert est.rejected == 5
    assert est.readings == 1


def test_constructor_rejects_bad_settings():
    for kwargs in ({"restart_gap_s": 0.0}, {"quantum_c": -1.0}, {"interval": 1.0},
                   {"ambient_prior_c": math.nan}, {"min_temp_c": 10.0, "max_temp_c": 0.0}):
        try:
            ThermalEstimator(**kwargs)
            raised = False
        except ValueError:
            raised = True
        assert raised, kwargs


def precision_run(rounder, updates):
    """Heat, cool into a long hold at equilibrium, heat again; returns (k, eta, est)."""
    est = ThermalEstimator(ambient_c=21.0, heater=True)
    k = 1.0 / 1500.0
    g = 0.03
    temp = 21.0
    rng = XorShift(77)
    for i in range(updates):
        # heat for 20 min, cool (the tail of the cooling is a long hold at the
        # room temperature), and heat again for the last 20 min
        duty = 1.0 if i < 600 or i >= updates - 600 else 0.0
        eq = 21.0 + g * duty / k
        temp = eq + (temp - eq) * math.exp(-k * 2.0)
        est.update(temp + rng.gauss(0.02), 0.0 if i == 0 else 2.0, None, duty)
        if rounder is not None:
            round_instance_floats(est, rounder)
    est.predict(0.5 * (temp + 21.0 + g / k))  # halfway to the equilibrium
    return est.rate_per_s, est.eta_s, est


def check_precision(updates):
    k64, eta64, _ = precision_run(None, updates)
    for rounder in (to_float32, to_float30):
        k, eta, est = precision_run(rounder, updates)
        assert close(k, k64, 0.01), (k, k64)
        assert close(eta, eta64, 0.01), (eta, eta64)
        # positive definiteness of the information the fit holds on (s, k)
        # (the duty is constant since the heater came on: no information on g)
        assert est.reg.ctt > 0.0 and est.reg.cxx > 0.0
        assert est.reg.ctt * est.reg.cxx - est.reg.ctx * est.reg.ctx > 0.0


def test_float32_and_float30_agree_with_float64():
    check_precision(6000)
