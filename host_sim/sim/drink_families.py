"""Two drink families with wide ranges: a drink in cycling air, and a mug topped up with hot liquid.

- ``room``: a drink (mug, glass, bottle, jug) in a room whose heating or air
  conditioning cycles, or in a drinks cabinet whose compressor cycles
  [liquid, container, probe, air sensor]. Hot drinks cool and cold drinks
  warm in a room; a room-temperature drink cools in a cabinet. The air
  swings 0.5-4 C (amplitude) with a period of 15-70 min, warming and cooling
  parts of unequal length, cycles of unequal length, a slow drift. The probe
  is strapped to (or clipped on) the container and partly sees the air
  (weight 0.02-0.3). About half of the traces carry the air sensor's column;
  that sensor is noisy (0.02-0.3 C), quantised (0.0625, 0.1 or 0.5 C) and
  lags (20-300 s). Unlike ``fridge`` (a drink cooling towards 2-7 C air),
  temperatures are a room's or a cabinet's and both directions occur.
- ``topup``: a hot drink in a mug [liquid, wall, liquid kg, probe], partly
  filled (40-80 %), cooling; after 4-70 min the user drinks some (20-60 %)
  and tops it up with hot liquid (70-98 C) to 70-100 % of the mug (adding at
  least a tenth of it), sometimes (30 %) a second time 5-30 min later. The
  liquid jumps at once (mixing: ``T = (m1 T1 + m2 T2) / (m1 + m2)``, equal
  specific heats); the probe, in
  the liquid with a first-order time constant of 5-90 s, rises after it, so
  it passes the drinking target on its way up while the liquid is far hotter.
  The truth's crossing is that of the final approach (after the last pour).

All numbers are our own estimates of such drinks, rooms and probes.
"""
import math

from host_sim.sim import kinds
from host_sim.sim.family_base import Family, draw_mug_wall
from host_sim.sim.physics import C_DRINK, MATERIALS, water_wall_coefficient

AIR_QUANTA_C = (0.0625, 0.1, 0.5)
AIR_QUANTUM_WEIGHTS = (0.4, 0.3, 0.3)
NECK_RADIUS_M = 0.013            # a bottle's opening (own estimate)

# vessel: (materials, litres, radius m, top: "open", "open_or_lid" or "capped")
ROOM_VESSELS = {
    "mug": (("ceramic", "glass"), (0.2, 0.45), (0.035, 0.045), "open_or_lid"),
    "glass": (("glass",), (0.2, 0.5), (0.030, 0.040), "open"),
    "bottle": (("glass", "pet", "can"), (0.33, 1.0), (0.030, 0.045), "capped"),
    "jug": (("glass", "pet"), (0.8, 2.0), (0.050, 0.070), "open_or_lid"),
}


