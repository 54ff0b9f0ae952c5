"""Closed forms of tinytherm.model against scipy (CPython only).

References: scipy.integrate.solve_ivp (RK45/DOP853 numerical integration of
dT/dt = -k (T - R) + g u) and scipy.optimize.brentq (bracketing root finder)
on the integrated solution, over random parameter sets drawn by hypothesis,
for cooling and heating.
"""
import math

from hypothesis import given, settings
from hypothesis import strategies as hs
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from tinytherm import model

rates = hs.floats(1.0 / 20000.0, 1.0 / 100.0)
temps = hs.floats(-10.0, 100.0)
gains = hs.floats(0.0, 0.2)
duties = hs.floats(0.0, 1.0)


def integrate(start, k, amb, g, u, t_end):
    sol = solve_ivp(lambda t, y: [-k * (y[0] - amb) + g * u], (0.0, t_end), [start],
                    method="DOP853", rtol=1e-11, atol=1e-11, dense_output=True)
    return sol


@settings(max_examples=60, deadline=None)
@given(start=temps, k=rates, amb=temps, g=gains, u=duties, frac=hs.floats(0.05, 3.0))
def test_forward_solution_matches_solve_ivp(start, k, amb, g, u, frac):
    t_end = frac / k
    sol = integrate(start, k, amb, g, u, t_end)
    expected = sol.y[0, -1]
    got = model.temperature_at(t_end, start, k, amb, g, u)
    assert abs(got - expected) <= 1e-7 * max(1.0, abs(expected))


@settings(max_examples=60, deadline=None)
@given(start=temps, k=rates, amb=temps, g=gains, u=duties, share=hs.floats(0.02, 0.95))
def test_time_to_target_matches_brentq_on_solve_ivp(start, k, amb, g, u, share):
    eq = model.equilibrium_c(amb, k, g, u)
    if abs(eq - start) < 0.5:
        return  # nothing to travel
    target = start + share * (eq - start)  # cooling or heating, both occur
    t_closed = model.time_to_target_s(start, target, k, amb, g, u)
    assert t_closed is not None and t_closed > 0.0
    sol = integrate(start, k, amb, g, u, 2.0 * t_closed + 1.0)
    t_root = brentq(lambda t: sol.sol(t)[0] - target, 0.0, 2.0 * t_closed + 1.0, xtol=1e-9)
    assert abs(t_closed - t_root) <= 1e-6 * t_root + 1e-6


@settings(max_examples=40, deadline=None)
@given(start=temps, k=rates, amb=temps, g=gains, u=duties, beyond=hs.floats(0.01, 50.0))
def test_unreachable_when_target_beyond_equilibrium(start, k, amb, g, u, beyond):
    eq = model.equilibrium_c(amb, k, g, u)
    if abs(eq - start) < 1e-6:
        return
    direction = 1.0 if eq > start else -1.0
    assert model.time_to_target_s(start, eq + direction * beyond, k, amb, g, u) is None
    # and the numerical solution indeed never gets there within 20 time constants
    sol = integrate(start, k, amb, g, u, 20.0 / k)
    assert all(direction * (v - (eq + direction * beyond)) < 0 for v in sol.y[0])


@settings(max_examples=40, deadline=None)
@given(start=hs.floats(40.0, 95.0), k=rates, amb=hs.floats(0.0, 30.0), spacing=hs.floats(10, 600))
def test_three_point_formula_recovers_ambient(start, k, amb, spacing):
    # The three-point (Aitken delta-squared) formula for the level of an
    # exponential from equally spaced samples: R = (T0 T2 - T1^2)/(T0 + T2 - 2 T1).
    if k * spacing > 5.0:
        return  # the readings would sit at the ambient: ill-conditioned
    t0, t1, t2 = (model.temperature_at(i * spacing, start, k, amb) for i in range(3))
    est = model.ambient_from_three_c(t0, t1, t2)
    assert est is not None
    assert abs(est - amb) < 1e-6 * (start - amb) / (1.0 - math.exp(-k * spacing)) ** 2
    assert abs(model.rate_from_three_per_s(t0, t1, t2, spacing) - k) < 1e-7 * k / (k * spacing)
