"""ReadingGuard: every rejection reason, gaps, ticks, counts, allocation.

Runs on CPython and MicroPython alike. Sensor error codes (-127.0 C and
85.0 C from 12-bit 1-Wire digital sensors) and the 0.0625 C step of their
12-bit mode are common practice, no source.
"""
import math

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
    g = ReadingGuard()
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
    g = ReadingGuard()
    t = 80.0
    while t < 85.0:
        assert g.check(t, 1.0) == status.ACCEPTED
        t += 0.25
    assert g.check(85.0, 1.0) == status.ACCEPTED  # a kettle passing through 85 C
    g2 = ReadingGuard(error_codes=False)
    assert g2.check(85.0, 0.0) == status.ACCEPTED


def test_single_spike_rejected_and_step_accepted_window_3():
    g = ReadingGuard(spike_window=3)
    for i in range(10):
        assert g.check(40.0 + 0.01 * i, 2.0) == status.ACCEPTED
    assert g.check(60.0, 2.0) == status.SPIKE
    assert g.check(40.1, 2.0) == status.ACCEPTED
    assert g.check(40.11, 2.0) == status.ACCEPTED
    assert g.check(30.0, 2.0) == status.SPIKE        # a real 10 C drop (top-up)...
    assert g.check(30.01, 2.0) == status.ACCEPTED    # ...is accepted once it holds
    assert g.count_spike == 2


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
        assert g.count_spike < 15
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
    assert g.count_stuck == 6
    # A garbage model rate never raises and never counts as movement.
    assert g.check(52.1, 2.0, NAN) == status.ACCEPTED
    assert g.check(52.1, 2.0, None) == status.ACCEPTED


def test_gaps_and_elapsed_time_include_rejected_readings():
    g = ReadingGuard(max_gap_s=60.0, restart_gap_s=600.0)
    assert g.check(30.0, 0.0) == status.ACCEPTED
    assert g.elapsed_s == 0.0
    assert g.check(NAN, 10.0) == status.NOT_FINITE
    assert g.check(30.1, 5.0) == status.ACCEPTED
    assert g.elapsed_s == 15.0 and g.gap == GAP_NONE
    assert g.check(35.0, 61.0) == status.ACCEPTED  # no spike after a gap: window restarts
    assert g.gap == GAP_WIDEN
    assert g.check(20.0, 601.0) == status.ACCEPTED
    assert g.gap == GAP_RESTART
    assert g.check(20.1, 1.0) == status.ACCEPTED and g.gap == GAP_NONE
    assert g.count_long_gaps == 1 and g.count_restart_gaps == 1
    assert g.check(20.1, 1e308) == status.ACCEPTED  # huge dt: capped, finite
    assert g.gap == GAP_RESTART and g.elapsed_s < 1e5


def test_ticks_wrap_backwards_and_duplicates():
    g = ReadingGuard()
    period = 1 << 30
    start = period - 1500
    assert g.check_ticks(25.0, start) == status.ACCEPTED
    assert g.check_ticks(25.0, (start + 1000) % period) == status.ACCEPTED
    assert g.check_ticks(25.0, (start + 2000) % period) == status.ACCEPTED  # wrapped
    assert close_enough(g.elapsed_s, 1.0)
    assert g.check_ticks(25.0, (start + 2000) % period) == status.DUPLICATE_TIME
    assert g.check_ticks(25.0, (start + 1500) % period) == status.TIME_BACKWARDS
    # The clock was set back: the next step is measured from the new reference.
    assert g.check_ticks(25.0, (start + 2500) % period) == status.ACCEPTED
    assert close_enough(g.elapsed_s, 1.0)
    assert g.check_ticks(25.0, 1.5) == status.BAD_INPUT
    assert g.check_ticks(NAN, (start + 3500) % period) == status.NOT_FINITE
    assert g.check_ticks(25.0, (start + 4500) % period) == status.ACCEPTED
    assert close_enough(g.elapsed_s, 2.0)


def close_enough(a, b):
    return abs(a - b) <= 1e-9


def test_consecutive_rejections_and_reset():
    g = ReadingGuard()
    g.check(20.0, 0.0)
    for _ in range(5):
        g.check(-127.0, 1.0)
    assert g.consecutive_rejections == 5
    assert g.last_verdict == status.ERROR_CODE
    g.check(20.0, 1.0)
    assert g.consecutive_rejections == 0
    g.reset(counts=False)
    assert g.count_error_code == 5
    g.reset()
    assert g.count_error_code == 0 and g.accepted == 0


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
    g = ReadingGuard()
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
    assert g.elapsed_s == g.elapsed_s and g.elapsed_s >= 0.0


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
                v = base + Q * (rng.next_u32() % 9)
                prev.append(v)
                g._w4, g._w3, g._w2, g._w1 = g._w3, g._w2, g._w1, v
            g._win_n = window - 1
            x = base + rng.uniform(-3.0, 3.0)
            want = _reference_is_spike(prev + [x], x, 3.0, Q)
            got = g._spike(x)
            assert got == want, (window, prev, x)
