"""Per-trace accuracy figures for the fleet replay, in memory that does not grow.

A :class:`TraceScorer` takes the prediction rows of one replay as they come
and gives the figures of :func:`host_sim.replay.metrics.trace_metrics` (same
definitions, scored on the answers a device shows: status tracking or
arrived) plus ``early_arrival`` and ``first_answer_s``:

- up to ``exact_rows`` evaluated rows (default 250,000) are kept in compact
  float arrays and scored by :func:`host_sim.replay.metrics.trace_metrics` itself;
- past that, the kept rows are folded into running counts and a histogram of
  the relative error with 1,000 logarithmic bins per decade (1e-6 .. 1e4),
  and the median and p90 are read off the histogram (each bin spans 0.23 %,
  so the figures are within 0.12 % of the exact ones); ``metrics_exact`` is
  then False. Counts (coverage, no-estimate, early arrivals) and
  time-to-trust stay exact.

Without the true noise-free signal of a field trace, ``early_arrival`` uses
the trace's own 5-reading running median (the smoothing that
:func:`host_sim.replay.replay.crossing_from_trace` uses) as the signal: rows with
status ``arrived`` while that median is short of the target by more than
``max(0.3 C, 3 x noise_sd_c)`` (:func:`host_sim.replay.metrics.early_arrivals`,
counted in blocks of rows). ``noise_sd_c`` defaults to 0 (margin 0.3 C).

The elapsed-fraction profile (:attr:`TraceScorer.profile`) counts shown
answers' relative errors in :data:`PROFILE_BINS` bins of the elapsed
fraction of the approach and a coarse logarithmic error histogram
(:data:`PROFILE_PER_DECADE` bins per decade); fleets add these counts for
the error-against-elapsed-fraction plot.
"""
import math
from array import array

import numpy as np

from host_sim.replay import metrics
from host_sim.replay.replay import RunningMedian

EXACT_ROWS = 250000
HIST_LOW = -6.0            # log10 of the smallest binned relative error
HIST_PER_DECADE = 1000
HIST_DECADES = 10
PROFILE_BINS = 10          # elapsed-fraction bins of the approach
PROFILE_LOW = -4.0         # log10 of the lowest profile error bin
PROFILE_PER_DECADE = 20
PROFILE_DECADES = 6
SHOWN = ("tracking", "arrived")
_BLOCK = 4096              # rows per early-arrival block


def profile_edges():
    """Edges of the profile's error bins (relative error, dimensionless)."""
    n = PROFILE_PER_DECADE * PROFILE_DECADES
    return 10.0 ** (PROFILE_LOW + np.arange(n + 1) / PROFILE_PER_DECADE)


def profile_bin(rel):
    """Index of a relative error in the profile histogram (0 and last are open)."""
    n = PROFILE_PER_DECADE * PROFILE_DECADES
    if rel <= 0.0:
        return 0
    i = int(math.floor((math.log10(rel) - PROFILE_LOW) * PROFILE_PER_DECADE)) + 1
    return min(max(i, 0), n + 1)


def profile_quantile(counts, q):
    """Quantile ``q`` (0..1) of a profile error histogram, or None if empty.

    Returns the geometric centre of the bin holding the quantile (the open
    end bins return their inner edge).
    """
    counts = np.asarray(counts)
    total = counts.sum()
    if total == 0:
        return None
    i = int(np.searchsorted(np.cumsum(counts), q * total, side="left"))
    edges = profile_edges()
    if i == 0:
        return float(edges[0])
    if i >= len(edges):
        return float(edges[-1])
    return float(math.sqrt(edges[i - 1] * edges[i]))


class _Binned:
    """Running form of the trace_metrics error figures (for very long traces)."""

    def __init__(self, t0, crossing_s):
        self.t0 = t0
        self.crossing_s = crossing_s
        self.n_eval = 0
        self.n_has = 0
        self.n_interval = 0
        self.n_inside = 0
        self.zero = 0
        self.hist = np.zeros(HIST_PER_DECADE * HIST_DECADES + 2, dtype=np.int64)
        self.trust_start = None   # time of the first good row after the last bad one
        self.last_good = False

    def add(self, t, eta, low, high):
        rem = self.crossing_s - t
        self.n_eval += 1
        if math.isnan(eta):
            self.trust_start, self.last_good = None, False
            return
        rel = abs(eta - rem) / max(rem, metrics.FLOOR_S)
        self.n_has += 1
        if rel <= 0.0:
            self.hist[0] += 1
        else:
            i = int(math.floor((math.log10(rel) - HIST_LOW) * HIST_PER_DECADE)) + 1
            self.hist[min(max(i, 0), len(self.hist) - 1)] += 1
        if rel <= metrics.TRUST_TOLERANCE:
            if not self.last_good:
                self.trust_start = t
            self.last_good = True
        else:
            self.trust_start, self.last_good = None, False
        if not math.isnan(low):
            self.n_interval += 1
            hi = high if not math.isnan(high) else math.inf
            if low <= rem <= hi:
                self.n_inside += 1

    def _quantile(self, q):
        # np.percentile's rank (linear method) q * (n - 1), read off the bins
        rank = q * (self.n_has - 1)
        i = int(np.searchsorted(np.cumsum(self.hist), math.floor(rank) + 1, side="left"))
        if i == 0:
            return 0.0
        lo = HIST_LOW + (i - 1) / HIST_PER_DECADE
        return float(10.0 ** (lo + 0.5 / HIST_PER_DECADE))

    def figures(self):
        out = {"median_rel_error": None, "p90_rel_error": None, "time_to_trust": None,
               "coverage": None, "no_estimate_fraction": None, "evaluated_rows": self.n_eval}
        if self.n_eval == 0:
            return out
        out["no_estimate_fraction"] = 1.0 - self.n_has / self.n_eval
        if self.n_has:
            out["median_rel_error"] = self._quantile(0.5)
            out["p90_rel_error"] = self._quantile(0.9)
        approach = self.crossing_s - self.t0
        if self.last_good:
            out["time_to_trust"] = (self.trust_start - self.t0) / approach
        else:
            out["time_to_trust"] = 1.0
        if self.n_interval:
            out["coverage"] = self.n_inside / self.n_interval
        return out


