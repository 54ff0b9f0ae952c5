"""Seeded scenario generators with richer physics than the estimator assumes.

Each kind integrates its own energy balance with ``scipy.integrate.solve_ivp``
(DOP853, rtol = atol = 1e-10) piecewise between scheduled events (lid off,
top-up, duty change, ...), passes the noise-free sensor signal (which has its
own first-order lag, a state of the ODE) through a sensor model (noise,
0.0625 C quantisation, sampling jitter, dropouts, spikes, a stuck stretch), and
reports the exact crossing time of the noise-free sensor signal (brentq on the
solver's dense output) in a truth dict.

Kinds (all our own inventions with our own numbers):

- ``mug``: hot drink poured into a room-temperature mug; liquid and wall nodes,
  natural convection ``h ~ dT^(1/4)``, radiation, evaporation, lid, top-up.
- ``bath``: water bath heated by an immersion element with its own lag,
  losses through the container wall and the open (or covered) top.
- ``wort``: hot wort chilled by an immersion coil whose coolant warms slowly.
- ``fridge``: drink placed in a fridge whose air temperature cycles; an air
  sensor's reading is written as the ``ambient_c`` column.
- ``kettle``: water heated by a base element; body node, sensor near the plate.

Same ``(kind, seed)`` gives the same trace and truth on any machine with the
same numpy/scipy (``numpy.random.default_rng`` streams are stable).

Physical constants below name their source; "from memory" means the value was
written down from general handbook knowledge and not looked up for this file.
"""
import math

import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

# --- physical constants ---
KELVIN = 273.15                  # 0 C in K (definition of the Celsius scale)
SIGMA = 5.670374419e-8           # Stefan-Boltzmann, W/(m^2 K^4); CODATA 2018 (exact)
GAS_R = 8.314462618              # molar gas constant, J/(mol K); CODATA 2018 (exact)
M_WATER = 0.018015               # molar mass of water, kg/mol (from memory)
C_WATER = 4181.0                 # specific heat of liquid water near 25 C, J/(kg K);
                                 # handbook value ~75.3 J/(mol K) (from memory)
C_DRINK = 4100.0                 # sweetened drink, slightly below water (own estimate)
C_WORT = 3950.0                  # ~12 Plato wort, sugar lowers c below water (approximate, from memory)
C_CERAMIC = 850.0                # porcelain / stoneware, J/(kg K); tables give ~800-1100 (from memory)
C_GLASS = 840.0                  # soda-lime glass, J/(kg K) (from memory)
C_STEEL = 500.0                  # stainless steel, J/(kg K) (from memory)
RHO_AIR = 1.2                    # air density near 20 C, kg/m^3 (from memory)
CP_AIR = 1006.0                  # specific heat of air, J/(kg K) (from memory)
LEWIS = 0.87                     # Lewis number, water vapour in air (from memory)
EPS_WATER = 0.95                 # emissivity of a water surface (emissivity tables, from memory)
EPS_CERAMIC = 0.90               # glazed ceramic (emissivity tables, from memory)
EPS_GLASS = 0.90                 # glass (emissivity tables, from memory)
# Simplified laminar free-convection relations for air at 1 atm,
# h = C * (dT / L)^(1/4) W/(m^2 K): vertical surfaces C = 1.42, upward-facing
# heated horizontal plates C = 1.32 (heat-transfer handbook tables of
# simplified air equations, e.g. Holman, "Heat Transfer"; from memory).
C_AIR_VERTICAL = 1.42
C_AIR_UP = 1.32
# Water-side free convection on a vertical wall, h = C * dT^(1/4): from
# Nu = 0.59 Ra^(1/4) (laminar vertical plate) with water properties near 60 C
# and L = 0.1 m this gives ~350 W/(m^2 K^(5/4)); near 10 C ~150 (own derivation,
# property values from memory).
C_WATER_WALL_WARM = 350.0
C_WATER_WALL_COLD = 150.0
# Same relation for a horizontal 9.5 mm tube in hot wort (Nu = 0.53 Ra^(1/4),
# own derivation with properties from memory): ~570 W/(m^2 K^(5/4)).
C_WORT_TUBE = 570.0

QUANTUM_C = 0.0625               # 12-bit digital sensor step (common practice, no source)
KINDS = ("mug", "bath", "wort", "fridge", "kettle")
KIND_TITLES = {
    "mug": "hot drink cooling in a mug",
    "bath": "water bath heated by an element",
    "wort": "wort chilled by an immersion coil",
    "fridge": "drink cooling in a cycling fridge",
    "kettle": "kettle heating water",
}
_KIND_CODE = {k: i + 11 for i, k in enumerate(KINDS)}

