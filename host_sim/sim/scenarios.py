"""Seeded scenario generators: one narrow table of ranges per application.

Each kind draws its parameters from a table of ranges (:mod:`host_sim.sim.ranges`),
integrates its physical kind (:mod:`host_sim.sim.kinds`, the loss terms of
:mod:`host_sim.sim.physics`) piecewise between scheduled events (lid off,
top-up, duty change, ...), passes the noise-free sensor signal (which has its
own first-order lag, a state of the ODE) through the sensor model
(:mod:`host_sim.sim.sensor`: noise, 0.0625 C quantisation, sampling jitter,
dropouts, spikes, a stuck stretch), and reports the exact crossing time of the
noise-free sensor signal (brentq on the solver's dense output) in a truth dict.

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
"""
import json
import math

import numpy as np

from host_sim.sim import kinds
from host_sim.sim.physics import (C_CERAMIC, C_GLASS, C_STEEL, C_WATER, EPS_CERAMIC, EPS_GLASS,
                                  SOLVER_TEXT, find_crossing_s, integrate_piecewise, set_mode)
from host_sim.sim.ranges import Draw, chance, draw_table, half_degree, pick
from host_sim.sim.sensor import (QUANTUM_C, FaultRates, add_faults, event_records, plain_params,
                                 quantised, sample_times)

KINDS = ("mug", "bath", "wort", "fridge", "kettle")
KIND_TITLES = {
    "mug": "hot drink cooling in a mug",
    "bath": "water bath heated by an element",
    "wort": "wort chilled by an immersion coil",
    "fridge": "drink cooling in a cycling fridge",
    "kettle": "kettle heating water",
}
_KIND_CODE = {k: i + 11 for i, k in enumerate(KINDS)}

FAULTS = FaultRates(spike_chance=0.5, spike_counts_below=5, stuck_chance=0.25,
                    stuck_rows=lambda rng, interval_s: int(rng.integers(20, 60)),
                    gap_chance=0.5, gap_end_margin=20,
                    gap_rows=lambda rng, n_gaps, interval_s: rng.integers(3, 16, n_gaps))


# ----------------------------------------------------------------- the kinds
class _Kind(Draw):
    """One scenario kind: a table of ranges, its physical kind, schedule, sensor index, target."""

    interval_s = 5.0
    horizon_s = 3600.0
    direction = -1
    sensor_index = -1          # state index of the lagged sensor
    air_sensor_index = None    # state index of a lagged ambient sensor, if any
    has_heater = False
    constant_ambient = True    # the surroundings are one constant temperature
    RANGES = ()

    def __init__(self, rng):
        super().__init__(rng)
        self.p = {}

    def draw(self):
        """Draw the table into ``p`` and build the physics (``model``, ``rhs``)."""
        draw_table(self, self.p, self.RANGES)
        self.model = self.physics()
        self.rhs = self.model.rhs

    def schedule(self, times, mode):
        """Scheduled events: ``(breaks, events)``; may set the initial ``mode``."""
        return [], []


class Mug(_Kind):
    """Hot drink in a mug. State: liquid C, wall C, liquid kg, sensor C."""

    interval_s = 5.0
    horizon_s = 4800.0
    direction = -1
    RANGES = (
        ("room_c", 18.0, 25.0), ("rel_humidity", 0.3, 0.6), ("pour_c", 80.0, 92.0),
        ("liquid_kg", 0.25, 0.35), ("mug_kg", 0.28, 0.42),
        ("inner_area_m2", 0.024, 0.032),                 # wetted when full (our mug)
        ("outer_area_m2", 0.030, 0.040), ("top_radius_m", 0.037, 0.045), ("height_m", 0.10),
        # half the wall thickness (2.5 mm) over ceramic k ~1.5 W/(m K) (from memory)
        ("wall_half_r", 0.0025 / 1.5),
        ("lid_u", 2.0, 5.0),                             # W/(m^2 K), plastic lid (own estimate)
        ("sensor_lag_s", 6.0, 25.0), ("target_c", half_degree(52.0, 62.0)),
        ("lid_at_start", chance(0.4)), ("lid_change_frac", 0.15, 0.5),
        ("topup", chance(0.6)), ("topup_frac", 0.25, 0.6), ("topup_kg", 0.04, 0.08),
        ("topup_c", 85.0, 95.0))

    def physics(self):
        p = self.p
        return kinds.MugLiquid.from_params(
            p, c_liquid=C_WATER, max_fill_factor=1.3, water_wall=kinds.WARM_WALL,
            outer_half_wall=False, wall_eps=EPS_CERAMIC, wall_j_per_k=p["mug_kg"] * C_CERAMIC,
            top_area_m2=math.pi * p["top_radius_m"] ** 2, top_length_m=p["top_radius_m"] / 2.0,
            w_wall=0.0, w_air=0.0)

    def y0(self):
        p = self.p
        return [p["pour_c"], p["room_c"], p["liquid_kg"], p["room_c"]]

    def schedule(self, times, mode):
        # lid and top-up times are fractions of the undisturbed approach: a first pass
        p = self.p
        breaks, events = [], []
        mode["lid"] = p["lid_at_start"]
        first = integrate_piecewise(self.rhs, self.y0(), self.horizon_s, [], mode)
        t_first = find_crossing_s(lambda t: first(t)[self.sensor_index], p["target_c"], -1,
                                  0.0, self.horizon_s, 5.0) or self.horizon_s * 0.5
        t_lid = _snap(times, p["lid_change_frac"] * t_first)
        if p["lid_at_start"]:
            breaks.append((t_lid, set_mode("lid", False)))
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
        return breaks, events