class RoomDrinkFamily(Family):
    """Drink in a room or cabinet whose air cycles.

    State: liquid, container, probe, air sensor (deg C).
    """

    crossing_range_s = (300.0, 14400.0)
    sensor_index = 2
    air_index = 3
    air_column_chance = 0.5
    room_column_possible = False   # the air sensor's column is the ambient one

    def draw(self):
        p = self.p
        p["place"] = self.choice(("room", "cabinet"), [0.65, 0.35])
        if p["place"] == "room":             # a heating or air-conditioning thermostat
            p["air_mean_c"] = self.u(16.0, 30.0)
            p["drink"] = self.choice(("hot", "cold"))
            p["start_c"] = self.u(45.0, 90.0) if p["drink"] == "hot" else self.u(2.0, 12.0)
        else:                                # a drinks cabinet: its compressor cycles
            p["air_mean_c"] = self.u(4.0, 14.0)
            p["drink"] = "warm"
            p["start_c"] = self.u(18.0, 32.0)
        p["room_c"] = p["air_mean_c"]
        p["rel_humidity"] = self.u(0.2, 0.8)
        p["cycle_amp_c"] = self.u(0.5, 4.0)
        p["cycle_period_s"] = self.u(900.0, 4200.0)
        p["cycle_phase"] = self.u(0.0, 2.0 * math.pi)
        p["cycle_skew"] = self.u(-0.8, 0.8)
        p["cycle_wobble"] = self.u(0.0, 0.5)
        p["cycle_wobble_period_s"] = p["cycle_period_s"] * self.u(3.0, 8.0)
        p["drift_c_per_h"] = self.u(-0.5, 0.5)
        p["drift_c_per_s"] = p["drift_c_per_h"] / 3600.0
        self._draw_vessel()
        # the probe on the container's outside sees the container, some air, a little liquid
        p["w_air"] = self.u(0.02, 0.3)
        p["w_container"] = self.u(0.3, 0.95 - p["w_air"])
        p["w_liquid"] = 1.0 - p["w_container"] - p["w_air"]
        p["sensor_lag_s"] = self.logu(15.0, 300.0)   # a strap-on probe through a thick wall lags minutes
        p["probe_settled"] = self.chance(0.5)     # else attached at the start, at air temperature
        p["air_sensor_lag_s"] = self.u(20.0, 300.0)
        p["air_sensor_sd_c"] = self.u(0.02, 0.3)
        p["air_sensor_quantum_c"] = self.choice(AIR_QUANTA_C, AIR_QUANTUM_WEIGHTS)
        # targets beyond the band the air swings in (a target inside it is reached, or not,
        # by a swing): the amplitude, 1 C, and the drift over the longest trace
        band = p["cycle_amp_c"] + 1.0 + abs(p["drift_c_per_h"]) * self.crossing_range_s[1] / 3600.0
        if p["start_c"] > p["air_mean_c"]:
            self.direction = -1
            self.target_limits_c = (p["air_mean_c"] + band, min(p["start_c"] - 1.5, 80.0))
        else:
            self.direction = 1
            self.target_limits_c = (p["start_c"] + 1.5, p["air_mean_c"] - band)
        self.events.append((0.0, "drink placed"))

    def _draw_vessel(self):
        p = self.p
        p["vessel"] = self.choice(tuple(ROOM_VESSELS))
        materials, litres, radii, top = ROOM_VESSELS[p["vessel"]]
        p["container"] = self.choice(materials)
        c, rho, k, eps, (th_lo, th_hi) = MATERIALS[p["container"]]
        p["volume_l"] = self.u(*litres)
        p["liquid_kg"] = p["volume_l"]            # density ~1 kg/L (from memory)
        radius = self.u(*radii)
        fill_m = p["volume_l"] / 1000.0 / (math.pi * radius * radius)
        p["height_m"] = fill_m * self.u(1.05, 1.3)
        p["radius_m"] = radius
        side = 2.0 * math.pi * radius * p["height_m"]
        bottom = math.pi * radius * radius
        p["inner_area_m2"] = 2.0 * math.pi * radius * fill_m + bottom
        if top == "capped":
            p["lid"] = True
            p["area_m2"] = side + 2.0 * bottom
            p["top_area_m2"] = math.pi * NECK_RADIUS_M ** 2
        else:
            p["lid"] = top == "open_or_lid" and self.chance(0.3)
            p["area_m2"] = side + bottom
            p["top_area_m2"] = bottom
        p["top_length_m"] = radius
        p["lid_u"] = self.u(2.0, 6.0)             # W/(m^2 K), a plastic lid (own estimate)
        p["wall_m"] = self.u(th_lo, th_hi)
        p["container_j_per_k"] = c * rho * p["wall_m"] * p["area_m2"]
        p["container_half_r"] = 0.5 * p["wall_m"] / k
        p["container_eps"] = eps
        # a hot drink is poured into a container at air temperature or warmed
        # before; a cold or warm drink comes in its own container
        p["preheat"] = self.u(0.0, 0.8) if p["drink"] == "hot" else 1.0

    def mode0(self):
        return {"lid": self.p["lid"], "stir": 1.0, "duty": 1.0}

    def y0(self):
        p = self.p
        air0 = self.model.air_c(0.0)
        container0 = air0 + p["preheat"] * (p["start_c"] - air0)
        mix0 = p["w_liquid"] * p["start_c"] + p["w_container"] * container0 + p["w_air"] * air0
        return [p["start_c"], container0, mix0 if p["probe_settled"] else air0, air0]

    def draw_air_sensor(self, rng):
        return self.p["air_sensor_sd_c"], self.p["air_sensor_quantum_c"]

    def physics(self):
        p = self.p
        return kinds.RoomDrink.from_params(
            p, half_r=p["container_half_r"], eps=p["container_eps"],
            water_wall=water_wall_coefficient)


