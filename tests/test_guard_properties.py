"""Properties of the reading guard (CPython, hypothesis; the seeded versions in
tests/core/test_guard.py run on both runtimes).

* A guard saved and restored before every reading gives the same verdicts,
  elapsed time and gap codes as an uninterrupted one: with ``dt_s``, and with
  ticks where the restored guard is told the slept time.
* ``elapsed_ms`` is always a whole number of ms within the restart cap, and
  the counts add up to the readings seen.
"""
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as hs

from tinytherm import status
from tinytherm.guard import ReadingGuard

PERIOD = 1 << 30
TEMP = hs.one_of(hs.floats(), hs.floats(-50.0, 160.0), hs.sampled_from([85.0, -127.0, 20.0]),
                 hs.integers(-10 ** 400, 10 ** 400), hs.none())
DT = hs.one_of(hs.floats(), hs.floats(-1.0, 5000.0), hs.sampled_from([0.0, 2.0, 4e-4, 5e-4]),
               hs.integers(-5, 10 ** 5))
RATE = hs.one_of(hs.floats(), hs.floats(-1.0, 1.0), hs.none())
SETTINGS = hs.fixed_dictionaries({"spike_window": hs.sampled_from([0, 3, 5]),
                                  "probe_codes": hs.booleans(),
                                  "stuck_min_s": hs.sampled_from([0.0, 4.0, 30.0]),
                                  "stuck_change_c": hs.sampled_from([None, 0.01, 1.0]),
                                  "max_gap_s": hs.sampled_from([1.0, 300.0])})
CHECKS = dict(max_examples=300, deadline=None, suppress_health_check=list(HealthCheck))


def _woken(guard, kwargs):
    buf = bytearray(ReadingGuard.STATE_SIZE)
    guard.pack_into(buf, 0)
    woken = ReadingGuard(**kwargs)
    assert woken.unpack_from(buf, 0)
    return woken


def _same(a, b, va, vb):
    assert va == vb
    if va == status.ACCEPTED:
        assert a.elapsed_ms == b.elapsed_ms and a.gap == b.gap
    assert type(a.elapsed_ms) is int and 0 <= a.elapsed_ms <= a.restart_gap_ms + 1000


@settings(**CHECKS)
@given(SETTINGS, hs.lists(hs.tuples(TEMP, DT, RATE, hs.booleans()), max_size=60))
def test_restore_changes_nothing_dt(kwargs, steps):
    steady = ReadingGuard(**kwargs)
    woken = ReadingGuard(**kwargs)
    for temp, dt, rate, ok in steps:
        woken = _woken(woken, kwargs)
        _same(steady, woken, steady.check(temp, dt, rate, ok), woken.check(temp, dt, rate, ok))
    total = 0
    for code in range(len(status.VERDICT_NAMES)):
        total += steady.count(code)
    assert total == len(steps) == steady.accepted + steady.rejected


@settings(**CHECKS)
@given(SETTINGS, hs.integers(0, PERIOD - 1),
       hs.lists(hs.tuples(TEMP, hs.integers(-5000, 1 << 29), RATE, hs.booleans()), max_size=60))
def test_restore_changes_nothing_ticks_with_slept_time(kwargs, start, steps):
    steady = ReadingGuard(**kwargs)
    woken = ReadingGuard(**kwargs)
    ticks = start
    prev = None
    for temp, step, rate, ok in steps:
        ticks = (ticks + step) % PERIOD
        woken = _woken(woken, kwargs)
        slept = None
        if prev is not None:
            d = (ticks - prev) % PERIOD
            slept = (d if d < PERIOD // 2 else d - PERIOD) / 1000.0
        prev = ticks
        _same(steady, woken, steady.check_ticks(temp, ticks, rate, ok),
              woken.check_ticks(temp, ticks, rate, ok, slept))