class Bath(_Kind):
    """Heated water bath. State: water C, element C, water kg, sensor C."""

    interval_s = 5.0
    horizon_s = 5400.0
    direction = 1
    has_heater = True
    RANGES = (
        ("room_c", 18.0, 25.0), ("rel_humidity", 0.3, 0.6), ("start_c", 14.0, 24.0),
        ("water_kg", 4.0, 8.0), ("power_w", 800.0, 1500.0), ("element_j_per_k", 300.0, 500.0),
        ("element_w_per_k", 15.0, 30.0), ("side_area_m2", 0.12, 0.20),
        ("top_area_m2", 0.035, 0.06), ("height_m", 0.25),
        ("wall_r", 0.003 / 0.2),        # 3 mm polymer container wall, k ~0.2 W/(m K) (from memory)
        ("covered", chance(0.4)), ("cover_u", 3.0, 6.0), ("sensor_lag_s", 4.0, 15.0),
        ("duty0", pick([1.0, 0.8, 0.6])), ("duty_change", chance(0.5)),
        ("duty1", pick([1.0, 0.7, 0.5])), ("duty_change_frac", 0.2, 0.6),
        ("target_c", half_degree(50.0, 65.0)))

    def physics(self):
        p = self.p
        return kinds.HeatedWater.from_params(p, side_eps=EPS_CERAMIC, h_forced=0.0,
                                             w_element=0.0, mass_state=True)

    def y0(self):
        p = self.p
        return [p["start_c"], p["start_c"], p["water_kg"], p["start_c"]]

    def schedule(self, times, mode):
        p = self.p
        mode["duty"] = p["duty0"]
        if not p["duty_change"]:
            return [], []
        rough = (p["water_kg"] * C_WATER * (p["target_c"] - p["start_c"])
                 / (p["power_w"] * p["duty0"]))
        t_d = _snap(times, p["duty_change_frac"] * rough)
        return [(t_d, set_mode("duty", p["duty1"]))], [(t_d, "duty change")]


class Wort(_Kind):
    """Wort chilled by an immersion coil. State: wort C, wort kg, sensor C."""

    interval_s = 5.0
    horizon_s = 4200.0
    direction = -1
    constant_ambient = False
    RANGES = (
        ("room_c", 15.0, 26.0), ("rel_humidity", 0.3, 0.7), ("start_c", 90.0, 99.0),
        ("wort_kg", 18.0, 24.0), ("coil_length_m", 8.0, 15.0), ("coil_diameter_m", 0.0095),
        ("h_inside", 3000.0, 5000.0),                   # forced flow in the tube (own estimate)
        ("flow_kg_s", 0.06, 0.15), ("inlet0_c", 9.0, 16.0), ("inlet_rise_c", 3.0, 8.0),
        ("inlet_tau_s", 900.0, 2500.0), ("side_area_m2", 0.25, 0.35),
        ("top_area_m2", 0.06, 0.09), ("height_m", 0.35),
        ("eps_pot", 0.1, 0.4),                         # stainless, polished to dull (from memory)
        ("lid_on", chance(0.5)), ("stir", chance(0.4)), ("stir_frac", 0.2, 0.5),
        ("stir_factor", 1.4, 2.0), ("sensor_lag_s", 15.0, 40.0),
        ("target_c", lambda p, draw: round((p["inlet0_c"] + p["inlet_rise_c"]
                                            + draw.u(6.0, 14.0)) * 2.0) / 2.0))

    def physics(self):
        return kinds.WortChiller.from_params(self.p, reservoir_state=False, recirculated=False)

    def y0(self):
        p = self.p
        return [p["start_c"], p["wort_kg"], p["start_c"]]

    def schedule(self, times, mode):
        p = self.p
        if not p["stir"]:
            return [], []
        t_s = _snap(times, p["stir_frac"] * 900.0)
        return [(t_s, set_mode("stir", p["stir_factor"]))], [(t_s, "stirring")]


