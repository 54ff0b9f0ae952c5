"""Named vessels: one fixed product (geometry, heater, probe), many uses of it.

A product team ships one vessel; between uses only the fill, the start
temperature and the room change. Each vessel here fixes the geometry, the
heater and the probe of a :mod:`host_sim.sim.scenarios` kind (a table of fixed
values and a few ranges over the same physical kind, :mod:`host_sim.sim.kinds`,
integrated by :func:`host_sim.sim.physics.integrate_piecewise`) and draws per use

- the fill (kg of liquid), the start temperature and the room temperature,
- for the bath, the heater duty (constant during a use).

The probe, its lag and its noise are the vessel's own (same part in every
unit), the room is also read by a second sensor (an ``ambient_c`` column) so a
calibration can learn the offset between the room and the effective
equilibrium. No sensor faults, top-ups or lids: these traces are the clean
uses a calibration would be made from.

Vessels (all our own inventions with our own numbers):

- ``mug``: 0.35 kg stoneware mug, open top, 12 s probe lag; 0.20-0.34 kg of
  drink poured at 78-94 C; rooms 18-26 C; one hour.
- ``flask``: lidded travel mug (the mug physics with the lid on, a heavier
  wall, 20 s probe lag); 0.25-0.40 kg at 80-95 C; rooms 16-26 C; two hours.
- ``kettle``: 2.2 kW plastic-bodied kettle, 6 s probe lag; 0.5-1.6 kg of
  water at 8-22 C; stops before 96 C.
- ``bath``: 1.2 kW bath in a polymer tub, covered, 8 s probe lag; 4-9 kg of
  water at 12-26 C; duty 0.7-1.0; stops at 70 C or 2 h.
- ``lab_pot``: a reference vessel whose physics is exactly the profile's
  model (``dT/dt = -a |T-E|^n sign(T-E) + g u``, first-order probe, see
  :mod:`tinytherm.profile`) with known parameters, heated at full power to a
  drawn cut-off temperature and then left to cool: the recovery check.

``truth`` of a use holds the drawn values and, for every vessel, the
parameters a calibration can be checked against: ``probe_lag_s``;
``gain_k_per_s`` for heated vessels (full-duty heating rate of the lumped
heat capacity, ``P / sum(m c)``); for ``lab_pot`` also ``rate_per_s`` (at the
use's fill), ``rate_exponent`` and ``eq_offset_c``.
"""
import json

import numpy as np
from scipy.integrate import solve_ivp

from host_sim.sim import kinds, scenarios
from host_sim.sim.physics import C_STEEL, C_WATER, SOLVER, find_crossing_s, integrate_piecewise
from host_sim.sim.sensor import QUANTUM_C, plain_params, quantised, sample_times

_NAMED = (("mug", "stoneware mug, open top (cooling)"),
          ("flask", "lidded travel mug (cooling)"),
          ("kettle", "2.2 kW kettle (heating)"),
          ("bath", "1.2 kW covered bath (heating)"),
          ("lab_pot", "reference pot with the profile's own physics (heat, then cool)"))
VESSELS = tuple(name for name, _ in _NAMED)
VESSEL_TITLES = dict(_NAMED)
_CODE = {"mug": 101, "kettle": 102, "bath": 103, "lab_pot": 104, "flask": 105}

# lab_pot: the profile's model with these known values
LAB_POT = {
    "rate_per_s": 1.0 / 1500.0,    # at |T - E| = 10 K and the reference fill
    "fill_ref_kg": 2.0,
    "fill_exponent": -1.0 / 3.0,   # k ~ fill^(-1/3) (area/volume of a squat pot, own choice)
    "rate_exponent": 1.25,
    "eq_offset_c": -0.8,
    "power_w": 1500.0,
    "probe_lag_s": 10.0,
    "noise_c": 0.03,
}


class _Fixed:
    """Mixin: a scenario kind whose table is the vessel's fixed parts, then its per-use ranges."""

    fixed = {}
    varied = {}

    @property
    def RANGES(self):
        return (tuple(self.fixed.items())
                + tuple((key, lo, hi) for key, (lo, hi) in self.varied.items()))


class _Mug(_Fixed, scenarios.Mug):
    fixed = {"mug_kg": 0.35, "inner_area_m2": 0.028, "outer_area_m2": 0.036,
             "top_radius_m": 0.041, "height_m": 0.10, "wall_half_r": 0.0025 / 1.5,
             "lid_u": 3.0, "sensor_lag_s": 12.0, "rel_humidity": 0.45}
    varied = {"room_c": (18.0, 26.0), "pour_c": (78.0, 94.0), "liquid_kg": (0.20, 0.34)}


