"""Hostile input for the forecast, the planner and the model (issue 12, items 5 and 6).

Runs on both runtimes (CPython and the unix micropython binary, see
tests/test_on_micropython.py). The first tests are the reproducers from the
issue, each with the answer it should give; then the work bound (every step
counts as work, whatever the number of breakpoints) and a seeded fuzz run of
a few hundred scenarios (tests/core/forecast_cases.py; the million-case run is
benchmarks/fuzz_forecast.py).
"""
import math

from support import XorShift, close
from forecast_cases import CountingSeq, Repeat, Stats, run
from tinytherm import forecast, model, status
from tinytherm.forecast import MAX_PIECES, AmbientTracker, Forecast
from tinytherm.planner import ReadyByPlanner


def _finite(x):
    return isinstance(x, float) and x == x and x not in (math.inf, -math.inf)


# ------------------------------------------------------------ reproducers
def test_tiny_rate_with_a_period_of_1e300_does_not_divide_by_zero():
    # Was ZeroDivisionError: k*k + w*w underflowed to 0 in the sine piece.
    fc = Forecast(1e-200, 0.0, 20.0)
    fc.set_ambient_periodic(20.0, 5.0, 1e300)
    # tau = 1e200 s is tiny against the period, so the liquid follows the
    # ambient (quasi-static limit of a first-order lag, w*tau << 1; standard
    # linear-systems result, from memory) once the transient is gone: it first
    # reaches 22 where 20 + 5 sin(2 pi t / P) = 22, t = asin(0.4) P / (2 pi).
    eta = fc.time_to_target_s(10.0, 22.0)
    assert fc.status == status.TRACKING
    assert close(eta, math.asin(0.4) / (2.0 * math.pi) * 1e300, 1e-9)
    # after 100 s it has barely moved: T = 10 + k t (R - 10) to first order
    assert close(fc.temperature_at_c(100.0, 10.0), 10.0 + 1e-198 * 10.0, 1e-12)
    assert fc.reason == forecast.REASON_NONE


def test_fast_rate_with_a_period_of_1e308_does_not_take_sin_of_inf():
    # Was ValueError (math.sin(inf)): the skip span doubled past the largest
    # float, and k*s overflowed in the closed form.
    fc = Forecast(1e12, 0.0, 20.0)
    fc.set_ambient_periodic(20.0, 5.0, 1e308)
    eta = fc.time_to_target_s(10.0, 22.0)
    # Same quasi-static crossing as above (tau = 1e-12 s).
    assert fc.status == status.TRACKING
    assert close(eta, math.asin(0.4) / (2.0 * math.pi) * 1e308, 1e-9)
    assert _finite(fc.searched_s)
    t = fc.temperature_at_c(1e307, 10.0)
    assert close(t, 20.0 + 5.0 * math.sin(2.0 * math.pi * 0.1), 1e-9)
    # A level the ambient never reaches: proved never, not a crash.
    assert fc.time_to_target_s(10.0, 26.0) is None
    assert fc.reason == forecast.REASON_NEVER


def test_constant_duty_with_a_denormal_deadline_is_too_slow():
    # Was ZeroDivisionError: g * D underflowed to 0.
    pl = ReadyByPlanner(0.0, 18.0, 0.01)
    code = pl.constant_duty(21.0, 100.0, 5e-324)
    assert code == status.OUT_OF_REACH and pl.reason == forecast.REASON_TOO_SLOW
    assert pl.duty is None
    # k = 0: full power is the straight line T0 + g t, so 79 K take 7900 s.
    assert close(pl.earliest_s, 7900.0, 1e-12)
    # and with k*D overflowing (phi1(kD) -> 0 before): a plain answer
    pl = ReadyByPlanner(1e10, 18.0, 1e12)
    assert pl.constant_duty(18.0, 50.0, 1e300) == status.TRACKING
    # steady state: u = k gap / g (the transient has long gone)
    assert close(pl.duty, 1e10 * 32.0 / 1e12, 1e-12)


def test_denormal_duty_is_not_an_infinite_eta_with_tracking():
    # Was: eta inf with status TRACKING. The exact time, 18 / (194 * 5e-324),
    # is about 1.9e322 s: beyond the largest float, so "not within the float
    # time range" (HORIZON), with a finite searched_s.
    fc = Forecast(0.0, -194.0, 18.0)
    fc.set_plan_duty(5e-324)
    assert fc.time_to_target_s(18.0, 0.0) is None
    assert fc.status == status.OUT_OF_REACH
    assert fc.reason == forecast.REASON_HORIZON
    assert fc.eta_s is None and _finite(fc.searched_s)
    # a duty that gets there inside the float range still answers (k = 0:
    # t = gap / (g u), straight-line ramp)
    fc.set_plan_duty(1e-300)
    assert close(fc.time_to_target_s(18.0, 0.0), 18.0 / (194.0 * 1e-300), 1e-12)
    assert fc.status == status.TRACKING


