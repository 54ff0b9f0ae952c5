"""Bugs found by trying the estimator as users and attackers would; one test each (both runtimes).

Each test failed on the estimator before the micro-core rewrite (main at
8c38707); the reproducers are invented traces.
"""
import math

from support import XorShift

from tinytherm import blob as bl
from tinytherm import status as st
from tinytherm.estimator import ThermalEstimator
from tinytherm.profile import VesselProfile


def cooling(est, readings, dt=2.0, start=80.0, room=21.0, tau=900.0, seed=3, t0=0.0,
            target=None, first=True):
    """Feed a noisy, quantised cooling curve; returns the time of the last reading, s."""
    rng = XorShift(seed)
    t = t0
    for i in range(readings):
        y = room + (start - room) * math.exp(-t / tau) + rng.gauss(0.03)
        y = math.floor(y * 16.0 + 0.5) / 16.0
        est.update(y, 0.0 if (first and i == 0) else dt)
        if target is not None:
            est.predict(target)
        t += dt
    return t - dt


def test_a_reading_1e_268_s_after_the_last_keeps_the_state_restorable():
    # was: accepted, and then restore(save()) returned blob_values
    est = ThermalEstimator()
    cooling(est, 200)
    est.update(55.0, 1e-268)
    blob = bytes(est.save())
    other = ThermalEstimator()
    assert other.restore(blob) == bl.RESTORED
    assert other.save() == est.save()


def test_ticks_resume_after_restore_loses_no_reading():
    # was: the first update_ticks after restore() was rejected (no tick reference)
    # and the answers then differed from an uninterrupted run
    steady = ThermalEstimator(ambient_c=21.0)
    woken = ThermalEstimator(ambient_c=21.0)
    ticks = 5000
    for i in range(300):
        y = 21.0 + 59.0 * math.exp(-i * 2.0 / 900.0)
        steady.update_ticks(y, ticks)
        woken.update_ticks(y, ticks)
        ticks += 2000
    blob = bytes(woken.save())
    woken = ThermalEstimator(ambient_c=21.0)
    assert woken.restore(blob) == bl.RESTORED
    # the tick counter restarted at 0 after the deep sleep of 2 s
    fresh_ticks = 100
    for i in range(300, 400):
        y = 21.0 + 59.0 * math.exp(-i * 2.0 / 900.0)
        assert steady.update_ticks(y, ticks) == st.ACCEPTED
        code = woken.update_ticks(y, fresh_ticks, None, 0.0, 2.0 if i == 300 else None)
        assert code == st.ACCEPTED, (i, code)
        ticks += 2000
        fresh_ticks += 2000
    assert woken.readings == steady.readings
    steady.predict(40.0)
    woken.predict(40.0)
    assert woken.status == steady.status == st.TRACKING
    assert woken.eta_s == steady.eta_s


def test_a_second_target_does_not_change_the_main_targets_answer():
    # was: asking about another target turned 'disturbed' into 'settling'
    rng = XorShift(5)
    asked = ThermalEstimator()
    alone = ThermalEstimator()
    temp = 80.0
    for i in range(1200):
        if i == 500:
            temp += 8.0  # a top-up
        temp = 21.0 + (temp - 21.0) * math.exp(-2.0 / 900.0)
        y = math.floor((temp + rng.gauss(0.03)) * 16.0 + 0.5) / 16.0
        for est in (asked, alone):
            est.update(y, 0.0 if i == 0 else 2.0)
        asked.predict(30.0)
        asked.predict(45.0)
        alone.predict(45.0)
        assert asked.status == alone.status, i
        assert asked.eta_s == alone.eta_s, i
    assert alone.changes >= 1


def test_profile_reason_survives_a_restore():
    # was: not saved, so a restored estimator could answer differently
    prof = VesselProfile(heater=False, rate_per_s=1.0 / 900.0)
    est = ThermalEstimator(profile=prof)
    est.profile_reason = 101  # as after a profile whose forecasts failed
    blob = bytes(est.save())
    other = ThermalEstimator(profile=prof)
    assert other.restore(blob) == bl.RESTORED
    assert other.profile_reason == 101


def test_the_spike_window_and_probe_codes_are_part_of_the_saved_settings():
    # was: the settings byte could not tell spike_window 0 from 3
    base = ThermalEstimator(spike_window=3)
    cooling(base, 50)
    blob = bytes(base.save())
    assert ThermalEstimator(spike_window=0).restore(blob) == bl.BLOB_SETTINGS
    assert ThermalEstimator(spike_window=5).restore(blob) == bl.BLOB_SETTINGS
    assert ThermalEstimator(probe_codes=True).restore(blob) == bl.BLOB_SETTINGS
    assert ThermalEstimator(spike_window=3).restore(blob) == bl.RESTORED


def test_85_c_is_a_reading_unless_the_probe_declares_its_codes():
    # was: a first reading of exactly 85.00 C was rejected as a power-up code
    assert ThermalEstimator().update(85.0, 0.0) == st.ACCEPTED
    assert ThermalEstimator().update(-127.0, 0.0) == st.OUT_OF_RANGE
    onewire = ThermalEstimator(probe_codes=True)
    assert onewire.update(85.0, 0.0) == st.ERROR_CODE
    assert onewire.update(-127.0, 1.0) == st.ERROR_CODE


def test_a_huge_int_reading_gets_the_same_verdict_on_both_runtimes():
    # was: out_of_range on CPython, not_finite on MicroPython
    est = ThermalEstimator()
    est.update(60.0, 0.0)
    assert est.update(10 ** 400, 1.0) == st.BAD_INPUT
    assert est.update(-10 ** 400, 1.0) == st.BAD_INPUT
    assert est.update(60.0, 1.0) == st.ACCEPTED


def test_a_device_asleep_between_readings_shows_the_same_interval():
    # was: the answer's interval took the fit's age at the reading it was worked
    # out at, not at the block close it is for; an uninterrupted run works it out
    # at the close and counts it down, a woken device (restored before every
    # reading) at a later reading of the block: another interval. And an arrival
    # kept the sd of the answer before it (worked out afresh: none).
    fields = ("status", "eta_s", "eta_low_s", "eta_high_s", "eta_rel_sd", "rate_per_s",
              "equilibrium_c", "ambient_est_c", "temp_est_c")
    steady = ThermalEstimator(ambient_c=21.0)
    rng = XorShift(8)
    saved = None
    t = 0.0
    compared = arrived = 0
    while t <= 2400.0:
        y = math.floor((21.0 + 59.0 * math.exp(-t / 900.0) + rng.gauss(0.03)) * 16.0 + 0.5) / 16.0
        woken = ThermalEstimator(ambient_c=21.0)
        if saved is not None:
            assert woken.restore(saved) == bl.RESTORED
        for est in (steady, woken):
            est.update(y, 0.0 if t == 0.0 else 5.0)
            est.predict(40.0)
        for name in fields:
            assert getattr(steady, name) == getattr(woken, name), (t, name)
        if steady.status == st.TRACKING and steady.blocks.it > 0:
            compared += 1
        arrived += steady.status == st.ARRIVED
        saved = bytes(woken.save())
        t += 5.0
    assert compared > 100 and arrived > 10, (compared, arrived)
