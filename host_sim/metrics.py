"""Accuracy metrics of a time-to-target answer against the true crossing time.

For one trace with readings at ``time_s`` and a true crossing at ``crossing_s``
(seconds, same clock), the *approach* is ``[time_s[0], crossing_s)``. Rows in
the approach after a warm-up (default 60 s) are *evaluated*. At an evaluated
row with an estimate ``eta`` (seconds from that reading) and true remaining
time ``rem = crossing_s - t``:

- relative error ``|eta - rem| / max(rem, 30 s)``;
- ``median_rel_error``, ``p90_rel_error``: over evaluated rows with an estimate;
- ``time_to_trust``: elapsed fraction of the approach, ``(t* - t0) / (crossing
  - t0)``, where ``t*`` is the first evaluated row from which every later
  evaluated row has an estimate within 10 %; 1.0 when the last evaluated row
  is not within 10 %;
- ``coverage``: fraction of evaluated rows with an interval for which
  ``eta_low <= rem <= eta_high`` (a missing or infinite upper bound counts as
  unbounded);
- ``no_estimate_fraction``: fraction of evaluated rows without an estimate.

Figures are per row (readings), not per second. Per kind and aggregate,
:func:`summarise` takes the median over traces of the per-trace median, p90
and time-to-trust, and the mean over traces of coverage and no-estimate
fraction.
"""
import math

import numpy as np

WARMUP_S = 60.0
FLOOR_S = 30.0
TRUST_TOLERANCE = 0.10


def _as_array(values):
    """List with None -> NaN as a float numpy array."""
    return np.array([math.nan if v is None else float(v) for v in values], dtype=float)


def relative_errors(time_s, eta_s, crossing_s, warmup_s=WARMUP_S, floor_s=FLOOR_S):
    """Evaluated-row mask and relative errors (NaN where no estimate).

    Returns ``(mask, rel_err, remaining_s)``; arrays over all rows, the error
    and remaining time meaningful only where ``mask``.
    """
    t = np.asarray(time_s, dtype=float)
    eta = _as_array(eta_s)
    remaining = crossing_s - t
    mask = (t >= t[0] + warmup_s) & (t < crossing_s)
    rel = np.abs(eta - remaining) / np.maximum(remaining, floor_s)
    return mask, rel, remaining


def trace_metrics(time_s, eta_s, crossing_s, eta_low_s=None, eta_high_s=None,
                  warmup_s=WARMUP_S, floor_s=FLOOR_S, tolerance=TRUST_TOLERANCE):
    """Metrics of one trace (see module docstring); dict of floats or None.

    ``eta_s``, ``eta_low_s``, ``eta_high_s``: per-row seconds or None.
    Returns None for every figure when no row is evaluated (no crossing, or
    the crossing falls inside the warm-up).
    """
    keys = ("median_rel_error", "p90_rel_error", "time_to_trust", "coverage",
            "no_estimate_fraction")
    out = dict.fromkeys(keys)
    out["evaluated_rows"] = 0
    if crossing_s is None:
        return out
    t = np.asarray(time_s, dtype=float)
    mask, rel, remaining = relative_errors(t, eta_s, crossing_s, warmup_s, floor_s)
    n_eval = int(mask.sum())
    out["evaluated_rows"] = n_eval
    if n_eval == 0:
        return out
    rel_e = rel[mask]
    has = np.isfinite(rel_e)
    out["no_estimate_fraction"] = float(1.0 - has.mean())
    if has.any():
        out["median_rel_error"] = float(np.median(rel_e[has]))
        out["p90_rel_error"] = float(np.percentile(rel_e[has], 90))
    good = has & (rel_e <= tolerance)
    t_e = t[mask]
    approach = crossing_s - t[0]
    if good[-1]:
        bad = np.nonzero(~good)[0]
        first = 0 if len(bad) == 0 else bad[-1] + 1
        out["time_to_trust"] = float((t_e[first] - t[0]) / approach)
    else:
        out["time_to_trust"] = 1.0
    if eta_low_s is not None and eta_high_s is not None:
        low = _as_array(eta_low_s)[mask]
        high = _as_array(eta_high_s)[mask]
        rem = remaining[mask]
        with_interval = has & np.isfinite(low)
        if with_interval.any():
            hi = np.where(np.isfinite(high), high, math.inf)
            inside = (low <= rem) & (rem <= hi)
            out["coverage"] = float(inside[with_interval].mean())
    return out


def _median(values):
    vals = [v for v in values if v is not None]
    return float(np.median(vals)) if vals else None


def _mean(values):
    vals = [v for v in values if v is not None]
    return float(np.mean(vals)) if vals else None


def summarise(per_trace):
    """Combine per-trace metric dicts: medians of error/trust, means of the rest."""
    return {
        "traces": len(per_trace),
        "median_rel_error": _median([m["median_rel_error"] for m in per_trace]),
        "p90_rel_error": _median([m["p90_rel_error"] for m in per_trace]),
        "time_to_trust": _median([m["time_to_trust"] for m in per_trace]),
        "coverage": _mean([m["coverage"] for m in per_trace]),
        "no_estimate_fraction": _mean([m["no_estimate_fraction"] for m in per_trace]),
    }


def format_metrics(m):
    """One-line human summary of a metrics dict."""
    def f(key, fmt):
        v = m.get(key)
        return "n/a" if v is None else fmt % v
    return ("median rel. error %s, p90 %s, time-to-trust %s of the approach, "
            "interval coverage %s, no estimate on %s of the readings"
            % (f("median_rel_error", "%.3f"), f("p90_rel_error", "%.3f"),
               f("time_to_trust", "%.2f"), f("coverage", "%.2f"),
               f("no_estimate_fraction", "%.2f")))
