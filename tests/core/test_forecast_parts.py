"""The forecast's parts on their own: ambient schedules, heater plans, the piece solver.

Both runtimes. Outside references are standard closed forms of the first-order
model, named beside each check; scenario numbers are invented.
"""
import math

from support import close
from tinytherm.ambient import (
    AMBIENT_CONSTANT,
    AMBIENT_PERIODIC,
    AMBIENT_PIECEWISE,
    AMBIENT_RAMP,
    AmbientSchedule,
    _real,
)
from tinytherm.forecast import Forecast
from tinytherm.heater_plan import (
    MODE_HOLDING,
    MODE_OFF,
    MODE_ON,
    PLAN_BOOST_HOLD,
    PLAN_THERMOSTAT,
    HeaterPlan,
)
from tinytherm.piecewise import MAX_PIECES, REASON_WORK_CAP, PieceSolver


def _refused(fn, *args):
    try:
        fn(*args)
    except ValueError:
        return True
    return False


def test_ambient_schedule_kinds_and_values():
    amb = AmbientSchedule(21.0)
    assert amb.kind == AMBIENT_CONSTANT and amb.at_c(1e6) == 21.0
    amb.set_ramp(20.0, 0.01, 600.0)
    assert amb.kind == AMBIENT_RAMP
    assert close(amb.at_c(300.0), 23.0, 1e-15) and close(amb.at_c(5000.0), 26.0, 1e-15)
    amb.range_c()
    assert (amb.lo_c, amb.hi_c) == (20.0, 26.0)
    tt = [100.0, 200.0, 200.0, 400.0]
    vv = [10.0, 20.0, 30.0, 30.0]
    amb.set_piecewise(tt, vv, 50.0)
    assert amb.kind == AMBIENT_PIECEWISE and amb.times_s is tt  # read in place
    assert amb.at_c(0.0) == 10.0                      # held before the first
    assert close(amb.at_c(100.0), 15.0, 1e-15)        # halfway 100 -> 200
    assert amb.at_c(150.0) == 30.0                    # after the step at 200
    amb.range_c()
    assert (amb.lo_c, amb.hi_c) == (10.0, 30.0)
    amb.set_periodic(5.0, 2.0, 3600.0, 0.5)
    assert amb.kind == AMBIENT_PERIODIC
    assert close(amb.at_c(900.0), 5.0 + 2.0 * math.sin(0.5 + math.pi / 2.0), 1e-12)
    assert amb.at_c(math.inf) != amb.at_c(math.inf)   # NaN, not an exception


def test_ambient_schedule_refuses_and_keeps_the_old_one():
    amb = AmbientSchedule(21.0)
    assert _refused(amb.set_constant, math.nan)
    assert _refused(amb.set_ramp, 20.0, "0.1", 10.0)
    assert _refused(amb.set_piecewise, [2.0, 1.0], [0.0, 0.0])
    assert _refused(amb.set_periodic, 20.0, 1.0, 0.0)
    assert amb.kind == AMBIENT_CONSTANT and amb.at_c(0.0) == 21.0


def test_real_reads_numbers_as_the_forecast_always_did():
    assert _real(2) == 2.0 and type(_real(2)) is float
    assert _real(True) == 1.0 and _real(False) == 0.0   # float(True), as before
    for junk in (None, "20", b"1", [1.0], 10 ** 400):
        v = _real(junk)
        assert v != v, junk


def test_heater_plan_switching_modes():
    plan = HeaterPlan()
    plan.set_thermostat(55.0, 60.0, start_on=False)
    assert plan.kind == PLAN_THERMOSTAT
    plan.start_mode(50.0)
    assert plan.mode == MODE_ON and plan.duty_now() == 1.0
    assert plan.switch_level_c() == 60.0
    plan.switched()
    assert plan.mode == MODE_OFF and plan.switch_level_c() == 55.0
    plan.start_mode(57.0)                       # inside the band: start_on says
    assert plan.mode == MODE_OFF
    plan.set_boost_hold(70.0)
    assert plan.kind == PLAN_BOOST_HOLD
    plan.start_mode(20.0)
    assert plan.mode == MODE_ON
    plan.switched()
    assert plan.mode == MODE_HOLDING and plan.duty_now() == 0.0
    assert _refused(plan.set_duty, 1.5) and _refused(plan.set_thermostat, 60.0, 55.0)
    assert plan.kind == PLAN_BOOST_HOLD


def test_piece_solver_linear_ambient_matches_ramp_response():
    # First-order response to a ramp input R(t) = r + b t (standard result,
    # e.g. any control text's ramp response; from memory):
    #   T(t) = r + b t - b/k + (T0 - r + b/k) exp(-k t) + (q/k)(1 - exp(-k t))
    k = 1.0 / 1200.0
    solver = PieceSolver()
    solver.k = k
    solver.g = 0.02
    amb = AmbientSchedule()
    amb.set_ramp(18.0, 0.002)
    solver.setup(0.0, 70.0, 0.5, amb)
    b = 0.002
    q = 0.01
    for s in (0.0, 1.0, 300.0, 1200.0, 10000.0):
        e = math.exp(-k * s)
        expected = 18.0 + b * s - b / k + (70.0 - 18.0 + b / k) * e + (q / k) * (1.0 - e)
        assert close(solver.temp(s), expected, 1e-12), s
    # the crossing it finds is where that closed form equals the level
    s = solver.first_root(60.0, 1e9)
    assert s > 0.0 and close(solver.temp(s), 60.0, 1e-12)


def test_piece_solver_sine_ambient_steady_state():
    # Sinusoidal input: steady-state amplitude ratio k/sqrt(k^2 + w^2) and lag
    # atan(w/k) (standard first-order frequency response; from memory).
    k = 1.0 / 600.0
    period = 3600.0
    w = 2.0 * math.pi / period
    solver = PieceSolver()
    solver.k = k
    amb = AmbientSchedule()
    amb.set_periodic(20.0, 4.0, period)
    solver.setup(0.0, 20.0, 0.0, amb)
    ratio = k / math.sqrt(k * k + w * w)
    lag = math.atan(w / k)
    s = 40.0 * 600.0  # forty time constants: the transient is gone
    assert close(solver.temp(s), 20.0 + 4.0 * ratio * math.sin(w * s - lag), 1e-9)


def test_piece_solver_counts_work_up_to_the_cap():
    solver = PieceSolver()
    n = 0
    while solver.tick():
        n += 1
    assert n == MAX_PIECES and solver.work == MAX_PIECES and solver.stop == REASON_WORK_CAP
    # a cursor over 1000 coincident breakpoints stops at the cap, not past it
    solver.work = MAX_PIECES - 3
    assert solver.advance([5.0] * 1000, -1, 0.0, 10.0) == -2


def test_forecast_is_its_parts():
    fc = Forecast(1.0 / 900.0, 0.05, 20.0)
    assert fc.rate_per_s == 1.0 / 900.0 and fc.gain_k_per_s == 0.05
    fc.set_ambient_ramp(20.0, 0.001, 600.0)
    fc.set_plan_thermostat(55.0, 60.0)
    assert fc.ambient.kind == AMBIENT_RAMP and fc.heater.kind == PLAN_THERMOSTAT
    assert fc.solver.k == fc.rate_per_s
