"""Forecasts under a varying ambient and heater plans (both runtimes).

Outside references here are standard closed-form results, named beside each
check; the scipy solve_ivp/brentq comparisons live in
tests/test_forecast_reference.py. Scenario numbers are invented.
"""
import math

from support import XorShift, close
from tinytherm import forecast, status
from tinytherm.forecast import Forecast


def test_constant_ambient_matches_exponential_law():
    # Newton's law of cooling, closed form T = R + (T0 - R) exp(-k t)
    # (standard result, any heat-transfer text; from memory).
    k = 1.0 / 900.0
    fc = Forecast(k, 0.0, 21.0)
    for t in (0.0, 10.0, 450.0, 900.0, 5000.0):
        expected = 21.0 + (85.0 - 21.0) * math.exp(-k * t)
        assert close(fc.temperature_at_c(t, 85.0), expected, 1e-12)
    # Crossing time: t = ln((T0 - R)/(L - R)) / k.
    eta = fc.time_to_target_s(85.0, 60.0)
    assert fc.status == status.TRACKING
    assert close(eta, math.log(64.0 / 39.0) / k, 1e-12)


def test_heater_constant_duty_matches_exponential_approach():
    # With constant duty the approach is exponential to E = R + g u / k
    # (standard first-order step response; from memory).
    k = 1.0 / 1500.0
    g = 0.06
    fc = Forecast(k, g, 15.0)
    fc.set_plan_duty(0.5)
    eq = 15.0 + 0.03 / k
    eta = fc.time_to_target_s(15.0, 50.0)
    assert close(eta, math.log((15.0 - eq) / (50.0 - eq)) / k, 1e-12)
    assert fc.time_to_target_s(15.0, eq + 0.1) is None
    assert fc.reason == forecast.REASON_NEVER


def test_ramp_ambient_steady_lag_is_slope_times_time_constant():
    # Ramp response of a first-order lag: after the transient the output
    # trails the ramp by slope * tau (standard result of linear systems
    # theory; from memory).
    tau = 600.0
    slope = 2.0 / 3600.0  # a kitchen warming 2 K per hour
    fc = Forecast(1.0 / tau, 0.0, 0.0)
    fc.set_ambient_ramp(18.0, slope)
    t = 40.0 * tau
    lag = fc.ambient_at_c(t) - fc.temperature_at_c(t, 4.0)
    assert close(lag, slope * tau, 1e-9)


def _fourier_amplitude_and_lag(fc, start_c, t0, period, samples):
    # Project one full period of samples on sin/cos of the ambient angle.
    w = 2.0 * math.pi / period
    a_sin = 0.0
    a_cos = 0.0
    mean = 0.0
    for i in range(samples):
        t = t0 + period * i / samples
        temp = fc.temperature_at_c(t, start_c)
        mean += temp
        a_sin += temp * math.sin(w * t)
        a_cos += temp * math.cos(w * t)
    a_sin *= 2.0 / samples
    a_cos *= 2.0 / samples
    amp = math.sqrt(a_sin * a_sin + a_cos * a_cos)
    # temp ~ amp * sin(w t - lag_angle) -> a_sin = amp cos, a_cos = -amp sin
    lag_angle = math.atan2(-a_cos, a_sin)
    return amp, lag_angle / w, mean / samples


def test_periodic_steady_state_amplitude_ratio_and_lag():
    # First-order system under a sinusoidal input: amplitude ratio
    # 1/sqrt(1 + (w tau)^2), lag atan(w tau)/w (standard result of linear
    # systems theory, frequency response of a first-order lag).
    for tau, period in ((300.0, 1800.0), (1200.0, 1800.0), (60.0, 2400.0)):
        w = 2.0 * math.pi / period
        fc = Forecast(1.0 / tau, 0.0, 0.0)
        fc.set_ambient_periodic(5.0, 2.0, period, 0.0)
        t0 = 40.0 * tau + 3.0 * period  # transient decayed by exp(-40)
        amp, lag, mean = _fourier_amplitude_and_lag(fc, 12.0, t0, period, 64)
        assert close(amp / 2.0, 1.0 / math.sqrt(1.0 + (w * tau) ** 2), 1e-9)
        assert close(lag, math.atan(w * tau) / w, 1e-9)
        assert close(mean, 5.0, 1e-9)


