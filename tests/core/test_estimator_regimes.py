"""The redesigned estimator: every regime answered, honest arrival, hostile arguments,
restored state, vessel profiles (both runtimes).

Traces are closed-form first-order curves with invented parameters; the
checks are properties the design promises (see the estimator's docstring),
not figures of one scenario. The outside-world comparisons (scipy
least_squares, the Cramer-Rao bound) are in tests/test_estimator_reference.py.
"""
import math
import struct

from support import XorShift

from tinytherm import blob as bl
from tinytherm import status as st
from tinytherm.estimator import (PROFILE_HEATER_MISMATCH, PROFILE_REJECTED,
                                 ThermalEstimator, normal_quantile)
from tinytherm.model import time_to_target_from_slope_s, time_to_target_s
from tinytherm.profile import REASON_CRC, VesselProfile

NAN = float("nan")
INF = float("inf")


def first_order(est, start_c, eq_c, k, seconds, dt=1.0, noise=0.03, seed=3, target=None,
                quantum=0.0625, on_row=None):
    """Feed a quantised noisy first-order curve; predict after each reading.

    ``on_row(t, clean_temp, status, eta)`` sees every row (no list is kept:
    the MicroPython test heap is small); returns the last row as a tuple.
    """
    rng = XorShift(seed)
    out = None
    t = 0.0
    first = True
    while t <= seconds:
        temp = eq_c + (start_c - eq_c) * math.exp(-k * t)
        y = temp + rng.gauss(noise)
        y = math.floor(y / quantum + 0.5) * quantum
        est.update(y, 0.0 if first else dt)
        first = False
        if target is not None:
            est.predict(target)
            if on_row is not None:
                on_row(t, temp, est.status, est.eta_s)
            out = (t, temp, est.status, est.eta_s)
        t += dt
    return out


def test_closed_form_covers_every_rate_sign():
    # k > 0: the exponential approach, log form; k = 0: the line; k < 0: runaway
    assert abs(time_to_target_from_slope_s(10.0, 0.1, 0.0) - 100.0) < 1e-12
    k = 1.0 / 600.0
    # slope 0.1 at 20 C with k = 1/600 means an equilibrium at 80 C
    exact = math.log((80.0 - 20.0) / (80.0 - 30.0)) / k
    assert abs(time_to_target_from_slope_s(10.0, 0.1, k) - exact) < 1e-9 * exact
    assert time_to_target_from_slope_s(70.0, 0.1, k) is None       # beyond the equilibrium
    assert time_to_target_from_slope_s(-1.0, 0.1, k) is None       # behind the travel
    runaway = time_to_target_from_slope_s(10.0, 0.1, -k)
    assert abs(runaway - math.log(1.0 + k * 100.0) / k) < 1e-9 * runaway
    assert runaway < 100.0                                          # sooner than the line
    # near k = 0 the series and the log agree with the line's limit
    small = time_to_target_from_slope_s(10.0, 0.1, 1e-9)
    assert abs(small - 100.0) < 1e-5
    # model.time_to_target_s now answers a negative rate too
    assert time_to_target_s(20.0, 30.0, -1e-3, 10.0) is not None


def test_passive_probe_heating_with_no_ambient_is_never_arrived_early():
    # a pot warming from 20 C towards 95 C, time constant 50 min; plain estimator
    est = ThermalEstimator()
    counts = [0, 0, 0]  # rows after the first minute, shown answers, arrivals

    def row(t, temp, code, eta):
        counts[2] += code == st.ARRIVED
        if t >= 60.0:
            counts[0] += 1
            counts[1] += code == st.TRACKING

    last = first_order(est, 20.0, 95.0, 1.0 / 3000.0, 2400.0, dt=2.0, target=90.0, on_row=row)
    assert counts[2] == 0
    assert counts[1] >= 0.9 * counts[0]
    # the last answer is close to the truth (crossing at 3000 ln(75/5) s)
    truth = 3000.0 * math.log(75.0 / 5.0) - last[0]
    assert abs(last[3] - truth) < 0.15 * truth


