"""One right-hand side per physical kind: mug, heated water (bath, pot), kettle, wort chiller,
drink in cycling air (a fridge, a room or cabinet), and the power-law pot.

Each class holds the physical quantities of one vessel (SI units, deg C) and
gives ``rhs(t, y, mode)`` for :func:`host_sim.sim.physics.integrate_piecewise`;
``mode`` is a dict whose ``lid`` (bool), ``duty`` (0..1) and ``stir``
(factor on the coil's outer film) scheduled events may change. The sensor
state follows a weighted mixture of node temperatures through a first-order
lag, ``s' = (w_1 T_1 + w_2 T_2 + w_3 T_3 - s) / tau_p``; the weights say where
the probe sits (in the liquid, near a wall, strapped outside, near a heating
plate). The tables of ranges that draw these quantities are
:mod:`host_sim.sim.scenarios`, :mod:`host_sim.sim.families` and
:mod:`host_sim.sim.vessels`.
"""
import math

from host_sim.sim.physics import (C_DRINK, C_WATER, C_WATER_WALL_COLD, C_WATER_WALL_WARM, C_WORT,
                                  air_wall_h, coil_heat_w, radiation_w, side_wall_loss_w,
                                  soft_abs, top_loss_w)


def constant_wall_coefficient(value):
    """A water-wall coefficient that does not depend on the liquid temperature."""
    return lambda temp_c: value


WARM_WALL = constant_wall_coefficient(C_WATER_WALL_WARM)
COLD_WALL = constant_wall_coefficient(C_WATER_WALL_COLD)


class Quantities:
    """Keyword quantities as attributes (the vessel's numbers, units in their names).

    ``NAMES`` lists the quantities a kind needs, ``OPTIONAL`` those some of its
    variants need; :meth:`from_params` takes those found in a table's drawn
    parameters and the rest (or overrides) as keywords.
    """

    NAMES = ()
    OPTIONAL = ()

    def __init__(self, **quantities):
        missing = [name for name in self.NAMES if name not in quantities]
        if missing:
            raise ValueError("%s needs %s" % (type(self).__name__, ", ".join(missing)))
        self.__dict__.update(quantities)

    @classmethod
    def from_params(cls, p, **quantities):
        """The kind with the quantities of ``p`` (a dict of drawn values) that it names,
        ``quantities`` added or overriding."""
        merged = {name: p[name] for name in cls.NAMES + cls.OPTIONAL if name in p}
        merged.update(quantities)
        return cls(**merged)


class MugLiquid(Quantities):
    """Hot liquid in a mug. State: liquid C, wall C, liquid kg, sensor C.

    Liquid -> wall: water-side free convection h = C(T) dT^(1/4) in series with
    half the wall (``wall_half_r``), over the wetted area (grows with the mass up
    to ``max_fill_factor``). Wall -> room: free convection in air (through the
    other half of the wall when ``outer_half_wall``) and radiation. Top: a lid's
    U-value or an open evaporating surface (``mode["lid"]``).

    Quantities: room_c, liquid_kg, c_liquid, inner_area_m2, max_fill_factor,
    water_wall (callable deg C -> C), wall_half_r, outer_half_wall (bool),
    outer_area_m2, height_m, wall_eps, wall_j_per_k, top_area_m2, top_length_m,
    lid_u, rel_humidity, w_wall, w_air, sensor_lag_s.
    """

    NAMES = ("room_c", "liquid_kg", "c_liquid", "inner_area_m2", "max_fill_factor", "water_wall",
             "wall_half_r", "outer_half_wall", "outer_area_m2", "height_m", "wall_eps",
             "wall_j_per_k", "top_area_m2", "top_length_m", "lid_u", "rel_humidity", "w_wall",
             "w_air", "sensor_lag_s")

    def __init__(self, **quantities):
        super().__init__(**quantities)
        self.w_liquid = 1.0 - self.w_wall - self.w_air

    def rhs(self, t, y, mode):
        tl, tw, m, s = y
        amb = self.room_c
        d_in = tl - tw
        h_water = self.water_wall(tl) * soft_abs(d_in) ** 0.25
        u_in = 1.0 / (1.0 / h_water + self.wall_half_r)
        area_in = self.inner_area_m2 * min(m / self.liquid_kg, self.max_fill_factor)
        q_lw = u_in * area_in * d_in
        d_out = tw - amb
        h_out = air_wall_h(d_out, self.height_m)
        if self.outer_half_wall:
            h_out = 1.0 / (1.0 / h_out + self.wall_half_r)
        q_wa = h_out * self.outer_area_m2 * d_out + radiation_w(
            self.wall_eps, self.outer_area_m2, tw, amb)
        q_top, evap = top_loss_w(tl, amb, self.top_area_m2, self.top_length_m, mode["lid"],
                                 self.lid_u, self.rel_humidity)
        sensed = self.w_liquid * tl + self.w_wall * tw + self.w_air * amb
        return [-(q_lw + q_top) / (m * self.c_liquid),
                (q_lw - q_wa) / self.wall_j_per_k,
                -evap,
                (sensed - s) / self.sensor_lag_s]


