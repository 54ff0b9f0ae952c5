"""Physics families with wide parameter ranges, for an evaluation no one can tune to.

Where :mod:`host_sim.sim.scenarios` has one narrow kind per application, each
family here draws its physics, its sampling and its probe from wide ranges, so
that settings chosen on some families can be checked on a family they never
saw (leave-one-family-out, see ``benchmarks/families.py``). The physics
helpers (convection, radiation, evaporation, the piecewise solver, brentq
crossings) and the constants with their sources are those of
:mod:`host_sim.sim.scenarios`; the numbers of each family are our own.

Families (state variables in brackets; every family has a lagged sensor state
whose input is a mixture of the liquid and, by probe position, the wall or
the air):

- ``mug``: hot drink in a mug [liquid, wall, liquid kg, sensor]: 150-500 mL,
  ceramic, glass or paper wall, cold or preheated wall, open (evaporation) or
  lidded or lid taken off, probe in the middle, near the wall or strapped to
  the outside;
- ``pot``: pot on a hob at constant power [water, hob element, sensor]:
  1-6 L, element lag 20-300 s, loss time constant 10-60 min, trace stops
  before the water reaches 97 C;
- ``bath``: water bath with an immersion element at constant power [water,
  element, sensor]: 5-30 L, element lag 20-60 s, loss time constant 20 min to
  3 h (the long ones heat up along a nearly straight line);
- ``kettle``: kettle [water, plate, body, sensor], 0.3-1.7 L, 1.2-3 kW,
  trace stops before the water reaches 97 C;
- ``wort``: wort chilled by an immersion coil [wort, wort kg, coolant
  reservoir, sensor]: tap water whose inlet warms as the pipes do, or a
  recirculated tub of iced water that warms with the heat it takes up;
- ``fridge``: drink cooling in a cycling fridge [liquid, container, sensor,
  air sensor]: 0.33-1.5 L, glass, plastic or can, in-liquid or strap-on
  probe, door openings.

For every trace the pot, bath and kettle draw whether a heater column (the
constant duty) is written; mug, pot, bath and kettle whether a room sensor
column is, the fridge whether its air sensor column is. Sampling interval is
drawn from :data:`INTERVALS_S` (1, 10, 60, 300 s; an interval is allowed when
the approach holds at least :data:`MIN_APPROACH_READINGS` readings, and 1 s
only for traces up to :data:`MAX_ONE_SECOND_S`), probe resolution from
:data:`QUANTA_C` (0.0625, 0.1, 0.5 C). The target is the (0.5 C rounded)
noise-free sensor value at a crossing time drawn uniformly over the family's
range, so that short and long approaches are equally represented; the exact
crossing is then found by brentq on the dense solution.

Truth of each trace (:attr:`FamilyTrace.truth`): ``target_c``,
``crossing_time_s`` (first crossing of the noise-free sensor signal in the
direction of travel), ``direction``, ``clean_c`` per row (the noise-free
sensor signal, :attr:`FamilyTrace.clean_c`), ``noise_sd_c`` (standard
deviation of a reading's error: Gaussian noise and quantisation together,
``sqrt(sd^2 + q^2/12)``), ``gauss_sd_c``, ``quantum_c``,
``sample_interval_s``, ``has_heater_column``, ``has_ambient_column``,
``room_c``, ``tau_ref_s`` (loss time constant near the target, where
defined), faults and all drawn parameters.

Generated traces are cached on disk (``.cache/families/<version>/``, the
version a hash of this module and of :mod:`host_sim.sim.scenarios`), so repeated
benchmark runs do not integrate the ODEs again.
"""
import hashlib
import json
import math
import os

import numpy as np
from scipy.optimize import brentq

from host_sim.sim.scenarios import (C_AIR_VERTICAL, C_CERAMIC, C_DRINK, C_GLASS, C_STEEL,
                                C_WATER, C_WORT, C_WORT_TUBE, EPS_CERAMIC, EPS_GLASS,
                                KELVIN, SIGMA, _soft_abs,
                                find_crossing_s, integrate_piecewise, open_surface_loss_w,
                                radiation_w)

FAMILIES = ("mug", "pot", "bath", "kettle", "wort", "fridge")
FAMILY_TITLES = {
    "mug": "hot drink cooling in a mug",
    "pot": "pot heated on a hob at constant power",
    "bath": "water bath heated by an immersion element",
    "kettle": "kettle heating water (stops before boiling)",
    "wort": "wort chilled by an immersion coil, coolant warming",
    "fridge": "drink cooling in a cycling fridge",
}
_FAMILY_CODE = {f: 101 + i for i, f in enumerate(FAMILIES)}

INTERVALS_S = (1.0, 10.0, 60.0, 300.0)
QUANTA_C = (0.0625, 0.1, 0.5)          # 12-bit digital, 0.1 C display, 0.5 C cheap probe
QUANTUM_WEIGHTS = (0.5, 0.25, 0.25)
MIN_APPROACH_READINGS = 12             # an interval must give at least this many readings
MAX_ONE_SECOND_S = 5000.0              # longest trace sampled every second (benchmark cost)
BOIL_STOP_C = 97.0                     # heating traces end before the water reaches this
MAX_FORCED_H = 60.0                    # W/(m^2 K), cap on the forced-air coefficient of a wall