def test_solution_satisfies_the_ode_on_random_schedules():
    # Central differences of the forecast must match the right-hand side
    # -k (T - R(t)) + g u(t) away from breakpoints.
    rng = XorShift(5)
    times = [0.0, 0.0, 0.0, 0.0, 0.0]
    values = [0.0, 0.0, 0.0, 0.0, 0.0]
    for trial in range(12):
        k = 1.0 / rng.uniform(120.0, 4000.0)
        g = rng.uniform(0.0, 0.2)
        duty = rng.uniform(0.0, 1.0)
        fc = Forecast(k, g, 20.0)
        fc.set_plan_duty(duty)
        t = 0.0
        for i in range(5):
            times[i] = t
            values[i] = rng.uniform(-5.0, 35.0)
            t += rng.uniform(200.0, 1500.0)
        if trial % 2:
            fc.set_ambient_piecewise(times, values, rng.uniform(0.0, 300.0))
        else:
            fc.set_ambient_periodic(rng.uniform(0.0, 30.0), rng.uniform(0.0, 5.0),
                                    rng.uniform(600.0, 4000.0), rng.uniform(0.0, 6.0))
        start = rng.uniform(0.0, 90.0)
        for j in range(6):
            tq = rng.uniform(10.0, 5000.0)
            h = 0.01
            d = (fc.temperature_at_c(tq + h, start) - fc.temperature_at_c(tq - h, start)) / (2.0 * h)
            rhs = -k * (fc.temperature_at_c(tq, start) - fc.ambient_at_c(tq)) + g * duty
            if trial % 2:
                # skip probes too close to a kink of the piecewise ambient
                near = False
                for i in range(5):
                    if abs(times[i] - fc.ambient.now_s - tq) < 1.0:
                        near = True
                if near:
                    continue
            assert abs(d - rhs) < 1e-6 * (abs(rhs) + 1e-3), (trial, tq, d, rhs)


def test_piecewise_matches_ramp_and_flat_tails():
    k = 1.0 / 700.0
    a = Forecast(k, 0.05, 0.0)
    b = Forecast(k, 0.05, 0.0)
    a.set_plan_duty(0.3)
    b.set_plan_duty(0.3)
    a.set_ambient_ramp(10.0, 0.004, 2000.0)
    b.set_ambient_piecewise((100.0, 2100.0), (10.0, 18.0), 100.0)
    for t in (0.0, 500.0, 1999.0, 2001.0, 9000.0):
        assert close(a.temperature_at_c(t, 40.0), b.temperature_at_c(t, 40.0), 1e-12)
    eta = a.time_to_target_s(40.0, 30.0)
    assert eta is not None and close(eta, b.time_to_target_s(40.0, 30.0), 1e-12)
    # a step in the ambient (two equal times) is allowed
    b.set_ambient_piecewise((0.0, 600.0, 600.0), (10.0, 10.0, 30.0))
    assert b.ambient_at_c(599.0) == 10.0
    assert b.ambient_at_c(601.0) == 30.0


def test_crossing_is_the_first_one():
    # A warm ambient pulse drives a cold drink up through 12 C and back.
    fc = Forecast(1.0 / 300.0, 0.0, 4.0)
    fc.set_ambient_piecewise((0.0, 600.0, 1200.0, 1800.0), (4.0, 30.0, 30.0, 4.0))
    eta = fc.time_to_target_s(4.0, 12.0)
    assert fc.status == status.TRACKING
    assert close(fc.temperature_at_c(eta, 4.0), 12.0, 1e-12)
    for i in range(200):
        assert fc.temperature_at_c(eta * i / 200.0, 4.0) < 12.0
    # It peaks below 30 and then falls: 29.5 is never reached.
    assert fc.time_to_target_s(4.0, 29.9) is None
    assert fc.reason == forecast.REASON_NEVER