def test_non_numbers_are_bad_input_not_exceptions():
    fc = Forecast(1.0 / 600.0, 0.01, 20.0)
    for bad in (None, "20", [1.0], 10 ** 400, math.nan, math.inf):
        assert fc.time_to_target_s(bad, 30.0) is None
        assert fc.reason == forecast.REASON_BAD_INPUT
        assert fc.temperature_at_c(10.0, bad) != fc.temperature_at_c(10.0, bad)
        assert fc.reason == forecast.REASON_BAD_INPUT
        pl = ReadyByPlanner(1.0 / 600.0, 20.0, 0.01)
        for method in (pl.latest_start, pl.constant_duty, pl.cooling):
            assert method(20.0, 60.0, bad) == status.OUT_OF_REACH
            assert pl.reason == forecast.REASON_BAD_INPUT
        refused = False
        try:
            fc.set_plan_duty(bad)
        except ValueError:
            refused = True
        assert refused
    # a bool is a number (1.0), as float(True) says
    fc.set_plan_duty(True)
    assert fc.time_to_target_s(20.0, 25.0) is not None  # E = 20 + 0.01 * 600 = 26


def test_overflowing_temperatures_are_nan_with_a_reason():
    # k = 0 and the largest heater: after 1e300 s the exact temperature,
    # 20 + 1.7e308 * 1e300, is beyond any float.
    fc = Forecast(0.0, 1.7976931348623157e308, 20.0)
    fc.set_plan_duty(1.0)
    t = fc.temperature_at_c(1e300, 20.0)
    assert t != t and fc.reason == forecast.REASON_BAD_INPUT
    # while a crossing well inside the range is still found: t = gap / g
    assert close(fc.time_to_target_s(20.0, 1e300), (1e300 - 20.0) / 1.7976931348623157e308,
                 1e-12)


def test_ambient_tracker_never_raises():
    tr = AmbientTracker()
    for bad in (None, "1", [2.0], 10 ** 400, math.nan):
        assert tr.update(bad, 10.0) is False
        assert tr.update(20.0, bad) is False
    fc = Forecast(1e-3, 0.0, 20.0)
    for a, dt in ((20.0, 0.0), (1e300, 10.0), (-1e300, 1.7976931348623157e308),
                  (1e154, 5e-324), (3.0, 1e308)):
        assert tr.update(a, dt) is True
    kind = tr.apply(fc)  # sums overflowed: leaves fc alone or sets a finite schedule
    assert kind in (forecast.AMBIENT_CONSTANT, forecast.AMBIENT_RAMP, forecast.AMBIENT_PERIODIC)
    v = fc.time_to_target_s(20.0, 25.0)
    assert v is None or _finite(v)


def test_model_functions_at_float_extremes():
    # temperature_at: the equilibrium R + g/k overflows for k = 1e-320 (it was
    # NaN); the answer is the lossless ramp T0 + g u t (no losses, energy
    # balance; from memory): 20 + 1e10 * 10.
    assert close(model.temperature_at(10.0, 20.0, 1e-320, 20.0, 1e10, 1.0), 20.0 + 1e11, 1e-12)
    # T0 - E overflows: start 1e308 with E = -1e308 (a huge chiller term),
    # k t = 50, so T = E + (T0 - E) e^-50, written as finite parts.
    t = model.temperature_at(50.0, 1e308, 1.0, 0.0, -1e308, 1.0)
    assert close(t, -1e308 + 2e308 * math.exp(-50.0), 1e-12)
    # rate_from_three_per_s: equal second and third reading (was
    # ZeroDivisionError): not an exponential approach.
    assert model.rate_from_three_per_s(3.923e-321, -1e-13, -1e-13, 1e201) is None
    # ambient_from_three_c: the products overflowed (was NaN). The formula is
    # homogeneous of degree 1 (Aitken's delta-squared, standard; from memory),
    # so the same readings scaled by 1e-276 give the answer scaled by 1e-276.
    a = (1.7976931348623157e308, 1.4451217614204004e279, 2.3441339046841335e276)
    r = model.ambient_from_three_c(a[0], a[1], a[2])
    s = model.ambient_from_three_c(a[0] * 1e-276, a[1] * 1e-276, a[2] * 1e-276)
    assert _finite(r) and close(r, s * 1e276, 1e-9)
    # rate_from_physical_per_s: h*A and m*c both overflow (was -inf/inf = NaN).
    k = model.rate_from_physical_per_s(-2.914557873029182e261, 3.3273966600767946e269, 1e300,
                                       1.2809940987082623e257)
    assert close(k, -2.914557873029182 * 3.3273966600767946 / 1.2809940987082623 * 1e-27, 1e-12)