class Fridge(_Kind):
    """Drink in a fridge. State: liquid C, glass C, sensor C, air sensor C."""

    interval_s = 10.0
    horizon_s = 14400.0
    direction = -1
    sensor_index = 2
    air_sensor_index = 3
    constant_ambient = False
    RANGES = (
        ("room_c", 19.0, 27.0), ("set_c", 3.0, 6.0), ("cycle_amp_c", 0.8, 2.2),
        ("cycle_period_s", 1800.0, 3000.0), ("cycle_phase", 0.0, 2.0 * math.pi),
        ("cycle_skew", -1.0, 1.0), ("door_rise_c", 3.0, 8.0), ("door_tau_s", 200.0, 500.0),
        ("liquid_kg", 0.33, 0.5), ("glass_kg", 0.2, 0.35), ("area_m2", 0.035, 0.05),
        ("inner_area_m2", lambda p, draw: 0.9 * p["area_m2"]), ("height_m", 0.2),
        ("glass_half_r", 0.0015 / 1.0),      # 1.5 mm of glass, k ~1.0 W/(m K) (from memory)
        ("sensor_air_weight", 0.05, 0.2),    # strap-on sensor partly sees the air
        ("sensor_lag_s", 20.0, 40.0), ("air_sensor_lag_s", 30.0, 90.0),
        ("target_c", lambda p, draw: round((p["set_c"] + 1.3 * p["cycle_amp_c"]
                                            + draw.u(1.5, 4.5)) * 2.0) / 2.0))

    def physics(self):
        p = self.p
        w = p["sensor_air_weight"]
        return kinds.FridgeDrink.from_params(
            p, second_door=False, container_j_per_k=p["glass_kg"] * C_GLASS,
            half_r=p["glass_half_r"], eps=EPS_GLASS, water_wall=kinds.COLD_WALL, w_liquid=0.0,
            w_container=1.0 - w, w_air=w)

    def y0(self):
        p = self.p
        return [p["room_c"], p["room_c"], p["room_c"], self.model.air_c(0.0) - p["door_rise_c"]]

    def schedule(self, times, mode):
        return [], [(0.0, "door closed")]


class Kettle(_Kind):
    """Kettle. State: water C, element plate C, body C, sensor C."""

    interval_s = 1.0
    horizon_s = 900.0
    direction = 1
    has_heater = True
    RANGES = (
        ("room_c", 17.0, 25.0), ("start_c", 8.0, 20.0), ("water_kg", 0.8, 1.6),
        ("power_w", 1800.0, 3000.0),
        ("element_j_per_k", lambda p, draw: 0.35 * C_STEEL * draw.u(0.8, 1.3)),
        ("element_w_per_k", 50.0, 90.0), ("body_j_per_k", 150.0, 300.0),
        ("body_w_per_k", 10.0, 20.0), ("body_area_m2", 0.05, 0.08),
        ("eps_body", 0.3, 0.9),                       # brushed steel to plastic (from memory)
        ("height_m", 0.2),
        ("sensor_plate_weight", 0.0, 0.1),            # base sensor partly sees the plate
        ("sensor_lag_s", 4.0, 12.0),
        ("target_c", lambda p, draw: round(draw.u(70.0, 90.0))))

    def physics(self):
        return kinds.Kettle.from_params(self.p, w_plate=self.p["sensor_plate_weight"])

    def y0(self):
        p = self.p
        return [p["start_c"], p["start_c"], p["start_c"], p["start_c"]]


_CLASSES = {"mug": Mug, "bath": Bath, "wort": Wort, "fridge": Fridge, "kettle": Kettle}