# More material constants, same conventions as host_sim.sim.scenarios:
C_PAPER = 1340.0                 # paperboard, J/(kg K) (from memory)
C_ALUMINIUM = 900.0              # J/(kg K) (from memory)
C_PET = 1200.0                   # PET bottle plastic, J/(kg K) (from memory)
RHO_CERAMIC = 2300.0             # stoneware / porcelain, kg/m^3 (from memory)
RHO_GLASS = 2500.0               # soda-lime glass, kg/m^3 (from memory)
RHO_PAPER = 700.0                # paperboard, kg/m^3 (from memory)
K_CERAMIC = 1.5                  # thermal conductivity, W/(m K) (from memory)
K_GLASS = 1.0                    # W/(m K) (from memory)
K_PAPER = 0.05                   # W/(m K), coated paperboard (from memory)
K_PET = 0.2                      # W/(m K) (from memory)
EPS_PAPER = 0.90                 # emissivity of paper (emissivity tables, from memory)
EPS_STEEL = 0.30                 # dull stainless steel (from memory)
EPS_ALUMINIUM = 0.10             # bare aluminium can (from memory)
# Water-side free convection on a wall, h = C(T) * dT^(1/4): host_sim.sim.scenarios
# derives C ~150 near 10 C and ~350 near 60 C (water properties, from memory);
# here linear in the liquid temperature between those two points, clamped.
C_WATER_WALL_10C = 150.0
C_WATER_WALL_60C = 350.0

MATERIALS = {
    # name: (specific heat J/(kg K), density kg/m^3, conductivity W/(m K), emissivity,
    #        wall thickness range m)
    "ceramic": (C_CERAMIC, RHO_CERAMIC, K_CERAMIC, EPS_CERAMIC, (0.003, 0.006)),
    "glass": (C_GLASS, RHO_GLASS, K_GLASS, EPS_GLASS, (0.002, 0.004)),
    "paper": (C_PAPER, RHO_PAPER, K_PAPER, EPS_PAPER, (0.0004, 0.0008)),
    "pet": (C_PET, 1380.0, K_PET, EPS_GLASS, (0.0003, 0.0006)),   # PET density (from memory)
    "can": (C_ALUMINIUM, 2700.0, 200.0, EPS_ALUMINIUM, (0.0001, 0.00015)),  # (from memory)
}


def water_wall_coefficient(temp_c):
    """Water-side free-convection coefficient C in h = C dT^(1/4), W/(m^2 K^(5/4))."""
    c = C_WATER_WALL_10C + (C_WATER_WALL_60C - C_WATER_WALL_10C) * (temp_c - 10.0) / 50.0
    return min(max(c, 120.0), 420.0)


def _side_loss_w(temp_c, room_c, area_m2, height_m, eps, wall_r):
    """Loss through a vertical wall, W: free convection + radiation, in series with ``wall_r``."""
    d = temp_c - room_c
    h_out = C_AIR_VERTICAL * (_soft_abs(d) / height_m) ** 0.25
    t1, t2 = temp_c + KELVIN, room_c + KELVIN
    h_rad = eps * SIGMA * (t1 * t1 + t2 * t2) * (t1 + t2)   # T1^4 - T2^4 factorised
    return area_m2 * d / (1.0 / (h_out + h_rad) + wall_r)


# ------------------------------------------------------------------ families
class _Family:
    """Common draws: room, sensor, intervals; subclasses give the physics."""

    direction = -1
    crossing_range_s = (300.0, 3600.0)
    target_limits_c = (-50.0, 150.0)
    sensor_index = -1
    air_index = None            # state index of a lagged air sensor (fridge)
    heater_possible = False
    room_column_possible = True
    boil_stop = False           # stop the trace before the water reaches BOIL_STOP_C

    def __init__(self, rng):
        self.rng = rng
        self.p = {}
        self.breaks = []
        self.events = []

    def u(self, lo, hi):
        return float(self.rng.uniform(lo, hi))

    def logu(self, lo, hi):
        return float(math.exp(self.rng.uniform(math.log(lo), math.log(hi))))

    def choice(self, options, weights=None):
        i = int(self.rng.choice(len(options), p=weights))
        return options[i]

    def mode0(self):
        return {"lid": False, "stir": 1.0}

    def water_index(self):
        return 0

    def tau_ref_s(self, temp_c):
        """Loss time constant (s) of the liquid near ``temp_c``, or None if not defined."""
        return None