SOLVER = dict(method="DOP853", rtol=1e-10, atol=1e-10)


def _soft_abs(x):
    """|x| smoothed below 0.01 K so that dT^(1/4) stays Lipschitz for the solver."""
    return math.sqrt(x * x + 1e-4)


def sat_vapour_density_kg_m3(temp_c):
    """Saturation water-vapour density over water, kg/m^3.

    Magnus form e_s = 610.94 exp(17.625 T / (T + 243.04)) Pa (Alduchov and
    Eskridge 1996 coefficients, from memory; ~2 % high near 90 C), ideal gas.
    """
    e_pa = 610.94 * math.exp(17.625 * temp_c / (temp_c + 243.04))
    return e_pa * M_WATER / (GAS_R * (temp_c + KELVIN))


def latent_heat_j_per_kg(temp_c):
    """Latent heat of vaporisation of water, J/kg: 2.501e6 - 2361 T (linear fit, from memory)."""
    return 2.501e6 - 2361.0 * temp_c


def radiation_w(eps, area_m2, surf_c, surround_c):
    """Net grey-body radiation from a surface to large surroundings, W."""
    return eps * SIGMA * area_m2 * ((surf_c + KELVIN) ** 4 - (surround_c + KELVIN) ** 4)


def open_surface_loss_w(temp_c, air_c, area_m2, length_m, rel_humidity):
    """Heat loss (W) and evaporation (kg/s) of an open water surface facing up.

    Free convection (upward heated plate), radiation, and evaporation by the
    heat/mass-transfer analogy h_m = h / (rho c_p Le^(2/3)) (Chilton-Colburn).
    """
    dt = temp_c - air_c
    h = C_AIR_UP * (_soft_abs(dt) / length_m) ** 0.25
    q = h * area_m2 * dt + radiation_w(EPS_WATER, area_m2, temp_c, air_c)
    h_m = h / (RHO_AIR * CP_AIR * LEWIS ** (2.0 / 3.0))
    evap = h_m * area_m2 * (sat_vapour_density_kg_m3(temp_c)
                            - rel_humidity * sat_vapour_density_kg_m3(air_c))
    evap = max(evap, 0.0)
    return q + evap * latent_heat_j_per_kg(temp_c), evap


class PiecewiseSolution:
    """Dense solution of a piecewise-integrated ODE; ``__call__(t)`` -> state(s)."""

    def __init__(self):
        self.starts = []
        self.ends = []
        self.sols = []

    def add(self, t0, t1, sol):
        self.starts.append(t0)
        self.ends.append(t1)
        self.sols.append(sol)

    def segment_index(self, t):
        """Index of the segment holding t (right-closed; t == break -> earlier segment)."""
        i = int(np.searchsorted(self.ends, t, side="left"))
        return min(i, len(self.sols) - 1)

    def __call__(self, t):
        t = np.atleast_1d(np.asarray(t, dtype=float))
        idx = np.minimum(np.searchsorted(self.ends, t, side="left"), len(self.sols) - 1)
        out = np.empty((self.sols[0](self.starts[0]).shape[0], len(t)))
        for i in np.unique(idx):
            mask = idx == i
            out[:, mask] = self.sols[i](t[mask])
        return out


def integrate_piecewise(rhs, y0, t_end, breaks, mode):
    """Integrate ``rhs(t, y, mode)`` over [0, t_end] with jumps at ``breaks``.

    ``breaks``: sorted list of ``(time_s, apply)`` where ``apply(y, mode)``
    returns the new state (a copy) and may change ``mode`` (a dict) in place.
    Returns a :class:`PiecewiseSolution`.
    """
    sol = PiecewiseSolution()
    t = 0.0
    y = np.array(y0, dtype=float)
    mode = dict(mode)
    for tb, apply in list(breaks) + [(t_end, None)]:
        tb = min(tb, t_end)
        if tb > t:
            m = dict(mode)
            res = solve_ivp(lambda tt, yy: rhs(tt, yy, m), (t, tb), y,
                            dense_output=True, **SOLVER)
            if not res.success:
                raise RuntimeError("integration failed: %s" % res.message)
            sol.add(t, tb, res.sol)
            y = res.y[:, -1].copy()
            t = tb
        if apply is not None:
            y = np.array(apply(y.copy(), mode), dtype=float)
        if t >= t_end:
            break
    return sol


