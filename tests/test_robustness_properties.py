"""Property-based tests (hypothesis) over arbitrary reading streams (CPython only).

Properties: ``update``/``update_ticks``/``predict``/``save``/``restore`` never
raise; every float the estimator holds stays finite; the answer is either a
finite non-negative time with ``eta_low_s <= eta_s <= eta_high_s`` or ``None``
with a status that says why; any bytes given to ``restore`` give a restore
code and leave a usable estimator.
"""
import math

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as hs

from tinytherm import blob as bl
from tinytherm import status as st
from tinytherm.estimator import ThermalEstimator

ANY_FLOAT = hs.floats(allow_nan=True, allow_infinity=True)
TEMP = hs.one_of(ANY_FLOAT, hs.floats(-60.0, 160.0), hs.sampled_from([85.0, -127.0, 0.0]),
                 hs.none(), hs.integers(-200, 200))
DT = hs.one_of(ANY_FLOAT, hs.floats(-5.0, 30.0), hs.sampled_from([0.0, 1.0, 2.0, 1e6]))
TICKS = hs.integers(-(1 << 31), 1 << 31)
DUTY = hs.one_of(hs.floats(0.0, 1.0), ANY_FLOAT, hs.none())
AMBIENT = hs.one_of(hs.none(), ANY_FLOAT, hs.floats(-10.0, 40.0))

STEP = hs.tuples(hs.sampled_from(["dt", "ticks", "predict", "wake"]), TEMP, DT, TICKS, DUTY,
                 AMBIENT, hs.floats(-50.0, 150.0))


def _check(est):
    for obj in (est, est.guard, est.detector):
        for name, v in obj.__dict__.items():
            if isinstance(v, float) and not (name == "eta_high_s" and v == math.inf):
                assert math.isfinite(v), (name, v)
    assert 0 <= est.status < len(st.STATUS_NAMES)
    if est.eta_s is None:
        assert est.status != st.TRACKING
        assert est.eta_low_s is None and est.eta_high_s is None
    else:
        assert math.isfinite(est.eta_s) and est.eta_s >= 0.0
        assert 0.0 <= est.eta_low_s <= est.eta_s <= est.eta_high_s


def _run(est, steps):
    for kind, temp, dt, ticks, duty, ambient, target in steps:
        if kind == "dt":
            v = est.update(temp, dt, ambient, 0.0 if duty is None else duty)
            assert 0 <= v < len(st.VERDICT_NAMES)
        elif kind == "ticks":
            v = est.update_ticks(temp, ticks, ambient, 0.0 if duty is None else duty)
            assert 0 <= v < len(st.VERDICT_NAMES)
        elif kind == "predict":
            assert est.predict(target) == est.status
            _check(est)
        else:
            blob = est.save()
            assert len(blob) == bl.BLOB_SIZE
            assert est.restore(blob) == bl.RESTORED
        _check(est)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(hs.lists(STEP, max_size=120), hs.booleans(), hs.sampled_from([None, 21.0]))
def test_arbitrary_streams_never_raise_and_stay_finite(steps, heater, ambient_c):
    est = ThermalEstimator(heater=heater, ambient_c=ambient_c)
    _run(est, steps)


@settings(max_examples=60, deadline=None)
@given(hs.lists(hs.tuples(hs.floats(-1.0, 1.0), hs.floats(0.5, 5.0)), min_size=50, max_size=300),
       hs.lists(hs.tuples(hs.integers(0, 299), ANY_FLOAT), max_size=40), hs.floats(30.0, 90.0))
def test_cooling_with_injected_faults_keeps_a_sane_answer(noise, faults, start):
    # a plausible cooling trace with arbitrary garbage spliced in
    est = ThermalEstimator()
    bad = dict(faults)
    temp = start
    for i, (n, dt) in enumerate(noise):
        temp = 21.0 + (temp - 21.0) * math.exp(-dt / 1200.0)
        value = bad.get(i, temp + 0.05 * n)
        est.update(value, dt)
        if i % 10 == 0:
            est.predict(0.5 * (start + 21.0))
            _check(est)


@settings(max_examples=300, deadline=None)
@given(hs.binary(min_size=0, max_size=160))
def test_restore_of_arbitrary_bytes_never_raises(data):
    est = ThermalEstimator()
    est.update(40.0, 0.0)
    code = est.restore(data)
    assert 0 <= code < len(bl.RESTORE_NAMES)
    if code != bl.RESTORED:
        assert est.readings == 0
    _check(est)
    est.update(39.0, 1.0)
    est.predict(30.0)
    _check(est)


@settings(max_examples=200, deadline=None)
@given(hs.integers(0, 127), hs.integers(1, 255))
def test_sealed_payload_garbage_never_raises(index, value):
    # correctly sealed frames whose payload is garbage reach the value checks
    est = ThermalEstimator()
    t = 0.0
    for i in range(200):
        est.update(21.0 + 50.0 * math.exp(-t / 900.0), 0.0 if i == 0 else 2.0)
        t += 2.0
    frame = bytearray(est.save())
    if bl.PAYLOAD_OFFSET <= index < bl.CRC_OFFSET:
        frame[index] = value
    code = ThermalEstimator().restore(bytes(bl.seal(frame)))
    assert code in (bl.RESTORED, bl.BLOB_VALUES)
    other = ThermalEstimator()
    other.restore(bytes(bl.seal(frame)))
    other.update(40.0, 2.0)
    other.predict(30.0)
    _check(other)