def top_up(drunk, fill, pour_c, capacity_kg):
    """A scheduled pour for :func:`host_sim.sim.physics.integrate_piecewise` on a mug's state.

    The user drinks the fraction ``drunk`` and fills with liquid at ``pour_c``
    (deg C) to ``fill`` of ``capacity_kg``, adding at least a tenth of it.
    Mixing with equal specific heats:
    ``T = (m_keep T + m_add T_pour) / (m_keep + m_add)`` (energy balance,
    common practice, no source); the wall and the probe do not jump.
    """
    def apply(y, mode):
        keep = y[2] * (1.0 - drunk)
        add = max(fill * capacity_kg - keep, 0.1 * capacity_kg)
        y[0] = (keep * y[0] + add * pour_c) / (keep + add)
        y[2] = keep + add
        return y
    return apply


class TopUp(Family):
    """Hot drink in a mug, topped up once or twice. State: liquid C, wall C, liquid kg, probe C."""

    direction = -1
    crossing_range_s = (600.0, 10800.0)
    target_limits_c = (35.0, 70.0)

    def draw(self):
        p = self.p
        p["room_c"] = self.u(15.0, 28.0)
        p["rel_humidity"] = self.u(0.2, 0.8)
        p["capacity_ml"] = self.u(250.0, 500.0)
        p["first_fill"] = self.u(0.4, 0.8)
        p["liquid_kg"] = p["capacity_ml"] * p["first_fill"] * 1e-3   # ~1 kg/L (from memory)
        p["pour_c"] = self.u(65.0, 95.0)
        r = p["radius_m"] = self.u(0.032, 0.045)
        full_m = p["capacity_ml"] * 1e-6 / (math.pi * r * r)
        p["fill_m"] = p["liquid_kg"] / 1000.0 / (math.pi * r * r)
        p["height_m"] = full_m * self.u(1.05, 1.2)
        p["max_fill_factor"] = 1.0 / p["first_fill"]       # the wetted wall grows to the brim
        draw_mug_wall(self, p)
        p["lid"] = self.chance(0.3)
        p["lid_u"] = self.u(2.0, 6.0)             # W/(m^2 K), a plastic lid (own estimate)
        # the probe in the liquid, with its own first-order lag
        p["w_wall"], p["w_air"] = self.u(0.0, 0.05), 0.0
        p["sensor_lag_s"] = self.u(5.0, 90.0)
        p["topups"] = 2 if self.chance(0.3) else 1
        capacity_kg = p["capacity_ml"] * 1e-3
        t = 0.0
        for k in range(1, p["topups"] + 1):
            t += self.u(240.0, 4200.0) if k == 1 else self.u(300.0, 1800.0)
            p["topup%d_s" % k] = t
            p["topup%d_drunk" % k] = self.u(0.2, 0.6)
            p["topup%d_fill" % k] = self.u(0.7, 1.0)
            p["topup%d_c" % k] = self.u(70.0, 98.0)
            self.breaks.append((t, top_up(p["topup%d_drunk" % k], p["topup%d_fill" % k],
                                          p["topup%d_c" % k], capacity_kg)))
            self.events.append((t, "topped up"))
        self.events.insert(0, (0.0, "poured"))

    def approach_start_s(self):
        return self.p["topup%d_s" % self.p["topups"]]

    def mode0(self):
        return {"lid": self.p["lid"], "stir": 1.0, "duty": 1.0}

    def y0(self):
        p = self.p
        return [p["pour_c"], p["wall0_c"], p["liquid_kg"], p["room_c"]]

    def extra_truth(self, sol):
        """``pours``: per top-up, time (s), liquid before and after (C), mass before and after (kg)."""
        out = []
        for k in range(1, self.p["topups"] + 1):
            t = self.p["topup%d_s" % k]
            before, after = sol([t])[:, 0], sol.after(t)
            out.append({"time_s": t, "liquid_before_c": float(before[0]),
                        "liquid_after_c": float(after[0]), "kg_before": float(before[2]),
                        "kg_after": float(after[2])})
        return {"pours": out}

    def physics(self):
        p = self.p
        return kinds.MugLiquid.from_params(
            p, c_liquid=C_DRINK, water_wall=water_wall_coefficient, outer_half_wall=True,
            wall_j_per_k=p["wall_kg"] * p["wall_c_j_per_kg_k"],
            top_area_m2=math.pi * p["radius_m"] ** 2, top_length_m=p["radius_m"])