def test_long_slow_heat_up_is_answered():
    # a large bath: time constant 3 h, far from its equilibrium: nearly a line
    est = ThermalEstimator(heater=True)
    rng = XorShift(5)
    k = 1.0 / 10800.0
    eq = 20.0 + 0.004 / k
    t = 0.0
    answered = 0
    n = 0
    while t < 3600.0:
        temp = eq + (20.0 - eq) * math.exp(-k * t)
        est.update(temp + rng.gauss(0.02), 0.0 if t == 0.0 else 10.0, None, 1.0)
        est.predict(55.0)
        if t >= 60.0:
            n += 1
            answered += est.status == st.TRACKING
        t += 10.0
    assert answered >= 0.9 * n
    truth = math.log((eq - 20.0) / (eq - 55.0)) / k - (t - 10.0)
    assert abs(est.eta_s - truth) < 0.1 * truth


def test_sparse_sampling_answers_from_the_third_reading():
    for dt in (60.0, 300.0):
        est = ThermalEstimator()
        third = first_order(est, 84.0, 21.0, 1.0 / 2400.0, 2 * dt, dt=dt, target=40.0)
        assert third[2] == st.TRACKING, (dt, third)


def test_arrival_waits_for_the_readings_and_holds():
    est = ThermalEstimator(ambient_c=21.0)
    seen = [None, 0]  # liquid temperature at the first arrival, flips back after it

    def row(t, temp, code, eta):
        if code == st.ARRIVED and seen[0] is None:
            seen[0] = temp
        elif code != st.ARRIVED and seen[0] is not None:
            seen[1] += 1

    first_order(est, 80.0, 21.0, 1.0 / 900.0, 1500.0, target=50.0, noise=0.05, on_row=row)
    assert seen[0] is not None
    # never while the liquid is more than 0.3 C short of the target
    assert seen[0] <= 50.0 + 0.3
    # and no flip back once arrived (the liquid keeps cooling)
    assert seen[1] == 0


def test_target_behind_the_travel_is_arrived_at_once():
    # tea poured at 60 C, target 70 C (drinkable below): it is already there
    est = ThermalEstimator(ambient_c=21.0)
    last = first_order(est, 60.0, 21.0, 1.0 / 900.0, 120.0, target=70.0)
    assert last[2] == st.ARRIVED


def test_out_of_reach_only_when_the_bend_is_certain():
    est = ThermalEstimator(ambient_c=22.0)
    first_order(est, 84.0, 22.0, 1.0 / 900.0, 600.0)
    assert est.predict(15.0) == st.OUT_OF_REACH
    assert est.eta_s is None and abs(est.equilibrium_c - 22.0) < 0.5


def test_update_never_raises_on_hostile_arguments():
    # reproducers: a repeated reading with a duty that is not a number, a huge int
    # dt, a duty of 10**40 (each used to raise before the guard saw the reading)
    for heater in (False, True):
        est = ThermalEstimator(heater=heater)
        est.update(50.0, 0.0)
        for _ in range(20):
            est.update(50.0, 1.0)
        for duty in (None, "0.5", [0.5], 10 ** 40, NAN, -1.0, 2.0, True):
            assert est.update(50.0, 1.0, None, duty) == st.BAD_INPUT
        for dt in (10 ** 400, -10 ** 400, "1", None, NAN, INF, [1.0]):
            code = est.update(50.0, dt)
            assert code in (st.BAD_INPUT, st.TIME_BACKWARDS), (dt, code)
        for amb in ("20", [20.0], NAN, INF, 1e300, 10 ** 400):
            assert est.update(50.0, 1.0, amb) == st.BAD_INPUT
        for temp in (None, "50", [50.0], 10 ** 400, -10 ** 400):
            # (MicroPython converts a huge int to inf: NOT_FINITE there)
            assert est.update(temp, 1.0) in (st.BAD_INPUT, st.OUT_OF_RANGE, st.NOT_FINITE)
        assert est.update(50.0, 1.0) == st.ACCEPTED
        est.predict(40.0)