# ------------------------------------------------------------ the generator
class Generated:
    """A generated scenario: trace columns (deg C), truth dict, dense physics.

    ``time_s``, ``temp_c`` numpy arrays; ``ambient_c`` array or None;
    ``heater`` duty array or None; ``events`` list of str; ``truth`` dict;
    ``solution`` the :class:`host_sim.sim.physics.PiecewiseSolution`;
    ``sensor_signal(t)`` the noise-free sensor reading in deg C; ``kind`` the
    :class:`_Kind` instance.
    """

    def __init__(self, **kw):
        self.__dict__.update(kw)


def _snap(times, t):
    """The first sample time at or after t (events happen at a reading)."""
    i = int(np.searchsorted(times, t))
    return float(times[min(max(i, 1), len(times) - 1)])


def _duty_average(schedule_modes, t_prev, t_now):
    """Mean duty over (t_prev, t_now] from the piecewise-constant schedule."""
    total = 0.0
    for start, end, duty in schedule_modes:
        a, b = max(start, t_prev), min(end, t_now)
        if b > a:
            total += duty * (b - a)
    return total / (t_now - t_prev) if t_now > t_prev else schedule_modes[0][2]


def _duty_schedule(k, mode, breaks):
    """``[(start_s, end_s, duty)]``: the duty between the scheduled events."""
    cur = dict(mode)
    cur["duty"] = k.p.get("duty0", 1.0) if isinstance(k, Bath) else 1.0
    edges = [0.0] + [b[0] for b in breaks] + [math.inf]
    duties = [cur["duty"]]
    for _, apply in breaks:
        apply(np.zeros(len(k.y0())), cur)
        duties.append(cur["duty"])
    return [(edges[i], edges[i + 1], duties[i]) for i in range(len(duties))]


def _row_duties(modes, times):
    """Duty per row: the mean duty over (t_prev, t_now]."""
    return np.array([_duty_average(modes, times[i - 1] if i else times[0], times[i])
                     for i in range(len(times))])


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
    times = sample_times(rng, k.interval_s, k.horizon_s, jitter)

    # schedule (events snapped onto readings)
    mode = {"lid": False, "duty": 1.0, "stir": 1.0}
    breaks, events = k.schedule(times, mode)
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
    times = times[times <= end]
    clean = sensor_signal(times)
    modes = _duty_schedule(k, mode, breaks) if k.has_heater else None

    # the sensor model; fault draws happen whether or not faults are enabled
    noise_c = float(rng.uniform(0.02, 0.12))
    readings = quantised(rng, clean, noise_c, QUANTUM_C)
    n = len(times)
    keep, faults = add_faults(rng, FAULTS, readings, times, QUANTUM_C, k.interval_s,
                              sensor_faults)
    ambient = None
    if k.air_sensor_index is not None:
        air_noise = float(rng.uniform(0.03, 0.1))
        ambient = quantised(rng, sol(times)[k.air_sensor_index], air_noise, QUANTUM_C, n)

    # events: label the first kept row at or after each event
    labels = [""] * n
    kept_idx = np.nonzero(keep)[0]
    for t_ev, name in events:
        j = kept_idx[np.searchsorted(times[kept_idx], t_ev - 1e-9)] \
            if t_ev <= times[kept_idx[-1]] else None
        if j is not None:
            labels[j] = (labels[j] + ";" + name) if labels[j] else name

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
        "events": event_records(events),
        "sensor": {"lag_s": float(p["sensor_lag_s"]), "noise_c": noise_c,
                   "quantum_c": QUANTUM_C, "jitter_frac": jitter,
                   "faults_enabled": bool(sensor_faults), **faults},
        "params": plain_params(p),
        "solver": SOLVER_TEXT,
    }
    return Generated(
        kind_name=kind, kind=k, seed=int(seed),
        time_s=times[keep], temp_c=readings[keep],
        ambient_c=None if ambient is None else ambient[keep],
        # duty since the previous kept row
        heater=None if modes is None else _row_duties(modes, times[keep]),
        events=[labels[i] for i in kept_idx],
        clean_c=clean[keep], truth=truth, solution=sol, sensor_signal=sensor_signal,
        breaks=breaks, mode0=mode,
    )


def write_scenario(gen, trace_path, truth_path=None):
    """Write a :class:`Generated` as a trace CSV and (optionally) its truth JSON."""
    from host_sim.replay.trace_io import write_trace
    write_trace(trace_path, gen.time_s, gen.temp_c, ambient_c=gen.ambient_c,
                heater=gen.heater, events=gen.events)
    if truth_path is not None:
        with open(truth_path, "w") as handle:
            json.dump(gen.truth, handle, indent=2, sort_keys=True)
            handle.write("\n")
