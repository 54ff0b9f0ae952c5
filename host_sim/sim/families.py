"""Physics families with wide parameter ranges, for an evaluation no one can tune to.

Where :mod:`host_sim.sim.scenarios` has one narrow kind per application, each
family here draws its physics, its sampling and its probe from wide ranges, so
that settings chosen on some families can be checked on a family they never
saw (leave-one-family-out, see ``benchmarks/families.py``). The physics
right-hand sides are those of :mod:`host_sim.sim.kinds` (the loss terms,
constants, solver and crossings of :mod:`host_sim.sim.physics`, the sensor
model of :mod:`host_sim.sim.sensor`); the families and their numbers (our
own) are the tables of :mod:`host_sim.sim.family_tables`.

For every trace the pot, bath and kettle draw whether a heater column (the
constant duty) is written; mug, pot, bath, kettle and topup whether a room
sensor column is, the fridge and the room whether their air sensor column is.
Sampling (``sampling="dense"``, the default): the interval is drawn from
:data:`INTERVALS_S` (1, 10, 60, 300 s; an interval is allowed when the
approach holds at least :data:`MIN_APPROACH_READINGS` readings, and 1 s only
for traces up to :data:`MAX_ONE_SECOND_S`), each reading moved by up to 15 %
of it. ``sampling="sparse"`` (a battery device, a thermometer moved between
vessels): from :data:`SPARSE_INTERVALS_S` (60-600 s), each reading moved by
up to 45 % of it, and at least :data:`SPARSE_MIN_READINGS` readings left in
the approach after dropouts; families whose approach cannot hold them
(``sparse_possible`` False: the kettle) raise ValueError. Probe resolution
from :data:`QUANTA_C` (0.0625, 0.1, 0.5 C). The target is the (0.5 C
rounded) noise-free sensor value at a crossing time drawn uniformly over the
family's range, so that short and long approaches are equally represented;
the exact crossing is then found by brentq on the dense solution.

Truth of each trace (:attr:`FamilyTrace.truth`): ``target_c``,
``crossing_time_s`` (first crossing of the noise-free sensor signal in the
direction of travel, on the final approach: after the last top-up where
there is one), ``approach_start_s`` (0, or the last top-up: the approach an
answer is judged on), ``direction``, ``clean_c`` per row (the noise-free
sensor signal, :attr:`FamilyTrace.clean_c`), ``liquid_c`` per row (the
liquid's own temperature, :attr:`FamilyTrace.liquid_c`) and
``liquid_at_crossing_c`` (the liquid at the true crossing; an arrival shown
while the liquid is still on the starting side of this value is early, see
:mod:`host_sim.replay.metrics`), ``noise_sd_c`` (standard
deviation of a reading's error: Gaussian noise and quantisation together,
``sqrt(sd^2 + q^2/12)``), ``gauss_sd_c``, ``quantum_c``,
``sample_interval_s``, ``has_heater_column``, ``has_ambient_column``,
``room_c``, ``tau_ref_s`` (loss time constant near the target, where
defined), ``sampling``, faults, all drawn parameters, and what a family adds
(the top-up family: ``pours``, each with the liquid before and after).

Generated traces are cached on disk (``.cache/families/<version>/``, the
version a hash of every module of :mod:`host_sim.sim` and of the numpy and
scipy versions), so repeated benchmark runs do not integrate the ODEs again.
"""
import glob
import hashlib
import json
import math
import os

import numpy as np

from host_sim.sim.family_tables import CLASSES, FAMILIES, FAMILY_TITLES
from host_sim.sim.physics import SOLVER_TEXT, find_crossing_s, integrate_piecewise
from host_sim.sim.sensor import (QUANTUM_C, FaultRates, add_faults, event_records, plain_params,
                                 quantised, sample_times)

_FAMILY_CODE = {f: 101 + i for i, f in enumerate(FAMILIES)}