class Mug(_Family):
    """Hot drink in a mug. State: liquid C, wall C, liquid kg, sensor C."""

    direction = -1
    crossing_range_s = (300.0, 5400.0)
    target_limits_c = (30.0, 75.0)

    def draw(self):
        p = self.p
        p["room_c"] = self.u(15.0, 28.0)
        p["rel_humidity"] = self.u(0.2, 0.8)
        p["pour_c"] = self.u(70.0, 95.0)
        p["volume_ml"] = self.u(150.0, 500.0)
        p["liquid_kg"] = p["volume_ml"] * 1e-3        # density ~1 kg/L (from memory)
        p["radius_m"] = self.u(0.030, 0.045)
        p["fill_m"] = p["liquid_kg"] / 1000.0 / (math.pi * p["radius_m"] ** 2)
        p["height_m"] = p["fill_m"] * self.u(1.1, 1.35)
        p["material"] = self.choice(("ceramic", "glass", "paper"), [0.6, 0.25, 0.15])
        c, rho, k, eps, (th_lo, th_hi) = MATERIALS[p["material"]]
        p["wall_m"] = self.u(th_lo, th_hi)
        r = p["radius_m"]
        p["inner_area_m2"] = math.pi * r * r + 2.0 * math.pi * r * p["fill_m"]
        p["outer_area_m2"] = math.pi * r * r + 2.0 * math.pi * (r + p["wall_m"]) * p["height_m"]
        p["wall_kg"] = rho * p["wall_m"] * 0.5 * (p["inner_area_m2"] + p["outer_area_m2"]) * 1.3
        p["wall_c_j_per_kg_k"] = c
        p["wall_half_r"] = 0.5 * p["wall_m"] / k
        p["wall_eps"] = eps
        p["preheated"] = bool(self.rng.uniform() < 0.3)
        frac = self.u(0.5, 0.95) if p["preheated"] else 0.0
        p["wall0_c"] = p["room_c"] + frac * (p["pour_c"] - p["room_c"])
        p["lid"] = self.choice(("open", "lidded", "lid_off"), [0.5, 0.3, 0.2])
        p["lid_u"] = self.u(2.0, 6.0)                  # W/(m^2 K), plastic lid (own estimate)
        p["probe"] = self.choice(("middle", "near_wall", "outside"), [0.5, 0.3, 0.2])
        if p["probe"] == "middle":
            p["w_wall"], p["w_air"], p["sensor_lag_s"] = self.u(0.0, 0.03), 0.0, self.u(3.0, 15.0)
        elif p["probe"] == "near_wall":
            p["w_wall"], p["w_air"], p["sensor_lag_s"] = self.u(0.1, 0.3), 0.0, self.u(5.0, 20.0)
        else:   # strapped to the outside of the mug: sees mostly the wall, some air
            p["w_wall"], p["w_air"], p["sensor_lag_s"] = (self.u(0.6, 0.85), self.u(0.05, 0.15),
                                                          self.u(20.0, 60.0))
        if p["lid"] == "lid_off":
            t_off = self.u(120.0, 1500.0)

            def lid_off(y, m):
                m["lid"] = False
                return y
            self.breaks.append((t_off, lid_off))
            self.events.append((t_off, "lid off"))
        self.events.append((0.0, "poured"))

    def mode0(self):
        return {"lid": self.p["lid"] != "open", "stir": 1.0}

    def y0(self):
        p = self.p
        return [p["pour_c"], p["wall0_c"], p["liquid_kg"], p["room_c"]]

    def rhs(self, t, y, mode):
        p = self.p
        tl, tw, m, s = y
        amb = p["room_c"]
        d_in = tl - tw
        h_water = water_wall_coefficient(tl) * _soft_abs(d_in) ** 0.25
        u_in = 1.0 / (1.0 / h_water + p["wall_half_r"])
        area_in = p["inner_area_m2"] * min(m / p["liquid_kg"], 1.2)
        q_lw = u_in * area_in * d_in
        d_out = tw - amb
        h_out = C_AIR_VERTICAL * (_soft_abs(d_out) / p["height_m"]) ** 0.25
        u_out = 1.0 / (1.0 / h_out + p["wall_half_r"])
        q_wa = u_out * p["outer_area_m2"] * d_out + radiation_w(
            p["wall_eps"], p["outer_area_m2"], tw, amb)
        area_top = math.pi * p["radius_m"] ** 2
        if mode["lid"]:
            q_top, evap = p["lid_u"] * area_top * (tl - amb), 0.0
        else:
            q_top, evap = open_surface_loss_w(tl, amb, area_top, p["radius_m"], p["rel_humidity"])
        sensed = (1.0 - p["w_wall"] - p["w_air"]) * tl + p["w_wall"] * tw + p["w_air"] * amb
        return [-(q_lw + q_top) / (m * C_DRINK),
                (q_lw - q_wa) / (p["wall_kg"] * p["wall_c_j_per_kg_k"]),
                -evap,
                (sensed - s) / p["sensor_lag_s"]]


class _Heated(_Family):
    """Water heated at constant power through an element with its own lag.

    State: water C, element C, sensor C. Losses: a vertical wall (convection
    and radiation, with an insulation resistance or a forced-air coefficient
    chosen so that the loss time constant near 50 C is the drawn ``tau_s``
    where the geometry allows) and the top (open:
    convection, radiation, evaporation; covered: a U-value). Evaporation's
    mass loss is neglected here (the water mass stays constant; a few grams per
    minute on litres, own estimate).
    """

    direction = 1
    heater_possible = True
    boil_stop = True
    tau_range_s = (600.0, 3600.0)
    lag_range_s = (20.0, 300.0)
    litres = (1.0, 6.0)
    power_range_w = (800.0, 2500.0)
    start_range_c = (8.0, 25.0)

    def draw(self):
        p = self.p
        p["room_c"] = self.u(15.0, 28.0)
        p["rel_humidity"] = self.u(0.2, 0.8)
        p["start_c"] = self.u(*self.start_range_c)
        p["water_kg"] = self.u(*self.litres)
        self.draw_vessel()
        p["heat_capacity_j_per_k"] = p["water_kg"] * C_WATER + p["vessel_j_per_k"]
        p["power_w"] = self.u(*self.power_range_w)
        p["duty"] = self.choice((1.0, 0.8, 0.6), [0.6, 0.2, 0.2])
        p["element_lag_s"] = self.logu(*self.lag_range_s)
        p["element_w_per_k"] = self.u(15.0, 60.0)
        p["element_j_per_k"] = p["element_lag_s"] * p["element_w_per_k"]
        p["tau_s"] = self.logu(*self.tau_range_s)
        p["covered"] = bool(self.rng.uniform() < 0.4)
        p["cover_u"] = self.u(3.0, 8.0)
        self._fit_insulation(50.0)
        p["sensor_lag_s"] = self.u(3.0, 20.0)

    def _fit_insulation(self, temp_ref_c):
        """Choose the wall so that the loss time constant near ``temp_ref_c`` is the drawn one.

        Slower than a bare wall: an insulation resistance ``wall_r`` (m^2 K/W)
        in series. Faster: a forced-air coefficient ``h_forced`` on the wall
        (a draught or an extractor hood; forced convection in air is about
        10-100 W/(m^2 K), from memory), capped at :data:`MAX_FORCED_H`; the
        achieved constant is in the truth as ``tau_ref_s``.
        """
        p = self.p
        d = temp_ref_c - p["room_c"]
        top = self._top_loss_w(temp_ref_c, {"lid": p["covered"]}) / d
        need = p["heat_capacity_j_per_k"] / p["tau_s"] - top
        if need <= 0.05 * top and not p["covered"]:
            p["covered"] = True                # an open top alone loses too much: cover it
            top = self._top_loss_w(temp_ref_c, {"lid": True}) / d
            need = p["heat_capacity_j_per_k"] / p["tau_s"] - top
        p["wall_r"], p["h_forced"] = 0.0, 0.0
        bare = self._wall_loss_w(temp_ref_c) / d
        if need >= bare:
            p["h_forced"] = min((need - bare) / p["side_area_m2"], MAX_FORCED_H)
        else:
            need = max(need, 0.02 * bare)
            p["wall_r"] = p["side_area_m2"] / need - p["side_area_m2"] / bare

    def _wall_loss_w(self, temp_c):
        p = self.p
        return (_side_loss_w(temp_c, p["room_c"], p["side_area_m2"], p["height_m"],
                             p["eps_side"], p["wall_r"])
                + p["h_forced"] * p["side_area_m2"] * (temp_c - p["room_c"]))

    def tau_ref_s(self, temp_c):
        p = self.p
        d = temp_c - p["room_c"]
        if abs(d) < 1.0:
            return None
        ua = (self._wall_loss_w(temp_c) + self._top_loss_w(temp_c, {"lid": p["covered"]})) / d
        return p["heat_capacity_j_per_k"] / ua

    def _top_loss_w(self, temp_c, mode):
        p = self.p
        if mode["lid"]:
            return p["cover_u"] * p["top_area_m2"] * (temp_c - p["room_c"])
        q, _ = open_surface_loss_w(temp_c, p["room_c"], p["top_area_m2"],
                                   math.sqrt(p["top_area_m2"]) / 4.0, p["rel_humidity"])
        return q

    def mode0(self):
        return {"lid": self.p["covered"], "stir": 1.0}

    def y0(self):
        p = self.p
        return [p["start_c"], p["start_c"], p["start_c"]]

    def rhs(self, t, y, mode):
        p = self.p
        tw, te, s = y
        q_e = p["element_w_per_k"] * (te - tw)
        q_loss = self._wall_loss_w(tw) + self._top_loss_w(tw, mode)
        sensed = (1.0 - p["w_element"]) * tw + p["w_element"] * te
        return [(q_e - q_loss) / p["heat_capacity_j_per_k"],
                (p["power_w"] * p["duty"] - q_e) / p["element_j_per_k"],
                (sensed - s) / p["sensor_lag_s"]]