def test_grazing_crossing_inside_one_segment_is_found():
    # A rising ambient ramp with the heater on: the liquid first falls towards
    # the low early equilibrium, then follows the ramp up. Both ends of the one
    # linear segment lie above a target set just above the minimum, so only
    # the turning-point check can find the crossing.
    k = 1.0 / 600.0
    fc = Forecast(k, 0.05, 0.0)
    fc.set_plan_duty(1.0)
    fc.set_ambient_ramp(-40.0, 0.02, 8000.0)
    start = 40.0
    t_min = 0.0
    t_best = start
    for i in range(1, 400):
        t = 8000.0 * i / 400.0
        v = fc.temperature_at_c(t, start)
        if v < t_best:
            t_best = v
            t_min = t
    target = t_best + 0.01
    assert fc.temperature_at_c(8000.0, start) > target
    eta = fc.time_to_target_s(start, target)
    assert eta is not None and eta < t_min
    assert close(fc.temperature_at_c(eta, start), target, 1e-9, 1e-9)


def test_periodic_crossing_and_never():
    k = 1.0 / 600.0
    period = 1800.0
    fc = Forecast(k, 0.0, 0.0)
    fc.set_ambient_periodic(4.0, 3.0, period, 0.5)
    w = 2.0 * math.pi / period
    steady_amp = 3.0 / math.sqrt(1.0 + (w / k) ** 2)
    eta = fc.time_to_target_s(20.0, 4.0 + 0.9 * steady_amp)
    assert fc.status == status.TRACKING
    assert close(fc.temperature_at_c(eta, 20.0), 4.0 + 0.9 * steady_amp, 1e-9)
    # outside the steady band: proved never, with little work
    assert fc.time_to_target_s(20.0, 4.0 - 1.05 * steady_amp) is None
    assert fc.reason == forecast.REASON_NEVER
    assert fc.work < 50


def test_duty_schedule_delay_start():
    k = 1.0 / 1000.0
    g = 0.09
    fc = Forecast(k, g, 20.0)
    fc.set_plan_schedule((0.0, 1200.0), (0.0, 1.0))
    # heater off 1200 s (stays at ambient), then exponential to 20 + 90 = 110
    eta = fc.time_to_target_s(20.0, 65.0)
    assert close(eta, 1200.0 + math.log(90.0 / 45.0) / k, 1e-12)
    # before the first time the duty is 0
    fc.set_plan_schedule((500.0,), (1.0,))
    assert close(fc.time_to_target_s(20.0, 65.0), 500.0 + math.log(2.0) / k, 1e-12)
    # the caller's clock: now is 300 s into the same schedule
    fc.set_plan_schedule((500.0,), (1.0,), 300.0)
    assert close(fc.time_to_target_s(20.0, 65.0), 200.0 + math.log(2.0) / k, 1e-12)