class HeatedWater(Quantities):
    """Water heated through an element with its own lag (a bath, a pot on a hob).

    State: water C, element C, [water kg,] sensor C; the water mass is a state
    (evaporation tracked) when ``mass_state``, else constant inside
    ``heat_capacity_j_per_k`` (J/K, vessel included). Element:
    ``element_j_per_k`` dT_e/dt = P duty - G_e (T_e - T). Losses: a vertical
    wall (:func:`side_wall_loss_w`) and the top, covered (``cover_u``) or open.

    Quantities: room_c, rel_humidity, power_w, element_w_per_k, element_j_per_k,
    side_area_m2, height_m, side_eps, wall_r, h_forced, top_area_m2, covered,
    cover_u, w_element, sensor_lag_s, mass_state, heat_capacity_j_per_k (when
    not mass_state).
    """

    NAMES = ("room_c", "rel_humidity", "power_w", "element_w_per_k", "element_j_per_k",
             "side_area_m2", "height_m", "side_eps", "wall_r", "h_forced", "top_area_m2",
             "covered", "cover_u", "w_element", "sensor_lag_s", "mass_state")
    OPTIONAL = ("heat_capacity_j_per_k",)

    def __init__(self, **quantities):
        super().__init__(**quantities)
        self.w_water = 1.0 - self.w_element
        self.top_length_m = math.sqrt(self.top_area_m2) / 4.0

    def rhs(self, t, y, mode):
        if self.mass_state:
            tw, te, m, s = y
        else:
            tw, te, s = y
        amb = self.room_c
        q_e = self.element_w_per_k * (te - tw)
        q_side = side_wall_loss_w(tw, amb, self.side_area_m2, self.height_m, self.side_eps,
                                  self.wall_r, self.h_forced)
        q_top, evap = top_loss_w(tw, amb, self.top_area_m2, self.top_length_m, self.covered,
                                 self.cover_u, self.rel_humidity)
        d_element = (self.power_w * mode["duty"] - q_e) / self.element_j_per_k
        sensed = self.w_water * tw + self.w_element * te
        d_sensor = (sensed - s) / self.sensor_lag_s
        if self.mass_state:
            return [(q_e - q_side - q_top) / (m * C_WATER), d_element, -evap, d_sensor]
        return [(q_e - (q_side + q_top)) / self.heat_capacity_j_per_k, d_element, d_sensor]


class Kettle(Quantities):
    """Kettle. State: water C, element plate C, body C, sensor C.

    Plate -> water -> body (conductances ``element_w_per_k``, ``body_w_per_k``),
    body -> room by free convection and radiation. Evaporation under the closed
    lid is neglected: minor below ~90 C (own estimate).

    Quantities: room_c, water_kg, power_w, element_w_per_k, element_j_per_k,
    body_w_per_k, body_j_per_k, body_area_m2, eps_body, height_m, w_plate,
    sensor_lag_s.
    """

    NAMES = ("room_c", "water_kg", "power_w", "element_w_per_k", "element_j_per_k", "body_w_per_k",
             "body_j_per_k", "body_area_m2", "eps_body", "height_m", "w_plate", "sensor_lag_s")

    def __init__(self, **quantities):
        super().__init__(**quantities)
        self.w_water = 1.0 - self.w_plate

    def rhs(self, t, y, mode):
        tw, te, tb, s = y
        amb = self.room_c
        q_e = self.element_w_per_k * (te - tw)
        q_wb = self.body_w_per_k * (tw - tb)
        d = tb - amb
        h_out = air_wall_h(d, self.height_m)
        q_ba = h_out * self.body_area_m2 * d + radiation_w(self.eps_body, self.body_area_m2, tb, amb)
        sensed = self.w_water * tw + self.w_plate * te
        return [(q_e - q_wb) / (self.water_kg * C_WATER),
                (self.power_w * mode["duty"] - q_e) / self.element_j_per_k,
                (q_wb - q_ba) / self.body_j_per_k,
                (sensed - s) / self.sensor_lag_s]


