"""Robustness of the estimator: fuzzed streams, statuses, saved-state blobs (both runtimes).

Traces come from tests/core/fault_trace.py (our own invented scenario) and a
seeded XorShift stream of garbage; no outside reference is involved beyond
the CRC-32 check value tested in test_crc.py.
"""
import math
import struct

from fault_trace import FaultTrace
from support import XorShift, round_instance_floats, to_float32

from tinytherm import blob as bl
from tinytherm import status as st
from tinytherm.estimator import TRUST_FLOOR_S, ThermalEstimator

try:
    import micropython
except ImportError:  # CPython
    micropython = None

NAN = float("nan")
INF = float("inf")
ANSWER_FIELDS = ("eta_s", "eta_low_s", "eta_high_s", "rate_per_s", "equilibrium_c",
                 "ambient_est_c", "gain_k_per_s", "temp_est_c")


def _finite(x):
    return x == x and x != INF and x != -INF


def check_state(est):
    """Every float the estimator holds is finite; the answer is sane."""
    for obj in (est, est.guard, est.detector):
        d = obj.__dict__
        for name in d:
            v = d[name]
            if type(v) is float and not (name == "eta_high_s" and v == INF):
                assert _finite(v), (name, v)  # eta_high_s may be inf: "never" not ruled out
    assert 0 <= est.status < len(st.STATUS_NAMES)
    if est.eta_s is not None:
        assert _finite(est.eta_s) and est.eta_s >= 0.0
        assert est.eta_low_s <= est.eta_s <= est.eta_high_s
    else:
        # no time: the status says why
        assert est.status != st.TRACKING


def _garbage(rng):
    u = rng.next_u32() % 20
    if u == 0:
        return NAN
    if u == 1:
        return INF
    if u == 2:
        return -127.0
    if u == 3:
        return 85.0
    if u == 4:
        return 1e300
    if u == 5:
        return None
    return rng.uniform(-60.0, 160.0)


def test_seeded_random_stream_fuzz_never_raises_and_stays_finite():
    rng = XorShift(4242)
    for heater in (False, True):
        est = ThermalEstimator(heater=heater)
        accepted = 0
        temp = 70.0
        ticks = (1 << 30) - 3000
        for i in range(3000):
            mode = rng.next_u32() % 10
            if mode < 6:
                temp += rng.gauss(0.3) - 0.01
                value = math.floor(temp * 16.0 + 0.5) / 16.0
            else:
                value = _garbage(rng)
            duty = rng.uniform(-0.2, 1.2) if heater else 0.0
            ambient = None if rng.next_u32() % 7 else rng.uniform(-70.0, 60.0)
            if rng.next_u32() % 2:
                dt = rng.uniform(-1.0, 30.0) if rng.next_u32() % 9 else rng.uniform(0.0, 5000.0)
                verdict = est.update(value, dt, ambient, duty)
            else:
                ticks = (ticks + (rng.next_u32() % 4000) - 300) & 0x3FFFFFFF
                verdict = est.update_ticks(value, ticks, ambient, duty)
            assert 0 <= verdict < len(st.VERDICT_NAMES)
            if verdict == st.ACCEPTED:
                accepted += 1
            if i % 7 == 0:
                code = est.predict(rng.uniform(-20.0, 120.0))
                assert code == est.status
                check_state(est)
            if i % 500 == 0:
                assert est.restore(est.save()) == bl.RESTORED
        check_state(est)
        assert est.readings == accepted  # kept across restore (rejected counts since it)
        assert 0 < accepted < 3000


def test_fault_trace_statuses_and_reasons():
    tr = FaultTrace(seed=3, hours=3.0, period_s=1.0)
    est = ThermalEstimator(ambient_c=21.0)
    seen_fault = False
    while tr.step():
        est.update_ticks(tr.temp_c, tr.ticks_ms)
        if tr.count % 15 == 0:
            est.predict(45.0)
            check_state(est)
            if est.status == st.SENSOR_FAULT:
                seen_fault = True
                assert est.eta_s is None
    g = est.guard
    assert g.count(st.NOT_FINITE) > 0 and g.count(st.ERROR_CODE) > 0
    assert g.count(st.SPIKE) > 0 and g.count(st.STUCK) > 0
    assert g.count(st.DUPLICATE_TIME) > 0 and g.count(st.TIME_BACKWARDS) > 0
    assert seen_fault  # the -127 bursts are longer than fault_after readings
    assert est.changes >= 1  # at least one fill or top-up was detected


def test_sensor_fault_then_recovery():
    est = ThermalEstimator(ambient_c=21.0, fault_after=3)
    t = 0.0
    for i in range(300):
        est.update(21.0 + 50.0 * math.exp(-t / 1500.0), 0.0 if i == 0 else 2.0)
        t += 2.0
    assert est.predict(50.0) == st.TRACKING
    for _ in range(3):
        est.update(-127.0, 2.0)
    assert est.predict(50.0) == st.SENSOR_FAULT and est.eta_s is None
    t += 6.0
    assert est.update(21.0 + 50.0 * math.exp(-t / 1500.0), 2.0) == st.ACCEPTED
    assert est.predict(50.0) == st.TRACKING