def find_crossing_s(signal, target_c, direction, t_start, t_end, step_s):
    """First time in [t_start, t_end] the scalar ``signal(t)`` crosses target.

    ``direction`` -1 for a downward (cooling) crossing, +1 for upward. Scans a
    grid of ``step_s`` then refines with brentq (xtol 1e-9 s). None if none.
    """
    grid = np.arange(t_start, t_end + step_s, step_s)
    grid[-1] = min(grid[-1], t_end)
    vals = signal(grid) - target_c
    if direction < 0:
        hits = np.nonzero((vals[:-1] > 0.0) & (vals[1:] <= 0.0))[0]
    else:
        hits = np.nonzero((vals[:-1] < 0.0) & (vals[1:] >= 0.0))[0]
    if len(hits) == 0:
        return None
    i = hits[0]
    a, b = grid[i], grid[i + 1]
    if vals[i + 1] == 0.0:
        return float(b)
    return float(brentq(lambda t: float(signal(np.array([t]))[0]) - target_c, a, b,
                        xtol=1e-9, rtol=1e-14, maxiter=200))


# ----------------------------------------------------------------- the kinds
class _Kind:
    """One scenario kind: parameters, ODE, schedule, sensor index, target."""

    interval_s = 5.0
    horizon_s = 3600.0
    direction = -1
    sensor_index = -1          # state index of the lagged sensor
    air_sensor_index = None    # state index of a lagged ambient sensor, if any
    has_heater = False
    constant_ambient = True    # the surroundings are one constant temperature

    def __init__(self, rng):
        self.rng = rng
        self.p = {}

    def u(self, lo, hi):
        return float(self.rng.uniform(lo, hi))

    def duty_at(self, t, mode):  # noqa: D401 - heater duty in [0, 1]
        return 0.0


class Mug(_Kind):
    """Hot drink in a mug. State: liquid C, wall C, liquid kg, sensor C."""

    interval_s = 5.0
    horizon_s = 4800.0
    direction = -1

    def draw(self):
        p = self.p
        p["room_c"] = self.u(18.0, 25.0)
        p["rel_humidity"] = self.u(0.3, 0.6)
        p["pour_c"] = self.u(80.0, 92.0)
        p["liquid_kg"] = self.u(0.25, 0.35)
        p["mug_kg"] = self.u(0.28, 0.42)
        p["inner_area_m2"] = self.u(0.024, 0.032)   # wetted when full (our mug)
        p["outer_area_m2"] = self.u(0.030, 0.040)
        p["top_radius_m"] = self.u(0.037, 0.045)
        p["height_m"] = 0.10
        # half the wall thickness (2.5 mm) over ceramic k ~1.5 W/(m K) (from memory)
        p["wall_half_r"] = 0.0025 / 1.5
        p["lid_u"] = self.u(2.0, 5.0)               # W/(m^2 K) through a plastic lid (own estimate)
        p["sensor_lag_s"] = self.u(6.0, 25.0)
        p["target_c"] = round(self.u(52.0, 62.0) * 2.0) / 2.0
        p["lid_at_start"] = bool(self.rng.uniform() < 0.4)
        p["lid_change_frac"] = self.u(0.15, 0.5)
        p["topup"] = bool(self.rng.uniform() < 0.6)
        p["topup_frac"] = self.u(0.25, 0.6)
        p["topup_kg"] = self.u(0.04, 0.08)
        p["topup_c"] = self.u(85.0, 95.0)

    def y0(self):
        p = self.p
        return [p["pour_c"], p["room_c"], p["liquid_kg"], p["room_c"]]

    def rhs(self, t, y, mode):
        p = self.p
        tl, tw, m, s = y
        amb = p["room_c"]
        d_in = tl - tw
        h_water = C_WATER_WALL_WARM * _soft_abs(d_in) ** 0.25
        u_in = 1.0 / (1.0 / h_water + p["wall_half_r"])
        area_in = p["inner_area_m2"] * min(m / p["liquid_kg"], 1.3)
        q_lw = u_in * area_in * d_in
        d_out = tw - amb
        h_out = C_AIR_VERTICAL * (_soft_abs(d_out) / p["height_m"]) ** 0.25
        q_wa = h_out * p["outer_area_m2"] * d_out + radiation_w(
            EPS_CERAMIC, p["outer_area_m2"], tw, amb)
        area_top = math.pi * p["top_radius_m"] ** 2
        if mode["lid"]:
            q_top, evap = p["lid_u"] * area_top * (tl - amb), 0.0
        else:
            q_top, evap = open_surface_loss_w(tl, amb, area_top, p["top_radius_m"] / 2.0,
                                              p["rel_humidity"])
        return [-(q_lw + q_top) / (m * C_WATER),
                (q_lw - q_wa) / (p["mug_kg"] * C_CERAMIC),
                -evap,
                (tl - s) / p["sensor_lag_s"]]


