"""Scenario generators: reproducibility, sensor model, exact truth crossing."""
import json
import math

import numpy as np
import pytest
from scipy.optimize import brentq

from host_sim.sim import physics, scenarios
from host_sim.sim.physics import (find_crossing_s, integrate_piecewise, latent_heat_j_per_kg,
                                  sat_vapour_density_kg_m3)
from host_sim.sim.scenarios import generate, write_scenario
from host_sim.sim.sensor import QUANTUM_C


def rk4_crossing(gen, step_s):
    """Independent check: fixed-step classical RK4 of the same ODE and events,
    crossing by linear interpolation between steps (no scipy involved)."""
    k = gen.kind
    direction = k.direction
    target = gen.truth["target_c"]
    y = np.array(k.y0(), dtype=float)
    mode = dict(gen.mode0)
    t = 0.0
    s_prev = y[k.sensor_index]
    for tb, apply in list(gen.breaks) + [(k.horizon_s, None)]:
        n = max(int(math.ceil((tb - t) / step_s)), 1)
        h = (tb - t) / n
        for _ in range(n):
            f = lambda tt, yy: np.array(k.rhs(tt, yy, mode))  # noqa: E731
            k1 = f(t, y)
            k2 = f(t + h / 2, y + h / 2 * k1)
            k3 = f(t + h / 2, y + h / 2 * k2)
            k4 = f(t + h, y + h * k3)
            y = y + h / 6 * (k1 + 2 * k2 + 2 * k3 + k4)
            t += h
            s = y[k.sensor_index]
            if (direction < 0 and s_prev > target >= s) or (direction > 0 and s_prev < target <= s):
                return t - h + h * (target - s_prev) / (s - s_prev)
            s_prev = s
        if apply is not None:
            y = np.array(apply(y.copy(), mode), dtype=float)
    return None


@pytest.mark.parametrize("kind,seed", [("mug", 1), ("kettle", 2), ("bath", 2), ("wort", 0)])
def test_truth_crossing_matches_independent_rk4(kind, seed):
    gen = generate(kind, seed)
    exact = gen.truth["crossing_time_s"]
    assert exact is not None and 60.0 < exact < gen.truth["duration_s"]
    step = 0.5 if kind != "kettle" else 0.1
    check = rk4_crossing(gen, step)
    assert check == pytest.approx(exact, abs=0.05)


def test_mug_with_topup_crosses_after_the_topup():
    # seed 1 has a top-up (see its truth); the drink warms at the top-up and
    # the truth crossing is the first downward crossing, after it
    gen = generate("mug", 1)
    events = {e["event"]: e["time_s"] for e in gen.truth["events"]}
    assert "top-up" in events
    assert gen.truth["crossing_time_s"] > events["top-up"]
    t = events["top-up"]
    before = gen.solution(t - 1e-6)[0, 0]
    after = gen.solution(t + 1e-6)[0, 0]
    assert after > before + 0.5     # the liquid jumps up when hot water is added


def test_piecewise_integration_against_closed_form_with_sensor_lag():
    # Newton cooling dT/dt = -k (T - R) read through a first-order sensor lag
    # dS/dt = (T - S)/tau with S(0) = T(0): the linear system has the closed form
    # S = R + (T0 - R) (a e^{-kt} - k e^{-at}) / (a - k), a = 1/tau (standard
    # solution of two cascaded first-order systems). Root by scipy brentq.
    k, r, t0, tau, target = 1.0 / 900.0, 20.0, 80.0, 15.0, 50.0
    a = 1.0 / tau

    def rhs(t, y, mode):
        return [-k * (y[0] - r), (y[0] - y[1]) / tau]

    # a do-nothing break at 300 s exercises the segment joining
    sol = integrate_piecewise(rhs, [t0, t0], 3000.0, [(300.0, lambda y, m: y)], {})
    got = find_crossing_s(lambda t: sol(t)[1], target, -1, 0.0, 3000.0, 2.0)

    def closed(t):
        return r + (t0 - r) * (a * math.exp(-k * t) - k * math.exp(-a * t)) / (a - k) - target
    assert got == pytest.approx(brentq(closed, 1.0, 3000.0, xtol=1e-12), abs=1e-6)
    assert sol(np.array([1234.5]))[0, 0] == pytest.approx(r + (t0 - r) * math.exp(-k * 1234.5),
                                                          rel=1e-9)


