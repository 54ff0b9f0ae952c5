"""The physics once: constants with their sources, loss terms, the piecewise integrator, crossings.

Every simulated vessel (:mod:`host_sim.sim.scenarios`, :mod:`host_sim.sim.families`,
:mod:`host_sim.sim.vessels`) loses heat through the terms below and is
integrated by :func:`integrate_piecewise` (scipy ``solve_ivp``, DOP853, rtol =
atol = 1e-10) between scheduled events; :func:`find_crossing_s` finds the exact
crossing of a target by brentq on the solver's dense output.

Physical constants name their source; "from memory" means the value was
written down from general handbook knowledge and not looked up for this file.
"""
import math

import numpy as np

# --- physical constants ---
KELVIN = 273.15                  # 0 C in K (definition of the Celsius scale)
SIGMA = 5.670374419e-8           # Stefan-Boltzmann, W/(m^2 K^4); CODATA 2018 (exact)
GAS_R = 8.314462618              # molar gas constant, J/(mol K); CODATA 2018 (exact)
M_WATER = 0.018015               # molar mass of water, kg/mol (from memory)
C_WATER = 4181.0                 # specific heat of liquid water near 25 C, J/(kg K);
                                 # handbook value ~75.3 J/(mol K) (from memory)
C_DRINK = 4100.0                 # sweetened drink, slightly below water (own estimate)
C_WORT = 3950.0                  # ~12 Plato wort, sugar lowers c below water
                                 # (approximate, from memory)
C_CERAMIC = 850.0                # porcelain / stoneware, J/(kg K); tables give ~800-1100
                                 # (from memory)
C_GLASS = 840.0                  # soda-lime glass, J/(kg K) (from memory)
C_STEEL = 500.0                  # stainless steel, J/(kg K) (from memory)
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
RHO_AIR = 1.2                    # air density near 20 C, kg/m^3 (from memory)
CP_AIR = 1006.0                  # specific heat of air, J/(kg K) (from memory)
LEWIS = 0.87                     # Lewis number, water vapour in air (from memory)
EPS_WATER = 0.95                 # emissivity of a water surface (emissivity tables, from memory)
EPS_CERAMIC = 0.90               # glazed ceramic (emissivity tables, from memory)
EPS_GLASS = 0.90                 # glass (emissivity tables, from memory)
EPS_PAPER = 0.90                 # paper (emissivity tables, from memory)
EPS_STEEL = 0.30                 # dull stainless steel (from memory)
EPS_ALUMINIUM = 0.10             # bare aluminium can (from memory)
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

MATERIALS = {
    # name: (specific heat J/(kg K), density kg/m^3, conductivity W/(m K), emissivity,
    #        wall thickness range m)
    "ceramic": (C_CERAMIC, RHO_CERAMIC, K_CERAMIC, EPS_CERAMIC, (0.003, 0.006)),
    "glass": (C_GLASS, RHO_GLASS, K_GLASS, EPS_GLASS, (0.002, 0.004)),
    "paper": (C_PAPER, RHO_PAPER, K_PAPER, EPS_PAPER, (0.0004, 0.0008)),
    "pet": (C_PET, 1380.0, K_PET, EPS_GLASS, (0.0003, 0.0006)),   # PET density (from memory)
    "can": (C_ALUMINIUM, 2700.0, 200.0, EPS_ALUMINIUM, (0.0001, 0.00015)),  # (from memory)
}

SOLVER = dict(method="DOP853", rtol=1e-10, atol=1e-10)
SOLVER_TEXT = "scipy solve_ivp DOP853 rtol=atol=1e-10; crossing by brentq on dense output"


# ------------------------------------------------------------------ loss terms
def soft_abs(x):
    """|x| smoothed below 0.01 K so that dT^(1/4) stays Lipschitz for the solver."""
    return math.sqrt(x * x + 1e-4)


def air_wall_h(diff_k, height_m):
    """Free convection in air on a vertical wall, W/(m^2 K): h = 1.42 (|dT| / L)^(1/4)."""
    return C_AIR_VERTICAL * (soft_abs(diff_k) / height_m) ** 0.25


def water_wall_coefficient(temp_c):
    """Water-side free-convection coefficient C in h = C dT^(1/4), W/(m^2 K^(5/4)).

    Linear in the liquid temperature between :data:`C_WATER_WALL_COLD` (10 C) and
    :data:`C_WATER_WALL_WARM` (60 C), clamped to 120..420.
    """
    c = C_WATER_WALL_COLD + (C_WATER_WALL_WARM - C_WATER_WALL_COLD) * (temp_c - 10.0) / 50.0
    return min(max(c, 120.0), 420.0)


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
    h = C_AIR_UP * (soft_abs(dt) / length_m) ** 0.25
    q = h * area_m2 * dt + radiation_w(EPS_WATER, area_m2, temp_c, air_c)
    h_m = h / (RHO_AIR * CP_AIR * LEWIS ** (2.0 / 3.0))
    evap = h_m * area_m2 * (sat_vapour_density_kg_m3(temp_c)
                            - rel_humidity * sat_vapour_density_kg_m3(air_c))
    evap = max(evap, 0.0)
    return q + evap * latent_heat_j_per_kg(temp_c), evap