class Pot(_Heated):
    """Pot on a hob: 1-6 L, steel or aluminium, hob element lag 20-300 s."""

    crossing_range_s = (120.0, 4800.0)
    target_limits_c = (30.0, 95.0)
    tau_range_s = (600.0, 3600.0)
    lag_range_s = (20.0, 300.0)
    litres = (1.0, 6.0)
    power_range_w = (800.0, 2500.0)

    def draw_vessel(self):
        p = self.p
        p["radius_m"] = self.u(0.08, 0.13)
        area = math.pi * p["radius_m"] ** 2
        p["height_m"] = max(p["water_kg"] / 1000.0 / area, 0.03)
        p["top_area_m2"] = area
        p["side_area_m2"] = 2.0 * math.pi * p["radius_m"] * p["height_m"]
        p["vessel"] = self.choice(("steel", "aluminium"))
        c = C_STEEL if p["vessel"] == "steel" else C_ALUMINIUM
        p["vessel_j_per_k"] = self.u(0.6, 2.0) * c
        p["eps_side"] = EPS_STEEL if p["vessel"] == "steel" else EPS_ALUMINIUM
        p["w_element"] = 0.0       # probe in the water


class Bath(_Heated):
    """Water bath with an immersion element: 5-30 L, element lag 20-60 s, tau 20 min - 3 h."""

    crossing_range_s = (300.0, 9000.0)
    target_limits_c = (30.0, 90.0)
    tau_range_s = (1200.0, 10800.0)
    lag_range_s = (20.0, 60.0)
    litres = (5.0, 30.0)
    power_range_w = (500.0, 2000.0)

    def draw_vessel(self):
        p = self.p
        p["top_area_m2"] = self.u(0.04, 0.12)
        width = math.sqrt(p["top_area_m2"])
        p["height_m"] = max(p["water_kg"] / 1000.0 / p["top_area_m2"], 0.1)
        p["side_area_m2"] = 4.0 * width * p["height_m"]
        p["vessel"] = self.choice(("polymer", "steel"))
        p["vessel_j_per_k"] = self.u(1.0, 4.0) * (1500.0 if p["vessel"] == "polymer" else C_STEEL)
        p["eps_side"] = EPS_GLASS if p["vessel"] == "polymer" else EPS_STEEL
        # a probe on the element's clamp partly sees the element's warm plume (own estimate)
        p["w_element"] = self.u(0.0, 0.03)


class Kettle(_Family):
    """Kettle. State: water C, element plate C, body C, sensor C."""

    direction = 1
    crossing_range_s = (90.0, 700.0)
    target_limits_c = (40.0, 95.0)
    heater_possible = True
    boil_stop = True

    def draw(self):
        p = self.p
        p["room_c"] = self.u(15.0, 28.0)
        p["start_c"] = self.u(8.0, 25.0)
        p["water_kg"] = self.u(0.3, 1.7)
        p["power_w"] = self.u(1200.0, 3000.0)
        p["duty"] = 1.0
        p["element_j_per_k"] = 0.35 * C_STEEL * self.u(0.6, 1.5)
        p["element_w_per_k"] = self.u(40.0, 100.0)
        p["body_j_per_k"] = self.u(100.0, 350.0)
        p["body_w_per_k"] = self.u(8.0, 25.0)
        p["body_area_m2"] = self.u(0.04, 0.09)
        p["eps_body"] = self.u(0.3, 0.9)            # brushed steel to plastic (from memory)
        p["height_m"] = 0.2
        p["w_plate"] = self.u(0.0, 0.15)            # base sensor partly sees the plate
        p["sensor_lag_s"] = self.u(3.0, 15.0)

    def y0(self):
        p = self.p
        return [p["start_c"]] * 4

    def rhs(self, t, y, mode):
        p = self.p
        tw, te, tb, s = y
        amb = p["room_c"]
        q_e = p["element_w_per_k"] * (te - tw)
        q_wb = p["body_w_per_k"] * (tw - tb)
        d = tb - amb
        h_out = C_AIR_VERTICAL * (_soft_abs(d) / p["height_m"]) ** 0.25
        q_ba = h_out * p["body_area_m2"] * d + radiation_w(p["eps_body"], p["body_area_m2"], tb, amb)
        sensed = (1.0 - p["w_plate"]) * tw + p["w_plate"] * te
        # evaporation under the closed lid is neglected: minor below ~90 C (own estimate)
        return [(q_e - q_wb) / (p["water_kg"] * C_WATER),
                (p["power_w"] * p["duty"] - q_e) / p["element_j_per_k"],
                (q_wb - q_ba) / p["body_j_per_k"],
                (sensed - s) / p["sensor_lag_s"]]


