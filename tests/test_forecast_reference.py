"""Forecasts and plans against reference libraries (CPython only).

References:
- scipy.integrate.solve_ivp (DOP853, rtol = atol = 1e-12), integrated piece
  by piece across every breakpoint, and scipy.optimize.brentq on its dense
  output for the crossing; relative agreement <= 1e-6 in float64.
- The periodic steady state of a first-order system under a sinusoidal input:
  amplitude ratio 1/sqrt(1 + (w tau)^2), lag atan(w tau)/w (standard result of
  linear systems theory).
- Fixed-step forward Euler (used only here, never for answers) to show how its
  error and stability depend on step size / time constant.
Parameters come from hypothesis; scenarios are invented.
"""
import math
import os
import re

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, event, given, settings, strategies as st
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from tinytherm import forecast, status
from tinytherm.forecast import Forecast
from tinytherm.planner import ReadyByPlanner

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
REL = 1e-6


class Scenario:
    """A random model, ambient and duty plan, as plain Python callables."""

    def __init__(self, k, g, amb_kind, amb, duty_times, duties):
        self.k = k
        self.g = g
        self.amb_kind = amb_kind
        self.amb = amb
        self.duty_times = duty_times
        self.duties = duties

    def __repr__(self):
        return "Scenario(%r, %r, %r, %r, %r, %r)" % (
            self.k, self.g, self.amb_kind, self.amb, self.duty_times, self.duties)

    def ambient(self, t):
        if self.amb_kind == "periodic":
            mean, amp, period, phase = self.amb
            return mean + amp * math.sin(2.0 * math.pi * t / period + phase)
        times, values = self.amb
        return float(np.interp(t, times, values))

    def duty(self, t):
        u = 0.0
        for tt, d in zip(self.duty_times, self.duties):
            if t >= tt:
                u = d
        return u

    def breakpoints(self, horizon):
        pts = {0.0, horizon}
        if self.amb_kind == "piecewise":
            pts.update(t for t in self.amb[0] if 0.0 < t < horizon)
        pts.update(t for t in self.duty_times if 0.0 < t < horizon)
        return sorted(pts)

    def forecast(self):
        fc = Forecast(self.k, self.g, 0.0)
        if self.amb_kind == "periodic":
            fc.set_ambient_periodic(*self.amb)
        else:
            fc.set_ambient_piecewise(self.amb[0], self.amb[1])
        fc.set_plan_schedule(self.duty_times, self.duties)
        return fc


def reference_pieces(sc, start_c, horizon):
    """solve_ivp solution piece by piece: list of (t0, t1, dense solution)."""
    pieces = []
    y = start_c
    pts = sc.breakpoints(horizon)
    for a, b in zip(pts[:-1], pts[1:]):
        u = sc.duty(0.5 * (a + b))

        def rhs(t, yy, u=u):
            return [-sc.k * (yy[0] - sc.ambient(t)) + sc.g * u]

        sol = solve_ivp(rhs, (a, b), [y], method="DOP853", rtol=1e-12, atol=1e-12,
                        dense_output=True)
        pieces.append((a, b, sol.sol))
        y = float(sol.y[0, -1])
    return pieces


def reference_temperature(pieces, t):
    for a, b, sol in pieces:
        if a <= t <= b:
            return float(sol(t)[0])
    raise ValueError(t)


def reference_crossing(pieces, level):
    """First crossing by scanning the dense output and brentq on each sign change."""
    for a, b, sol in pieces:
        grid = np.linspace(a, b, 801)
        vals = sol(grid)[0] - level
        for i in range(len(grid) - 1):
            if vals[i] == 0.0:
                return grid[i]
            if (vals[i] > 0.0) != (vals[i + 1] > 0.0):
                return brentq(lambda t: float(sol(t)[0]) - level, grid[i], grid[i + 1],
                              xtol=1e-12, rtol=1e-15)
    return None


