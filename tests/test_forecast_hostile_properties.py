"""Property tests (hypothesis, CPython) of the forecast and planner promises under hostile input.

A second opinion beside the seeded generator of tests/core/forecast_cases.py:
hypothesis draws the numbers (any float, NaN, infinities, None, huge ints)
and shrinks a failure to a small reproducer. Promises checked: the
never-raise methods never raise; ``temperature_at_c`` is finite exactly when
``reason`` is REASON_NONE (NaN otherwise); ``time_to_target_s`` is None or a
finite time >= 0 matching ``status``/``eta_s``; planner answers are None or
finite (duty in [0, 1]); ``work`` stays within MAX_PIECES and accounts for
every breakpoint read (reads <= 16 per unit of work, whatever the count of
breakpoints). Small budget (a few hundred examples); the million-case run is
benchmarks/fuzz_forecast.py.
"""
import math

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as hs

from forecast_cases import CountingSeq
from test_forecast_hostile import READS_PER_WORK
from tinytherm import forecast, status
from tinytherm.forecast import MAX_PIECES, Forecast
from tinytherm.planner import ReadyByPlanner

SETTINGS = settings(max_examples=150, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])

ANY_FLOAT = hs.floats(allow_nan=True, allow_infinity=True)
EXTREME = hs.sampled_from([0.0, -0.0, 5e-324, 1e-320, 1e-200, 1e12, 1e300, 1e308,
                           1.7976931348623157e308, -1e308, -5e-324])
NUMBER = hs.one_of(ANY_FLOAT, EXTREME, hs.floats(-200.0, 200.0))
JUNK = hs.one_of(hs.none(), hs.just("20"), hs.just([1.0]), hs.just(10 ** 400), hs.booleans())
ARG = hs.one_of(NUMBER, NUMBER, NUMBER, JUNK)
RATE = hs.one_of(hs.floats(0.0, 1e308), EXTREME.map(abs), hs.floats(1e-6, 1e-1))
TIMES = hs.lists(hs.floats(-1e308, 1e308), min_size=1, max_size=8).map(sorted)

AMBIENT = hs.one_of(
    hs.tuples(hs.just("constant"), NUMBER),
    hs.tuples(hs.just("ramp"), NUMBER, NUMBER, hs.one_of(hs.just(math.inf), RATE)),
    hs.tuples(hs.just("piecewise"), TIMES, hs.lists(NUMBER, min_size=8, max_size=8), NUMBER),
    hs.tuples(hs.just("periodic"), NUMBER, NUMBER, RATE, NUMBER),
)
PLAN = hs.one_of(
    hs.tuples(hs.just("duty"), hs.one_of(hs.floats(0.0, 1.0), EXTREME, ARG)),
    hs.tuples(hs.just("schedule"), TIMES, hs.lists(hs.floats(0.0, 1.0), min_size=8, max_size=8),
              NUMBER),
    hs.tuples(hs.just("boost"), NUMBER),
    hs.tuples(hs.just("thermostat"), NUMBER, hs.floats(0.0, 1e308)),
)


def _finite(x):
    return isinstance(x, float) and math.isfinite(x)


def _build(rate, gain, amb, ambient, plan):
    """A Forecast with the drawn schedule and plan, plus its counting sequences.

    A setter may refuse an argument with ValueError (its documented answer);
    the schedule is then left as it was.
    """
    fc = Forecast(1e-3, 0.0, 20.0)
    seqs = []
    for setter in ((lambda: fc.set_model(rate, gain)), (lambda: fc.set_ambient_constant(amb))):
        try:
            setter()
        except ValueError:
            pass
    try:
        if ambient[0] == "constant":
            fc.set_ambient_constant(ambient[1])
        elif ambient[0] == "ramp":
            fc.set_ambient_ramp(ambient[1], ambient[2], ambient[3])
        elif ambient[0] == "piecewise":
            n = len(ambient[1])
            tt = CountingSeq(ambient[1])
            vv = CountingSeq(ambient[2][:n])
            fc.set_ambient_piecewise(tt, vv, ambient[3])
            seqs += [tt, vv]
        else:
            fc.set_ambient_periodic(ambient[1], ambient[2], ambient[3], ambient[4])
    except ValueError:
        pass
    try:
        if plan[0] == "duty":
            fc.set_plan_duty(plan[1])
        elif plan[0] == "schedule":
            n = len(plan[1])
            tt = CountingSeq(plan[1])
            dd = CountingSeq(plan[2][:n])
            fc.set_plan_schedule(tt, dd, plan[3])
            seqs += [tt, dd]
        elif plan[0] == "boost":
            fc.set_plan_boost_hold(plan[1])
        else:
            fc.set_plan_thermostat(plan[1], plan[1] + plan[2])
    except ValueError:
        pass
    return fc, seqs