class Wort(_Family):
    """Wort and immersion coil. State: wort C, wort kg, coolant reservoir C, sensor C."""

    direction = -1
    crossing_range_s = (300.0, 4800.0)
    target_limits_c = (10.0, 45.0)
    room_column_possible = False   # the room is not what the wort approaches

    def draw(self):
        p = self.p
        p["room_c"] = self.u(12.0, 30.0)
        p["rel_humidity"] = self.u(0.3, 0.8)
        p["start_c"] = self.u(85.0, 99.0)
        p["wort_kg"] = self.u(10.0, 40.0)
        p["coil_length_m"] = self.u(5.0, 20.0)
        p["coil_diameter_m"] = self.choice((0.0095, 0.0127))
        p["h_inside"] = self.u(2500.0, 6000.0)        # forced flow in the tube (own estimate)
        p["flow_kg_s"] = self.u(0.04, 0.2)
        p["coolant"] = self.choice(("tap", "recirculated"), [0.6, 0.4])
        if p["coolant"] == "tap":
            # inlet warms as the supply pipes do: T0 + rise (1 - exp(-t / tau))
            p["inlet0_c"] = self.u(5.0, 20.0)
            p["inlet_rise_c"] = self.u(1.0, 8.0)
            p["inlet_tau_s"] = self.u(600.0, 3000.0)
            p["reservoir0_c"] = p["inlet0_c"]
        else:
            p["reservoir0_c"] = self.u(1.0, 8.0)       # iced water
            p["reservoir_kg"] = self.u(20.0, 80.0)
            p["reservoir_w_per_k"] = self.u(2.0, 8.0)  # tub's losses to the room (own estimate)
        p["pot_diameter_m"] = (p["wort_kg"] / 1000.0 / 0.8 * 4.0 / math.pi) ** (1.0 / 3.0)
        p["top_area_m2"] = math.pi * p["pot_diameter_m"] ** 2 / 4.0
        p["height_m"] = p["pot_diameter_m"]
        p["side_area_m2"] = math.pi * p["pot_diameter_m"] * p["height_m"] * 0.8
        p["eps_pot"] = self.u(0.1, 0.4)             # stainless, polished to dull (from memory)
        p["lid_on"] = bool(self.rng.uniform() < 0.5)
        p["stir"] = bool(self.rng.uniform() < 0.4)
        p["stir_factor"] = self.u(1.4, 2.0)
        p["sensor_lag_s"] = self.u(10.0, 40.0)
        if p["stir"]:
            t_s = self.u(120.0, 900.0)

            def stir(y, m):
                m["stir"] = p["stir_factor"]
                return y
            self.breaks.append((t_s, stir))
            self.events.append((t_s, "stirring"))

    def mode0(self):
        return {"lid": self.p["lid_on"], "stir": 1.0}

    def inlet_c(self, t, reservoir_c):
        p = self.p
        if p["coolant"] == "tap":
            return p["inlet0_c"] + p["inlet_rise_c"] * (1.0 - math.exp(-t / p["inlet_tau_s"]))
        return reservoir_c

    def y0(self):
        p = self.p
        return [p["start_c"], p["wort_kg"], p["reservoir0_c"], p["start_c"]]

    def rhs(self, t, y, mode):
        p = self.p
        tw, m, tr, s = y
        amb = p["room_c"]
        t_in = self.inlet_c(t, tr)
        # outer film sees roughly half the wort-coolant difference (own estimate)
        h_o = C_WORT_TUBE * mode["stir"] * _soft_abs(0.5 * (tw - t_in)) ** 0.25
        ua = math.pi * p["coil_diameter_m"] * p["coil_length_m"] / (1.0 / h_o + 1.0 / p["h_inside"])
        c_flow = p["flow_kg_s"] * C_WATER
        effectiveness = 1.0 - math.exp(-ua / c_flow)  # one side isothermal (standard e-NTU)
        q_coil = effectiveness * c_flow * (tw - t_in)
        d = tw - amb
        h_out = C_AIR_VERTICAL * (_soft_abs(d) / p["height_m"]) ** 0.25
        q_side = h_out * p["side_area_m2"] * d + radiation_w(p["eps_pot"], p["side_area_m2"], tw, amb)
        if mode["lid"]:
            q_top, evap = 6.0 * p["top_area_m2"] * d, 0.0
        else:
            q_top, evap = open_surface_loss_w(tw, amb, p["top_area_m2"],
                                              math.sqrt(p["top_area_m2"]) / 4.0,
                                              p["rel_humidity"])
        if p["coolant"] == "tap":
            d_res = 0.0      # the inlet is a function of time, the state just follows it
        else:
            d_res = (q_coil + p["reservoir_w_per_k"] * (amb - tr)) / (p["reservoir_kg"] * C_WATER)
        return [-(q_coil + q_side + q_top) / (m * C_WORT),
                -evap,
                d_res,
                (tw - s) / p["sensor_lag_s"]]


