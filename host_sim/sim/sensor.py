"""The sensor model: sampling times with jitter, noise and quantisation, faults; truth helpers.

A reading is the noise-free sensor signal plus Gaussian noise, rounded to the
probe's step: ``round((s(t) + N(0, sd)) / q) * q``. Faults (spikes, a stuck
stretch, dropouts) are drawn with the rates of a :class:`FaultRates` table and
applied only when faults are enabled; their draws happen either way, so a
trace with and without faults shares its noise.
"""
import numpy as np

QUANTUM_C = 0.0625               # 12-bit digital sensor step (common practice, no source)


def sample_times(rng, interval_s, horizon_s, jitter, jitter_scale=1.0):
    """Reading times 0, dt, 2 dt, ... up to ``horizon_s``; each after the first moved by
    ``U(-jitter, jitter) * interval_s * jitter_scale`` seconds."""
    n = int(horizon_s / interval_s) + 1
    t = np.arange(n) * interval_s
    t[1:] += rng.uniform(-jitter, jitter, n - 1) * interval_s * jitter_scale
    return t


def quantised(rng, clean_c, sd_c, quantum_c, n=None):
    """Readings (deg C): ``round((clean + N(0, sd)) / q) * q``; ``n`` draws (default len(clean))."""
    noise = rng.normal(0.0, sd_c, len(clean_c) if n is None else n)
    return np.round((clean_c + noise) / quantum_c) * quantum_c


class FaultRates:
    """How often and how long faults are, for one table of traces.

    ``spike_chance`` (a trace has spikes), ``spike_counts_below`` (1 to this
    minus one spikes), ``stuck_chance``, ``stuck_rows(rng, interval_s)`` (length
    of the stuck stretch in readings), ``gap_chance``, ``gap_end_margin``
    (dropouts start at least this many readings before the end),
    ``gap_rows(rng, n_gaps, interval_s)`` (dropout lengths in readings),
    ``min_rows`` (no faults on traces this short), ``keep_last`` (the last
    reading is never dropped).
    """

    def __init__(self, spike_chance, spike_counts_below, stuck_chance, stuck_rows, gap_chance,
                 gap_end_margin, gap_rows, min_rows=0, keep_last=False):
        self.spike_chance = spike_chance
        self.spike_counts_below = spike_counts_below
        self.stuck_chance = stuck_chance
        self.stuck_rows = stuck_rows
        self.gap_chance = gap_chance
        self.gap_end_margin = gap_end_margin
        self.gap_rows = gap_rows
        self.min_rows = min_rows
        self.keep_last = keep_last


def add_faults(rng, rates, readings, times, quantum_c, interval_s, enabled):
    """Draw faults for ``len(times)`` readings and, when ``enabled``, apply them.

    Changes ``readings`` in place (spikes, the stuck stretch); returns ``(keep,
    faults)``: a bool mask of the readings not dropped, and the truth's record
    ``{"spikes": [t], "stuck": [t0, t1] or None, "dropouts": [[t0, t1]]}`` (s).
    """
    n = len(times)
    faults = {"spikes": [], "stuck": None, "dropouts": []}
    keep = np.ones(n, dtype=bool)
    n_spikes = int(rng.integers(1, rates.spike_counts_below)) \
        if rng.uniform() < rates.spike_chance else 0
    spike_at = rng.integers(5, max(n - 1, 6), n_spikes) if n_spikes else []
    spike_size = rng.uniform(3.0, 20.0, n_spikes) * rng.choice([-1.0, 1.0], n_spikes)
    stuck = rng.uniform() < rates.stuck_chance
    stuck_start = int(rng.integers(5, max(6, n // 2)))
    stuck_len = rates.stuck_rows(rng, interval_s)
    n_gaps = int(rng.integers(1, 4)) if rng.uniform() < rates.gap_chance else 0
    gap_at = rng.integers(5, max(n - rates.gap_end_margin, 6), n_gaps) if n_gaps else []
    gap_len = rates.gap_rows(rng, n_gaps, interval_s) if n_gaps else []
    if enabled and n > rates.min_rows:
        for i, s in zip(spike_at, spike_size):
            if i < n:
                readings[i] = np.round((readings[i] + s) / quantum_c) * quantum_c
                faults["spikes"].append(float(times[i]))
        if stuck:
            j = min(stuck_start + stuck_len, n)
            readings[stuck_start:j] = readings[stuck_start]
            faults["stuck"] = [float(times[stuck_start]), float(times[j - 1])]
        for i, g in zip(gap_at, gap_len):
            keep[i:i + g] = False
            faults["dropouts"].append([float(times[i]), float(times[min(i + g, n) - 1])])
        keep[0] = True
        if rates.keep_last:
            keep[-1] = True
    return keep, faults


def plain_params(p):
    """The drawn parameters for a truth JSON: numbers as floats, flags and names as they are."""
    return {key: (float(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else v)
            for key, v in p.items()}


def event_records(events):
    """``[(time_s, name)]`` -> ``[{"time_s": t, "event": name}]`` for a truth JSON."""
    return [{"time_s": float(t), "event": e} for t, e in events]