class _Flask(_Fixed, scenarios.Mug):
    # a lidded double-wall travel mug: the mug physics with the lid on, a heavier
    # wall and a slower probe
    fixed = dict(_Mug.fixed, mug_kg=0.45, wall_half_r=0.006, lid_u=1.5, sensor_lag_s=20.0,
                 outer_area_m2=0.030)
    varied = {"room_c": (16.0, 26.0), "pour_c": (80.0, 95.0), "liquid_kg": (0.25, 0.40)}
    lid = True


class _Kettle(_Fixed, scenarios.Kettle):
    fixed = {"power_w": 2200.0, "element_j_per_k": 0.35 * C_STEEL,
             "element_w_per_k": 70.0, "body_j_per_k": 220.0, "body_w_per_k": 14.0,
             "body_area_m2": 0.065, "eps_body": 0.85, "height_m": 0.2,
             "sensor_plate_weight": 0.03, "sensor_lag_s": 6.0}
    varied = {"room_c": (17.0, 25.0), "start_c": (8.0, 22.0), "water_kg": (0.5, 1.6)}


class _Bath(_Fixed, scenarios.Bath):
    fixed = {"power_w": 1200.0, "element_j_per_k": 400.0, "element_w_per_k": 22.0,
             "side_area_m2": 0.16, "top_area_m2": 0.05, "height_m": 0.25,
             "wall_r": 0.003 / 0.2, "covered": True, "cover_u": 4.5, "sensor_lag_s": 8.0,
             "rel_humidity": 0.45}
    varied = {"room_c": (18.0, 25.0), "start_c": (12.0, 26.0), "water_kg": (4.0, 9.0),
              "duty": (0.7, 1.0)}


_SPEC = {
    # class, sample interval s, probe noise deg C, horizon s, heater
    "mug": (_Mug, 5.0, 0.04, 3600.0),
    "flask": (_Flask, 10.0, 0.04, 7200.0),
    "kettle": (_Kettle, 1.0, 0.05, 900.0),
    "bath": (_Bath, 5.0, 0.04, 7200.0),
}


class Use:
    """One use of a vessel: trace columns (deg C, s, duty 0..1) and a truth dict.

    ``time_s``, ``temp_c``, ``ambient_c`` (the room sensor), ``heater`` (duty
    per row, or None), ``clean_c`` (noise-free probe signal), ``truth``.
    """

    def __init__(self, **kw):
        self.__dict__.update(kw)


JITTER = 0.1                      # sampling jitter, fraction of the interval
ROOM_NOISE_C = 0.05               # the room sensor's noise, deg C


def _first_above(sol, index, level, horizon_s, step_s):
    return find_crossing_s(lambda t: sol(t)[index], level, 1, 0.0, horizon_s, step_s)


def _scenario_use(name, seed):
    cls, interval_s, noise_c, horizon_s = _SPEC[name]
    rng = np.random.default_rng([int(seed), _CODE[name]])
    k = cls(rng)
    k.draw()
    p = k.p
    duty = float(p.get("duty", 1.0))
    mode = {"lid": bool(getattr(k, "lid", False)), "duty": duty, "stir": 1.0}
    sol = integrate_piecewise(k.rhs, k.y0(), horizon_s, [], mode)
    end = horizon_s
    if name == "kettle":
        hot = _first_above(sol, 0, 96.0, horizon_s, 1.0)
        end = hot if hot is not None else horizon_s
    elif name == "bath":
        hot = _first_above(sol, 0, 70.0, horizon_s, 5.0)
        end = hot if hot is not None else horizon_s
    times = sample_times(rng, interval_s, end, JITTER)
    times = times[times <= end]
    clean = sol(times)[k.sensor_index]
    readings = quantised(rng, clean, noise_c, QUANTUM_C)
    room = quantised(rng, np.full(len(times), p["room_c"]), ROOM_NOISE_C, QUANTUM_C)
    heater = np.full(len(times), duty) if k.has_heater else None
    truth = {"vessel": name, "seed": int(seed), "title": VESSEL_TITLES[name],
             "probe_lag_s": float(p["sensor_lag_s"]), "noise_c": noise_c,
             "room_c": float(p["room_c"]), "has_heater": bool(k.has_heater),
             "params": plain_params(p)}
    if name in ("mug", "flask"):
        truth["fill_kg"] = float(p["liquid_kg"])
        truth["start_c"] = float(p["pour_c"])
    else:
        truth["fill_kg"] = float(p["water_kg"])
        truth["start_c"] = float(p["start_c"])
        heat_cap = p["water_kg"] * C_WATER + p["element_j_per_k"]
        if name == "kettle":
            heat_cap += p["body_j_per_k"]
        truth["gain_k_per_s"] = float(p["power_w"] / heat_cap)
        truth["duty"] = duty
    return Use(vessel=name, seed=int(seed), time_s=times, temp_c=readings, ambient_c=room,
               heater=heater, clean_c=clean, truth=truth)