class Fridge(_Family):
    """Drink in a fridge. State: liquid C, container C, sensor C, air sensor C."""

    direction = -1
    crossing_range_s = (900.0, 14400.0)
    target_limits_c = (3.0, 16.0)
    sensor_index = 2
    air_index = 3
    room_column_possible = False

    def draw(self):
        p = self.p
        p["room_c"] = self.u(18.0, 30.0)
        p["start_c"] = self.u(p["room_c"] - 4.0, p["room_c"] + 2.0)
        p["set_c"] = self.u(2.0, 7.0)
        p["cycle_amp_c"] = self.u(0.5, 2.5)
        p["cycle_period_s"] = self.u(1200.0, 3600.0)
        p["cycle_phase"] = self.u(0.0, 2.0 * math.pi)
        p["cycle_skew"] = self.u(-1.0, 1.0)
        p["door_rise_c"] = self.u(2.0, 8.0)
        p["door_tau_s"] = self.u(150.0, 500.0)
        p["second_door"] = bool(self.rng.uniform() < 0.3)
        p["second_door_s"] = self.u(1800.0, 9000.0)
        p["second_rise_c"] = self.u(2.0, 6.0)
        p["volume_l"] = self.u(0.33, 1.5)
        p["liquid_kg"] = p["volume_l"]
        p["container"] = self.choice(("glass", "pet", "can"), [0.4, 0.4, 0.2])
        c, rho, k, eps, (th_lo, th_hi) = MATERIALS[p["container"]]
        radius = self.u(0.03, 0.05)
        height = p["volume_l"] / 1000.0 / (math.pi * radius * radius) * 1.1
        p["area_m2"] = 2.0 * math.pi * radius * height + 2.0 * math.pi * radius * radius
        p["height_m"] = height
        p["wall_m"] = self.u(th_lo, th_hi)
        p["container_j_per_k"] = c * rho * p["wall_m"] * p["area_m2"]
        p["container_half_r"] = 0.5 * p["wall_m"] / k
        p["container_eps"] = eps
        p["probe"] = self.choice(("in_liquid", "strap_on"))
        if p["probe"] == "in_liquid":
            p["w_container"], p["w_air"], p["sensor_lag_s"] = 0.0, 0.0, self.u(5.0, 20.0)
        else:
            p["w_container"], p["w_air"], p["sensor_lag_s"] = (self.u(0.7, 0.9), self.u(0.05, 0.25),
                                                               self.u(20.0, 60.0))
        p["air_sensor_lag_s"] = self.u(30.0, 120.0)
        self.events.append((0.0, "door closed"))
        if p["second_door"]:
            self.events.append((p["second_door_s"], "door opened"))

    def air_c(self, t):
        p = self.p
        ph = 2.0 * math.pi * t / p["cycle_period_s"] + p["cycle_phase"]
        cyc = math.sin(ph) + 0.3 * math.sin(2.0 * ph + p["cycle_skew"])
        air = p["set_c"] + p["cycle_amp_c"] * cyc + p["door_rise_c"] * math.exp(-t / p["door_tau_s"])
        if p["second_door"] and t > p["second_door_s"]:
            air += p["second_rise_c"] * math.exp(-(t - p["second_door_s"]) / p["door_tau_s"])
        return air

    def y0(self):
        p = self.p
        return [p["start_c"], p["start_c"], p["start_c"], self.air_c(0.0)]

    def rhs(self, t, y, mode):
        p = self.p
        tl, tg, s, a = y
        air = self.air_c(t)
        d_in = tl - tg
        h_in = water_wall_coefficient(tl) * _soft_abs(d_in) ** 0.25
        q_lg = 0.9 * p["area_m2"] * d_in / (1.0 / h_in + p["container_half_r"])
        d_out = tg - air
        h_out = C_AIR_VERTICAL * (_soft_abs(d_out) / p["height_m"]) ** 0.25
        q_ga = h_out * p["area_m2"] * d_out + radiation_w(p["container_eps"], p["area_m2"], tg, air)
        sensed = (1.0 - p["w_container"] - p["w_air"]) * tl + p["w_container"] * tg + p["w_air"] * air
        return [-q_lg / (p["liquid_kg"] * C_DRINK),
                (q_lg - q_ga) / p["container_j_per_k"],
                (sensed - s) / p["sensor_lag_s"],
                (air - a) / p["air_sensor_lag_s"]]


_CLASSES = {"mug": Mug, "pot": Pot, "bath": Bath, "kettle": Kettle, "wort": Wort,
            "fridge": Fridge}


# ------------------------------------------------------------------ generation
class FamilyTrace:
    """One generated trace: columns (deg C, seconds), truth dict, optional dense physics.

    ``time_s``, ``temp_c``, ``clean_c`` (noise-free sensor signal per row)
    float arrays; ``ambient_c`` array or None; ``heater`` duty array or None;
    ``truth`` dict (see module docstring). ``solution``, ``sensor_signal``
    (callable, seconds -> deg C) and ``physics`` (the family instance with
    ``rhs``, ``y0``, ``breaks``, ``mode0``) are present only when generated
    with ``keep_solution=True`` (not cached).
    """

    def __init__(self, family, seed, time_s, temp_c, clean_c, ambient_c, heater, truth,
                 solution=None, sensor_signal=None, physics=None):
        self.family = family
        self.seed = int(seed)
        self.time_s = np.asarray(time_s, dtype=float)
        self.temp_c = np.asarray(temp_c, dtype=float)
        self.clean_c = np.asarray(clean_c, dtype=float)
        self.ambient_c = None if ambient_c is None else np.asarray(ambient_c, dtype=float)
        self.heater = None if heater is None else np.asarray(heater, dtype=float)
        self.truth = truth
        self.solution = solution
        self.sensor_signal = sensor_signal
        self.physics = physics

    def __len__(self):
        return len(self.time_s)