INTERVALS_S = (1.0, 10.0, 60.0, 300.0)
SPARSE_INTERVALS_S = (60.0, 120.0, 180.0, 300.0, 420.0, 600.0)
SPARSE_MIN_READINGS = 10               # readings in the approach on the sparse grid, at least
SAMPLINGS = ("dense", "sparse")
QUANTA_C = (0.0625, 0.1, 0.5)          # 12-bit digital, 0.1 C display, 0.5 C cheap probe
QUANTUM_WEIGHTS = (0.5, 0.25, 0.25)
MIN_APPROACH_READINGS = 12             # an interval must give at least this many readings
MAX_ONE_SECOND_S = 5000.0              # longest trace sampled every second (benchmark cost)
BOIL_STOP_C = 97.0                     # heating traces end before the water reaches this


def _scale(interval_s):
    """Readings in a minute (fault lengths are in minutes of readings below an interval of 60 s)."""
    return max(1, int(round(60.0 / interval_s)))


FAULTS = FaultRates(
    spike_chance=0.3, spike_counts_below=4, stuck_chance=0.1,
    stuck_rows=lambda rng, interval_s: (int(rng.integers(2, 6)) * _scale(interval_s)
                                        if interval_s < 60.0 else int(rng.integers(2, 5))),
    gap_chance=0.3, gap_end_margin=5,
    gap_rows=lambda rng, n_gaps, interval_s: (rng.integers(1, 4, n_gaps)
                                              * (_scale(interval_s) if interval_s < 60.0 else 1)),
    min_rows=12, keep_last=True)


# ------------------------------------------------------------------ families
class FamilyTrace:
    """One generated trace: columns (deg C, seconds), truth dict, optional dense physics.

    ``time_s``, ``temp_c``, ``clean_c`` (noise-free sensor signal per row),
    ``liquid_c`` (the liquid's temperature per row, deg C) float arrays;
    ``ambient_c`` array or None; ``heater`` duty array or None; ``truth``
    dict (see module docstring). ``solution``, ``sensor_signal`` (callable,
    seconds -> deg C) and ``physics`` (the family instance with ``rhs``,
    ``y0``, ``breaks``, ``mode0``) are present only when generated with
    ``keep_solution=True`` (not cached).
    """

    def __init__(self, family, seed, time_s, temp_c, clean_c, ambient_c, heater, truth,
                 solution=None, sensor_signal=None, physics=None, liquid_c=None):
        self.family = family
        self.seed = int(seed)
        self.time_s = np.asarray(time_s, dtype=float)
        self.temp_c = np.asarray(temp_c, dtype=float)
        self.clean_c = np.asarray(clean_c, dtype=float)
        self.liquid_c = None if liquid_c is None else np.asarray(liquid_c, dtype=float)
        self.ambient_c = None if ambient_c is None else np.asarray(ambient_c, dtype=float)
        self.heater = None if heater is None else np.asarray(heater, dtype=float)
        self.truth = truth
        self.solution = solution
        self.sensor_signal = sensor_signal
        self.physics = physics

    def __len__(self):
        return len(self.time_s)