def test_thermostat_cycle_times_match_exponential_law():
    # Each on and off phase is an exponential approach (Newton's law of
    # cooling with and without the heater; from memory): on time
    # ln((E-L)/(E-H))/k, off time ln((H-R)/(L-R))/k.
    k = 1.0 / 800.0
    g = 0.1
    amb = 20.0
    low = 60.0
    high = 63.0
    eq = amb + g / k
    t_on = math.log((eq - low) / (eq - high)) / k
    t_off = math.log((high - amb) / (low - amb)) / k
    fc = Forecast(k, g, amb)
    fc.set_plan_thermostat(low, high)
    t_first = math.log((eq - 20.0) / (eq - high)) / k
    assert close(fc.time_to_target_s(20.0, high), t_first, 1e-12)
    mid = high - 1.0
    # after the first switch-off the liquid cools to mid, then rises again
    t_mid_down = t_first + math.log((high - amb) / (mid - amb)) / k
    assert close(fc.temperature_at_c(t_mid_down, 20.0), mid, 1e-9)
    t_cycle = t_first + t_off + t_on
    assert close(fc.temperature_at_c(t_cycle, 20.0), high, 1e-9)
    assert close(fc.temperature_at_c(t_first + t_off, 20.0), low, 1e-9)
    # outside the band and above the ambient: never
    assert fc.time_to_target_s(20.0, high + 0.5) is None
    assert fc.reason == forecast.REASON_NEVER
    # a finite horizon stops the search
    assert fc.time_to_target_s(20.0, 61.0, 100.0) is None
    assert fc.reason == forecast.REASON_HORIZON


def test_boost_then_hold():
    k = 1.0 / 1000.0
    g = 0.1
    fc = Forecast(k, g, 20.0)
    fc.set_plan_boost_hold(70.0)
    assert fc.hold_is_sustainable()
    eq = 20.0 + g / k
    t_hold = math.log((eq - 20.0) / (eq - 70.0)) / k
    assert close(fc.time_to_target_s(20.0, 65.0), math.log((eq - 20.0) / (eq - 65.0)) / k, 1e-12)
    assert fc.temperature_at_c(t_hold + 3600.0, 20.0) == 70.0
    assert fc.time_to_target_s(20.0, 75.0) is None
    assert fc.reason == forecast.REASON_HELD
    # starting above the hold: coasts down with the heater off
    assert close(fc.time_to_target_s(90.0, 80.0), math.log(70.0 / 60.0) / k, 1e-12)
    # a hold above what full power can reach is not sustainable
    fc.set_plan_boost_hold(130.0)
    assert not fc.hold_is_sustainable()


def test_work_cap_is_reported():
    n = forecast.MAX_PIECES + 20
    times = [0.0] * n
    duties = [0.0] * n
    for i in range(n):
        times[i] = 10.0 * i
        duties[i] = 0.5 * (i % 2)
    fc = Forecast(1.0 / 500.0, 0.01, 20.0)
    fc.set_plan_schedule(times, duties)
    assert fc.time_to_target_s(20.0, 90.0) is None
    assert fc.reason == forecast.REASON_WORK_CAP
    assert fc.work <= forecast.MAX_PIECES
    assert 0.0 < fc.searched_s < 10.0 * n


def test_tiny_rate_is_continuous_with_zero():
    # k -> 0 must approach the lossless ramp T0 + g u t without cancellation.
    a = Forecast(1e-13, 0.02, 30.0)
    b = Forecast(0.0, 0.02, 30.0)
    for fc in (a, b):
        fc.set_plan_duty(1.0)
        fc.set_ambient_ramp(0.0, 0.01)
    for t in (1.0, 100.0, 3000.0):
        assert close(a.temperature_at_c(t, 10.0), b.temperature_at_c(t, 10.0), 1e-9)
        assert close(b.temperature_at_c(t, 10.0), 10.0 + 0.02 * t, 1e-15)
    assert close(a.time_to_target_s(10.0, 40.0), 1500.0, 1e-8)


def test_bad_inputs_are_refused():
    fc = Forecast(1.0 / 600.0, 0.0, 20.0)
    assert fc.time_to_target_s(float("nan"), 30.0) is None
    assert fc.reason == forecast.REASON_BAD_INPUT
    assert fc.temperature_at_c(-1.0, 30.0) != fc.temperature_at_c(-1.0, 30.0)
    for bad in ((lambda: fc.set_model(-1.0)), (lambda: fc.set_plan_duty(1.5)),
                (lambda: fc.set_ambient_piecewise((1.0, 0.0), (2.0, 3.0))),
                (lambda: fc.set_ambient_periodic(1.0, 1.0, 0.0)),
                (lambda: fc.set_plan_thermostat(50.0, 50.0))):
        raised = False
        try:
            bad()
        except ValueError:
            raised = True
        assert raised
    assert forecast.reason_name(forecast.REASON_NEVER) == "never"
    assert forecast.reason_name(99) == "unknown"