@st.composite
def scenarios(draw):
    tau = draw(st.floats(60.0, 6000.0))
    k = 1.0 / tau
    g = draw(st.floats(0.0, 0.2))
    if draw(st.booleans()):
        amb_kind = "periodic"
        amb = (draw(st.floats(-5.0, 35.0)), draw(st.floats(0.0, 8.0)),
               draw(st.floats(300.0, 20000.0)), draw(st.floats(-3.0, 3.0)))
    else:
        amb_kind = "piecewise"
        n = draw(st.integers(2, 6))
        gaps = draw(st.lists(st.floats(50.0, 3000.0), min_size=n - 1, max_size=n - 1))
        times = [0.0]
        for gp in gaps:
            times.append(times[-1] + gp)
        values = draw(st.lists(st.floats(-5.0, 35.0), min_size=n, max_size=n))
        amb = (tuple(times), tuple(values))
    m = draw(st.integers(1, 4))
    dgaps = draw(st.lists(st.floats(30.0, 3000.0), min_size=m - 1, max_size=m - 1))
    dtimes = [0.0]
    for gp in dgaps:
        dtimes.append(dtimes[-1] + gp)
    duties = draw(st.lists(st.floats(0.0, 1.0), min_size=m, max_size=m))
    return Scenario(k, g, amb_kind, amb, tuple(dtimes), tuple(duties))


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(sc=scenarios(), start_c=st.floats(-5.0, 95.0), frac=st.floats(0.05, 0.95),
       probe=st.floats(0.0, 1.0))
def test_forecast_matches_solve_ivp_and_brentq(sc, start_c, frac, probe):
    horizon = 8000.0
    pieces = reference_pieces(sc, start_c, horizon)
    fc = sc.forecast()
    t_probe = probe * horizon
    ref_T = reference_temperature(pieces, t_probe)
    assert abs(fc.temperature_at_c(t_probe, start_c) - ref_T) <= REL * max(1.0, abs(ref_T))
    # a level the path really visits: between start and the value at the probe
    end_T = reference_temperature(pieces, horizon)
    # the reference's own error is ~1e-12 K: keep the level well above it
    assume(abs(end_T - start_c) > 1e-3)
    level = start_c + frac * (end_T - start_c)
    ref_eta = reference_crossing(pieces, level)
    eta = fc.time_to_target_s(start_c, level, horizon)
    event("reference crossing found: %s" % (ref_eta is not None))
    if ref_eta is None:
        # the scan can miss a graze; then ours must be a true crossing
        assert eta is None or abs(reference_temperature(pieces, eta) - level) < 1e-7
        return
    assert eta is not None, (fc.reason, ref_eta)
    assert abs(eta - ref_eta) <= REL * max(ref_eta, 1.0), (eta, ref_eta)


@settings(max_examples=30, deadline=None)
@given(tau=st.floats(100.0, 3000.0), low=st.floats(40.0, 80.0), band=st.floats(0.5, 5.0),
       amb=st.floats(5.0, 30.0), gain=st.floats(0.05, 0.3), periodic=st.booleans())