def _allowed_crossing_window(signal, fam, grid, from_s=0.0):
    """Times on ``grid`` after the sensor's turn where the signal lies in the target limits.

    The turn is searched in the first third of the grid from ``from_s`` (s; the
    last pour of a top-up). Returns ``(allowed, values, turn_s)``.
    """
    vals = signal(grid)
    lo, hi = fam.target_limits_c
    first = int(np.searchsorted(grid, from_s))
    head = vals[first: first + max((len(vals) - first) // 3, 2)]
    if fam.direction < 0:
        turn = first + int(np.argmax(head))
    else:
        turn = first + int(np.argmin(head))
    ok = np.zeros(len(grid), dtype=bool)
    ok[turn + 1:] = True
    ok &= (vals >= lo) & (vals <= hi)
    # the signal must keep going the same way up to there (strictly past the start)
    start = vals[turn]
    ok &= (vals - start) * fam.direction > 1.0
    return ok, vals, float(grid[turn])


def _draw_sensor(rng):
    """Gaussian noise sd (deg C), quantum (deg C) and timing jitter (fraction)."""
    gauss_sd = float(rng.uniform(0.01, 0.15))
    quantum = float(QUANTA_C[int(rng.choice(len(QUANTA_C), p=QUANTUM_WEIGHTS))])
    jitter = float(rng.uniform(0.0, 0.3))
    return gauss_sd, quantum, jitter


def sparse_families():
    """The families whose approach can hold ten readings a minute or more apart."""
    return tuple(f for f in FAMILIES if CLASSES[f].sparse_possible)


def generate(family, seed, sensor_faults=True, keep_solution=False, max_tries=20,
             sampling="dense"):
    """Generate one trace of ``family`` for integer ``seed``; returns :class:`FamilyTrace`.

    Deterministic in ``(family, seed, sampling)`` for the same numpy/scipy.
    Draws the physics, then a sampling interval, then a crossing time (seconds)
    in the family's range at which the noise-free sensor signal gives the
    target (rounded to 0.5 C); redraws (up to ``max_tries``) when no
    admissible target exists. ``sensor_faults`` adds spikes, dropouts and a
    stuck stretch with the drawn probabilities. ``sampling``: ``"dense"`` or
    ``"sparse"`` (see the module docstring).
    """
    if family not in CLASSES:
        raise ValueError("unknown family %r (choose from %s)" % (family, ", ".join(FAMILIES)))
    if sampling not in SAMPLINGS:
        raise ValueError("sampling must be one of %s, got %r" % (", ".join(SAMPLINGS), sampling))
    if sampling == "sparse" and not CLASSES[family].sparse_possible:
        raise ValueError("%s: an approach cannot hold %d readings 60 s or more apart"
                         % (family, SPARSE_MIN_READINGS))
    rng = np.random.default_rng([int(seed), _FAMILY_CODE[family]])
    for _ in range(max_tries):
        out = _try_generate(family, seed, rng, sensor_faults, keep_solution, sampling)
        if out is not None:
            return out
    raise RuntimeError("no admissible target for %s seed %d" % (family, seed))


def _try_generate(family, seed, rng, sensor_faults, keep_solution, sampling="dense"):
    sparse = sampling == "sparse"
    fam = CLASSES[family](rng)
    fam.draw()
    fam.build()
    p = fam.p
    c_lo, c_hi = fam.crossing_range_s
    intervals = SPARSE_INTERVALS_S if sparse else INTERVALS_S
    horizon = 1.25 * c_hi + 3.0 * max(intervals)
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
    from_s = fam.approach_start_s()
    ok, vals, turn_s = _allowed_crossing_window(sensor_signal, fam, grid, from_s)
    ok &= (grid >= c_lo) & (grid <= min(c_hi, stop - 5.0))
    # sampling interval: the approach must hold enough readings; 1 s only for short traces
    order = list(intervals)
    rng.shuffle(order)
    if not ok.any():
        return None
    for interval in order:
        t_min = from_s + MIN_APPROACH_READINGS * interval
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
    # the final approach's crossing: after the probe has turned following the last pour
    search_from = 0.0 if from_s == 0.0 else turn_s
    crossing = find_crossing_s(sensor_signal, target, fam.direction, search_from, stop, step)
    if crossing is None or crossing < t_min or crossing - from_s < 90.0:
        return None
    end = min(crossing + max(120.0, 0.2 * crossing, 3.0 * interval), stop, horizon)

    # sampling times with jitter, then the sensor model
    gauss_sd, quantum, jitter = _draw_sensor(rng)
    times = sample_times(rng, interval, end, jitter, jitter_scale=1.5 if sparse else 0.5)
    times = times[times <= end]
    n = len(times)
    clean = sensor_signal(times)
    readings = quantised(rng, clean, gauss_sd, quantum)
    keep, faults = add_faults(rng, FAULTS, readings, times, quantum, interval, sensor_faults)
    in_approach = keep & (times >= from_s) & (times < crossing)
    if sparse and np.count_nonzero(in_approach) < SPARSE_MIN_READINGS:
        return None

    heater = None
    has_heater_column = bool(fam.heater_possible and rng.uniform() < 0.5)
    if has_heater_column:
        heater = np.full(n, float(p["duty"]))
    ambient = None
    has_ambient_column = False
    if fam.air_index is not None:
        has_ambient_column = bool(rng.uniform() < fam.air_column_chance)
        air_noise, air_quantum = fam.draw_air_sensor(rng)
        if has_ambient_column:
            ambient = quantised(rng, sol(times)[fam.air_index], air_noise, air_quantum, n)
    elif fam.room_column_possible:
        has_ambient_column = bool(rng.uniform() < 0.25)
        air_noise = float(rng.uniform(0.03, 0.1))
        if has_ambient_column:
            ambient = quantised(rng, p["room_c"], air_noise, QUANTUM_C, n)

    tau = fam.tau_ref_s(target)
    liquid = sol(times)[fam.water_index()]
    truth = {
        "family": family,
        "title": FAMILY_TITLES[family],
        "seed": int(seed),
        "target_c": float(target),
        "crossing_time_s": float(crossing),
        "approach_start_s": float(from_s),
        "target_limits_c": [float(v) for v in fam.target_limits_c],
        "liquid_at_crossing_c": float(sol(np.array([crossing]))[fam.water_index()][0]),
        "sampling": sampling,
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
        "events": event_records((t, e) for t, e in fam.events if t <= end),
        "faults_enabled": bool(sensor_faults),
        "faults": faults,
        "params": plain_params(p),
        "solver": SOLVER_TEXT,
    }
    truth.update(fam.extra_truth(sol))
    return FamilyTrace(family, seed, times[keep], readings[keep], clean[keep],
                       None if ambient is None else ambient[keep],
                       None if heater is None else heater[keep], truth,
                       solution=sol if keep_solution else None,
                       sensor_signal=sensor_signal if keep_solution else None,
                       physics=fam if keep_solution else None, liquid_c=liquid[keep])


# ------------------------------------------------------------------ disk cache
def cache_version():
    """Hash of every module of :mod:`host_sim.sim` and of the numpy and scipy versions
    (a change to any of them invalidates the cache)."""
    h = hashlib.sha1()
    here = os.path.dirname(os.path.abspath(__file__))
    for path in sorted(glob.glob(os.path.join(here, "*.py"))):
        h.update(os.path.basename(path).encode())
        with open(path, "rb") as handle:
            h.update(handle.read())
    h.update(np.__version__.encode())
    import scipy
    h.update(scipy.__version__.encode())
    return h.hexdigest()[:12]


def default_cache_dir():
    """``<repository>/.cache/families`` (gitignored)."""
    package = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))   # host_sim/
    return os.path.join(os.path.dirname(package), ".cache", "families")