def lab_pot_rate_per_s(fill_kg):
    """The lab pot's true rate (1/s) at |T - E| = 10 K for a fill in kg."""
    lp = LAB_POT
    return lp["rate_per_s"] * (fill_kg / lp["fill_ref_kg"]) ** lp["fill_exponent"]


def _lab_pot_use(seed):
    lp = LAB_POT
    rng = np.random.default_rng([int(seed), _CODE["lab_pot"]])
    room = float(rng.uniform(17.0, 25.0))
    start = float(rng.uniform(10.0, 25.0))
    fill = float(rng.uniform(1.2, 3.0))
    cut = float(rng.uniform(55.0, 80.0))
    k = lab_pot_rate_per_s(fill)
    n = lp["rate_exponent"]
    a = k / 10.0 ** (n - 1.0)
    eq = room + lp["eq_offset_c"]
    g = lp["power_w"] / (fill * C_WATER)
    lag = lp["probe_lag_s"]
    rhs = kinds.PowerLawPot(a=a, n=n, eq_c=eq, gain_k_per_s=g, lag_s=lag).rhs
    opts = dict(SOLVER, dense_output=True)

    def at_cut(t, y, duty):
        return y[0] - cut
    at_cut.terminal = True
    first = solve_ivp(rhs, (0.0, 4 * 3600.0), [start, start], args=(1.0,), events=at_cut, **opts)
    t_cut = float(first.t_events[0][0]) if len(first.t_events[0]) else float(first.t[-1])
    cool_s = 2400.0
    second = solve_ivp(rhs, (t_cut, t_cut + cool_s), first.sol(t_cut), args=(0.0,), **opts)
    times = sample_times(rng, 5.0, t_cut + cool_s, JITTER)
    times = times[times <= t_cut + cool_s]
    clean = np.where(times <= t_cut, first.sol(np.minimum(times, t_cut))[1],
                     second.sol(np.maximum(times, t_cut))[1])
    readings = quantised(rng, clean, lp["noise_c"], QUANTUM_C)
    # duty per row: mean duty over (t_prev, t_now]
    prev = np.concatenate([[times[0]], times[:-1]])
    span = np.maximum(times - prev, 1e-12)
    duty = np.clip((np.minimum(times, t_cut) - np.minimum(prev, t_cut)) / span, 0.0, 1.0)
    duty[0] = 1.0
    roomcol = quantised(rng, np.full(len(times), room), ROOM_NOISE_C, QUANTUM_C)
    truth = {"vessel": "lab_pot", "seed": int(seed), "title": VESSEL_TITLES["lab_pot"],
             "probe_lag_s": lag, "noise_c": lp["noise_c"], "room_c": room, "has_heater": True,
             "fill_kg": fill, "start_c": start, "cut_c": cut, "cut_time_s": t_cut,
             "gain_k_per_s": g, "rate_per_s": k, "rate_exponent": n,
             "eq_offset_c": lp["eq_offset_c"], "fill_exponent": lp["fill_exponent"],
             "duty": 1.0}
    return Use(vessel="lab_pot", seed=int(seed), time_s=times, temp_c=readings,
               ambient_c=roomcol, heater=duty, clean_c=clean, truth=truth)


def generate_use(vessel, seed):
    """One seeded use of a named vessel; returns a :class:`Use` (deg C, s)."""
    if vessel not in VESSELS:
        raise ValueError("unknown vessel %r (choose from %s)" % (vessel, ", ".join(VESSELS)))
    if vessel == "lab_pot":
        return _lab_pot_use(seed)
    return _scenario_use(vessel, seed)


def use_trace(use):
    """The use as a :class:`host_sim.replay.trace_io.Trace` (what a logger would have recorded)."""
    from host_sim.replay.trace_io import Trace
    return Trace(use.time_s, use.temp_c, ambient_c=use.ambient_c, heater=use.heater,
                 source="%s seed %d" % (use.vessel, use.seed))


def write_use(use, trace_path, truth_path=None):
    """Write a use as a trace CSV (and its truth as JSON when ``truth_path`` is given)."""
    from host_sim.replay.trace_io import write_trace
    write_trace(trace_path, use.time_s, use.temp_c, ambient_c=use.ambient_c, heater=use.heater)
    if truth_path is not None:
        with open(truth_path, "w") as handle:
            json.dump(use.truth, handle, indent=2, sort_keys=True)
            handle.write("\n")