class WortChiller(Quantities):
    """Hot wort chilled by an immersion coil.

    State: wort C, wort kg, [coolant reservoir C,] sensor C. The coolant is tap
    water whose inlet warms as the pipes do, ``T_in = T0 + rise (1 - exp(-t /
    tau))``, or (``recirculated``) a tub whose temperature is the reservoir
    state, warmed by the heat the coil takes and by the room. The reservoir
    state exists when ``reservoir_state``. Losses besides the coil: the pot's
    side (free convection, radiation) and the top (``lid_on``: 6 W/(m^2 K), own
    estimate; else an open surface).

    Quantities: room_c, rel_humidity, coil_diameter_m, coil_length_m,
    h_inside, flow_kg_s, side_area_m2, height_m, eps_pot, top_area_m2, lid_on,
    sensor_lag_s, reservoir_state, recirculated, inlet0_c, inlet_rise_c,
    inlet_tau_s (tap), reservoir_kg, reservoir_w_per_k (recirculated).
    """

    NAMES = ("room_c", "rel_humidity", "coil_diameter_m", "coil_length_m", "h_inside", "flow_kg_s",
             "side_area_m2", "height_m", "eps_pot", "top_area_m2", "lid_on", "sensor_lag_s",
             "reservoir_state", "recirculated")
    OPTIONAL = ("inlet0_c", "inlet_rise_c", "inlet_tau_s", "reservoir_kg", "reservoir_w_per_k")

    LID_U = 6.0

    def __init__(self, **quantities):
        super().__init__(**quantities)
        self.top_length_m = math.sqrt(self.top_area_m2) / 4.0

    def inlet_c(self, t, reservoir_c=None):
        """Coolant inlet temperature at t seconds, deg C."""
        if self.recirculated:
            return reservoir_c
        return self.inlet0_c + self.inlet_rise_c * (1.0 - math.exp(-t / self.inlet_tau_s))

    def rhs(self, t, y, mode):
        if self.reservoir_state:
            tw, m, tr, s = y
        else:
            (tw, m, s), tr = y, None
        amb = self.room_c
        q_coil = coil_heat_w(tw, self.inlet_c(t, tr), mode["stir"], self.coil_diameter_m,
                             self.coil_length_m, self.h_inside, self.flow_kg_s)
        d = tw - amb
        h_out = air_wall_h(d, self.height_m)
        q_side = h_out * self.side_area_m2 * d + radiation_w(self.eps_pot, self.side_area_m2,
                                                             tw, amb)
        q_top, evap = top_loss_w(tw, amb, self.top_area_m2, self.top_length_m, self.lid_on,
                                 self.LID_U, self.rel_humidity)
        d_wort = -(q_coil + q_side + q_top) / (m * C_WORT)
        d_sensor = (tw - s) / self.sensor_lag_s
        if not self.reservoir_state:
            return [d_wort, -evap, d_sensor]
        if self.recirculated:
            d_res = (q_coil + self.reservoir_w_per_k * (amb - tr)) / (self.reservoir_kg * C_WATER)
        else:
            d_res = 0.0      # the inlet is a function of time, the state just follows it
        return [d_wort, -evap, d_res, d_sensor]


class CyclingAirDrink(Quantities):
    """A drink in a container in air whose temperature is a function of time ``air_c(t)``.

    State: liquid C, container C, sensor C, air sensor C. Liquid -> container:
    water-side free convection in series with half the container wall;
    container -> air: free convection and radiation; the top (when
    ``top_area_m2`` is given): a lid's U-value or an open evaporating surface
    (the mass lost is neglected: grams per hour on a drink, own estimate). The
    probe reads a lagged mixture of liquid, container and air; the air sensor
    is a lagged reading of the air. Subclasses give :meth:`air_c`.

    Quantities: liquid_kg, container_j_per_k, inner_area_m2, area_m2, height_m,
    half_r, eps, water_wall (callable), w_liquid, w_container, w_air,
    sensor_lag_s, air_sensor_lag_s; optional top_area_m2, top_length_m, lid_u,
    rel_humidity (``mode["lid"]`` says whether the top is closed).
    """

    NAMES = ("liquid_kg", "container_j_per_k", "inner_area_m2", "area_m2", "height_m", "half_r",
             "eps", "water_wall", "w_liquid", "w_container", "w_air", "sensor_lag_s",
             "air_sensor_lag_s")
    OPTIONAL = ("top_area_m2", "top_length_m", "lid_u", "rel_humidity")
    top_area_m2 = 0.0            # no top loss unless a table gives one

    def air_c(self, t):
        """Air temperature at t seconds, deg C."""
        raise NotImplementedError

    def rhs(self, t, y, mode):
        tl, tg, s, a = y
        air = self.air_c(t)
        d_in = tl - tg
        h_in = self.water_wall(tl) * soft_abs(d_in) ** 0.25
        q_lg = self.inner_area_m2 * d_in / (1.0 / h_in + self.half_r)
        d_out = tg - air
        h_out = air_wall_h(d_out, self.height_m)
        q_ga = h_out * self.area_m2 * d_out + radiation_w(self.eps, self.area_m2, tg, air)
        sensed = self.w_liquid * tl + self.w_container * tg + self.w_air * air
        if self.top_area_m2:
            q_top = top_loss_w(tl, air, self.top_area_m2, self.top_length_m, mode["lid"],
                               self.lid_u, self.rel_humidity)[0]
            d_liquid = -(q_lg + q_top) / (self.liquid_kg * C_DRINK)
        else:
            d_liquid = -q_lg / (self.liquid_kg * C_DRINK)
        return [d_liquid,
                (q_lg - q_ga) / self.container_j_per_k,
                (sensed - s) / self.sensor_lag_s,
                (air - a) / self.air_sensor_lag_s]


