"""Closed forms of the lumped model (both runtimes).

Outside references: the scipy comparisons live in tests/test_model_reference.py;
here are the published worked example and hand-derivable identities.
"""
import math

from support import close
from tinytherm import model


def test_worked_example_cake_cooling():
    # Published worked example (Zill, "A First Course in Differential Equations",
    # section on Newton's law of cooling; from memory): a cake at 300 F in a 70 F
    # room reads 200 F after 3 min. k = ln(23/13)/3 = 0.19018 /min, and
    # T(t) = 70 + 230 exp(-0.19018 t).
    k = model.rate_from_three_per_s(300.0, 200.0, 200.0 - 100.0 * 13.0 / 23.0, 3.0)
    # The three-point route needs a third reading; the exact second gap of an
    # exponential is d1 * exp(-3k) = 100 * 13/23. It must give back k and 70 F.
    assert abs(k - 0.19018) < 5e-5
    amb = model.ambient_from_three_c(300.0, 200.0, 200.0 - 100.0 * 13.0 / 23.0)
    assert abs(amb - 70.0) < 1e-9
    assert abs(model.temperature_at(3.0, 300.0, k, 70.0) - 200.0) < 1e-9
    # The example observes the cake is within a degree of the room after ~30 min.
    assert abs(model.temperature_at(30.0, 300.0, k, 70.0) - 70.77) < 0.02


def test_equilibrium_and_time_constant():
    assert model.equilibrium_c(20.0, 0.001, 0.05, 0.5) == 20.0 + 0.025 / 0.001
    assert model.equilibrium_c(20.0, 0.001) == 20.0
    assert model.time_constant_s(0.002) == 500.0
    assert model.time_constant_s(0.0) == math.inf
    assert model.equilibrium_c(20.0, 0.0, 0.05, 1.0) == math.inf


def test_time_to_target_cooling_heating_and_edges():
    k = 1.0 / 1200.0
    t = model.time_to_target_s(80.0, 60.0, k, 20.0)
    assert close(model.temperature_at(t, 80.0, k, 20.0), 60.0, 1e-12)
    # heating with a heater toward equilibrium 20 + 0.05/k = 80
    t = model.time_to_target_s(20.0, 65.0, k, 20.0, 0.05, 1.0)
    assert close(model.temperature_at(t, 20.0, k, 20.0, 0.05, 1.0), 65.0, 1e-12)
    assert model.time_to_target_s(60.0, 60.0, k, 20.0) == 0.0
    assert model.time_to_target_s(80.0, 15.0, k, 20.0) is None   # beyond equilibrium
    assert model.time_to_target_s(80.0, 20.0, k, 20.0) is None   # at equilibrium: never
    assert model.time_to_target_s(50.0, 60.0, k, 20.0) is None   # wrong side
    assert model.time_to_target_s(20.0, 30.0, 0.0, 20.0, 0.01, 1.0) == 1000.0
    assert model.time_to_target_s(20.0, 30.0, 0.0, 20.0) is None


def test_three_point_rejects_non_exponential():
    assert model.ambient_from_three_c(50.0, 40.0, 30.0) is None  # straight line
    assert model.ambient_from_three_c(50.0, 40.0, 45.0) is None  # turns back
    assert model.rate_from_three_per_s(50.0, 40.0, 35.0, 0.0) is None


def test_physical_helpers():
    # 0.3 kg of water (c = 4181.3 J/(kg K), from a published table at 25 C, from
    # memory: CRC Handbook), h = 10 W/(m^2 K), A = 0.02 m^2:
    k = model.rate_from_physical_per_s(10.0, 0.02, 0.3, 4181.3)
    assert close(k, 0.2 / (0.3 * 4181.3), 1e-12)
    try:
        model.rate_from_physical_per_s(10.0, 0.02, 0.0, 4181.3)
        raised = False
    except ValueError:
        raised = True
    assert raised
    assert close(model.heater_gain_k_per_s(1000.0, 1.0, 4181.3), 1000.0 / 4181.3, 1e-12)


def test_heating_time_energy_balance_water():
    # Energy balance with water's specific heat from a published table
    # (4.1813 kJ/(kg K) at 25 C; NIST/CRC tables, from memory): 1.5 kg from 15 C
    # to 95 C with 2200 W and no losses takes m c dT / P seconds.
    t = model.heating_time_s(1.5, 4181.3, 15.0, 95.0, 2200.0)
    assert close(t, 1.5 * 4181.3 * 80.0 / 2200.0, 1e-12)
    # With 3 W/K of losses in a 20 C room it takes longer, and the target must
    # lie below the loss-limited equilibrium 20 + 2200/3.
    t_loss = model.heating_time_s(1.5, 4181.3, 15.0, 95.0, 2200.0, 3.0, 20.0)
    assert t_loss > t
    assert model.heating_time_s(1.5, 4181.3, 15.0, 95.0, 100.0, 3.0, 20.0) is None
