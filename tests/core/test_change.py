"""ChangeDetector (two-sided CUSUM): false-alarm run length, delay, robustness.

Runs on CPython and MicroPython alike.
"""
import math
import struct

from support import XorShift

from tinytherm.change import ChangeDetector

NAN = float("nan")


def _raises_value_error(**kwargs):
    try:
        ChangeDetector(**kwargs)
    except ValueError as exc:
        return len(str(exc)) > 10
    return False


def test_bad_arguments_raise_value_error():
    assert _raises_value_error(drift=0.0)
    assert _raises_value_error(threshold=-1.0)
    assert _raises_value_error(threshold=NAN)
    assert _raises_value_error(drift=1.0, z_clip=0.5)
    assert _raises_value_error(scale_n=-1)
    assert _raises_value_error(scale_n=2.5)


def test_false_alarm_run_length_matches_siegmund():
    # Siegmund's approximation of the one-sided CUSUM average run length on
    # N(0, 1) data: ARL = (exp(2 d b) - 2 d b - 1) / (2 d^2), b = h + 1.166
    # (D. Siegmund, Sequential Analysis, 1985; from memory). Two-sided, the
    # alarm rates of the two sides add. drift d = 0.5, threshold h = 3.
    d = 0.5
    h = 3.0
    b = h + 1.166
    one_sided = (math.exp(2 * d * b) - 2 * d * b - 1) / (2 * d * d)
    two_sided = one_sided / 2.0
    det = ChangeDetector(drift=d, threshold=h, z_clip=50.0, scale_n=0)
    rng = XorShift(321)
    n = 60000
    for _ in range(n):
        det.update(rng.gauss(1.0), 1.0)
    measured = n / det.alarms
    assert abs(measured - two_sided) < 0.15 * two_sided, (measured, two_sided)


def test_no_false_alarm_in_long_white_noise_with_defaults():
    det = ChangeDetector()
    rng = XorShift(8)
    for _ in range(20000):
        assert det.update(rng.gauss(0.3), 0.3) == 0
    assert det.alarms == 0


def test_mean_shift_detected_quickly_with_direction():
    # Mean shift of 3 sd: expected delay about h / (shift - drift) = 12 / 2.25 ~ 5.3.
    det = ChangeDetector()
    rng = XorShift(9)
    for _ in range(500):
        det.update(rng.gauss(1.0), 1.0)
    assert det.alarms == 0
    delay = None
    for i in range(50):
        if det.update(-3.0 + rng.gauss(1.0), 1.0) == -1:
            delay = i + 1
            break
    assert delay is not None and delay <= 8, delay
    assert det.last_direction == -1
    assert det.up == 0.0 and det.down == 0.0  # restarted after the alarm


def test_single_wild_innovation_does_not_alarm_two_do():
    det = ChangeDetector(z_clip=7.0, threshold=12.0, drift=0.75)
    assert det.update(1000.0, 0.1) == 0
    for _ in range(40):
        det.update(0.0, 0.1)
    assert det.up == 0.0
    assert det.update(1000.0, 0.1) == 0
    assert det.update(1000.0, 0.1) == 1


def test_bad_inputs_are_ignored():
    det = ChangeDetector()
    for bad in ((NAN, 1.0), (1.0, NAN), (1.0, 0.0), (1.0, -1.0), (None, 1.0),
                (float("inf"), 1.0), (1e308, 1e-308)):
        assert det.update(bad[0], bad[1]) == 0
    assert det.up == det.up and det.down == det.down
    assert det.up <= det.threshold and det.readings <= 1


def test_scale_adaptation_absorbs_underestimated_sigma():
    # Innovations twice as wide as the estimator claims: without adaptation
    # the CUSUM alarms again and again; with it, rarely or never.
    rng = XorShift(77)
    plain = ChangeDetector(scale_n=0)
    adaptive = ChangeDetector(scale_n=200)
    for _ in range(20000):
        e = rng.gauss(0.4)
        plain.update(e, 0.2)
        adaptive.update(e, 0.2)
    assert plain.alarms > 20
    assert adaptive.alarms <= 1
    assert 1.4 < adaptive.mean_abs_z / 0.7978845608028654 < 2.6
    # ...and still catches a real step of 5 claimed sd within a few readings.
    delay = None
    for i in range(30):
        if adaptive.update(1.0 + rng.gauss(0.4), 0.2) == 1:
            delay = i + 1
            break
    assert delay is not None and delay <= 12, delay


def test_jump_gate_fires_on_one_large_innovation():
    det = ChangeDetector(jump_z=10.0)
    rng = XorShift(12)
    for _ in range(300):
        assert det.update(rng.gauss(0.1), 0.1) == 0
    assert det.update(-2.0, 0.1) == -1   # 20 sd below prediction: a cold top-up
    assert det.alarms == 1 and det.last_direction == -1
    assert det.update(0.9, 0.1) == 0      # 9 sd: below the gate, only fills the sum
    assert det.up > 0.0
    assert _raises_value_error(jump_z=5.0, z_clip=7.0)


def _restored(det, kwargs):
    buf = bytearray(ChangeDetector.STATE_SIZE + 5)
    det.pack_into(buf, 5)
    woken = ChangeDetector(**kwargs)
    assert woken.unpack_from(buf, 5)
    return woken


def test_restored_detector_gives_the_same_alarms():
    # save -> restore before every innovation against an uninterrupted detector:
    # noise with a shift every 400 readings, so both sums and the scale move
    for kwargs in ({}, {"jump_z": 10.0}, {"scale_n": 0, "drift": 0.5, "threshold": 5.0}):
        rng = XorShift(5)
        steady = ChangeDetector(**kwargs)
        woken = ChangeDetector(**kwargs)
        for i in range(3000):
            shift = 2.0 if (i // 400) % 2 else 0.0
            e = shift * 0.2 + rng.gauss(0.3)
            woken = _restored(woken, kwargs)
            assert steady.update(e, 0.2) == woken.update(e, 0.2), (kwargs, i)
            assert steady.up == woken.up and steady.mean_abs_z == woken.mean_abs_z
        assert steady.alarms > 0


def test_unpack_refuses_impossible_sums_and_changes_nothing():
    det = ChangeDetector(threshold=12.0)
    rng = XorShift(6)
    for _ in range(50):
        det.update(rng.gauss(0.5), 0.2)
    good = bytearray(ChangeDetector.STATE_SIZE)
    det.pack_into(good, 0)
    fresh = ChangeDetector(threshold=12.0)
    for slot, value in ((0, NAN), (0, -0.5), (0, 12.5), (1, float("inf")), (1, -1e-300),
                        (2, NAN), (2, float("inf")), (2, -1.0)):
        buf = bytearray(good)
        struct.pack_into("<d", buf, 8 * slot, value)
        assert not fresh.unpack_from(buf, 0), (slot, value)
    assert fresh.up == 0.0 and fresh.mean_abs_z == 0.7978845608028654
    assert fresh.unpack_from(good, 0)
    assert fresh.up == det.up and fresh.down == det.down and fresh.mean_abs_z == det.mean_abs_z