def test_top_up_gives_disturbed_then_tracking():
    est = ThermalEstimator()
    temp = 75.0
    k = 1.0 / 1500.0
    rng = XorShift(3)
    statuses = []
    for i in range(1500):
        if i == 600:
            temp += 10.0  # a top-up: +10 C at once
        temp = 21.0 + (temp - 21.0) * math.exp(-k * 2.0)
        reading = math.floor((temp + rng.gauss(0.03)) * 16.0 + 0.5) / 16.0
        est.update(reading, 0.0 if i == 0 else 2.0)
        if i >= 590:
            statuses.append(est.predict(25.0))
    assert est.changes == 1
    after = statuses[10:]
    assert st.DISTURBED in after[:20]   # within 40 s of the event
    assert after[-1] == st.TRACKING      # re-converged


def test_stuck_sensor_rejected_while_model_expects_movement():
    est = ThermalEstimator(ambient_c=21.0, stuck_min_s=20.0, stuck_change_c=0.5)
    t = 0.0
    for i in range(400):
        est.update(21.0 + 50.0 * math.exp(-t / 900.0), 0.0 if i == 0 else 2.0)
        t += 2.0
    est.predict(40.0)
    frozen = 21.0 + 50.0 * math.exp(-t / 900.0)
    verdicts = [est.update(frozen, 2.0) for _ in range(40)]
    assert verdicts[0] == st.ACCEPTED
    assert st.STUCK in verdicts
    assert est.guard.count(st.STUCK) >= 20


def _feed(est, tr, rounder):
    est.update(tr.temp_c, tr.dt_s)
    if rounder is not None:
        round_instance_floats(est, rounder)


def wake_cycle_error(kwargs, hours, rounder=None, seed=5):
    """Largest relative difference of the answer: save/restore on every reading vs none."""
    tr = FaultTrace(seed=seed, hours=hours, period_s=2.0)
    steady = ThermalEstimator(**kwargs)
    saved = None
    worst = 0.0
    while tr.step():
        _feed(steady, tr, rounder)
        woken = ThermalEstimator(**kwargs)
        if saved is not None:
            assert woken.restore(saved) == bl.RESTORED
        _feed(woken, tr, rounder)
        # firmware order on each wake: restore, update, predict, save
        if tr.count % 25 == 0:
            steady.predict(40.0)
            woken.predict(40.0)
            if steady.status != woken.status:
                # Only allowed where the float32 fields of the blob move the
                # trust test across its threshold: both runs settling or
                # tracking, their ETA spreads within 0.1 % of each other and of
                # a threshold (max_relative_sd, or an upper bound TRUST_FLOOR_S
                # seconds above the ETA).
                assert {steady.status, woken.status} == {st.SETTLING, st.TRACKING}
                a = steady.eta_rel_sd
                b = woken.eta_rel_sd
                assert abs(a - b) <= 1e-3 * a
                near_rel = abs(a - steady.max_relative_sd) <= 1e-3 * a
                spread = steady.eta_high_s - steady.eta_s
                near_floor = abs(spread - TRUST_FLOOR_S) <= 1e-3 * TRUST_FLOOR_S
                assert near_rel or near_floor, (a, steady.eta_s, spread)
            assert steady.readings == woken.readings
            for name in ANSWER_FIELDS:
                a = getattr(steady, name)
                b = getattr(woken, name)
                assert (a is None) == (b is None), name
                if a is None or a == INF or a == 0.0:
                    continue
                rel = abs(a - b) / abs(a)
                if rel > worst:
                    worst = rel
        saved = woken.save()
        assert len(saved) == bl.BLOB_SIZE
    return worst


# Save -> restore on every reading of an hour-long faulty trace against an
# uninterrupted run. The issue asks for exact agreement in float64 and 1e-6
# with float32 rounding; the 128-byte blob cannot hold the whole fit as
# float64, so these bounds are what the layout achieves (measured, with about
# 3x margin; figures in DEVELOPERS.md), not the goal. Re-measured when the
# forecast audit, turn state and 20 s blocks came in (layout with 5 doubles
# for a known ambient, none for an estimated one).

def test_wake_cycles_match_uninterrupted_run_known_ambient():
    # Known ambient: the levels and integrals are float64, the co-moments
    # float32 (they move s2 and with it the prior's weight). Measured 2.3e-5.
    worst = wake_cycle_error({"ambient_c": 21.0}, 1.0)
    assert worst < 7e-5, worst


def test_wake_cycles_match_uninterrupted_run_float32_device():
    # A float32 device (every estimator float rounded after each update in
    # both runs). Measured 2.8e-7 (known ambient) and 9.2e-4 (estimated).
    worst = wake_cycle_error({"ambient_c": 21.0}, 1.0, to_float32)
    assert worst < 1.2e-5, worst
    worst = wake_cycle_error({}, 1.0, to_float32)
    assert worst < 2.8e-3, worst