def top_loss_w(temp_c, air_c, area_m2, length_m, lid, lid_u, rel_humidity):
    """Loss through the top, W, and evaporation, kg/s: a lid's U-value, or an open surface.

    ``lid_u`` W/(m^2 K) through the lid; ``length_m`` the open surface's length scale.
    """
    if lid:
        return lid_u * area_m2 * (temp_c - air_c), 0.0
    return open_surface_loss_w(temp_c, air_c, area_m2, length_m, rel_humidity)


def side_wall_loss_w(temp_c, air_c, area_m2, height_m, eps, wall_r, h_forced=0.0):
    """Loss through a vertical wall, W.

    Free convection + radiation (linearised, h_rad = eps sigma (T1^2 + T2^2)(T1 + T2))
    in series with the wall's resistance ``wall_r`` (m^2 K/W), plus a forced-air
    coefficient ``h_forced`` (W/(m^2 K)) on the same area.
    """
    d = temp_c - air_c
    h_out = air_wall_h(d, height_m)
    t1, t2 = temp_c + KELVIN, air_c + KELVIN
    h_rad = eps * SIGMA * (t1 * t1 + t2 * t2) * (t1 + t2)   # T1^4 - T2^4 factorised
    return area_m2 * d / (1.0 / (h_out + h_rad) + wall_r) + h_forced * area_m2 * d


def coil_heat_w(wort_c, inlet_c, stir, coil_diameter_m, coil_length_m, h_inside, flow_kg_s):
    """Heat taken by an immersion coil, W (e-NTU with the wort side isothermal).

    Outer film h_o = 570 stir (|T - T_in| / 2)^(1/4) (the film sees roughly half
    the wort-coolant difference, own estimate); inside ``h_inside`` W/(m^2 K);
    coolant ``flow_kg_s`` of water.
    """
    h_o = C_WORT_TUBE * stir * soft_abs(0.5 * (wort_c - inlet_c)) ** 0.25
    ua = math.pi * coil_diameter_m * coil_length_m / (1.0 / h_o + 1.0 / h_inside)
    c_flow = flow_kg_s * C_WATER
    effectiveness = 1.0 - math.exp(-ua / c_flow)  # one side isothermal (standard e-NTU)
    return effectiveness * c_flow * (wort_c - inlet_c)


# ------------------------------------------------------------ integration
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

    def __call__(self, t):
        t = np.atleast_1d(np.asarray(t, dtype=float))
        idx = np.minimum(np.searchsorted(self.ends, t, side="left"), len(self.sols) - 1)
        out = np.empty((self.sols[0](self.starts[0]).shape[0], len(t)))
        for i in np.unique(idx):
            mask = idx == i
            out[:, mask] = self.sols[i](t[mask])
        return out

    def after(self, t):
        """State just after ``t`` seconds (``__call__`` gives the state just before a jump)."""
        i = max(int(np.searchsorted(self.starts, float(t), side="right")) - 1, 0)
        return self.sols[i](float(t))


def integrate_piecewise(rhs, y0, t_end, breaks, mode):
    """Integrate ``rhs(t, y, mode)`` over [0, t_end] with jumps at ``breaks``.

    ``breaks``: sorted list of ``(time_s, apply)`` where ``apply(y, mode)``
    returns the new state (a copy) and may change ``mode`` (a dict) in place.
    Returns a :class:`PiecewiseSolution`.
    """
    from scipy.integrate import solve_ivp   # here: replaying a trace needs no scipy
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
    from scipy.optimize import brentq
    return float(brentq(lambda t: float(signal(np.array([t]))[0]) - target_c, a, b,
                        xtol=1e-9, rtol=1e-14, maxiter=200))


def crossing_by_brentq(sensor_signal, target_c, t_lo, t_hi):
    """brentq root of ``sensor_signal(t) - target_c`` on [t_lo, t_hi] (s); for tests."""
    from scipy.optimize import brentq
    return float(brentq(lambda t: float(sensor_signal(np.array([t]))[0]) - target_c,
                        t_lo, t_hi, xtol=1e-9))


def set_mode(key, value):
    """A scheduled event for :func:`integrate_piecewise` that sets ``mode[key] = value``."""
    def apply(y, mode):
        mode[key] = value
        return y
    return apply