class Bath(_Kind):
    """Heated water bath. State: water C, element C, water kg, sensor C."""

    interval_s = 5.0
    horizon_s = 5400.0
    direction = 1
    has_heater = True

    def draw(self):
        p = self.p
        p["room_c"] = self.u(18.0, 25.0)
        p["rel_humidity"] = self.u(0.3, 0.6)
        p["start_c"] = self.u(14.0, 24.0)
        p["water_kg"] = self.u(4.0, 8.0)
        p["power_w"] = self.u(800.0, 1500.0)
        p["element_j_per_k"] = self.u(300.0, 500.0)
        p["element_w_per_k"] = self.u(15.0, 30.0)
        p["side_area_m2"] = self.u(0.12, 0.20)
        p["top_area_m2"] = self.u(0.035, 0.06)
        p["height_m"] = 0.25
        # 3 mm polymer container wall, k ~0.2 W/(m K) (from memory)
        p["wall_r"] = 0.003 / 0.2
        p["covered"] = bool(self.rng.uniform() < 0.4)
        p["cover_u"] = self.u(3.0, 6.0)
        p["sensor_lag_s"] = self.u(4.0, 15.0)
        p["duty0"] = float(self.rng.choice([1.0, 0.8, 0.6]))
        p["duty_change"] = bool(self.rng.uniform() < 0.5)
        p["duty1"] = float(self.rng.choice([1.0, 0.7, 0.5]))
        p["duty_change_frac"] = self.u(0.2, 0.6)
        p["target_c"] = round(self.u(50.0, 65.0) * 2.0) / 2.0

    def y0(self):
        p = self.p
        return [p["start_c"], p["start_c"], p["water_kg"], p["start_c"]]

    def duty_at(self, t, mode):
        return mode["duty"]

    def rhs(self, t, y, mode):
        p = self.p
        tw, te, m, s = y
        amb = p["room_c"]
        q_e = p["element_w_per_k"] * (te - tw)
        d = tw - amb
        h_out = C_AIR_VERTICAL * (_soft_abs(d) / p["height_m"]) ** 0.25
        t1, t2 = tw + KELVIN, amb + KELVIN
        h_rad = EPS_CERAMIC * SIGMA * (t1 * t1 + t2 * t2) * (t1 + t2)  # T1^4-T2^4 factorised
        q_side = p["side_area_m2"] * d / (1.0 / (h_out + h_rad) + p["wall_r"])
        if p["covered"]:
            q_top, evap = p["cover_u"] * p["top_area_m2"] * d, 0.0
        else:
            q_top, evap = open_surface_loss_w(tw, amb, p["top_area_m2"],
                                              math.sqrt(p["top_area_m2"]) / 4.0,
                                              p["rel_humidity"])
        power = p["power_w"] * mode["duty"]
        return [(q_e - q_side - q_top) / (m * C_WATER),
                (power - q_e) / p["element_j_per_k"],
                -evap,
                (tw - s) / p["sensor_lag_s"]]


