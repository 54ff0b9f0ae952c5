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

Two figures need the per-row status names (``"tracking"``, ``"arrived"``, ...)
and, for the first, the scenario's truth:

- ``early_arrival``: number of rows (anywhere in the trace) whose status is
  ``"arrived"`` while the TRUE noise-free sensor signal is still short of the
  target by more than ``max(0.3 C, 3 x noise sd)`` (issue 9's definition: an
  honest arrival never comes while the liquid is clearly on the starting side);
- ``first_answer_s``: seconds from the first row to the first row whose status
  is ``"tracking"`` (an ETA shown); None when no row is.

Figures are per row (readings), not per second. Per kind and aggregate,
:func:`summarise` takes the median over traces of the per-trace median, p90,
time-to-trust and first answer (a trace never answered counts as infinitely
late), the mean over traces of coverage and no-estimate fraction, and the sum
of early arrivals with the number of traces that had any.
"""
import math

import numpy as np

WARMUP_S = 60.0
FLOOR_S = 30.0
TRUST_TOLERANCE = 0.10
EARLY_MARGIN_C = 0.3      # issue 9: arrival is early when short by > max(0.3 C, 3 sd)
EARLY_SD_FACTOR = 3.0


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


def _status_name(s):
    """A status given as name or core code -> lower-case name (None stays None)."""
    if s is None or isinstance(s, str):
        return s
    from tinytherm.status import status_name
    return status_name(int(s))


def early_arrivals(status, true_signal_c, target_c, noise_sd_c, direction=None):
    """Rows reported ``"arrived"`` while the true signal is clearly short of target.

    ``status``: per-row status names (or core codes); ``true_signal_c``: the
    noise-free sensor signal at each row, deg C; ``target_c`` deg C;
    ``noise_sd_c``: the sensor's noise standard deviation, deg C;
    ``direction``: ``"cooling"``/``-1`` or ``"heating"``/``+1``, by default
    from the side of the target the first true value lies on. Returns an int.
    """
    sig = np.asarray(true_signal_c, dtype=float)
    if direction is None:
        direction = -1 if sig[0] > target_c else 1
    elif isinstance(direction, str):
        direction = -1 if direction == "cooling" else 1
    margin = max(EARLY_MARGIN_C, EARLY_SD_FACTOR * float(noise_sd_c))
    # cooling: short of the target means still above it; heating: below it
    short = (sig - target_c) * -direction > margin
    arrived = np.array([_status_name(s) == "arrived" for s in status], dtype=bool)
    return int(np.count_nonzero(arrived & short))


def first_answer_s(time_s, status):
    """Seconds from the first row to the first ``"tracking"`` row, or None."""
    for t, s in zip(time_s, status):
        if _status_name(s) == "tracking":
            return float(t) - float(time_s[0])
    return None


def trace_metrics(time_s, eta_s, crossing_s, eta_low_s=None, eta_high_s=None,
                  warmup_s=WARMUP_S, floor_s=FLOOR_S, tolerance=TRUST_TOLERANCE,
                  status=None, true_signal_c=None, target_c=None, noise_sd_c=None,
                  direction=None):
    """Metrics of one trace (see module docstring); dict of floats or None.

    ``time_s``: per-row seconds; ``eta_s``, ``eta_low_s``, ``eta_high_s``:
    per-row seconds or None; ``crossing_s``: true crossing, seconds on the
    same clock, or None. The error figures are None when no row is evaluated
    (no crossing, or the crossing falls inside the warm-up).

    Optional: ``status`` (per-row status names or core codes) gives
    ``first_answer_s`` (seconds); with it, ``true_signal_c`` (noise-free
    sensor signal per row, deg C), ``target_c`` (deg C) and ``noise_sd_c``
    (deg C) give ``early_arrival`` (a row count; see :func:`early_arrivals`).
    Without them these two figures are None.
    """
    keys = ("median_rel_error", "p90_rel_error", "time_to_trust", "coverage",
            "no_estimate_fraction", "early_arrival", "first_answer_s")
    out = dict.fromkeys(keys)
    out["evaluated_rows"] = 0
    out["status_given"] = status is not None
    if status is not None:
        out["first_answer_s"] = first_answer_s(time_s, status)
        if true_signal_c is not None and target_c is not None and noise_sd_c is not None:
            out["early_arrival"] = early_arrivals(status, true_signal_c, target_c,
                                                  noise_sd_c, direction)
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
    """Combine per-trace metric dicts: medians of error/trust, means of the rest.

    ``first_answer_s``: median over traces in seconds, a trace with status
    given but never ``"tracking"`` counting as infinitely late (so the median
    is ``inf`` when more than half never answer); ``never_answered``: the
    number of such traces. ``early_arrival``: total rows over traces;
    ``early_traces``: traces with at least one. These are None when no trace
    carried the inputs.
    """
    first = [math.inf if m["first_answer_s"] is None else m["first_answer_s"]
             for m in per_trace if m.get("status_given")]
    early = [m["early_arrival"] for m in per_trace if m.get("early_arrival") is not None]
    return {
        "traces": len(per_trace),
        "median_rel_error": _median([m["median_rel_error"] for m in per_trace]),
        "p90_rel_error": _median([m["p90_rel_error"] for m in per_trace]),
        "time_to_trust": _median([m["time_to_trust"] for m in per_trace]),
        "coverage": _mean([m["coverage"] for m in per_trace]),
        "no_estimate_fraction": _mean([m["no_estimate_fraction"] for m in per_trace]),
        "first_answer_s": float(np.median(first)) if first else None,
        "never_answered": sum(1 for v in first if v == math.inf) if first else None,
        "early_arrival": int(sum(early)) if early else None,
        "early_traces": sum(1 for v in early if v > 0) if early else None,
    }