def test_thermostat_matches_solve_ivp_events(tau, low, band, amb, gain, periodic):
    k = 1.0 / tau
    high = low + band
    assume(amb + gain * tau > high + 1.0)  # else the heater never switches off
    if periodic:
        # Even at the ambient's trough the heater must clear the upper switch
        # level: otherwise the liquid can hover below the lower one with the
        # heater on (physically right, but not the bounded cycle checked
        # here), or graze the upper one, which forecast documents it may miss.
        assume(amb - 4.0 + gain * tau > high + 1.0)
    fc = Forecast(k, gain, amb)
    if periodic:
        fc.set_ambient_periodic(amb, 4.0, 1500.0, 0.3)
        ambient = lambda t: amb + 4.0 * math.sin(2.0 * math.pi * t / 1500.0 + 0.3)
    else:
        ambient = lambda t: amb
    fc.set_plan_thermostat(low, high)
    # Reference: solve_ivp with terminal switch events, phase by phase.
    t = 0.0
    y = amb
    on = True
    horizon = 6.0 * tau + 4000.0
    switches = []
    while t < horizon and len(switches) < 40:
        u = 1.0 if on else 0.0
        lvl = high if on else low

        def rhs(tt, yy, u=u):
            return [-k * (yy[0] - ambient(tt)) + gain * u]

        def ev(tt, yy, lvl=lvl):
            return yy[0] - lvl
        ev.terminal = True
        sol = solve_ivp(rhs, (t, horizon), [y], method="DOP853", rtol=1e-12, atol=1e-12,
                        events=ev, dense_output=True)
        if sol.t_events[0].size == 0:
            break
        t = float(sol.t_events[0][0])
        y = lvl
        switches.append(t)
        on = not on
    assert len(switches) >= 3
    # our crossing of each switch level in turn equals the reference switch time
    assert abs(fc.time_to_target_s(amb, high) - switches[0]) <= REL * switches[0]
    for i in range(1, min(len(switches), 8)):
        mid = 0.5 * (switches[i - 1] + switches[i])
        T_ours = fc.temperature_at_c(mid, amb)
        lvl = low if i % 2 else high
        assert low - 1e-9 <= T_ours <= high + 1e-9
        assert abs(fc.temperature_at_c(switches[i], amb) - lvl) <= 1e-6 * abs(lvl)


def test_periodic_steady_state_against_solve_ivp_and_theory():
    # Standard result of linear systems theory: amplitude ratio
    # 1/sqrt(1 + (w tau)^2), lag atan(w tau)/w. Measured on solve_ivp output
    # by a least-squares sin/cos fit, and on the forecast the same way.
    for tau, period in ((400.0, 1800.0), (2000.0, 3600.0)):
        k = 1.0 / tau
        w = 2.0 * math.pi / period
        fc = Forecast(k, 0.0, 0.0)
        fc.set_ambient_periodic(6.0, 2.5, period, 0.0)
        t_end = 30.0 * tau + 2.0 * period
        sol = solve_ivp(lambda t, y: [-k * (y[0] - 6.0 - 2.5 * math.sin(w * t))],
                        (0.0, t_end), [15.0], method="DOP853", rtol=1e-12, atol=1e-12,
                        dense_output=True)
        ts = np.linspace(t_end - period, t_end, 400, endpoint=False)
        design = np.column_stack([np.ones_like(ts), np.sin(w * ts), np.cos(w * ts)])
        for series in (sol.sol(ts)[0], np.array([fc.temperature_at_c(t, 15.0) for t in ts])):
            c, s_coef, c_coef = np.linalg.lstsq(design, series, rcond=None)[0]
            amp = math.hypot(s_coef, c_coef)
            lag = math.atan2(-c_coef, s_coef) / w
            assert abs(amp / 2.5 - 1.0 / math.sqrt(1.0 + (w * tau) ** 2)) < 1e-7
            assert abs(lag - math.atan(w * tau) / w) < 1e-6 * (math.atan(w * tau) / w)
            assert abs(c - 6.0) < 1e-7


def euler_crossing(k, ambient, start, level, step, max_steps=100000):
    """Fixed-step forward Euler, linear interpolation for the crossing. Test use only."""
    T = start
    t = 0.0
    for _ in range(max_steps):
        T_new = T + step * (-k * (T - ambient(t)))
        if (T_new - level) * (T - level) <= 0.0:
            return t + step * (T - level) / (T - T_new)
        T = T_new
        t += step
    return None


