"""Ready-by planning (both runtimes).

Each plan is checked by running it forward through the forecast and against
the exponential law (Newton's law of cooling with a heater term, standard
closed form; from memory). Scenario numbers are invented.
"""
import math

from support import XorShift, close
from tinytherm import forecast, status
from tinytherm.forecast import Forecast
from tinytherm.planner import ReadyByPlanner


def _run_delay_start(k, amb, g, start_c, start_in_s, deadline_s, fc=None):
    if fc is None:
        fc = Forecast(k, g, amb)
    fc.set_plan_schedule((0.0, start_in_s), (0.0, 1.0))
    return fc.temperature_at_c(deadline_s, start_c)


def test_latest_start_lands_on_target_at_deadline():
    rng = XorShift(11)
    seen = [0, 0, 0, 0]  # tracking, too slow, beyond equilibrium, no drive needed
    for trial in range(60):
        k = 1.0 / rng.uniform(300.0, 6000.0)
        g = rng.uniform(0.005, 0.1)
        amb = rng.uniform(0.0, 30.0)
        start = rng.uniform(0.0, 90.0)
        target = rng.uniform(30.0, 95.0)
        deadline = rng.uniform(30.0, 8000.0)
        pl = ReadyByPlanner(k, amb, g)
        code = pl.latest_start(start, target, deadline)
        assert code == pl.status
        if code == status.TRACKING:
            assert 0.0 <= pl.start_in_s <= deadline
            assert close(pl.start_in_s + pl.heat_for_s, deadline, 1e-12)
            got = _run_delay_start(k, amb, g, start, pl.start_in_s, deadline)
            assert close(got, target, 1e-9), (trial, got, target)
            seen[0] += 1
        elif pl.reason == forecast.REASON_TOO_SLOW:
            seen[1] += 1
            # starting now at full power is still late (or never)
            assert pl.heat_for_s > deadline
            assert pl.earliest_s is None or pl.earliest_s > deadline
        elif pl.reason == forecast.REASON_BEYOND_EQUILIBRIUM:
            seen[2] += 1
            # full power from now cannot reach it, at any time
            assert target >= amb + g / k - 1e-9 or k * (target - pl.off_at_deadline_c) / g >= 1.0
        else:
            assert code == status.ARRIVED and pl.reason == forecast.REASON_NO_DRIVE_NEEDED
            assert pl.off_at_deadline_c >= target
            seen[3] += 1
    assert seen[0] >= 5 and seen[1] + seen[2] >= 5, seen


def test_latest_start_worked_by_hand():
    # Invented scenario: 1.5 L of water in a kettle-like vessel, k = 1/2400 1/s,
    # heater gain 0.04 K/s, kitchen at 19 C, water at 19 C, wanted at 75 C in
    # 2 hours. Heater-off stays at 19, gap 56 K, full-power rise g/k = 96 K:
    # h = -ln(1 - 56/96) * 2400 s.
    pl = ReadyByPlanner(1.0 / 2400.0, 19.0, 0.04)
    assert pl.latest_start(19.0, 75.0, 7200.0) == status.TRACKING
    h = -math.log(1.0 - 56.0 / 96.0) * 2400.0
    assert close(pl.heat_for_s, h, 1e-12)
    assert close(pl.start_in_s, 7200.0 - h, 1e-12)


def test_constant_duty_lands_on_target_at_deadline():
    rng = XorShift(12)
    found = 0
    for trial in range(40):
        k = 1.0 / rng.uniform(300.0, 6000.0)
        g = rng.uniform(0.01, 0.3)
        amb = rng.uniform(0.0, 30.0)
        start = rng.uniform(0.0, 60.0)
        target = rng.uniform(30.0, 95.0)
        deadline = rng.uniform(60.0, 20000.0)
        pl = ReadyByPlanner(k, amb, g)
        code = pl.constant_duty(start, target, deadline)
        if code == status.TRACKING:
            found += 1
            assert 0.0 <= pl.duty <= 1.0
            fc = Forecast(k, g, amb)
            fc.set_plan_duty(pl.duty)
            assert close(fc.temperature_at_c(deadline, start), target, 1e-9)
            # constant ambient: monotone approach, so the deadline is the first arrival
            assert close(fc.time_to_target_s(start, target), deadline, 1e-9)
        elif code == status.OUT_OF_REACH and pl.reason == forecast.REASON_TOO_SLOW:
            fc = Forecast(k, g, amb)
            fc.set_plan_duty(1.0)
            assert fc.temperature_at_c(deadline, start) < target
    assert found > 5