# ------------------------------------------------------------- work bound
# Reads of the breakpoint sequences per unit of work: a piece reads at most
# 11 ambient entries (cursor look, next break, value and slope) and 3 duty
# entries; a gallop or bisection look reads one. 16 bounds it with a margin.
READS_PER_WORK = 16

def _coincident_ambient(n, at_s):
    tt = Repeat(n, at_s)
    vv = Repeat(n, 21.0)
    return tt, vv


def _ambient_case(n, plan):
    tt, vv = _coincident_ambient(n, 100.0)
    fc = Forecast(1.0 / 600.0, 0.01, 20.0)
    fc.set_ambient_piecewise(tt, vv)
    if plan == "thermostat":
        fc.set_plan_thermostat(40.0, 45.0)
    else:
        fc.set_plan_duty(1.0)
    tt.reads = 0
    vv.reads = 0
    fc.time_to_target_s(20.0, 30.0)
    return fc.work, tt.reads + vv.reads, fc.status


def _schedule_case(n):
    tt = Repeat(n, 50.0)
    dd = Repeat(n, 1.0)
    fc = Forecast(1.0 / 600.0, 0.01, 20.0)
    fc.set_plan_schedule(tt, dd)
    tt.reads = 0
    dd.reads = 0
    fc.time_to_target_s(20.0, 30.0)
    return fc.work, tt.reads + dd.reads, fc.status


def _latest_start_case(n):
    tt, vv = _coincident_ambient(n, 300.0)
    pl = ReadyByPlanner(1.0 / 600.0, 20.0, 0.01)
    pl.forecast.set_ambient_piecewise(tt, vv)
    tt.reads = 0
    vv.reads = 0
    pl.latest_start(20.0, 40.0, 3000.0)
    return pl.work, tt.reads + vv.reads, pl.status  # summed over its forecast runs


def test_coincident_breakpoints_count_as_work():
    # Before: the cursor stepped through every coincident breakpoint (1e6
    # of them: 3,670x slower than 10, still work=3). Now the skip gallops and
    # bisects, every look is work, and the reads per unit of work stay
    # bounded whatever n is.
    for case in ((lambda n: _ambient_case(n, "duty")), (lambda n: _ambient_case(n, "thermostat")),
                 _schedule_case, _latest_start_case):
        w10, r10, s10 = case(10)
        wbig, rbig, sbig = case(20000)
        assert s10 == sbig  # same answer status
        for w, r in ((w10, r10), (wbig, rbig)):
            assert 0 < w <= MAX_PIECES
            assert r <= READS_PER_WORK * (w + 1)  # work says truly how much was read
        # galloping then bisecting 20000 coincident breakpoints: about 2 log2(n)
        assert wbig - w10 <= 2 * 15 + 2
        assert rbig <= READS_PER_WORK * (2 * 15 + 2 + w10 + 1)


def test_thermostat_does_not_read_every_ambient_breakpoint_per_call():
    # The range check of the thermostat plan read every breakpoint on each
    # call; the range is now kept when the breakpoints are set.
    n = 5000
    tt = CountingSeq([10.0 * i for i in range(n)])
    vv = CountingSeq([20.0 + (i % 7) for i in range(n)])
    fc = Forecast(1.0 / 600.0, 0.05, 20.0)
    fc.set_ambient_piecewise(tt, vv)
    fc.set_plan_thermostat(50.0, 55.0)
    for target in (60.0, 10.0):  # outside the band: proved never at once
        tt.reads = 0
        vv.reads = 0
        assert fc.time_to_target_s(40.0, target) is None
        assert fc.reason == forecast.REASON_NEVER and fc.work == 0
        assert tt.reads + vv.reads == 0
    assert fc.hold_is_sustainable() is False  # O(1) too (thermostat plan: hold_c unset)
    tt.reads = 0
    vv.reads = 0
    fc.time_to_target_s(40.0, 52.0)
    assert fc.status == status.TRACKING
    assert tt.reads + vv.reads <= READS_PER_WORK * (fc.work + 1)


