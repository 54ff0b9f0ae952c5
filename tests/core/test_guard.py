"""ReadingGuard: every rejection reason, gaps, ticks, counts, saved state, allocation.

Runs on CPython and MicroPython alike (the same verdicts are expected on both).
Sensor error codes (-127.0 C and 85.0 C from 12-bit 1-Wire digital probes)
and the 0.0625 C step of their 12-bit mode are common practice, no source.
"""
import math
import struct

from support import XorShift

from tinytherm import status
from tinytherm.guard import GAP_NONE, GAP_RESTART, GAP_WIDEN, ReadingGuard

try:
    import micropython
except ImportError:  # CPython
    micropython = None

NAN = float("nan")
INF = float("inf")
Q = 0.0625


def _raises_value_error(**kwargs):
    try:
        ReadingGuard(**kwargs)
    except ValueError as exc:
        return len(str(exc)) > 10
    return False


def test_bad_constructor_arguments_raise_value_error():
    assert _raises_value_error(min_c=10.0, max_c=5.0)
    assert _raises_value_error(min_c=NAN)
    assert _raises_value_error(quantum_c=0.0)
    assert _raises_value_error(spike_window=4)
    assert _raises_value_error(spike_k=-1.0)
    assert _raises_value_error(spike_floor_c=0.01)  # below one quantisation step
    assert _raises_value_error(max_gap_s=0.0)
    assert _raises_value_error(max_gap_s=100.0, restart_gap_s=50.0)
    assert _raises_value_error(restart_gap_s=1e7)   # beyond half the tick period
    assert _raises_value_error(stuck_change_c=0.0)
    assert _raises_value_error(stuck_min_s=-1.0)
    assert _raises_value_error(error_margin_c=-1.0)
    ReadingGuard(spike_window=0, stuck_change_c=None)  # valid: both tests off


def test_value_rejections_and_reasons():
    g = ReadingGuard(probe_codes=True)
    assert g.check(20.0, 0.0) == status.ACCEPTED  # first reading: dt may be 0
    assert g.check(NAN, 1.0) == status.NOT_FINITE
    assert g.check(INF, 1.0) == status.NOT_FINITE
    assert g.check(-INF, 1.0) == status.NOT_FINITE
    assert g.check(-127.0, 1.0) == status.ERROR_CODE
    assert g.check(85.0, 1.0) == status.ERROR_CODE  # power-up code far from 20 C
    assert g.check(151.0, 1.0) == status.OUT_OF_RANGE
    assert g.check(-41.0, 1.0) == status.OUT_OF_RANGE
    assert g.check(None, 1.0) == status.BAD_INPUT
    assert g.check("20", 1.0) == status.BAD_INPUT
    assert g.check(20.0, NAN) == status.BAD_INPUT
    assert g.check(20.0, None) == status.BAD_INPUT
    assert g.check(20.0, -1.0) == status.TIME_BACKWARDS
    assert g.check(20.0, 0.0) == status.DUPLICATE_TIME
    assert g.check(20.0, 1.0, 0.0, False) == status.BAD_INPUT
    assert g.check(20.0625, 1.0) == status.ACCEPTED
    assert g.accepted == 2
    assert g.rejected == 14
    assert g.count(status.NOT_FINITE) == 3
    assert g.count(status.ERROR_CODE) == 2
    assert g.count(status.OUT_OF_RANGE) == 2
    assert g.count(status.BAD_INPUT) == 5
    assert g.count(status.TIME_BACKWARDS) == 1
    assert g.count(status.DUPLICATE_TIME) == 1
    total = 0
    for code in range(len(status.VERDICT_NAMES)):
        total += g.count(code)
    assert total == g.accepted + g.rejected


def test_power_up_code_accepted_when_liquid_really_is_near_85():
    g = ReadingGuard(probe_codes=True)
    t = 80.0
    while t < 85.0:
        assert g.check(t, 1.0) == status.ACCEPTED
        t += 0.25
    assert g.check(85.0, 1.0) == status.ACCEPTED  # a kettle passing through 85 C
    g2 = ReadingGuard(probe_codes=False)
    assert g2.check(85.0, 0.0) == status.ACCEPTED


