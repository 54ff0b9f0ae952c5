"""Per-trace accuracy figures for the fleet replay, in memory that does not grow.

A :class:`TraceScorer` takes the prediction rows of one replay as they come
and gives the figures of :func:`host_sim.replay.metrics.trace_metrics` (same
definitions, scored on the answers a device shows: status tracking or
arrived) plus ``early_arrival`` and ``first_answer_s``:

- the evaluated rows' time, ETA and interval go to a
  :class:`host_sim.replay.spool.ColumnSpool` (a block in memory, the rest in a
  temporary file) and are scored by :func:`host_sim.replay.metrics.error_figures`,
  the same formulas as ``trace_metrics``: exact at any trace length, in memory
  that does not grow (``metrics_exact`` is always True).

Without the true noise-free signal of a field trace, ``early_arrival`` uses
the trace's own 5-reading running median (the smoothing that
:func:`host_sim.replay.replay.crossing_from_trace` uses) as the signal: rows with
status ``arrived`` while that median is short of the target by more than
``max(0.3 C, 3 x noise_sd_c)`` (:func:`host_sim.replay.metrics.early_arrivals`,
counted in blocks of rows). ``noise_sd_c`` defaults to 0 (margin 0.3 C). The
side the liquid starts on is the approach's when the product says it
(``direction``: -1 cools, +1 heats, as ``predict``'s ``approach``); otherwise
the side of the running median at the first ``tracking`` row, where the
device starts answering (a probe that reads the room before the pour would
otherwise make every honest arrival of a cooling drink count as early).

The elapsed-fraction profile (:attr:`TraceScorer.profile`) counts shown
answers' relative errors in :data:`PROFILE_BINS` bins of the elapsed
fraction of the approach and a coarse logarithmic error histogram
(:data:`PROFILE_PER_DECADE` bins per decade); fleets add these counts for
the error-against-elapsed-fraction plot.
"""
import math

import numpy as np

from host_sim.replay import metrics
from host_sim.replay.replay import RunningMedian
from host_sim.replay.spool import ColumnSpool

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


class TraceScorer:
    """Figures of one replay from its prediction rows, fed one at a time.

    ``target_c`` deg C; ``crossing_s``: the trace's crossing of the target
    (seconds, the trace's clock) or None; ``noise_sd_c``: sensor noise sd,
    deg C, for the early-arrival margin; ``direction``: -1 (cools to the
    target), +1 (heats), or 0/None (the side at the first ``tracking`` row).
    """

    def __init__(self, target_c, crossing_s=None, noise_sd_c=0.0, direction=None):
        self.target_c = float(target_c)
        self.crossing_s = crossing_s
        self.noise_sd_c = float(noise_sd_c or 0.0)
        self.rows = 0
        self.t0 = None
        self.first_answer_s = None
        self.early_arrival = 0
        self._median = RunningMedian(5)
        self._pending = []          # statuses waiting for their running median
        self._block_status = []
        self._block_signal = []
        self._direction = direction or None
        self._first_side = None
        self._keep = ColumnSpool(4)  # evaluated rows: t, eta, low, high (NaN = none)
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
        self._keep.append(t, eta, low, high)

    def _signal(self, med):
        status = self._pending.pop(0)
        side = -1 if med > self.target_c else 1     # above the target: it has to cool
        if self._first_side is None:
            self._first_side = side
        if self._direction is None and status in SHOWN:
            # the approach the device answers; an arrival before any answer: the first side
            self._direction = side if status == "tracking" else self._first_side
        self._block_status.append(status)
        self._block_signal.append(med)
        if len(self._block_status) >= _BLOCK:
            self._flush()

    def _flush(self):
        if self._block_status:
            self.early_arrival += metrics.early_arrivals(
                self._block_status, self._block_signal, self.target_c, self.noise_sd_c,
                self._direction or self._first_side)
        self._block_status, self._block_signal = [], []

    def result(self):
        """Dict: the trace_metrics figures, ``early_arrival`` (rows),
        ``first_answer_s`` (s or None), ``rows``, ``metrics_exact`` (True)."""
        for _, med in self._median.finish():
            self._signal(med)
        self._flush()
        out = {"rows": self.rows, "early_arrival": self.early_arrival,
               "first_answer_s": self.first_answer_s, "metrics_exact": True}
        if self.crossing_s is None or self.t0 is None:
            figs = metrics.trace_metrics([0.0], [None], None)
        else:
            def chunks():
                # the first row fixes the warm-up and the approach; it is never evaluated
                yield tuple(np.array([v]) for v in (self.t0, math.nan, math.nan, math.nan))
                yield from self._keep.chunks()
            figs = metrics.error_figures(chunks, self.crossing_s)
        self._keep.close()
        for key in ("median_rel_error", "p90_rel_error", "time_to_trust", "coverage",
                    "no_estimate_fraction", "evaluated_rows"):
            out[key] = figs[key]
        return out