class Wort(_Kind):
    """Wort chilled by an immersion coil. State: wort C, wort kg, sensor C."""

    interval_s = 5.0
    horizon_s = 4200.0
    direction = -1
    constant_ambient = False

    def draw(self):
        p = self.p
        p["room_c"] = self.u(15.0, 26.0)
        p["rel_humidity"] = self.u(0.3, 0.7)
        p["start_c"] = self.u(90.0, 99.0)
        p["wort_kg"] = self.u(18.0, 24.0)
        p["coil_length_m"] = self.u(8.0, 15.0)
        p["coil_diameter_m"] = 0.0095
        p["h_inside"] = self.u(3000.0, 5000.0)      # forced flow in the tube (own estimate)
        p["flow_kg_s"] = self.u(0.06, 0.15)
        p["inlet0_c"] = self.u(9.0, 16.0)
        p["inlet_rise_c"] = self.u(3.0, 8.0)
        p["inlet_tau_s"] = self.u(900.0, 2500.0)
        p["side_area_m2"] = self.u(0.25, 0.35)
        p["top_area_m2"] = self.u(0.06, 0.09)
        p["height_m"] = 0.35
        p["eps_pot"] = self.u(0.1, 0.4)             # stainless, polished to dull (from memory)
        p["lid_on"] = bool(self.rng.uniform() < 0.5)
        p["stir"] = bool(self.rng.uniform() < 0.4)
        p["stir_frac"] = self.u(0.2, 0.5)
        p["stir_factor"] = self.u(1.4, 2.0)
        p["sensor_lag_s"] = self.u(15.0, 40.0)
        inlet_end = p["inlet0_c"] + p["inlet_rise_c"]
        p["target_c"] = round((inlet_end + self.u(6.0, 14.0)) * 2.0) / 2.0

    def inlet_c(self, t):
        p = self.p
        return p["inlet0_c"] + p["inlet_rise_c"] * (1.0 - math.exp(-t / p["inlet_tau_s"]))

    def y0(self):
        p = self.p
        return [p["start_c"], p["wort_kg"], p["start_c"]]

    def rhs(self, t, y, mode):
        p = self.p
        tw, m, s = y
        amb = p["room_c"]
        t_in = self.inlet_c(t)
        # outer film sees roughly half the wort-coolant difference (own estimate)
        h_o = C_WORT_TUBE * mode["stir"] * _soft_abs(0.5 * (tw - t_in)) ** 0.25
        ua = math.pi * p["coil_diameter_m"] * p["coil_length_m"] / (1.0 / h_o + 1.0 / p["h_inside"])
        c_flow = p["flow_kg_s"] * C_WATER
        effectiveness = 1.0 - math.exp(-ua / c_flow)  # one side isothermal (standard e-NTU)
        q_coil = effectiveness * c_flow * (tw - t_in)
        d = tw - amb
        h_out = C_AIR_VERTICAL * (_soft_abs(d) / p["height_m"]) ** 0.25
        q_side = h_out * p["side_area_m2"] * d + radiation_w(p["eps_pot"], p["side_area_m2"], tw, amb)
        if p["lid_on"]:
            q_top, evap = 6.0 * p["top_area_m2"] * d, 0.0
        else:
            q_top, evap = open_surface_loss_w(tw, amb, p["top_area_m2"],
                                              math.sqrt(p["top_area_m2"]) / 4.0,
                                              p["rel_humidity"])
        return [-(q_coil + q_side + q_top) / (m * C_WORT),
                -evap,
                (tw - s) / p["sensor_lag_s"]]


class Fridge(_Kind):
    """Drink in a fridge. State: liquid C, glass C, sensor C, air sensor C."""

    interval_s = 10.0
    horizon_s = 14400.0
    direction = -1
    sensor_index = 2
    air_sensor_index = 3
    constant_ambient = False

    def draw(self):
        p = self.p
        p["room_c"] = self.u(19.0, 27.0)
        p["set_c"] = self.u(3.0, 6.0)
        p["cycle_amp_c"] = self.u(0.8, 2.2)
        p["cycle_period_s"] = self.u(1800.0, 3000.0)
        p["cycle_phase"] = self.u(0.0, 2.0 * math.pi)
        p["cycle_skew"] = self.u(-1.0, 1.0)
        p["door_rise_c"] = self.u(3.0, 8.0)
        p["door_tau_s"] = self.u(200.0, 500.0)
        p["liquid_kg"] = self.u(0.33, 0.5)
        p["glass_kg"] = self.u(0.2, 0.35)
        p["area_m2"] = self.u(0.035, 0.05)
        p["inner_area_m2"] = 0.9 * p["area_m2"]
        p["height_m"] = 0.2
        p["glass_half_r"] = 0.0015 / 1.0          # 1.5 mm of glass, k ~1.0 W/(m K) (from memory)
        p["sensor_air_weight"] = self.u(0.05, 0.2)  # strap-on sensor partly sees the air
        p["sensor_lag_s"] = self.u(20.0, 40.0)
        p["air_sensor_lag_s"] = self.u(30.0, 90.0)
        top = p["set_c"] + 1.3 * p["cycle_amp_c"]
        p["target_c"] = round((top + self.u(1.5, 4.5)) * 2.0) / 2.0

    def air_c(self, t):
        p = self.p
        ph = 2.0 * math.pi * t / p["cycle_period_s"] + p["cycle_phase"]
        cyc = math.sin(ph) + 0.3 * math.sin(2.0 * ph + p["cycle_skew"])
        return p["set_c"] + p["cycle_amp_c"] * cyc + p["door_rise_c"] * math.exp(-t / p["door_tau_s"])

    def y0(self):
        p = self.p
        return [p["room_c"], p["room_c"], p["room_c"], self.air_c(0.0) - p["door_rise_c"]]

    def rhs(self, t, y, mode):
        p = self.p
        tl, tg, s, a = y
        air = self.air_c(t)
        d_in = tl - tg
        h_in = C_WATER_WALL_COLD * _soft_abs(d_in) ** 0.25
        q_lg = p["inner_area_m2"] * d_in / (1.0 / h_in + p["glass_half_r"])
        d_out = tg - air
        h_out = C_AIR_VERTICAL * (_soft_abs(d_out) / p["height_m"]) ** 0.25
        q_ga = h_out * p["area_m2"] * d_out + radiation_w(EPS_GLASS, p["area_m2"], tg, air)
        w = p["sensor_air_weight"]
        sensed = (1.0 - w) * tg + w * air
        return [-q_lg / (p["liquid_kg"] * C_DRINK),
                (q_lg - q_ga) / (p["glass_kg"] * C_GLASS),
                (sensed - s) / p["sensor_lag_s"],
                (air - a) / p["air_sensor_lag_s"]]