def test_probe_codes_only_when_declared():
    # A thermistor or a thermocouple reads 85.00 C in a kettle, first reading
    # included: no code check unless the probe is declared to send codes.
    g = ReadingGuard()
    assert g.check(85.0, 0.0) == status.ACCEPTED
    assert g.check(-127.0, 1.0) == status.OUT_OF_RANGE  # below min_c, not a code
    g = ReadingGuard(probe_codes=True)
    assert g.check(85.0, 0.0) == status.ERROR_CODE  # the probe's power-up value
    assert g.check(-127.0, 1.0) == status.ERROR_CODE
    assert g.count(status.ERROR_CODE) == 2


def test_settings_key_differs_for_every_window_and_probe_setting():
    keys = []
    for window in (0, 3, 5):
        for probe in (False, True):
            keys.append(ReadingGuard(spike_window=window, probe_codes=probe).settings_key())
    for i in range(len(keys)):
        assert 0 <= keys[i] < 8
        for j in range(i):
            assert keys[i] != keys[j], keys
    # settings that do not decide how a saved state is read do not change it
    assert ReadingGuard(max_c=99.0, spike_k=3.0).settings_key() == ReadingGuard().settings_key()


def test_single_spike_rejected_and_step_accepted_window_3():
    g = ReadingGuard(spike_window=3)
    for i in range(10):
        assert g.check(40.0 + 0.01 * i, 2.0) == status.ACCEPTED
    assert g.check(60.0, 2.0) == status.SPIKE
    assert g.check(40.1, 2.0) == status.ACCEPTED
    assert g.check(40.11, 2.0) == status.ACCEPTED
    assert g.check(30.0, 2.0) == status.SPIKE        # a real 10 C drop (top-up)...
    assert g.check(30.01, 2.0) == status.ACCEPTED    # ...is accepted once it holds
    assert g.count(status.SPIKE) == 2


def test_step_accepted_on_third_sample_window_5():
    g = ReadingGuard(spike_window=5)
    for i in range(10):
        assert g.check(40.0, 2.0) == status.ACCEPTED
    assert g.check(70.0, 2.0) == status.SPIKE
    assert g.check(70.0, 2.0) == status.SPIKE
    assert g.check(70.0, 2.0) == status.ACCEPTED


def test_fast_ramp_and_curvature_never_rejected():
    # A kettle heating at 0.8 K/s with exponential approach; no spikes expected.
    for window in (3, 5):
        g = ReadingGuard(spike_window=window, stuck_change_c=None)
        for i in range(400):
            t = 100.0 - 80.0 * math.exp(-i / 100.0)
            assert g.check(math.floor(t / Q + 0.5) * Q, 1.0) == status.ACCEPTED


def test_quantised_noise_rarely_rejected():
    # Noise of about one quantisation step: the gate floor keeps false
    # rejections rare (well under 1 %).
    for window in (3, 5):
        g = ReadingGuard(spike_window=window)
        rng = XorShift(5)
        for i in range(3000):
            t = 55.0 - 0.002 * i + rng.gauss(0.06)
            g.check(math.floor(t / Q + 0.5) * Q, 1.0)
        assert g.count(status.SPIKE) < 15
        assert g.accepted + g.rejected == 3000