class FridgeDrink(CyclingAirDrink):
    """Drink in a fridge whose air cycles. State: liquid C, container C, sensor C, air sensor C.

    Air: ``set + amp (sin ph + 0.3 sin(2 ph + skew)) + door_rise exp(-t /
    door_tau)`` (plus a second door opening when ``second_door``); no top
    loss (a closed bottle or can). The rest is :class:`CyclingAirDrink`.

    Quantities: set_c, cycle_amp_c, cycle_period_s, cycle_phase, cycle_skew,
    door_rise_c, door_tau_s, second_door, second_door_s, second_rise_c and
    those of :class:`CyclingAirDrink`.
    """

    NAMES = ("set_c", "cycle_amp_c", "cycle_period_s", "cycle_phase", "cycle_skew", "door_rise_c",
             "door_tau_s", "second_door") + CyclingAirDrink.NAMES
    OPTIONAL = ("second_door_s", "second_rise_c")

    def air_c(self, t):
        """Fridge air temperature at t seconds, deg C."""
        ph = 2.0 * math.pi * t / self.cycle_period_s + self.cycle_phase
        cyc = math.sin(ph) + 0.3 * math.sin(2.0 * ph + self.cycle_skew)
        air = self.set_c + self.cycle_amp_c * cyc + self.door_rise_c * math.exp(-t / self.door_tau_s)
        if self.second_door and t > self.second_door_s:
            air += self.second_rise_c * math.exp(-(t - self.second_door_s) / self.door_tau_s)
        return air


class RoomDrink(CyclingAirDrink):
    """A drink in a room or cabinet whose air a thermostat or a compressor cycles.

    Air (deg C): ``mean + drift t + amp sin(theta)``, ``theta = ph + skew (1 -
    cos ph)``, ``ph = 2 pi t / period + phase + wobble sin(2 pi t /
    wobble_period)``. With ``|skew| < 1`` theta still rises with ph, so the
    cycle stays smooth while its warming and cooling parts take unequal shares
    of the period (a duty cycle other than one half); the wobble makes the
    cycles unequal in length, as a thermostat's are. The rest is
    :class:`CyclingAirDrink` (with the top when the table gives one).

    Quantities: air_mean_c, drift_c_per_s, cycle_amp_c, cycle_period_s,
    cycle_phase, cycle_skew, cycle_wobble, cycle_wobble_period_s and those of
    :class:`CyclingAirDrink`.
    """

    NAMES = ("air_mean_c", "drift_c_per_s", "cycle_amp_c", "cycle_period_s", "cycle_phase",
             "cycle_skew", "cycle_wobble", "cycle_wobble_period_s") + CyclingAirDrink.NAMES
    OPTIONAL = CyclingAirDrink.OPTIONAL

    def air_c(self, t):
        """Room or cabinet air temperature at t seconds, deg C."""
        ph = (2.0 * math.pi * t / self.cycle_period_s + self.cycle_phase
              + self.cycle_wobble * math.sin(2.0 * math.pi * t / self.cycle_wobble_period_s))
        theta = ph + self.cycle_skew * (1.0 - math.cos(ph))
        return self.air_mean_c + self.drift_c_per_s * t + self.cycle_amp_c * math.sin(theta)


class PowerLawPot(Quantities):
    """The profile's own model: ``T' = -a |T - E|^n sign(T - E) + g u``, first-order probe.

    State: liquid C, probe C; ``rhs(t, y, duty)`` takes the duty (0..1) as its
    third argument. Quantities: a (1/(s K^(n-1))), n, eq_c, gain_k_per_s, lag_s.
    """

    NAMES = ("a", "n", "eq_c", "gain_k_per_s", "lag_s")

    def rhs(self, t, y, duty):
        d = y[0] - self.eq_c
        loss = self.a * math.sqrt(d * d + 1e-6) ** self.n * (1.0 if d >= 0.0 else -1.0)
        return [-loss + self.gain_k_per_s * duty, (y[0] - y[1]) / self.lag_s]

