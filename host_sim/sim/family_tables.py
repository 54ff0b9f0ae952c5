"""Physics families: one table of wide ranges per family, over the kinds of :mod:`host_sim.sim.kinds`.

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
  air sensor]: 0.33-1.5 L, glass, plastic or can, in-liquid or strap-on;
- ``room`` and ``topup`` (:mod:`host_sim.sim.drink_families`): a drink in a
  room or cabinet whose air cycles, and a mug topped up with hot liquid.

Each family class draws its parameters (``draw``: the ranges, some of them
conditional on an earlier draw, e.g. the wall thickness on the material) and
maps them onto its physical kind (``physics``). Generation, sampling, truth
and the disk cache are in :mod:`host_sim.sim.families`.
"""
import math

from host_sim.sim import kinds
from host_sim.sim.physics import (C_ALUMINIUM, C_DRINK, C_STEEL, C_WATER, EPS_ALUMINIUM,
                                  EPS_GLASS, EPS_STEEL, MATERIALS, set_mode, side_wall_loss_w,
                                  top_loss_w, water_wall_coefficient)
from host_sim.sim.drink_families import RoomDrinkFamily, TopUp
from host_sim.sim.family_base import Family, draw_mug_wall

# Order matters: a family's seed code is its place here, so new families are appended and
# the traces of the older ones stay bit-identical.
FAMILIES = ("mug", "pot", "bath", "kettle", "wort", "fridge", "room", "topup")
FAMILY_TITLES = {
    "mug": "hot drink cooling in a mug",
    "pot": "pot heated on a hob at constant power",
    "bath": "water bath heated by an immersion element",
    "kettle": "kettle heating water (stops before boiling)",
    "wort": "wort chilled by an immersion coil, coolant warming",
    "fridge": "drink cooling in a cycling fridge",
    "room": "drink cooling or warming in a room or cabinet whose air cycles",
    "topup": "mug topped up with hot liquid, probe with its own lag",
}
MAX_FORCED_H = 60.0                    # W/(m^2 K), cap on the forced-air coefficient of a wall


class Mug(Family):
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
        draw_mug_wall(self, p)
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
            self.breaks.append((t_off, set_mode("lid", False)))
            self.events.append((t_off, "lid off"))
        self.events.append((0.0, "poured"))

    def mode0(self):
        return {"lid": self.p["lid"] != "open", "stir": 1.0, "duty": 1.0}

    def y0(self):
        p = self.p
        return [p["pour_c"], p["wall0_c"], p["liquid_kg"], p["room_c"]]

    def physics(self):
        p = self.p
        return kinds.MugLiquid.from_params(
            p, c_liquid=C_DRINK, max_fill_factor=1.2, water_wall=water_wall_coefficient,
            outer_half_wall=True, wall_j_per_k=p["wall_kg"] * p["wall_c_j_per_kg_k"],
            top_area_m2=math.pi * p["radius_m"] ** 2, top_length_m=p["radius_m"])


class _Heated(Family):
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
        p["covered"] = self.chance(0.4)
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
        return side_wall_loss_w(temp_c, p["room_c"], p["side_area_m2"], p["height_m"],
                                p["eps_side"], p["wall_r"], p["h_forced"])

    def tau_ref_s(self, temp_c):
        p = self.p
        d = temp_c - p["room_c"]
        if abs(d) < 1.0:
            return None
        ua = (self._wall_loss_w(temp_c) + self._top_loss_w(temp_c, {"lid": p["covered"]})) / d
        return p["heat_capacity_j_per_k"] / ua

    def _top_loss_w(self, temp_c, mode):
        p = self.p
        return top_loss_w(temp_c, p["room_c"], p["top_area_m2"], math.sqrt(p["top_area_m2"]) / 4.0,
                          mode["lid"], p["cover_u"], p["rel_humidity"])[0]

    def mode0(self):
        return {"lid": self.p["covered"], "stir": 1.0, "duty": self.p["duty"]}

    def y0(self):
        p = self.p
        return [p["start_c"], p["start_c"], p["start_c"]]

    def physics(self):
        return kinds.HeatedWater.from_params(self.p, side_eps=self.p["eps_side"],
                                             mass_state=False)


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


class Kettle(Family):
    """Kettle. State: water C, element plate C, body C, sensor C."""

    direction = 1
    crossing_range_s = (90.0, 700.0)
    target_limits_c = (40.0, 95.0)
    heater_possible = True
    boil_stop = True
    sparse_possible = False      # boils within ~10 min: no ten readings a minute apart

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

    def physics(self):
        return kinds.Kettle.from_params(self.p)


class Wort(Family):
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
        p["lid_on"] = self.chance(0.5)
        p["stir"] = self.chance(0.4)
        p["stir_factor"] = self.u(1.4, 2.0)
        p["sensor_lag_s"] = self.u(10.0, 40.0)
        if p["stir"]:
            t_s = self.u(120.0, 900.0)
            self.breaks.append((t_s, set_mode("stir", p["stir_factor"])))
            self.events.append((t_s, "stirring"))

    def mode0(self):
        return {"lid": self.p["lid_on"], "stir": 1.0, "duty": 1.0}


    def y0(self):
        p = self.p
        return [p["start_c"], p["wort_kg"], p["reservoir0_c"], p["start_c"]]

    def physics(self):
        return kinds.WortChiller.from_params(self.p, reservoir_state=True,
                                             recirculated=self.p["coolant"] != "tap")


class Fridge(Family):
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
        p["second_door"] = self.chance(0.3)
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


    def y0(self):
        p = self.p
        return [p["start_c"], p["start_c"], p["start_c"], self.model.air_c(0.0)]

    def physics(self):
        p = self.p
        return kinds.FridgeDrink.from_params(
            p, inner_area_m2=0.9 * p["area_m2"], half_r=p["container_half_r"],
            eps=p["container_eps"], water_wall=water_wall_coefficient,
            w_liquid=1.0 - p["w_container"] - p["w_air"])


CLASSES = {"mug": Mug, "pot": Pot, "bath": Bath, "kettle": Kettle, "wort": Wort,
           "fridge": Fridge, "room": RoomDrinkFamily, "topup": TopUp}