def test_stuck_needs_model_movement():
    g = ReadingGuard(stuck_change_c=1.0, stuck_min_s=30.0)
    # Model says nothing moves: a constant value is never stuck.
    for _ in range(500):
        assert g.check(21.5, 2.0, 0.0) == status.ACCEPTED
    # Model expects 0.1 K/s: repeats are fine until 30 s and 1 C expected.
    g = ReadingGuard(stuck_change_c=1.0, stuck_min_s=30.0)
    assert g.check(50.0, 0.0, 0.1) == status.ACCEPTED
    verdicts = []
    for _ in range(20):
        verdicts.append(g.check(50.0, 2.0, 0.1))
    # 2 s steps at 0.1 K/s: 1.0 C expected after 10 repeats (20 s), 30 s after 15
    assert verdicts[13] == status.ACCEPTED
    assert verdicts[14] == status.STUCK
    assert verdicts[19] == status.STUCK
    assert g.check(52.0, 2.0, 0.1) == status.SPIKE  # leaving a long plateau: first sample
    assert g.check(52.1, 2.0, 0.1) == status.ACCEPTED
    assert g.count(status.STUCK) == 6
    # A garbage model rate never raises and never counts as movement.
    assert g.check(52.1, 2.0, NAN) == status.ACCEPTED
    assert g.check(52.1, 2.0, None) == status.ACCEPTED


def test_gaps_and_elapsed_time_include_rejected_readings():
    g = ReadingGuard(max_gap_s=60.0, restart_gap_s=600.0)
    assert g.check(30.0, 0.0) == status.ACCEPTED
    assert g.elapsed_ms == 0 and g.elapsed_s == 0.0
    assert g.check(NAN, 10.0) == status.NOT_FINITE
    assert g.check(30.1, 5.0) == status.ACCEPTED
    assert g.elapsed_ms == 15000 and g.elapsed_s == 15.0 and g.gap == GAP_NONE
    assert g.check(35.0, 61.0) == status.ACCEPTED  # no spike after a gap: window restarts
    assert g.gap == GAP_WIDEN
    assert g.check(20.0, 601.0) == status.ACCEPTED
    assert g.gap == GAP_RESTART
    assert g.check(20.1, 1.0) == status.ACCEPTED and g.gap == GAP_NONE
    assert g.gap_count(GAP_WIDEN) == 1 and g.gap_count(GAP_RESTART) == 1
    assert g.gap_count(GAP_NONE) == 3 and g.gap_count(7) == 0
    assert g.check(20.1, 1e308) == status.ACCEPTED  # huge dt: capped, a small int
    assert g.gap == GAP_RESTART and type(g.elapsed_ms) is int and g.elapsed_ms <= 601000


def test_ticks_wrap_backwards_and_duplicates():
    g = ReadingGuard()
    period = 1 << 30
    start = period - 1500
    assert g.check_ticks(25.0, start) == status.ACCEPTED
    assert g.check_ticks(25.0, (start + 1000) % period) == status.ACCEPTED
    assert g.check_ticks(25.0, (start + 2000) % period) == status.ACCEPTED  # wrapped
    assert g.elapsed_ms == 1000
    assert g.check_ticks(25.0, (start + 2000) % period) == status.DUPLICATE_TIME
    assert g.check_ticks(25.0, (start + 1500) % period) == status.TIME_BACKWARDS
    # The clock was set back: the next step is measured from the new reference.
    assert g.check_ticks(25.0, (start + 2500) % period) == status.ACCEPTED
    assert g.elapsed_ms == 1000
    assert g.check_ticks(25.0, 1.5) == status.BAD_INPUT
    assert g.check_ticks(NAN, (start + 3500) % period) == status.NOT_FINITE
    assert g.check_ticks(25.0, (start + 4500) % period) == status.ACCEPTED
    assert g.elapsed_ms == 2000 and g.elapsed_s == 2.0


def test_consecutive_rejections_and_reset():
    g = ReadingGuard(probe_codes=True)
    g.check(20.0, 0.0)
    for _ in range(5):
        g.check(-127.0, 1.0)
    assert g.consecutive_rejections == 5
    assert g.last_verdict == status.ERROR_CODE
    g.check(20.0, 1.0)
    assert g.consecutive_rejections == 0
    g.reset(counts=False)
    assert g.count(status.ERROR_CODE) == 5
    g.reset()
    assert g.count(status.ERROR_CODE) == 0 and g.accepted == 0


def _hard_rejections(g, ticks):
    # Every path that is decided by comparisons only.
    r = 0
    r += g.check_ticks(NAN, ticks)
    r += g.check_ticks(INF, ticks + 1000)
    r += g.check_ticks(-127.0, ticks + 2000)
    r += g.check_ticks(85.0, ticks + 3000)
    r += g.check_ticks(500.0, ticks + 4000)
    r += g.check_ticks(20.0, ticks + 4000)
    r += g.check_ticks(20.0, ticks + 3000)
    return r