def test_many_distinct_breakpoints_stop_at_the_cap():
    # 10,000 duty steps 10 s apart and a far target: the walk stops at the
    # cap with work == MAX_PIECES (not one unit more) and says how far it got.
    n = 10000
    tt = CountingSeq([10.0 * i for i in range(n)])
    dd = CountingSeq([0.5 * (i % 2) for i in range(n)])
    fc = Forecast(1.0 / 500.0, 0.01, 20.0)
    fc.set_plan_schedule(tt, dd, now_s=25000.0)  # now far into the schedule
    tt.reads = 0
    dd.reads = 0
    assert fc.time_to_target_s(20.0, 90.0) is None
    assert fc.reason == forecast.REASON_WORK_CAP and fc.work == MAX_PIECES
    assert 0.0 < fc.searched_s < 10.0 * n
    assert tt.reads + dd.reads <= READS_PER_WORK * (fc.work + 1)


# -------------------------------------------------------------- fuzz run
def test_seeded_hostile_fuzz_small_budget():
    # A few hundred scenarios (about 2,000 calls) of tests/core/forecast_cases.py;
    # benchmarks/fuzz_forecast.py runs the same generator for 1e6+ calls.
    st = Stats()
    run(XorShift(12), st, 300)
    assert st.calls > 1500
    assert st.exceptions == 0, st.messages
    assert st.nonfinite == 0, st.messages
    assert st.broken == 0, st.messages
    assert 0 < st.max_work <= MAX_PIECES
    assert st.max_reads_per_work <= READS_PER_WORK


def test_searched_time_stays_finite_when_a_piece_starts_near_the_largest_float():
    # Found by benchmarks/fuzz_forecast.py (seed 1): a duty step at 1e308 s
    # starts a sine piece whose search stops at the float range 1.3e308 s
    # into it; t + 1.3e308 overflowed and searched_s was inf.
    fc = Forecast(3.276e-321, -1.0546981161294356e-194, 20.0)
    fc.set_ambient_periodic(7.266883157089696e-145, -19.162484910339117, 1e300,
                            4.6169840292832305)
    fc.set_plan_schedule((32.39804171025753, 3.0420289991726754e125, 1e308), (0.2, 0.7, 1.0))
    assert fc.time_to_target_s(8.331634531705812e122, -1.032160468215147e-237) is None
    assert fc.reason == forecast.REASON_HORIZON
    assert _finite(fc.searched_s) and fc.searched_s >= 1e308


def test_a_far_horizon_does_not_stop_the_root_solve_short():
    # Was: with horizon_s = 1e30 the crossing came out as 2.7e10 s instead
    # of 446 s (64 halvings of a [0, 1e30 s] bracket leave 5e10 s). Newton's
    # law of cooling, t = ln((T0 - R)/(L - R)) / k (standard; from memory).
    k = 1.0 / 900.0
    fc = Forecast(k, 0.0, 21.0)
    exact = math.log(64.0 / 39.0) / k
    for horizon in (1e6, 1e20, 1e30, 1e100, 1e308):
        assert close(fc.time_to_target_s(85.0, 60.0, horizon), exact, 1e-12), horizon
        assert fc.status == status.TRACKING
    # a crossing 1e-203 s after the start inside a 1.8e292 s piece: the
    # liquid leaves at -127.44 K/s, so t = 1e-200 / 127.44 (to first order)
    fc = Forecast(3.256701597140353e-188, -127.43992544710636, -2.88211036395908e158)
    fc.set_plan_duty(1.0)
    eta = fc.time_to_target_s(-0.0, -1e-200, 1.817354482481511e292)
    assert close(eta, 1e-200 / 127.43992544710636, 1e-9)
    # Found by hypothesis: a Newton step in the flat tail of a 1e63 s bracket
    # moved by ulps and was taken for convergence (eta 2e32 s). Exponential
    # approach to E = R + g u / k = -1 - 1/3 (standard first-order step
    # response; from memory): t = ln((33 - E) / (0 - E)) / k.
    fc = Forecast(0.09375, -1.0, -1.0)
    fc.set_plan_duty(0.03125)
    e = -1.0 - 0.03125 / 0.09375
    eta = fc.time_to_target_s(33.0, 0.0, 1.0682503185248107e63)
    assert close(eta, math.log((33.0 - e) / (0.0 - e)) / 0.09375, 1e-12)