def test_wake_cycles_estimated_ambient_close():
    # Estimated ambient: every fit value goes as float32, the co-moments of
    # the nearly collinear (integral, time) pair among them. Measured 8.5e-3.
    worst = wake_cycle_error({}, 1.0)
    assert worst < 2.6e-2, worst


def test_blob_round_trip_is_stable_for_every_mode():
    tr = FaultTrace(seed=8, hours=0.5, period_s=2.0)
    configs = ({}, {"ambient_c": 20.0}, {"heater": True}, {"heater": True, "ambient_c": 20.0},
               {"spike_window": 5}, {"detect_changes": False})
    ests = [ThermalEstimator(**c) for c in configs]
    while tr.step():
        for i, est in enumerate(ests):
            est.update(tr.temp_c, tr.dt_s, 21.0 if (i == 0 and tr.count > 1000) else None,
                       0.5 if est.heater else 0.0)
    for c, est in zip(configs, ests):
        blob = est.save()
        assert len(blob) == 128
        other = ThermalEstimator(**c)
        assert other.restore(blob) == bl.RESTORED
        assert other.save() == blob, c
        est.predict(40.0)
        other.predict(40.0)
        assert other.readings == est.readings


def _sample_blob():
    est = ThermalEstimator()
    tr = FaultTrace(seed=4, hours=0.3, period_s=2.0)
    while tr.step():
        est.update(tr.temp_c, tr.dt_s)
    return est.save(), est.readings


def test_corrupted_blobs_are_rejected_with_a_fresh_start():
    blob, readings = _sample_blob()
    assert readings > 100
    est = ThermalEstimator()
    # every single-byte corruption is caught (CRC, magic or version)
    for i in range(len(blob)):
        bad = bytearray(blob)
        bad[i] ^= 0x5A
        est.update(30.0, 0.0)
        code = est.restore(bad)
        assert code in (bl.BLOB_MAGIC, bl.BLOB_VERSION, bl.BLOB_CRC), (i, code)
        assert est.readings == 0 and est.status == st.GATHERING
    # truncated, too long, not bytes at all
    for bad in (blob[:127], blob[:0], blob + b"\x00", None, 12345, "x" * 128, [0] * 128):
        assert est.restore(bad) == bl.BLOB_LENGTH
    # another layout version, correctly sealed
    other = bytearray(blob)
    other[2] = bl.LAYOUT_VERSION + 1
    assert est.restore(bl.seal(other)) == bl.BLOB_VERSION
    # written by a differently configured estimator
    assert ThermalEstimator(heater=True).restore(blob) == bl.BLOB_SETTINGS
    # a NaN inside a correctly sealed payload
    poisoned = bytearray(blob)
    struct.pack_into("<d", poisoned, bl.CRC_OFFSET - 8, NAN)
    assert est.restore(bl.seal(poisoned)) == bl.BLOB_VALUES
    assert est.readings == 0
    # and the intact blob still restores
    assert est.restore(blob) == bl.RESTORED and est.readings == readings
    assert bl.restore_name(bl.BLOB_CRC) == "blob_crc" and bl.restore_name(99) == "unknown"


def test_restored_ticks_need_a_new_reference():
    blob, readings = _sample_blob()
    est = ThermalEstimator()
    assert est.restore(blob) == bl.RESTORED
    last = est._y_prev
    assert est.update_ticks(last, 5000) == st.BAD_INPUT  # step unknown after a wake
    assert est.update_ticks(last, 7000) == st.ACCEPTED
    assert est.readings == readings + 1


def _reject_and_read(est, ticks, out):
    n = 0
    n += est.update_ticks(NAN, ticks)
    n += est.update_ticks(-127.0, ticks + 1000)
    n += est.update_ticks(400.0, ticks + 2000)
    n += est.update_ticks(30.0, ticks + 2000)
    n += est.update_ticks(30.0, ticks + 1500)
    n += est.update_ticks(30.0, ticks + 3000, None, 7.0)
    out[0] = n  # list item stores do not allocate; a returned tuple would
    out[1] = est.status
    out[2] = est.eta_s
    out[3] = est.eta_low_s
    out[4] = est.eta_high_s
    out[5] = est.rate_per_s


def test_rejections_and_answer_fields_allocate_nothing():
    est = ThermalEstimator(ambient_c=21.0)
    ticks = 1000
    for i in range(200):
        est.update_ticks(21.0 + 40.0 * math.exp(-i / 300.0), ticks)
        ticks += 2000
    est.predict(40.0)
    expected = (st.NOT_FINITE + st.ERROR_CODE + st.OUT_OF_RANGE + st.DUPLICATE_TIME
                + st.TIME_BACKWARDS + st.BAD_INPUT)
    result = [None] * 6
    if micropython is not None:
        micropython.heap_lock()
        try:
            _reject_and_read(est, ticks, result)
        finally:
            micropython.heap_unlock()
    else:
        _reject_and_read(est, ticks, result)
    assert result[0] == expected
    assert result[1] == st.TRACKING and result[2] > 0.0
    assert est.rejected == 6