def test_hard_rejections_allocate_nothing():
    g = ReadingGuard(probe_codes=True)
    assert g.check_ticks(20.0, 1000) == status.ACCEPTED
    expected = (status.NOT_FINITE + status.NOT_FINITE + status.ERROR_CODE + status.ERROR_CODE
                + status.OUT_OF_RANGE + status.DUPLICATE_TIME + status.TIME_BACKWARDS)
    if micropython is not None:
        micropython.heap_lock()
        try:
            r = _hard_rejections(g, 2000)
        finally:
            micropython.heap_unlock()
    else:
        r = _hard_rejections(g, 2000)
    assert r == expected
    assert g.rejected == 7


def test_seeded_garbage_stream_never_raises():
    rng = XorShift(2024)
    g = ReadingGuard(spike_window=5)
    choices = (NAN, INF, -INF, -127.0, 85.0, 1e300, -1e300, None, 0.0, 20.0)
    for i in range(2000):
        u = rng.next_u32() % 14
        if u < 10:
            t = choices[u]
        else:
            t = rng.uniform(-50.0, 160.0)
        dt = rng.uniform(-2.0, 10.0) if rng.next_u32() % 5 else 0.0
        v = g.check(t, dt, rng.uniform(-1.0, 1.0))
        assert 0 <= v < len(status.VERDICT_NAMES)
    assert g.accepted + g.rejected == 2000
    assert type(g.elapsed_ms) is int and 0 <= g.elapsed_ms <= 3601000