def test_same_seed_same_trace_other_seed_differs(tmp_path):
    a = generate("bath", 3)
    b = generate("bath", 3)
    c = generate("bath", 4)
    assert np.array_equal(a.time_s, b.time_s) and np.array_equal(a.temp_c, b.temp_c)
    assert np.array_equal(a.heater, b.heater)
    assert a.truth == b.truth
    assert not (len(a.temp_c) == len(c.temp_c) and np.array_equal(a.temp_c, c.temp_c))
    write_scenario(a, tmp_path / "a.csv", tmp_path / "a.json")
    write_scenario(b, tmp_path / "b.csv", tmp_path / "b.json")
    assert (tmp_path / "a.csv").read_bytes() == (tmp_path / "b.csv").read_bytes()
    truth = json.loads((tmp_path / "a.json").read_text())
    assert truth["crossing_time_s"] == a.truth["crossing_time_s"]
    assert truth["target_c"] == a.truth["target_c"]


@pytest.mark.parametrize("kind", scenarios.KINDS)
def test_sensor_model_and_columns(kind):
    gen = generate(kind, 11)
    steps = gen.temp_c / QUANTUM_C
    assert np.allclose(steps, np.round(steps))          # 0.0625 C quantisation
    assert np.all(np.diff(gen.time_s) > 0.0)
    # readings follow the noise-free signal apart from faults
    assert np.median(np.abs(gen.temp_c - gen.clean_c)) < 0.2
    assert gen.truth["crossing_time_s"] is not None
    if kind == "fridge":
        assert gen.ambient_c is not None and len(gen.ambient_c) == len(gen.time_s)
        assert np.allclose(gen.ambient_c / QUANTUM_C, np.round(gen.ambient_c / QUANTUM_C))
    else:
        assert gen.ambient_c is None
    if kind in ("bath", "kettle"):
        assert gen.heater is not None and np.all((gen.heater >= 0.0) & (gen.heater <= 1.0))
    else:
        assert gen.heater is None


def test_faults_off_leaves_only_noise():
    gen = generate("wort", 5, sensor_faults=False)
    assert gen.truth["sensor"]["spikes"] == [] and gen.truth["sensor"]["stuck"] is None
    assert np.max(np.abs(gen.temp_c - gen.clean_c)) < 6 * gen.truth["sensor"]["noise_c"] + QUANTUM_C


def test_unknown_kind_is_an_error():
    with pytest.raises(ValueError, match="unknown scenario kind"):
        generate("teapot", 1)


def test_vapour_and_latent_heat_against_steam_tables():
    # Saturation pressure of water: 2.339 kPa at 20 C, 12.35 kPa at 50 C,
    # 47.41 kPa at 80 C; latent heat 2442 kJ/kg at 25 C, 2257 kJ/kg at 100 C
    # (IAPWS-IF97 steam tables, from memory). Magnus is an approximation: 2 %.
    for temp_c, kpa in ((20.0, 2.339), (50.0, 12.35), (80.0, 47.41)):
        e = sat_vapour_density_kg_m3(temp_c) * physics.GAS_R * (temp_c + 273.15) / physics.M_WATER
        assert e / 1000.0 == pytest.approx(kpa, rel=0.02)
    assert latent_heat_j_per_kg(25.0) == pytest.approx(2442e3, rel=0.01)
    assert latent_heat_j_per_kg(100.0) == pytest.approx(2257e3, rel=0.01)