class TraceScorer:
    """Figures of one replay from its prediction rows, fed one at a time.

    ``target_c`` deg C; ``crossing_s``: the trace's crossing of the target
    (seconds, the trace's clock) or None; ``noise_sd_c``: sensor noise sd,
    deg C, for the early-arrival margin; ``exact_rows``: evaluated rows kept
    for the exact figures (see the module docstring).
    """

    def __init__(self, target_c, crossing_s=None, noise_sd_c=0.0, exact_rows=EXACT_ROWS):
        self.target_c = float(target_c)
        self.crossing_s = crossing_s
        self.noise_sd_c = float(noise_sd_c or 0.0)
        self.exact_rows = exact_rows
        self.rows = 0
        self.t0 = None
        self.first_answer_s = None
        self.early_arrival = 0
        self._median = RunningMedian(5)
        self._pending = []          # statuses waiting for their running median
        self._block_status = []
        self._block_signal = []
        self._direction = None
        self._keep = [array("d") for _ in range(4)]   # t, eta, low, high (NaN = none)
        self._binned = None
        self.profile = {}            # (fraction bin, error bin) -> count

    def add(self, row):
        """Feed one prediction dict (keys of :attr:`host_sim.replay.replay.ReplayResult.rows`)."""
        t = row["time_s"]
        status = row["status"]
        if self.t0 is None:
            self.t0 = t
        self.rows += 1
        if self.first_answer_s is None and status == "tracking":
            self.first_answer_s = t - self.t0
        self._pending.append(status)
        got = self._median.push(t, row["temp_c"])
        if got is not None:
            self._signal(got[1])
        c = self.crossing_s
        if c is None or not (self.t0 + metrics.WARMUP_S <= t < c):
            return
        shown = status in SHOWN
        eta = row["eta_s"] if shown and row["eta_s"] is not None else math.nan
        low = row["eta_low_s"] if shown and row["eta_low_s"] is not None else math.nan
        high = row["eta_high_s"] if shown and row["eta_high_s"] is not None else math.nan
        if not math.isnan(eta):
            rem = c - t
            rel = abs(eta - rem) / max(rem, metrics.FLOOR_S)
            fb = min(int((t - self.t0) / (c - self.t0) * PROFILE_BINS), PROFILE_BINS - 1)
            key = (fb, profile_bin(rel))
            self.profile[key] = self.profile.get(key, 0) + 1
        if self._binned is not None:
            self._binned.add(t, eta, low, high)
            return
        for buf, v in zip(self._keep, (t, eta, low, high)):
            buf.append(v)
        if len(self._keep[0]) > self.exact_rows:
            self._binned = _Binned(self.t0, c)
            for vals in zip(*self._keep):
                self._binned.add(*vals)
            self._keep = None

    def _signal(self, med):
        status = self._pending.pop(0)
        if self._direction is None:
            # metrics.early_arrivals' default: the side the first value lies on
            self._direction = -1 if med > self.target_c else 1
        self._block_status.append(status)
        self._block_signal.append(med)
        if len(self._block_status) >= _BLOCK:
            self._flush()

    def _flush(self):
        if self._block_status:
            self.early_arrival += metrics.early_arrivals(
                self._block_status, self._block_signal, self.target_c, self.noise_sd_c,
                self._direction)
        self._block_status, self._block_signal = [], []

    def result(self):
        """Dict: the trace_metrics figures, ``early_arrival`` (rows),
        ``first_answer_s`` (s or None), ``rows``, ``metrics_exact`` (bool)."""
        for _, med in self._median.finish():
            self._signal(med)
        self._flush()
        out = {"rows": self.rows, "early_arrival": self.early_arrival,
               "first_answer_s": self.first_answer_s}
        if self._binned is not None:
            out.update(self._binned.figures())
            out["metrics_exact"] = False
            return out
        out["metrics_exact"] = True
        t, eta, low, high = (np.frombuffer(b, dtype=float) if len(b) else np.zeros(0)
                             for b in self._keep)
        if self.crossing_s is None or self.t0 is None:
            figs = metrics.trace_metrics([0.0], [None], None)
        else:
            # the first row fixes the warm-up and the approach; it is never evaluated
            figs = metrics.trace_metrics(
                np.concatenate([[self.t0], t]), np.concatenate([[math.nan], eta]),
                self.crossing_s, np.concatenate([[math.nan], low]),
                np.concatenate([[math.nan], high]))
        for key in ("median_rel_error", "p90_rel_error", "time_to_trust", "coverage",
                    "no_estimate_fraction", "evaluated_rows"):
            out[key] = figs[key]
        return out