def _reference_is_spike(window, x, k, floor):
    # Textbook Hampel identifier on the window (current reading included):
    # median m, MAD = median |v - m|, spike when |x - m| > k * max(1.4826 MAD, floor).
    vals = sorted(window)
    m = vals[len(vals) // 2]
    devs = sorted(abs(v - m) for v in vals)
    mad = devs[len(devs) // 2]
    scale = 1.4826 * mad
    if scale < floor:
        scale = floor
    return abs(x - m) > k * scale


def test_gate_matches_textbook_hampel_identifier():
    rng = XorShift(99)
    for window in (3, 5):
        for trial in range(300):
            g = ReadingGuard(spike_window=window, stuck_change_c=None, spike_k=3.0)
            prev = []
            base = rng.uniform(20.0, 60.0)
            for _ in range(window - 1):
                prev.append(base + Q * (rng.next_u32() % 9))
            for i in range(window - 1):
                g._win[i] = prev[window - 2 - i]  # newest first
            g._win_n = window - 1
            x = base + rng.uniform(-3.0, 3.0)
            want = _reference_is_spike(prev + [x], x, 3.0, Q)
            got = g._spike(x)
            assert got == want, (window, prev, x)


def test_step_rounding_to_zero_ms_is_a_duplicate():
    # Time is whole ms inside: a step that rounds to 0 ms cannot be used (a
    # reading 1e-268 s after the previous one used to be accepted, and the
    # estimator then refused its own saved state).
    g = ReadingGuard()
    assert g.check(20.0, 0.0) == status.ACCEPTED
    assert g.check(20.0625, 1e-268) == status.DUPLICATE_TIME
    assert g.check(20.0625, 0.0004) == status.DUPLICATE_TIME
    assert g.check(20.0625, -1e-268) == status.TIME_BACKWARDS
    assert g.check(20.0625, 0.0005) == status.ACCEPTED  # a half rounds up
    assert g.elapsed_ms == 1
    assert g.check(20.125, 2.0004) == status.ACCEPTED and g.elapsed_ms == 2000
    assert g.check(20.125, 2.0006) == status.ACCEPTED and g.elapsed_ms == 2001
    assert g.check(20.125, 2.0006) == status.ACCEPTED and g.elapsed_ms == 2001  # (cached)


def test_estimator_restores_its_own_state_after_a_tiny_step():
    from tinytherm import blob as bl
    from tinytherm.estimator import ThermalEstimator
    est = ThermalEstimator()
    assert est.update(50.0, 0.0) == status.ACCEPTED
    assert est.update(50.0625, 1e-268) == status.DUPLICATE_TIME
    assert est.restore(est.save()) == bl.RESTORED


# Inputs that used to get a different verdict on each runtime (a huge int is
# compared as inf on MicroPython) and their one verdict on both.
SAME_ON_BOTH = ((10 ** 400, status.BAD_INPUT), (-10 ** 400, status.BAD_INPUT),
                (10 ** 309, status.BAD_INPUT), (10 ** 300, status.OUT_OF_RANGE),
                (-10 ** 300, status.OUT_OF_RANGE), (10 ** 20, status.OUT_OF_RANGE),
                (30, status.ACCEPTED), (True, status.BAD_INPUT), (b"30", status.BAD_INPUT),
                (bytearray(b"30"), status.BAD_INPUT), ("nan", status.BAD_INPUT),
                (1e308 * 10, status.NOT_FINITE))


def test_every_input_gets_the_same_verdict_on_both_runtimes():
    for value, want in SAME_ON_BOTH:
        g = ReadingGuard(spike_window=0)
        assert g.check(20.0, 0.0) == status.ACCEPTED
        assert g.check(value, 1.0) == want, (value, want)
        g = ReadingGuard(spike_window=0)
        assert g.check_ticks(20.0, 1000) == status.ACCEPTED
        assert g.check_ticks(value, 5000) == want, (value, want)
    for dt in (10 ** 400, -10 ** 400, 10 ** 309):
        g = ReadingGuard()
        g.check(20.0, 0.0)
        assert g.check(20.0, dt) == status.BAD_INPUT, dt
    g = ReadingGuard()
    g.check(20.0, 0.0)
    assert g.check(20.0, 10 ** 300) == status.ACCEPTED and g.gap == GAP_RESTART


def test_numpy_scalars_and_ints_are_readings():
    # anything float() converts, except str/bytes/bool (tinytherm.num.as_float);
    # numpy exists only on CPython, ints are the same path on both runtimes
    g = ReadingGuard()
    assert g.check(20, 0) == status.ACCEPTED
    assert g.check(21, 2) == status.ACCEPTED and g.elapsed_ms == 2000
    try:
        import numpy as np
    except ImportError:  # MicroPython
        return
    assert g.check(np.float64(21.0625), np.float64(2.0)) == status.ACCEPTED
    assert g.check(np.float32(21.125), 2.0) == status.ACCEPTED
    assert g.check(np.int16(21), np.int64(2)) == status.ACCEPTED
    assert g.check(np.float64("nan"), 2.0) == status.NOT_FINITE
    assert g.check(np.array([21.0, 22.0]), 2.0) == status.BAD_INPUT
    assert g.check(21.0, np.array([2.0, 3.0])) == status.BAD_INPUT


def _stream(rng, i):
    """One hostile reading: mostly a slow quantised cool, with every fault mixed in."""
    u = rng.next_u32() % 40
    if u == 0:
        return NAN
    if u == 1:
        return 60.0 + 30.0 * rng.uniform(0.0, 1.0)  # a spike
    if u == 2:
        return -127.0
    if u == 3:
        return 85.0
    if u == 4:
        return 500.0
    if u == 5:
        return None
    return math.floor((50.0 - 0.01 * i) / Q + 0.5) * Q  # repeats, some stuck runs


def _step_s(rng):
    u = rng.next_u32() % 30
    if u == 0:
        return 0.0
    if u == 1:
        return -1.0
    if u == 2:
        return 400.0  # a long gap
    if u == 3:
        return 4000.0  # a restart gap
    if u == 4:
        return 0.0004  # rounds to 0 ms
    return 2.0 + rng.uniform(-0.01, 0.01)


def _restored(g, kwargs):
    buf = bytearray(ReadingGuard.STATE_SIZE + 3)
    g.pack_into(buf, 3)
    woken = ReadingGuard(**kwargs)
    assert woken.unpack_from(buf, 3)
    again = bytearray(len(buf))
    woken.pack_into(again, 3)
    assert again == buf
    return woken


SETTINGS = ({}, {"spike_window": 5, "probe_codes": True}, {"spike_window": 0},
            {"stuck_change_c": 0.2, "stuck_min_s": 6.0, "max_gap_s": 60.0,
             "restart_gap_s": 600.0})


def test_restored_guard_gives_the_same_verdicts_dt_path():
    # save -> restore before every reading against an uninterrupted guard
    stuck = 0
    for kwargs in SETTINGS:
        rng = XorShift(31)
        steady = ReadingGuard(**kwargs)
        woken = ReadingGuard(**kwargs)
        for i in range(1500):
            temp = _stream(rng, i)
            dt = _step_s(rng)
            rate = 0.05 if i % 3 else 0.0
            ok = rng.next_u32() % 50 != 0
            woken = _restored(woken, kwargs)
            a = steady.check(temp, dt, rate, ok)
            b = woken.check(temp, dt, rate, ok)
            assert a == b, (kwargs, i, a, b)
            if a == status.ACCEPTED:
                assert steady.elapsed_ms == woken.elapsed_ms and steady.gap == woken.gap, i
            assert steady.consecutive_rejections == woken.consecutive_rejections
        assert (steady.count(status.SPIKE) > 0) == (steady.spike_window > 0)
        assert steady.gap_count(GAP_RESTART) > 0 and steady.count(status.DUPLICATE_TIME) > 0
        stuck += steady.count(status.STUCK)
    assert stuck > 0


def test_restored_guard_gives_the_same_verdicts_ticks_path_with_slept_time():
    period = 1 << 30
    for kwargs in SETTINGS:
        rng = XorShift(47)
        steady = ReadingGuard(**kwargs)
        woken = ReadingGuard(**kwargs)
        ticks = period - 30000  # wraps early on
        prev = ticks
        for i in range(1500):
            temp = _stream(rng, i)
            ticks = (ticks + int(_step_s(rng) * 1000.0)) % period
            ok = rng.next_u32() % 50 != 0
            woken = _restored(woken, kwargs)
            a = steady.check_ticks(temp, ticks, 0.05, ok)
            # the woken guard has no tick reference: it is told the time slept
            # since the previous reading (negative when the clock stepped back)
            step = (ticks - prev) % period
            slept = (step if step < period // 2 else step - period) / 1000.0
            b = woken.check_ticks(temp, ticks, 0.05, ok, slept)
            prev = ticks
            assert a == b, (kwargs, i, a, b)
            if a == status.ACCEPTED:
                assert steady.elapsed_ms == woken.elapsed_ms and steady.gap == woken.gap, i
        assert steady.count(status.TIME_BACKWARDS) > 0 and steady.count(status.DUPLICATE_TIME) > 0


def test_restore_without_ticks_uses_the_slept_time_or_sets_the_reference():
    g = ReadingGuard()
    for i in range(5):
        assert g.check_ticks(30.0 - 0.0625 * i, 1000 + 2000 * i) == status.ACCEPTED
    buf = bytearray(ReadingGuard.STATE_SIZE)
    g.pack_into(buf, 0)
    woken = ReadingGuard()
    assert woken.unpack_from(buf, 0)
    # the reading after the wake is judged: its time is the slept time
    assert woken.check_ticks(29.6875, 77, 0.0, True, 30.0) == status.ACCEPTED
    assert woken.elapsed_ms == 30000
    assert woken.check_ticks(29.625, 2077) == status.ACCEPTED and woken.elapsed_ms == 2000
    # without it the step is unknown: BAD_INPUT, and the next reading is timed
    woken = ReadingGuard()
    assert woken.unpack_from(buf, 0)
    assert woken.check_ticks(29.6875, 77) == status.BAD_INPUT
    assert woken.check_ticks(29.6875, 2077) == status.ACCEPTED and woken.elapsed_ms == 2000
    for bad in (NAN, INF, "30", None):
        woken = ReadingGuard()
        woken.unpack_from(buf, 0)
        assert woken.check_ticks(29.6875, 77, 0.0, True, bad) == status.BAD_INPUT
    woken = ReadingGuard()
    woken.unpack_from(buf, 0)
    assert woken.check_ticks(29.6875, 77, 0.0, True, -3.0) == status.TIME_BACKWARDS


def test_unpack_refuses_every_impossible_value_and_changes_nothing():
    g = ReadingGuard(spike_window=5, max_gap_s=60.0, restart_gap_s=600.0)
    for i in range(3):
        g.check(40.0 + Q * i, 0.0 if i == 0 else 2.0)
    g.check(NAN, 2.0)
    good = bytearray(ReadingGuard.STATE_SIZE)
    g.pack_into(good, 0)
    fresh = ReadingGuard(spike_window=5, max_gap_s=60.0, restart_gap_s=600.0)
    assert fresh.unpack_from(good, 0)
    assert fresh._win_n == 3 and fresh.consecutive_rejections == 1
    # (format: 4 window values, last value, rate as float64; pending and run
    # time uint32 ms; window fill | accepted flag; consecutive rejections)
    bad_doubles = ((0, NAN), (0, 151.0), (2, -41.0), (3, 40.0), (4, INF), (4, 200.0),
                   (5, -0.5), (5, INF), (5, NAN))
    for slot, value in bad_doubles:
        buf = bytearray(good)
        struct.pack_into("<d", buf, 8 * slot, value)
        assert not fresh.unpack_from(buf, 0), (slot, value)
    for fmt, at, value in (("<I", 48, 601001), ("<I", 52, 601001), ("<B", 56, 5),
                           ("<B", 56, 3 | 16), ("<B", 56, 0)):
        buf = bytearray(good)
        struct.pack_into(fmt, buf, at, value)
        assert not fresh.unpack_from(buf, 0), (at, value)
    # a window of 3 holds at most two readings
    assert not ReadingGuard(max_gap_s=60.0, restart_gap_s=600.0).unpack_from(good, 0)
    # refused: the guard is as it was
    assert fresh._win_n == 3 and fresh._last_c == 40.0 + 2 * Q
    assert fresh.unpack_from(good, 0)


def test_dt_path_rejections_allocate_nothing():
    g = ReadingGuard(probe_codes=True)
    assert g.check(20.0, 0.0) == status.ACCEPTED
    assert g.check(20.0, 2.0) == status.ACCEPTED  # (2.0 s is now converted and held)
    expected = (status.NOT_FINITE + status.ERROR_CODE + status.OUT_OF_RANGE
                + status.BAD_INPUT + status.BAD_INPUT + status.TIME_BACKWARDS)
    if micropython is not None:
        micropython.heap_lock()
    try:
        r = g.check(NAN, 2.0)
        r += g.check(-127.0, 2.0)
        r += g.check(500.0, 2.0)
        r += g.check(None, 2.0)
        r += g.check(20.0, NAN)
        r += g.check(20.0, -1.0)
    finally:
        if micropython is not None:
            micropython.heap_unlock()
    assert r == expected


def test_restored_before_any_accepted_reading_still_sees_time_go_back():
    # (hypothesis find) nothing accepted yet, no tick reference after the
    # restore: the slept time says the clock stepped back, as the ticks did
    steady = ReadingGuard()
    assert steady.check_ticks(None, 44061) == status.BAD_INPUT
    buf = bytearray(ReadingGuard.STATE_SIZE)
    steady.pack_into(buf, 0)
    woken = ReadingGuard()
    assert woken.unpack_from(buf, 0)
    assert steady.check_ticks(20.0, 44060) == status.TIME_BACKWARDS
    assert woken.check_ticks(20.0, 44060, 0.0, True, -0.001) == status.TIME_BACKWARDS
    assert woken.check_ticks(20.0, 46060) == status.ACCEPTED and woken.elapsed_ms == 0