def test_constructor_names_every_bad_argument():
    cases = (("interval", 1e-9), ("interval", 1.0), ("interval", None), ("ambient_c", "20"),
             ("ambient_c", 1e16), ("ambient_prior_c", INF), ("ambient_prior_c", None),
             ("ambient_prior_sd_c", 0.0), ("ambient_prior_sd_c", 1e200),
             ("quantum_c", 1e155), ("heater", "no"), ("heater", 1), ("probe_codes", "yes"),
             ("spike_window", 4), ("restart_gap_s", NAN), ("restart_gap_s", 10 ** 400),
             ("min_temp_c", NAN), ("max_temp_c", None), ("profile", "not a profile"))
    for name, value in cases:
        kwargs = {name: value}
        try:
            ThermalEstimator(**kwargs)
            raised = None
        except ValueError as exc:
            raised = str(exc)
        assert raised is not None, kwargs
        assert name in raised or (name.endswith("temp_c") and "temp_c" in raised), (name, raised)


def test_interval_is_ordered_at_any_probability():
    # a tiny interval probability: z is exactly 0 at p = 0.5
    assert normal_quantile(0.5) == 0.0
    for p in (0.01, 0.5, 0.8, 0.999):
        est = ThermalEstimator(ambient_c=21.0, interval=p)
        first_order(est, 80.0, 21.0, 1.0 / 900.0, 300.0)
        est.predict(40.0)
        assert est.eta_low_s <= est.eta_s <= est.eta_high_s, p


def test_restore_rejects_sealed_payloads_with_impossible_values():
    est = ThermalEstimator()
    first_order(est, 80.0, 21.0, 1.0 / 900.0, 300.0)
    blob = bytes(est.save())
    rng = XorShift(11)
    fresh = ThermalEstimator()
    restored = 0
    for trial in range(300):
        bad = bytearray(blob)
        # overwrite one random float field with a random 64-bit pattern
        i = rng.next_u32() % 56
        struct.pack_into("<II", bad, bl.PAYLOAD_OFFSET + 16 + 8 * i, rng.next_u32(),
                         rng.next_u32())
        code = fresh.restore(bl.seal(bad))
        if code == bl.RESTORED:
            restored += 1
        # whatever was accepted must keep working, finite, and never raise
        fresh.update(40.0, 1.0)
        fresh.predict(35.0)
        for v in (fresh.eta_s, fresh.temp_est_c, fresh.rate_per_s):
            assert v is None or (v == v and v != INF and v != -INF)
    assert fresh.restore(blob) == bl.RESTORED


def test_profile_sets_the_priors_and_a_wrong_one_is_dropped():
    right = VesselProfile(rate_per_s=1.0 / 1500.0, rate_log_sd=0.1)
    wrong = VesselProfile(rate_per_s=1.0 / 300.0, rate_log_sd=0.1)
    truth_at_60 = 1500.0 * math.log(59.0 / 29.0) - 60.0
    results = {}
    for name, prof in (("none", None), ("right", right), ("blob", right.to_blob()),
                       ("wrong", wrong)):
        est = ThermalEstimator(ambient_c=21.0, profile=prof)
        first_order(est, 80.0, 21.0, 1.0 / 1500.0, 60.0, noise=0.05)
        est.predict(50.0)
        results[name] = est
    # the right profile gives a narrow interval around the truth from the first minute
    r = results["right"]
    assert r.eta_low_s <= truth_at_60 <= r.eta_high_s
    # (about as narrow as the estimator's own on this exact first-order curve, where the
    # estimator's interval is honest and narrow too: 1.29 against 1.25 without a profile)
    assert r.eta_high_s / r.eta_low_s < 1.35
    assert abs(results["blob"].eta_s - r.eta_s) < 1e-5 * r.eta_s  # (float32 in the blob)
    # the wrong one is noticed from the forecast errors within the first minute
    assert results["wrong"].profile_reason == PROFILE_REJECTED
    assert abs(results["wrong"].eta_s - results["none"].eta_s) < 0.05 * truth_at_60
    # a corrupted blob or a heater profile for a passive estimator is not used
    bad = bytearray(right.to_blob())
    bad[5] ^= 1
    assert ThermalEstimator(profile=bytes(bad)).profile_reason == REASON_CRC
    heater_prof = VesselProfile(heater=True, gain_k_per_s=0.01, gain_rel_sd=0.2)
    assert ThermalEstimator(profile=heater_prof).profile_reason == PROFILE_HEATER_MISMATCH