def test_fixed_step_euler_error_grows_with_step_over_time_constant():
    # Why the forecast uses the exact solution: Euler's error is first order
    # in step/tau, and above step/tau = 2 it is unstable (|1 - k h| > 1).
    tau = 600.0
    k = 1.0 / tau
    fc = Forecast(k, 0.0, 0.0)
    fc.set_ambient_piecewise((0.0, 1800.0), (22.0, 10.0))
    ambient = fc.ambient_at_c
    exact = fc.time_to_target_s(80.0, 30.0)
    sc = Scenario(k, 0.0, "piecewise", ((0.0, 1800.0), (22.0, 10.0)), (0.0,), (0.0,))
    ref = reference_crossing(reference_pieces(sc, 80.0, 6000.0), 30.0)
    assert abs(exact - ref) <= 1e-9 * ref  # the closed form agrees with solve_ivp
    errors = []
    for ratio in (0.4, 0.2, 0.1, 0.05, 0.025):
        errors.append(abs(euler_crossing(k, ambient, 80.0, 30.0, ratio * tau) - exact) / exact)
    for a, b in zip(errors[:-1], errors[1:]):
        assert 1.6 < a / b < 2.4  # halving the step halves the error: first order
    assert errors[2] > 1e-3  # step = tau/10 is still 0.1 % off: 1e6 times worse
    # step/tau = 1.5: the discrete path overshoots below the ambient (non-physical)
    T = 80.0
    undershoot = False
    for _ in range(10):
        T = T + 1.5 * tau * (-k * (T - 22.0))
        undershoot = undershoot or T < 22.0
    assert undershoot
    # step/tau = 2.5: the error grows every step instead of decaying
    T = 80.0
    for _ in range(20):
        T = T + 2.5 * tau * (-k * (T - 22.0))
    assert abs(T - 22.0) > 1000.0 * abs(80.0 - 22.0)
    # the exact solution at the same time has simply settled
    settled = Forecast(k, 0.0, 22.0).temperature_at_c(20 * 2.5 * tau, 80.0)
    assert abs(settled - (22.0 + 58.0 * math.exp(-50.0))) < 1e-12


@settings(max_examples=30, deadline=None)
@given(tau=st.floats(120.0, 8000.0), g=st.floats(0.005, 0.2), amb=st.floats(-5.0, 30.0),
       start=st.floats(0.0, 90.0), target=st.floats(20.0, 95.0),
       deadline=st.floats(60.0, 20000.0), periodic=st.booleans())
def test_latest_start_matches_brentq(tau, g, amb, start, target, deadline, periodic):
    # Reference: brentq on t_s -> T(deadline | heater off until t_s, then full
    # power) - target, with T from solve_ivp.
    k = 1.0 / tau
    pl = ReadyByPlanner(k, amb, g)
    amb_args = (amb, 5.0, 7200.0, 0.4)
    if periodic:
        pl.forecast.set_ambient_periodic(*amb_args)
    code = pl.latest_start(start, target, deadline)
    event("planner: %s/%s" % (status.status_name(code), forecast.reason_name(pl.reason)))

    def arrival(ts):
        sc = Scenario(k, g, "periodic" if periodic else "piecewise",
                      amb_args if periodic else ((0.0,), (amb,)), (0.0, ts), (0.0, 1.0))
        return reference_temperature(reference_pieces(sc, start, deadline), deadline) - target

    f0 = arrival(0.0)
    fD = arrival(deadline)
    if code == status.TRACKING and fD >= -1e-9:
        # at the deadline it is already at the target within rounding
        assert pl.heat_for_s <= 1e-6 * deadline
    elif code == status.TRACKING:
        ref = brentq(arrival, 0.0, deadline, xtol=1e-7 * deadline)
        assert abs(pl.start_in_s - ref) <= REL * max(deadline, 1.0)
    elif code == status.ARRIVED:
        assert fD >= -1e-6
    else:
        assert pl.reason in (forecast.REASON_TOO_SLOW, forecast.REASON_BEYOND_EQUILIBRIUM)
        assert f0 < 1e-6


def test_readme_planning_example_runs(capsys):
    # The README's ready-by example must run and print what the README shows.
    with open(os.path.join(ROOT, "README.md")) as fh:
        text = fh.read()
    start = text.index("## Planning: ready-by and varying ambient")
    section = text[start:]
    nxt = section.find("\n## ", 5)
    if nxt > 0:
        section = section[:nxt]
    code = re.findall(r"```python\n(.*?)```", section, re.S)
    shown = re.findall(r"```text\n(.*?)```", section, re.S)
    assert len(code) == 1 and len(shown) == 1
    exec(compile(code[0], "README.md", "exec"), {})
    assert capsys.readouterr().out == shown[0]