def load_or_generate(family, seed, sensor_faults=True, cache_dir=None, sampling="dense"):
    """:func:`generate` with a disk cache (``cache_dir`` None: the default; False: no cache)."""
    if cache_dir is False:
        return generate(family, seed, sensor_faults=sensor_faults, sampling=sampling)
    root = os.path.join(cache_dir or default_cache_dir(), cache_version())
    path = os.path.join(root, "%s-%d-%s%s.npz" % (family, int(seed), "f" if sensor_faults else "n",
                                                   "" if sampling == "dense" else "-" + sampling))
    if os.path.exists(path):
        try:
            with np.load(path, allow_pickle=False) as z:
                truth = json.loads(str(z["truth"]))
                return FamilyTrace(family, seed, z["time_s"], z["temp_c"], z["clean_c"],
                                   z["ambient_c"] if truth["has_ambient_column"] else None,
                                   z["heater"] if truth["has_heater_column"] else None, truth,
                                   liquid_c=z["liquid_c"])
        except (OSError, ValueError, KeyError):
            pass                                   # a damaged entry: generate it again
    ft = generate(family, seed, sensor_faults=sensor_faults, sampling=sampling)
    os.makedirs(root, exist_ok=True)
    tmp = "%s.%d.tmp.npz" % (path[:-4], os.getpid())
    empty = np.zeros(0)
    np.savez(tmp, time_s=ft.time_s, temp_c=ft.temp_c, clean_c=ft.clean_c, liquid_c=ft.liquid_c,
             ambient_c=ft.ambient_c if ft.ambient_c is not None else empty,
             heater=ft.heater if ft.heater is not None else empty,
             truth=np.array(json.dumps(ft.truth, sort_keys=True)))
    os.replace(tmp, path)
    return ft