def test_profile_state_survives_a_restore():
    prof = VesselProfile(rate_per_s=1.0 / 1500.0, rate_log_sd=0.1)
    est = ThermalEstimator(ambient_c=21.0, profile=prof)
    first_order(est, 80.0, 21.0, 1.0 / 1500.0, 200.0)
    blob = est.save()
    other = ThermalEstimator(ambient_c=21.0, profile=prof)
    assert other.restore(blob) == bl.RESTORED
    est.predict(50.0)
    other.predict(50.0)
    assert other.eta_s == est.eta_s and other.status == est.status
    # a blob of a profile-less estimator does not restore into one with a profile
    plain = ThermalEstimator(ambient_c=21.0)
    assert plain.restore(blob) == bl.BLOB_SETTINGS


def test_a_warming_probe_never_arrives_early_with_or_without_approach():
    # the probe of a mug starts at room temperature and warms to the drink
    # (time constant 40 s) while the drink cools (time constant 25 min): a
    # cooling target of 55 C is crossed on the way up. With approach=-1, and by
    # default (a rise in a young fit is no arrival), 'arrived' comes only once
    # the drink itself has cooled to the target.
    for approach in (0, -1):
        est = ThermalEstimator()
        rng = XorShift(21)
        early = 0
        t = 0.0
        probe = 21.0
        arrived_at = None
        while t < 1500.0:
            drink = 21.0 + 64.0 * math.exp(-t / 1500.0)
            probe += (drink - probe) * (1.0 - math.exp(-2.0 / 40.0)) if t > 0.0 else 0.0
            est.update(probe + rng.gauss(0.03), 0.0 if t == 0.0 else 2.0)
            code = est.predict(55.0, approach)
            if code == st.ARRIVED:
                if drink > 55.0 + 0.3:
                    early += 1
                elif arrived_at is None:
                    arrived_at = t
            t += 2.0
        assert early == 0 and arrived_at is not None, (approach, early, arrived_at)


def test_kettle_with_heater_arrives_once_and_holds():
    # a kettle at full power (invented: 1.2 L, k = 1/3000 1/s, 0.25 K/s) fitted
    # with its heater duty: arrives at 75 C and stays arrived up to 95 C
    est = ThermalEstimator(heater=True)
    rng = XorShift(31)
    k = 1.0 / 3000.0
    eq = 20.0 + 0.25 / k
    t = 0.0
    state = [None, 0]  # liquid temperature at the first arrival, flips back after it
    while True:
        temp = eq + (20.0 - eq) * math.exp(-k * t)
        if temp > 95.0:
            break
        est.update(temp + rng.gauss(0.03), 0.0 if t == 0.0 else 1.0, None, 1.0)
        code = est.predict(75.0, 1)
        if code == st.ARRIVED and state[0] is None:
            state[0] = temp
        elif code != st.ARRIVED and state[0] is not None:
            state[1] += 1
        t += 1.0
    assert state[0] is not None and 74.7 <= state[0] <= 75.5, state
    assert state[1] == 0