class Kettle(_Kind):
    """Kettle. State: water C, element plate C, body C, sensor C."""

    interval_s = 1.0
    horizon_s = 900.0
    direction = 1
    has_heater = True

    def draw(self):
        p = self.p
        p["room_c"] = self.u(17.0, 25.0)
        p["start_c"] = self.u(8.0, 20.0)
        p["water_kg"] = self.u(0.8, 1.6)
        p["power_w"] = self.u(1800.0, 3000.0)
        p["element_j_per_k"] = 0.35 * C_STEEL * self.u(0.8, 1.3)
        p["element_w_per_k"] = self.u(50.0, 90.0)
        p["body_j_per_k"] = self.u(150.0, 300.0)
        p["body_w_per_k"] = self.u(10.0, 20.0)
        p["body_area_m2"] = self.u(0.05, 0.08)
        p["eps_body"] = self.u(0.3, 0.9)            # brushed steel to plastic (from memory)
        p["height_m"] = 0.2
        p["sensor_plate_weight"] = self.u(0.0, 0.1)  # base sensor partly sees the plate
        p["sensor_lag_s"] = self.u(4.0, 12.0)
        p["target_c"] = round(self.u(70.0, 90.0))

    def y0(self):
        p = self.p
        return [p["start_c"], p["start_c"], p["start_c"], p["start_c"]]

    def duty_at(self, t, mode):
        return 1.0

    def rhs(self, t, y, mode):
        p = self.p
        tw, te, tb, s = y
        amb = p["room_c"]
        q_e = p["element_w_per_k"] * (te - tw)
        q_wb = p["body_w_per_k"] * (tw - tb)
        d = tb - amb
        h_out = C_AIR_VERTICAL * (_soft_abs(d) / p["height_m"]) ** 0.25
        q_ba = h_out * p["body_area_m2"] * d + radiation_w(p["eps_body"], p["body_area_m2"], tb, amb)
        w = p["sensor_plate_weight"]
        sensed = (1.0 - w) * tw + w * te
        # evaporation under the closed lid is neglected: minor below ~90 C (own estimate)
        return [(q_e - q_wb) / (p["water_kg"] * C_WATER),
                (p["power_w"] - q_e) / p["element_j_per_k"],
                (q_wb - q_ba) / p["body_j_per_k"],
                (sensed - s) / p["sensor_lag_s"]]


_CLASSES = {"mug": Mug, "bath": Bath, "wort": Wort, "fridge": Fridge, "kettle": Kettle}


# ------------------------------------------------------------ the generator
class Generated:
    """A generated scenario: trace columns (deg C), truth dict, dense physics.

    ``time_s``, ``temp_c`` numpy arrays; ``ambient_c`` array or None;
    ``heater`` duty array or None; ``events`` list of str; ``truth`` dict;
    ``solution`` the :class:`PiecewiseSolution`; ``sensor_signal(t)`` the
    noise-free sensor reading in deg C; ``kind`` the :class:`_Kind` instance.
    """

    def __init__(self, **kw):
        self.__dict__.update(kw)


def _sample_times(rng, interval_s, horizon_s, jitter_frac):
    n = int(horizon_s / interval_s) + 1
    t = np.arange(n) * interval_s
    t[1:] += rng.uniform(-jitter_frac, jitter_frac, n - 1) * interval_s
    return t


def _snap(times, t):
    """The first sample time at or after t (events happen at a reading)."""
    i = int(np.searchsorted(times, t))
    return float(times[min(max(i, 1), len(times) - 1)])


def _duty_average(kind, schedule_modes, t_prev, t_now):
    """Mean duty over (t_prev, t_now] from the piecewise-constant schedule."""
    total = 0.0
    for start, end, duty in schedule_modes:
        a, b = max(start, t_prev), min(end, t_now)
        if b > a:
            total += duty * (b - a)
    return total / (t_now - t_prev) if t_now > t_prev else schedule_modes[0][2]