def _feed_cycle(tracker, rng, period, amp, harmonic, seconds, noise):
    t = 0.0
    while t < seconds:
        dt = 10.0 * (1.0 + rng.uniform(-0.3, 0.3))
        t += dt
        ph = 2.0 * math.pi * t / period + 0.7
        r = 4.0 + amp * (math.sin(ph) + harmonic * math.sin(2.0 * ph + 0.4)) + rng.gauss(noise)
        tracker.update(math.floor(r / 0.0625 + 0.5) * 0.0625, dt)  # 0.0625 C steps
    return t


def test_ambient_tracker_learns_a_cycle():
    # Invented fridge-like air cycle: period 2400 s, +-1.5 K, quantised and noisy.
    rng = XorShift(21)
    tr = forecast.AmbientTracker()
    t_end = _feed_cycle(tr, rng, 2400.0, 1.5, 0.0, 5.5 * 2400.0, 0.05)
    assert tr.cycling()
    assert abs(tr.period_s - 2400.0) < 0.03 * 2400.0
    assert abs(tr.mean_c - 4.0) < 0.05
    assert abs(tr.amplitude_c - 1.5) < 0.1
    fc = Forecast(1.0 / 3000.0, 0.0, 0.0)
    assert tr.apply(fc) == forecast.AMBIENT_PERIODIC
    for ahead in (0.0, 300.0, 900.0, 2000.0):
        truth = 4.0 + 1.5 * math.sin(2.0 * math.pi * (t_end + ahead) / 2400.0 + 0.7)
        assert abs(fc.ambient_at_c(ahead) - truth) < 0.25, (ahead, fc.ambient_at_c(ahead), truth)
    # a skewed cycle (second harmonic) still gives the right period and mean
    tr2 = forecast.AmbientTracker()
    _feed_cycle(tr2, XorShift(22), 1900.0, 2.0, 0.3, 6.0 * 1900.0, 0.08)
    assert abs(tr2.period_s - 1900.0) < 0.04 * 1900.0
    assert abs(tr2.mean_c - 4.0) < 0.08


def test_ambient_tracker_level_and_trend():
    # A kitchen warming 3 K per hour: the trend dominates, so a ramp is used.
    rng = XorShift(23)
    tr = forecast.AmbientTracker(memory_s=1200.0, trend_s=900.0)
    t = 0.0
    for i in range(400):
        t += 10.0
        tr.update(19.0 + t * 3.0 / 3600.0 + rng.gauss(0.03), 10.0)
    assert tr.trend_share > 0.95
    assert abs(tr.slope_c_per_s * 3600.0 - 3.0) < 0.05
    assert abs(tr.level_c - (19.0 + t * 3.0 / 3600.0)) < 0.03
    fc = Forecast(1.0 / 3000.0, 0.0, 0.0)
    assert tr.apply(fc) == forecast.AMBIENT_RAMP
    assert abs(fc.ambient_at_c(900.0) - fc.ambient_at_c(5000.0)) < 1e-12  # frozen after trend_s
    # flat noisy air: the weighted mean, no ramp
    flat = forecast.AmbientTracker()
    for i in range(300):
        flat.update(21.0 + rng.gauss(0.05), 10.0)
    assert flat.apply(fc) == forecast.AMBIENT_CONSTANT
    assert abs(fc.ambient_at_c(0.0) - 21.0) < 0.02
    assert not flat.update(float("nan"), 10.0)
    assert not flat.update(21.0, -1.0)
