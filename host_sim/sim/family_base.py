"""The common part of every physics family: what a family table says besides its ranges.

A family (:mod:`host_sim.sim.family_tables`, :mod:`host_sim.sim.drink_families`)
is a :class:`Family` subclass: ``draw`` fills ``p`` from its ranges (and may add
scheduled events to ``breaks``), ``physics`` maps ``p`` onto a kind of
:mod:`host_sim.sim.kinds`. The class attributes below tell the generator
(:mod:`host_sim.sim.families`) how to sample and judge the trace.
"""
import math

from host_sim.sim.physics import MATERIALS
from host_sim.sim.ranges import Draw
from host_sim.sim.sensor import QUANTUM_C


class Family(Draw):
    """Common draws and defaults; subclasses give the ranges and the physics.

    ``direction`` (-1 cools to the target, +1 heats), ``crossing_range_s``
    (seconds from the start in which the crossing is drawn),
    ``target_limits_c`` (deg C), ``sensor_index`` and ``air_index`` (state
    indices of the probe and of a lagged air sensor, or None),
    ``air_column_chance`` (how often the air sensor's column is written),
    ``heater_possible``, ``room_column_possible``, ``boil_stop`` (stop
    before the water reaches :data:`host_sim.sim.families.BOIL_STOP_C`),
    ``sparse_possible`` (an approach can hold ten readings 60 s or more
    apart). A subclass may set ``direction`` and ``target_limits_c`` per
    trace in ``draw``.
    """

    direction = -1
    crossing_range_s = (300.0, 3600.0)
    target_limits_c = (-50.0, 150.0)
    sensor_index = -1
    air_index = None
    air_column_chance = 0.6
    heater_possible = False
    room_column_possible = True
    boil_stop = False
    sparse_possible = True

    def __init__(self, rng):
        super().__init__(rng)
        self.p = {}
        self.breaks = []
        self.events = []

    def build(self):
        """The physics of the drawn parameters (``model``, ``rhs``); after :meth:`draw`."""
        self.model = self.physics()
        self.rhs = self.model.rhs

    def mode0(self):
        return {"lid": False, "stir": 1.0, "duty": 1.0}

    def water_index(self):
        """State index of the liquid (the temperature an arrival is judged by)."""
        return 0

    def approach_start_s(self):
        """Seconds from which the approach to the target starts (0: the first reading;
        a top-up family: its last pour, since nobody can foresee a pour)."""
        return 0.0

    def draw_air_sensor(self, rng):
        """The air sensor's noise sd and resolution, deg C (drawn with ``rng``)."""
        return float(rng.uniform(0.03, 0.1)), QUANTUM_C

    def extra_truth(self, sol):
        """What this family adds to a trace's truth, from the dense solution ``sol``."""
        return {}

    def tau_ref_s(self, temp_c):
        """Loss time constant (s) of the liquid near ``temp_c``, or None if not defined."""
        return None


def draw_mug_wall(draw, p):
    """Draw a mug's wall into ``p`` (the mug and top-up families share it).

    Needs ``radius_m``, ``fill_m``, ``height_m`` (m), ``room_c`` and ``pour_c``
    (deg C) in ``p``; adds the material (ceramic, glass or paper), its
    thickness, the wetted and outer areas, the wall's mass (a handle and a
    base: 1.3 times the shell, own estimate), its specific heat, half its
    conduction resistance, its emissivity, and a wall at room temperature or
    preheated (30 %) towards the pour. ``draw``: a :class:`Draw`.
    """
    p["material"] = draw.choice(("ceramic", "glass", "paper"), [0.6, 0.25, 0.15])
    c, rho, k, eps, (th_lo, th_hi) = MATERIALS[p["material"]]
    p["wall_m"] = draw.u(th_lo, th_hi)
    r = p["radius_m"]
    p["inner_area_m2"] = math.pi * r * r + 2.0 * math.pi * r * p["fill_m"]
    p["outer_area_m2"] = math.pi * r * r + 2.0 * math.pi * (r + p["wall_m"]) * p["height_m"]
    p["wall_kg"] = rho * p["wall_m"] * 0.5 * (p["inner_area_m2"] + p["outer_area_m2"]) * 1.3
    p["wall_c_j_per_kg_k"] = c
    p["wall_half_r"] = 0.5 * p["wall_m"] / k
    p["wall_eps"] = eps
    p["preheated"] = draw.chance(0.3)
    frac = draw.u(0.5, 0.95) if p["preheated"] else 0.0
    p["wall0_c"] = p["room_c"] + frac * (p["pour_c"] - p["room_c"])