def _allowed_crossing_window(signal, fam, grid):
    """Times on ``grid`` after the sensor's turn where the signal lies in the target limits."""
    vals = signal(grid)
    lo, hi = fam.target_limits_c
    if fam.direction < 0:
        turn = int(np.argmax(vals[: max(len(vals) // 3, 2)]))
    else:
        turn = int(np.argmin(vals[: max(len(vals) // 3, 2)]))
    ok = np.zeros(len(grid), dtype=bool)
    ok[turn + 1:] = True
    ok &= (vals >= lo) & (vals <= hi)
    # the signal must keep going the same way up to there (strictly past the start)
    start = vals[turn]
    ok &= (vals - start) * fam.direction > 1.0
    return ok, vals


def _draw_sensor(rng):
    """Gaussian noise sd (deg C), quantum (deg C) and timing jitter (fraction)."""
    gauss_sd = float(rng.uniform(0.01, 0.15))
    quantum = float(QUANTA_C[int(rng.choice(len(QUANTA_C), p=QUANTUM_WEIGHTS))])
    jitter = float(rng.uniform(0.0, 0.3))
    return gauss_sd, quantum, jitter


def generate(family, seed, sensor_faults=True, keep_solution=False, max_tries=20):
    """Generate one trace of ``family`` for integer ``seed``; returns :class:`FamilyTrace`.

    Deterministic in ``(family, seed)`` for the same numpy/scipy. Draws the
    physics, then a sampling interval, then a crossing time (seconds) in the
    family's range at which the noise-free sensor signal gives the target
    (rounded to 0.5 C); redraws (up to ``max_tries``) when no admissible
    target exists. ``sensor_faults`` adds spikes, dropouts and a stuck
    stretch with the drawn probabilities.
    """
    if family not in _CLASSES:
        raise ValueError("unknown family %r (choose from %s)" % (family, ", ".join(FAMILIES)))
    rng = np.random.default_rng([int(seed), _FAMILY_CODE[family]])
    for _ in range(max_tries):
        out = _try_generate(family, seed, rng, sensor_faults, keep_solution)
        if out is not None:
            return out
    raise RuntimeError("no admissible target for %s seed %d" % (family, seed))


def _try_generate(family, seed, rng, sensor_faults, keep_solution):
    fam = _CLASSES[family](rng)
    fam.draw()
    p = fam.p
    c_lo, c_hi = fam.crossing_range_s
    horizon = 1.25 * c_hi + 3.0 * max(INTERVALS_S)
    breaks = sorted(fam.breaks, key=lambda b: b[0])
    sol = integrate_piecewise(fam.rhs, fam.y0(), horizon, breaks, fam.mode0())

    def sensor_signal(t):
        return sol(t)[fam.sensor_index]

    stop = horizon
    if fam.boil_stop:
        hot = find_crossing_s(lambda t: sol(t)[fam.water_index()], BOIL_STOP_C, 1, 0.0,
                              horizon, 2.0)
        if hot is not None:
            stop = hot
    step = 2.0 if c_hi > 2000.0 else 1.0
    grid = np.arange(0.0, horizon + step, step)
    ok, vals = _allowed_crossing_window(sensor_signal, fam, grid)
    ok &= (grid >= c_lo) & (grid <= min(c_hi, stop - 5.0))
    # sampling interval: the approach must hold enough readings; 1 s only for short traces
    order = list(INTERVALS_S)
    rng.shuffle(order)
    if not ok.any():
        return None
    for interval in order:
        t_min = MIN_APPROACH_READINGS * interval
        allowed = ok & (grid >= t_min)
        if interval == 1.0:
            allowed &= grid * 1.2 + 120.0 <= MAX_ONE_SECOND_S
        if allowed.any():
            break
    else:
        return None
    cand = grid[allowed]
    t_draw = float(rng.uniform(cand[0], cand[-1]))
    t_draw = float(cand[np.argmin(np.abs(cand - t_draw))])
    target = round(float(sensor_signal(np.array([t_draw]))[0]) * 2.0) / 2.0
    crossing = find_crossing_s(sensor_signal, target, fam.direction, 0.0, stop, step)
    if crossing is None or crossing < t_min or crossing < 90.0:
        return None
    end = min(crossing + max(120.0, 0.2 * crossing, 3.0 * interval), stop, horizon)

    # sampling times with jitter
    gauss_sd, quantum, jitter = _draw_sensor(rng)
    n = int(end / interval) + 1
    times = np.arange(n) * interval
    times[1:] += rng.uniform(-jitter, jitter, n - 1) * interval * 0.5
    times = times[times <= end]
    n = len(times)
    clean = sensor_signal(times)
    readings = np.round((clean + rng.normal(0.0, gauss_sd, n)) / quantum) * quantum

    faults = {"spikes": [], "stuck": None, "dropouts": []}
    keep = np.ones(n, dtype=bool)
    n_spikes = int(rng.integers(1, 4)) if rng.uniform() < 0.3 else 0
    spike_at = rng.integers(5, max(n - 1, 6), n_spikes) if n_spikes else []
    spike_size = rng.uniform(3.0, 20.0, n_spikes) * rng.choice([-1.0, 1.0], n_spikes)
    stuck = rng.uniform() < 0.1
    scale = max(1, int(round(60.0 / interval)))            # fault lengths in minutes of readings
    stuck_start = int(rng.integers(5, max(6, n // 2)))
    stuck_len = int(rng.integers(2, 6)) * scale if interval < 60.0 else int(rng.integers(2, 5))
    n_gaps = int(rng.integers(1, 4)) if rng.uniform() < 0.3 else 0
    gap_at = rng.integers(5, max(n - 5, 6), n_gaps) if n_gaps else []
    gap_len = rng.integers(1, 4, n_gaps) * (scale if interval < 60.0 else 1) if n_gaps else []
    if sensor_faults and n > 12:
        for i, s in zip(spike_at, spike_size):
            if i < n:
                readings[i] = np.round((readings[i] + s) / quantum) * quantum
                faults["spikes"].append(float(times[i]))
        if stuck:
            j = min(stuck_start + stuck_len, n)
            readings[stuck_start:j] = readings[stuck_start]
            faults["stuck"] = [float(times[stuck_start]), float(times[j - 1])]
        for i, g in zip(gap_at, gap_len):
            keep[i:i + g] = False
            faults["dropouts"].append([float(times[i]), float(times[min(i + g, n) - 1])])
        keep[0] = True
        keep[-1] = True

    heater = None
    has_heater_column = bool(fam.heater_possible and rng.uniform() < 0.5)
    if has_heater_column:
        heater = np.full(n, float(p["duty"]))
    ambient = None
    has_ambient_column = False
    if fam.air_index is not None:
        has_ambient_column = bool(rng.uniform() < 0.6)
        air_noise = float(rng.uniform(0.03, 0.1))
        if has_ambient_column:
            air = sol(times)[fam.air_index] + rng.normal(0.0, air_noise, n)
            ambient = np.round(air / 0.0625) * 0.0625
    elif fam.room_column_possible:
        has_ambient_column = bool(rng.uniform() < 0.25)
        air_noise = float(rng.uniform(0.03, 0.1))
        if has_ambient_column:
            ambient = np.round((p["room_c"] + rng.normal(0.0, air_noise, n)) / 0.0625) * 0.0625

    tau = fam.tau_ref_s(target)
    truth = {
        "family": family,
        "title": FAMILY_TITLES[family],
        "seed": int(seed),
        "target_c": float(target),
        "crossing_time_s": float(crossing),
        "direction": "cooling" if fam.direction < 0 else "heating",
        "noise_sd_c": float(math.sqrt(gauss_sd ** 2 + quantum ** 2 / 12.0)),
        "gauss_sd_c": gauss_sd,
        "quantum_c": quantum,
        "sample_interval_s": float(interval),
        "jitter_frac": jitter,
        "has_heater_column": has_heater_column,
        "has_ambient_column": has_ambient_column,
        "room_c": float(p["room_c"]),
        "tau_ref_s": None if tau is None else float(tau),
        "start_reading_c": float(clean[0]),
        "duration_s": float(times[keep][-1]),
        "rows": int(keep.sum()),
        "events": [{"time_s": float(t), "event": e} for t, e in fam.events if t <= end],
        "faults_enabled": bool(sensor_faults),
        "faults": faults,
        "params": {k: (float(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else v)
                   for k, v in p.items()},
        "solver": "scipy solve_ivp DOP853 rtol=atol=1e-10; crossing by brentq on dense output",
    }
    return FamilyTrace(family, seed, times[keep], readings[keep], clean[keep],
                       None if ambient is None else ambient[keep],
                       None if heater is None else heater[keep], truth,
                       solution=sol if keep_solution else None,
                       sensor_signal=sensor_signal if keep_solution else None,
                       physics=fam if keep_solution else None)


# ------------------------------------------------------------------ disk cache
def cache_version():
    """Hash of this module and of host_sim.sim.scenarios (changes invalidate the cache)."""
    h = hashlib.sha1()
    here = os.path.dirname(os.path.abspath(__file__))
    for name in ("families.py", "scenarios.py"):
        with open(os.path.join(here, name), "rb") as handle:
            h.update(handle.read())
    h.update(np.__version__.encode())
    import scipy
    h.update(scipy.__version__.encode())
    return h.hexdigest()[:12]


def default_cache_dir():
    """``<repository>/.cache/families`` (gitignored)."""
    return os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))),
                        ".cache", "families")


def load_or_generate(family, seed, sensor_faults=True, cache_dir=None):
    """:func:`generate` with a disk cache (``cache_dir`` None: the default; False: no cache)."""
    if cache_dir is False:
        return generate(family, seed, sensor_faults=sensor_faults)
    root = os.path.join(cache_dir or default_cache_dir(), cache_version())
    path = os.path.join(root, "%s-%d-%s.npz" % (family, int(seed), "f" if sensor_faults else "n"))
    if os.path.exists(path):
        try:
            with np.load(path, allow_pickle=False) as z:
                truth = json.loads(str(z["truth"]))
                return FamilyTrace(family, seed, z["time_s"], z["temp_c"], z["clean_c"],
                                   z["ambient_c"] if truth["has_ambient_column"] else None,
                                   z["heater"] if truth["has_heater_column"] else None, truth)
        except (OSError, ValueError, KeyError):
            pass                                   # a damaged entry: generate it again
    ft = generate(family, seed, sensor_faults=sensor_faults)
    os.makedirs(root, exist_ok=True)
    tmp = "%s.%d.tmp.npz" % (path[:-4], os.getpid())
    empty = np.zeros(0)
    np.savez(tmp, time_s=ft.time_s, temp_c=ft.temp_c, clean_c=ft.clean_c,
             ambient_c=ft.ambient_c if ft.ambient_c is not None else empty,
             heater=ft.heater if ft.heater is not None else empty,
             truth=np.array(json.dumps(ft.truth, sort_keys=True)))
    os.replace(tmp, path)
    return ft


def crossing_by_brentq(sensor_signal, target_c, t_lo, t_hi):
    """brentq root of ``sensor_signal(t) - target_c`` on [t_lo, t_hi] (s); for tests."""
    return float(brentq(lambda t: float(sensor_signal(np.array([t]))[0]) - target_c,
                        t_lo, t_hi, xtol=1e-9))


def to_trace(ft):
    """A :class:`host_sim.replay.trace_io.Trace` of the generated columns."""
    from host_sim.replay.trace_io import Trace
    return Trace(ft.time_s, ft.temp_c, ambient_c=ft.ambient_c, heater=ft.heater)