def _reads(seqs):
    n = 0
    for s in seqs:
        n += s.reads
        s.reads = 0
    return n


@SETTINGS
@given(RATE, NUMBER, NUMBER, AMBIENT, PLAN, ARG, ARG, ARG, ARG)
def test_forecast_promises_hold_on_any_input(rate, gain, amb, ambient, plan, start, target,
                                              horizon, t):
    fc, seqs = _build(rate, gain, amb, ambient, plan)
    _reads(seqs)
    v = fc.temperature_at_c(t, start)
    assert isinstance(v, float)
    if fc.reason == forecast.REASON_NONE:
        assert math.isfinite(v)
    else:
        assert v != v
    assert 0 <= fc.work <= MAX_PIECES
    assert _reads(seqs) <= READS_PER_WORK * (fc.work + 1)
    eta = fc.time_to_target_s(start, target, horizon)
    assert eta is None or (_finite(eta) and eta >= 0.0 and fc.eta_s == eta)
    if eta is None:
        assert fc.status == status.OUT_OF_REACH and fc.reason != forecast.REASON_NONE
    else:
        assert fc.status in (status.TRACKING, status.ARRIVED)
    assert _finite(fc.searched_s)
    assert 0 <= fc.work <= MAX_PIECES
    assert _reads(seqs) <= READS_PER_WORK * (fc.work + 1)
    assert fc.hold_is_sustainable() in (True, False)
    fc.ambient_at_c(t)  # may be NaN, must not raise


@SETTINGS
@given(RATE, NUMBER, NUMBER, AMBIENT, ARG, ARG, ARG, hs.sampled_from([0, 1, 2]))
def test_planner_answers_are_none_or_finite(rate, amb, gain, ambient, start, target, deadline,
                                            which):
    pl = ReadyByPlanner(1e-3, 20.0, 0.01)
    pl.forecast, _ = _build(rate, gain, amb, ambient, ("duty", 0.0))
    method = (pl.latest_start, pl.constant_duty, pl.cooling)[which]
    code = method(start, target, deadline)
    assert code == pl.status
    for v in (pl.start_in_s, pl.heat_for_s, pl.duty, pl.eta_s, pl.earliest_s,
              pl.off_at_deadline_c):
        assert v is None or _finite(v)
    if pl.duty is not None:
        assert 0.0 <= pl.duty <= 1.0
    if pl.start_in_s is not None:
        assert 0.0 <= pl.start_in_s <= deadline
    if code == status.TRACKING:
        assert (pl.start_in_s, pl.duty, pl.eta_s)[which] is not None


@SETTINGS
@given(hs.floats(1e-6, 1e-1), hs.floats(-1.0, 1.0), hs.floats(-50.0, 150.0),
       hs.floats(-50.0, 150.0), hs.floats(-50.0, 150.0), hs.floats(0.0, 1.0),
       hs.one_of(hs.just(math.inf), hs.floats(1e3, 1e308)))
def test_found_crossings_land_on_the_target(rate, gain, amb, start, target, duty, horizon):
    # In ordinary ranges, a found crossing must be where the forecast itself
    # puts the target, whatever the horizon (a far one used to stop the root
    # solve short); self-consistency, the scipy checks are in
    # tests/test_forecast_reference.py.
    fc = Forecast(rate, gain, amb)
    fc.set_plan_duty(duty)
    eta = fc.time_to_target_s(start, target, horizon)
    if eta is not None:
        t = fc.temperature_at_c(eta, start)
        assert abs(t - target) <= 1e-7 * (1.0 + abs(target) + abs(start) + abs(amb))