def generate(kind, seed, target_c=None, sensor_faults=True):
    """Generate one scenario; returns :class:`Generated`.

    ``kind`` one of :data:`KINDS`; ``seed`` int; ``target_c`` overrides the
    drawn target (deg C; the truth crossing may then be None);
    ``sensor_faults=False`` turns off dropouts, spikes and the stuck stretch
    (noise, quantisation, lag and jitter remain).
    """
    if kind not in _CLASSES:
        raise ValueError("unknown scenario kind %r (choose from %s)" % (kind, ", ".join(KINDS)))
    rng = np.random.default_rng([int(seed), _KIND_CODE[kind]])
    k = _CLASSES[kind](rng)
    k.draw()
    p = k.p
    if target_c is not None:
        p["target_c"] = float(target_c)
    jitter = float(rng.uniform(0.0, 0.3))
    times = _sample_times(rng, k.interval_s, k.horizon_s, jitter)

    # schedule (events snapped onto readings), needs a first pass for the mug
    breaks, events, mode = [], [], {"lid": False, "duty": 1.0, "stir": 1.0}
    if kind == "mug":
        mode["lid"] = p["lid_at_start"]
        first = integrate_piecewise(k.rhs, k.y0(), k.horizon_s, [], mode)
        t_first = find_crossing_s(lambda t: first(t)[k.sensor_index], p["target_c"], -1,
                                  0.0, k.horizon_s, 5.0) or k.horizon_s * 0.5
        t_lid = _snap(times, p["lid_change_frac"] * t_first)
        if p["lid_at_start"]:
            def lid_off(y, m):
                m["lid"] = False
                return y
            breaks.append((t_lid, lid_off))
            events.append((t_lid, "lid off"))
        else:
            events.append((0.0, "poured"))
        if p["topup"]:
            t_top = _snap(times, max(p["topup_frac"] * t_first, t_lid + 30.0))

            def top_up(y, m):
                mass = y[2] + p["topup_kg"]
                y[0] = (y[2] * y[0] + p["topup_kg"] * p["topup_c"]) / mass
                y[2] = mass
                return y
            breaks.append((t_top, top_up))
            events.append((t_top, "top-up"))
    elif kind == "bath":
        mode["duty"] = p["duty0"]
        if p["duty_change"]:
            rough = p["water_kg"] * C_WATER * (p["target_c"] - p["start_c"]) / (p["power_w"] * p["duty0"])
            t_d = _snap(times, p["duty_change_frac"] * rough)

            def change(y, m):
                m["duty"] = p["duty1"]
                return y
            breaks.append((t_d, change))
            events.append((t_d, "duty change"))
    elif kind == "wort":
        if p["stir"]:
            t_s = _snap(times, p["stir_frac"] * 900.0)

            def stir(y, m):
                m["stir"] = p["stir_factor"]
                return y
            breaks.append((t_s, stir))
            events.append((t_s, "stirring"))
    elif kind == "fridge":
        events.append((0.0, "door closed"))
    breaks.sort(key=lambda b: b[0])
    sol = integrate_piecewise(k.rhs, k.y0(), k.horizon_s, breaks, mode)

    def sensor_signal(t):
        return sol(t)[k.sensor_index]

    crossing = find_crossing_s(sensor_signal, p["target_c"], k.direction, 0.0, k.horizon_s,
                               min(k.interval_s, 2.0))
    if crossing is not None:
        end = min(k.horizon_s, crossing + max(60.0, 0.15 * crossing))
    else:
        end = k.horizon_s
    if kind == "kettle":
        # the model has no boiling: stop before the water reaches 98 C
        hot = find_crossing_s(lambda t: sol(t)[0], 98.0, 1, 0.0, k.horizon_s, 1.0)
        if hot is not None:
            end = min(end, hot)
    keep = times <= end
    times = times[keep]
    clean = sensor_signal(times)

    # duty per row = mean duty over (t_prev, t_now]
    heater = None
    if k.has_heater:
        modes = []
        cur = dict(mode)
        cur["duty"] = p.get("duty0", 1.0) if kind == "bath" else 1.0
        edges = [0.0] + [b[0] for b in breaks] + [math.inf]
        duties = [cur["duty"]]
        for _, apply in breaks:
            apply(np.zeros(len(k.y0())), cur)
            duties.append(cur["duty"])
        for i in range(len(duties)):
            modes.append((edges[i], edges[i + 1], duties[i]))
        heater = np.array([_duty_average(k, modes, times[i - 1] if i else times[0], times[i])
                           for i in range(len(times))])

    # ---------------------------------------------------------- sensor model
    noise_c = float(rng.uniform(0.02, 0.12))
    readings = clean + rng.normal(0.0, noise_c, len(times))
    readings = np.round(readings / QUANTUM_C) * QUANTUM_C
    n = len(times)
    faults = {"spikes": [], "stuck": None, "dropouts": []}
    keep = np.ones(n, dtype=bool)
    # draws happen whether or not faults are enabled, so both variants share the noise
    n_spikes = int(rng.integers(1, 5)) if rng.uniform() < 0.5 else 0
    spike_at = rng.integers(5, n - 1, n_spikes) if n_spikes else []
    spike_size = rng.uniform(3.0, 20.0, n_spikes) * rng.choice([-1.0, 1.0], n_spikes)
    stuck = rng.uniform() < 0.25
    stuck_start = int(rng.integers(5, max(6, n // 2)))
    stuck_len = int(rng.integers(20, 60))
    n_gaps = int(rng.integers(1, 4)) if rng.uniform() < 0.5 else 0
    gap_at = rng.integers(5, n - 20, n_gaps) if n_gaps else []
    gap_len = rng.integers(3, 16, n_gaps) if n_gaps else []
    if sensor_faults:
        for i, s in zip(spike_at, spike_size):
            readings[i] = np.round((readings[i] + s) / QUANTUM_C) * QUANTUM_C
            faults["spikes"].append(float(times[i]))
        if stuck:
            j = min(stuck_start + stuck_len, n)
            readings[stuck_start:j] = readings[stuck_start]
            faults["stuck"] = [float(times[stuck_start]), float(times[j - 1])]
        for i, g in zip(gap_at, gap_len):
            keep[i:i + g] = False
            faults["dropouts"].append([float(times[i]), float(times[min(i + g, n) - 1])])
        keep[0] = True

    ambient = None
    if k.air_sensor_index is not None:
        air_clean = sol(times)[k.air_sensor_index]
        air_noise = float(rng.uniform(0.03, 0.1))
        ambient = np.round((air_clean + rng.normal(0.0, air_noise, n)) / QUANTUM_C) * QUANTUM_C

    # events: label the first kept row at or after each event
    labels = [""] * n
    kept_idx = np.nonzero(keep)[0]
    for t_ev, name in events:
        j = kept_idx[np.searchsorted(times[kept_idx], t_ev - 1e-9)] if t_ev <= times[kept_idx[-1]] else None
        if j is not None:
            labels[j] = (labels[j] + ";" + name) if labels[j] else name

    if heater is not None:
        # recompute over the rows actually kept (duty since the previous kept row)
        tk = times[keep]
        heater_k = np.array([_duty_average(k, modes, tk[i - 1] if i else tk[0], tk[i])
                             for i in range(len(tk))])
    truth = {
        "kind": kind,
        "title": KIND_TITLES[kind],
        "seed": int(seed),
        "target_c": float(p["target_c"]),
        "crossing_time_s": crossing,
        "direction": "cooling" if k.direction < 0 else "heating",
        "start_reading_c": float(clean[0]),
        "duration_s": float(times[-1]),
        "rows": int(keep.sum()),
        "sample_interval_s": k.interval_s,
        "constant_ambient_c": float(p["room_c"]) if k.constant_ambient else None,
        "has_heater": k.has_heater,
        "has_ambient_column": ambient is not None,
        "events": [{"time_s": float(t), "event": e} for t, e in events],
        "sensor": {"lag_s": float(p["sensor_lag_s"]), "noise_c": noise_c,
                   "quantum_c": QUANTUM_C, "jitter_frac": jitter,
                   "faults_enabled": bool(sensor_faults), **faults},
        "params": {key: (float(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else v)
                   for key, v in p.items()},
        "solver": "scipy solve_ivp DOP853 rtol=atol=1e-10; crossing by brentq on dense output",
    }
    return Generated(
        kind_name=kind, kind=k, seed=int(seed),
        time_s=times[keep], temp_c=readings[keep],
        ambient_c=None if ambient is None else ambient[keep],
        heater=None if heater is None else heater_k,
        events=[labels[i] for i in kept_idx],
        clean_c=clean[keep], truth=truth, solution=sol, sensor_signal=sensor_signal,
        breaks=breaks, mode0=mode,
    )


def write_scenario(gen, trace_path, truth_path=None):
    """Write a :class:`Generated` as a trace CSV and (optionally) its truth JSON."""
    import json
    from host_sim.replay.trace_io import write_trace
    write_trace(trace_path, gen.time_s, gen.temp_c, ambient_c=gen.ambient_c,
                heater=gen.heater, events=gen.events)
    if truth_path is not None:
        with open(truth_path, "w") as handle:
            json.dump(gen.truth, handle, indent=2, sort_keys=True)
            handle.write("\n")