def test_impossible_requests_have_clear_answers():
    pl = ReadyByPlanner(1.0 / 1200.0, 18.0, 0.05)  # full power levels off at 78 C
    assert pl.latest_start(18.0, 85.0, 36000.0) == status.OUT_OF_REACH
    assert pl.reason == forecast.REASON_BEYOND_EQUILIBRIUM
    assert pl.start_in_s is None
    assert pl.constant_duty(18.0, 85.0, 36000.0) == status.OUT_OF_REACH
    assert pl.reason == forecast.REASON_BEYOND_EQUILIBRIUM
    assert pl.latest_start(18.0, 70.0, 600.0) == status.OUT_OF_REACH
    assert pl.reason == forecast.REASON_TOO_SLOW
    eq = 78.0
    assert close(pl.earliest_s, math.log((18.0 - eq) / (70.0 - eq)) * 1200.0, 1e-12)
    # already hot enough with the heater off at the deadline
    assert pl.latest_start(90.0, 70.0, 60.0) == status.ARRIVED
    assert pl.reason == forecast.REASON_NO_DRIVE_NEEDED
    assert pl.constant_duty(90.0, 70.0, 60.0) == status.ARRIVED and pl.duty == 0.0
    # no heater at all
    pl.set_model(1.0 / 1200.0, 18.0, 0.0)
    assert pl.latest_start(18.0, 30.0, 600.0) == status.OUT_OF_REACH
    # bad input
    assert pl.latest_start(float("nan"), 30.0, 600.0) == status.OUT_OF_REACH
    assert pl.reason == forecast.REASON_BAD_INPUT
    assert pl.cooling(30.0, 20.0, -5.0) == status.OUT_OF_REACH
    assert pl.reason == forecast.REASON_BAD_INPUT


def test_cooling_on_time_late_never():
    k = 1.0 / 1500.0
    pl = ReadyByPlanner(k, 4.0, 0.0)  # a drink in a 4 C fridge
    t = math.log((25.0 - 4.0) / (8.0 - 4.0)) / k  # exponential law
    assert pl.cooling(25.0, 8.0, t + 60.0) == status.TRACKING
    assert close(pl.eta_s, t, 1e-12) and pl.on_time
    assert pl.cooling(25.0, 8.0, t - 60.0) == status.OUT_OF_REACH
    assert pl.reason == forecast.REASON_LATE and close(pl.eta_s, t, 1e-12)
    assert not pl.on_time
    assert pl.cooling(25.0, 3.0, 1e6) == status.OUT_OF_REACH
    assert pl.reason == forecast.REASON_NEVER and pl.eta_s is None
    # a chilled drink warming passively in a 21 C room
    pl.set_model(k, 21.0, 0.0)
    assert pl.cooling(4.0, 12.0, 3600.0) == status.TRACKING
    assert close(pl.eta_s, math.log(17.0 / 9.0) / k, 1e-12)


def test_cooling_direction_away_from_ambient_is_never():
    pl = ReadyByPlanner(1.0 / 1500.0, 4.0, 0.0)
    assert pl.cooling(6.0, 8.0, 1e5) == status.OUT_OF_REACH
    assert pl.reason == forecast.REASON_NEVER
    assert pl.cooling(6.0, 6.0, 0.0) == status.ARRIVED


def test_latest_start_under_periodic_ambient():
    # Superposition makes the plan exact under any ambient: check by running
    # the delay-start schedule through the same varying ambient.
    k = 1.0 / 900.0
    g = 0.05
    pl = ReadyByPlanner(k, 0.0, g)
    pl.forecast.set_ambient_periodic(12.0, 6.0, 86400.0, -1.0)  # a garage over a day
    assert pl.latest_start(10.0, 40.0, 5 * 3600.0) == status.TRACKING
    fc = Forecast(k, g, 0.0)
    fc.set_ambient_periodic(12.0, 6.0, 86400.0, -1.0)
    got = _run_delay_start(k, 0.0, g, 10.0, pl.start_in_s, 5 * 3600.0, fc)
    assert close(got, 40.0, 1e-9)
    assert pl.constant_duty(10.0, 40.0, 5 * 3600.0) == status.TRACKING
    fc.set_plan_duty(pl.duty)
    assert close(fc.temperature_at_c(5 * 3600.0, 10.0), 40.0, 1e-9)


def test_chiller_plans_symmetrically():
    # A chiller is a negative gain: latest start of full cooling.
    k = 1.0 / 1800.0
    g = -0.02  # full cooling levels off at 25 - 36 = -11 C
    pl = ReadyByPlanner(k, 25.0, g)
    assert pl.latest_start(25.0, 6.0, 7200.0) == status.TRACKING
    got = _run_delay_start(k, 25.0, g, 25.0, pl.start_in_s, 7200.0)
    assert close(got, 6.0, 1e-9)
    assert pl.latest_start(25.0, -20.0, 7200.0) == status.OUT_OF_REACH
    assert pl.reason == forecast.REASON_BEYOND_EQUILIBRIUM
