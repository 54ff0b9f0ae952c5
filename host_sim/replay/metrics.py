"""Accuracy metrics of a time-to-target answer against the true crossing time.

For one trace with readings at ``time_s`` and a true crossing at ``crossing_s``
(seconds, same clock), the *approach* is ``[start, crossing_s)``, ``start``
the first reading's time or, where something no one can foresee came first
(a top-up), the ``approach_start_s`` the truth gives. Rows in the approach
after a warm-up (default 60 s) are *evaluated*. At an evaluated
row with an estimate ``eta`` (seconds from that reading) and true remaining
time ``rem = crossing_s - t``:

- relative error ``|eta - rem| / max(rem, 30 s)``;
- ``median_rel_error``, ``p90_rel_error``: over evaluated rows with an estimate;
- ``time_to_trust``: elapsed fraction of the approach, ``(t* - t0) / (crossing
  - t0)``, where ``t*`` is the first evaluated row from which every later
  evaluated row has an estimate within 10 %; 1.0 when the last evaluated row
  is not within 10 % (never trusted). Beside it, ``trusted_for_s`` is
  ``crossing - t*`` (None when never), and ``trust_miss_before_s`` and
  ``trust_miss_s`` say what broke trust last: the remaining time at the last
  evaluated row not within 10 % and how far off its estimate was, seconds
  (``|eta - rem|``; None when it had no estimate; both None when no row
  missed). A fraction near 1 is then read as "trusted only for the last
  seconds", not confused with "never";
- ``coverage``: fraction of evaluated rows with an interval for which
  ``eta_low <= rem <= eta_high`` (a missing or infinite upper bound counts as
  unbounded);
- ``no_estimate_fraction``: fraction of evaluated rows without an estimate.

Two figures need the per-row status names (``"tracking"``, ``"arrived"``, ...)
and, for the first, the scenario's truth:

- ``early_arrival``: number of rows (anywhere in the trace) whose status is
  ``"arrived"`` while the TRUE signal is still short of the target by more
  than ``max(0.3 C, 3 x noise sd)`` (issue 9's definition: an honest arrival
  never comes while the liquid is clearly on the starting side). Where the
  truth knows the liquid's own temperature, the liquid is the judge: the
  families benchmark passes the liquid per row and, as the target, the
  liquid's temperature at the true crossing (what it is when the probe
  reads the target). The probe's noise-free signal is the wrong judge where
  it lags a jump: after a top-up the probe rises through the target while
  the drink is far hotter, and a probe-only judge calls that arrival honest.
  Recordings without the liquid's temperature pass the smoothed reading.
  Where the truth knows the pours, an early row that no reading could yet
  show (until two consecutive readings since the last pour have the
  noise-free probe beyond the same margin of its value before it: the
  lagging probe has not moved, or one reading cannot be told from a spike)
  is counted apart, in ``early_unseen``: such a row is an arrival shown
  correctly before the pour and not yet withdrawn, and no estimator fed by
  that probe can withdraw it sooner;
- ``first_answer_s``: seconds from the first row to the first row whose status
  is ``"tracking"`` (an ETA shown); None when no row is;
- ``no_estimate_from_third``: fraction of the approach's rows from its third
  reading on (readings counted from the approach's start, warm-up ignored)
  without an answer shown (status not ``"tracking"``/``"arrived"``);
  ``first_answer_reading``: the number (1 = the approach's first reading) of
  the first reading with an answer shown, None when none is. These two are
  the figures of readings minutes apart (issue 17: an answer from the third
  reading on).

Figures are per row (readings), not per second. Per kind and aggregate,
:func:`summarise` takes the median over traces of the per-trace median, p90,
time-to-trust and first answer (a trace never answered counts as infinitely
late), the mean over traces of coverage and no-estimate fraction, and the sum
of early arrivals with the number of traces that had any.

The error figures are computed once, by :func:`error_figures`, over the rows
given a block at a time: :func:`trace_metrics` hands it the whole trace as one
block, the replay CLI and the fleet hand it blocks read back from a
:class:`host_sim.replay.spool.ColumnSpool`, so a trace of millions of rows is
scored exactly in memory that does not grow with it.
"""
import math

import numpy as np

WARMUP_S = 60.0
FLOOR_S = 30.0
TRUST_TOLERANCE = 0.10
EARLY_MARGIN_C = 0.3      # issue 9: arrival is early when short by > max(0.3 C, 3 sd)
EARLY_SD_FACTOR = 3.0
SHOWN = ("tracking", "arrived")
FROM_READING = 3          # issue 17: an answer from the third reading on


def _as_array(values):
    """Values with None -> NaN as a float numpy array (a float array passes through)."""
    if isinstance(values, np.ndarray) and values.dtype.kind == "f":
        return np.asarray(values, dtype=float)
    return np.array([math.nan if v is None else float(v) for v in values], dtype=float)


def relative_errors(time_s, eta_s, crossing_s, warmup_s=WARMUP_S, floor_s=FLOOR_S,
                    start_s=None):
    """Evaluated-row mask and relative errors (NaN where no estimate).

    Returns ``(mask, rel_err, remaining_s)``; arrays over all rows, the error
    and remaining time meaningful only where ``mask``. ``start_s``: the
    trace's first time (s), by default ``time_s[0]``; give it when
    ``time_s`` is a later part of the trace.
    """
    t = np.asarray(time_s, dtype=float)
    eta = _as_array(eta_s)
    remaining = crossing_s - t
    start = t[0] if start_s is None else start_s
    mask = (t >= start + warmup_s) & (t < crossing_s)
    # |eta - rem| / max(rem, floor)
    rel = np.abs(eta - remaining) / np.maximum(remaining, floor_s)
    return mask, rel, remaining


def paired_median_rel_errors(time_s, eta_a_s, eta_b_s, crossing_s, warmup_s=WARMUP_S,
                             floor_s=FLOOR_S, approach_start_s=None):
    """Median relative errors of two methods on the rows both answer: ``(a, b)``.

    ``time_s``: per-row seconds; ``eta_a_s``, ``eta_b_s``: each method's
    per-row time to target (seconds, None or NaN where it gave none);
    ``crossing_s``: the true crossing (seconds, same clock), None for none.
    Rows are evaluated as in :func:`trace_metrics` (after the warm-up from
    ``approach_start_s``, before the crossing). Each method's own median is
    over the rows it answers, so a method that leaves the hard early rows blank
    looks better than one that answers them; this pairs them on the same rows.
    ``(None, None)`` when no evaluated row has both.
    """
    if crossing_s is None:
        return None, None
    mask, rel_a, _ = relative_errors(time_s, eta_a_s, crossing_s, warmup_s, floor_s,
                                     start_s=approach_start_s)
    _, rel_b, _ = relative_errors(time_s, eta_b_s, crossing_s, warmup_s, floor_s,
                                  start_s=approach_start_s)
    both = mask & np.isfinite(rel_a) & np.isfinite(rel_b)
    if not both.any():
        return None, None
    return float(np.median(rel_a[both])), float(np.median(rel_b[both]))


def _status_name(s):
    """A status given as name or core code -> lower-case name (None stays None)."""
    if s is None or isinstance(s, str):
        return s
    from tinytherm.status import status_name
    return status_name(int(s))


def early_margin_c(noise_sd_c):
    """The early-arrival margin, deg C: ``max(0.3 C, 3 x noise_sd_c)`` (issue 9)."""
    return max(EARLY_MARGIN_C, EARLY_SD_FACTOR * float(noise_sd_c))


def unseen_rows(time_s, probe_c, jumps_s, margin_c):
    """Rows no reading could yet tell from before a jump: a bool array.

    ``time_s``: per-row seconds; ``probe_c``: the noise-free probe signal per
    row, deg C; ``jumps_s``: times (s) at which the liquid jumped (a pour);
    ``margin_c``: deg C. A row at or after a jump is unseen until two
    consecutive readings since the jump have a noise-free probe value beyond
    ``margin_c`` of the last reading before the jump: until then the probe,
    lagging, has not shown the pour, or has shown it in one reading only,
    which no estimator can tell from a spike (the guard holds one reading
    back for that reason), so none fed by that probe can know of it.
    """
    t = np.asarray(time_s, dtype=float)
    probe = np.asarray(probe_c, dtype=float)
    out = np.zeros(len(t), dtype=bool)
    for jump in jumps_s or ():
        after = np.nonzero(t >= jump)[0]
        if len(after) == 0 or after[0] == 0:
            continue
        first = after[0]
        moved = np.abs(probe[first:] - probe[first - 1]) > margin_c
        seen_at = np.nonzero(moved[1:] & moved[:-1])[0] + 1   # the second reading beyond
        stop = first + (seen_at[0] if len(seen_at) else len(moved))
        out[first:stop] = True
    return out


def early_rows(status, true_signal_c, target_c, noise_sd_c, direction=None):
    """Bool array: rows reported ``"arrived"`` while the true signal is clearly short of target.

    Arguments as :func:`early_arrivals`.
    """
    sig = np.asarray(true_signal_c, dtype=float)
    if direction is None:
        direction = -1 if sig[0] > target_c else 1
    elif isinstance(direction, str):
        direction = -1 if direction == "cooling" else 1
    # cooling: short of the target means still above it; heating: below it
    short = (sig - target_c) * -direction > early_margin_c(noise_sd_c)
    arrived = np.array([_status_name(s) == "arrived" for s in status], dtype=bool)
    return arrived & short


def early_arrivals(status, true_signal_c, target_c, noise_sd_c, direction=None):
    """Rows reported ``"arrived"`` while the true signal is clearly short of target.

    ``status``: per-row status names (or core codes); ``true_signal_c``: the
    noise-free sensor signal at each row, deg C; ``target_c`` deg C;
    ``noise_sd_c``: the sensor's noise standard deviation, deg C;
    ``direction``: ``"cooling"``/``-1`` or ``"heating"``/``+1``, by default
    from the side of the target the first true value lies on. Returns an int.
    """
    return int(np.count_nonzero(early_rows(status, true_signal_c, target_c, noise_sd_c,
                                           direction)))


def first_answer_s(time_s, status):
    """Seconds from the first row to the first ``"tracking"`` row, or None."""
    for t, s in zip(time_s, status):
        if _status_name(s) == "tracking":
            return float(t) - float(time_s[0])
    return None


def answers_by_reading(time_s, status, crossing_s, approach_start_s=None,
                       from_reading=FROM_READING):
    """``(no_estimate_from_third, first_answer_reading)`` of one trace (module docstring).

    ``time_s``: per-row seconds; ``status``: per-row status names or core
    codes; ``crossing_s`` (None: no crossing, no fraction) and
    ``approach_start_s`` (default the first row's time): seconds.
    ``from_reading``: count rows from this reading number on. The fraction is
    None when the approach has fewer readings.
    """
    t = np.asarray(time_s, dtype=float)
    start = t[0] if approach_start_s is None else approach_start_s
    rows = np.nonzero(t >= start)[0]
    shown = [_status_name(status[i]) in SHOWN for i in rows]
    first = next((k + 1 for k, s in enumerate(shown) if s), None)
    counted = [s for k, s in enumerate(shown)
               if k + 1 >= from_reading and crossing_s is not None and t[rows[k]] < crossing_s]
    frac = float(1.0 - sum(counted) / len(counted)) if counted else None
    return frac, first


def trace_metrics(time_s, eta_s, crossing_s, eta_low_s=None, eta_high_s=None,
                  warmup_s=WARMUP_S, floor_s=FLOOR_S, tolerance=TRUST_TOLERANCE,
                  status=None, true_signal_c=None, target_c=None, noise_sd_c=None,
                  direction=None, approach_start_s=None, probe_c=None, jumps_s=None):
    """Metrics of one trace (see module docstring); dict of floats or None.

    ``time_s``: per-row seconds; ``eta_s``, ``eta_low_s``, ``eta_high_s``:
    per-row seconds or None; ``crossing_s``: true crossing, seconds on the
    same clock, or None. The error figures are None when no row is evaluated
    (no crossing, or the crossing falls inside the warm-up).

    Optional: ``status`` (per-row status names or core codes) gives
    ``first_answer_s`` (seconds); with it, ``true_signal_c`` (noise-free
    sensor signal per row, deg C), ``target_c`` (deg C) and ``noise_sd_c``
    (deg C) give ``early_arrival`` (a row count; see :func:`early_arrivals`);
    ``first_answer_reading`` and, with ``crossing_s``, ``no_estimate_from_third``
    (:func:`answers_by_reading`). Without them these figures are None.
    ``approach_start_s``: where the approach starts (seconds; default the
    first row), e.g. the last top-up. ``jumps_s`` (times of pours, s) with
    ``probe_c`` (the noise-free probe per row, deg C): early rows a reading
    could not yet show (:func:`unseen_rows`) are counted apart, as
    ``early_unseen``, and not in ``early_arrival``.
    """
    keys = ("median_rel_error", "p90_rel_error", "time_to_trust", "coverage",
            "no_estimate_fraction", "early_arrival", "first_answer_s",
            "no_estimate_from_third", "first_answer_reading", "early_unseen")
    out = dict.fromkeys(keys)
    out["evaluated_rows"] = 0
    out["status_given"] = status is not None
    if status is not None:
        out["first_answer_s"] = first_answer_s(time_s, status)
        if true_signal_c is not None and target_c is not None and noise_sd_c is not None:
            early = early_rows(status, true_signal_c, target_c, noise_sd_c, direction)
            if jumps_s:
                unseen = early & unseen_rows(time_s, probe_c, jumps_s,
                                             early_margin_c(noise_sd_c))
                out["early_unseen"] = int(np.count_nonzero(unseen))
                early = early & ~unseen
            out["early_arrival"] = int(np.count_nonzero(early))
    if status is not None:
        out["no_estimate_from_third"], out["first_answer_reading"] = answers_by_reading(
            time_s, status, crossing_s, approach_start_s)
    if crossing_s is None:
        return out
    intervals = eta_low_s is not None and eta_high_s is not None
    rows = (np.asarray(time_s, dtype=float), _as_array(eta_s),
            _as_array(eta_low_s) if intervals else None,
            _as_array(eta_high_s) if intervals else None)
    out.update(error_figures(lambda: iter((rows,)), crossing_s, warmup_s, floor_s, tolerance,
                             approach_start_s))
    return out


def error_figures(chunks, crossing_s, warmup_s=WARMUP_S, floor_s=FLOOR_S,
                  tolerance=TRUST_TOLERANCE, approach_start_s=None):
    """The error figures of :func:`trace_metrics` from rows given a part at a time.

    ``chunks``: a function returning a fresh iterator, in row order, of
    ``(time_s, eta_s, eta_low_s, eta_high_s)`` float arrays (seconds, NaN
    where none; ``eta_low_s``/``eta_high_s`` None when no interval was
    given); ``crossing_s``: the true crossing, seconds; ``approach_start_s``:
    where the approach starts (default the first row). Returns a dict with
    ``median_rel_error``, ``p90_rel_error``, ``time_to_trust``, ``coverage``,
    ``no_estimate_fraction`` (None where undefined), ``evaluated_rows`` and the
    time-to-trust details ``trusted_for_s``, ``trust_miss_before_s``,
    ``trust_miss_s`` (seconds or None; see the module docstring).

    Counts and time-to-trust come from one pass; the median and p90 are the
    exact order statistics (:func:`_order_statistics`, a few more passes) with
    numpy's interpolation (:func:`_quantiles`), so the figures equal those of
    ``np.median``/``np.percentile`` over all rows at once while memory does
    not grow with the rows.
    """
    out = dict.fromkeys(("median_rel_error", "p90_rel_error", "time_to_trust", "coverage",
                         "no_estimate_fraction"))
    n_eval = n_has = n_interval = n_inside = 0
    start = None
    trust_from = None     # time of the first evaluated row after the last bad one
    miss = None           # (remaining time, |eta - rem| or NaN) of the last bad row
    intervals = False
    for start, t_e, rel_e, rem_e, low_e, high_e in _evaluated(chunks, crossing_s, warmup_s,
                                                              floor_s, approach_start_s):
        n_eval += len(t_e)
        has = np.isfinite(rel_e)
        n_has += int(np.count_nonzero(has))
        good = has & (rel_e <= tolerance)
        bad = np.nonzero(~good)[0]
        if len(bad):
            trust_from = None if bad[-1] == len(good) - 1 else t_e[bad[-1] + 1]
            b = bad[-1]
            # rel = |eta - rem| / max(rem, floor), so the miss in seconds is rel * max(rem, floor)
            miss = (float(rem_e[b]), float(rel_e[b] * max(rem_e[b], floor_s)))
        elif trust_from is None:
            trust_from = t_e[0]
        if low_e is not None:
            intervals = True
            with_interval = has & np.isfinite(low_e)
            hi = np.where(np.isfinite(high_e), high_e, math.inf)
            # inside: eta_low <= rem <= eta_high (no upper bound counts as unbounded)
            inside = (low_e <= rem_e) & (rem_e <= hi)
            n_interval += int(np.count_nonzero(with_interval))
            n_inside += int(np.count_nonzero(inside & with_interval))
    out["evaluated_rows"] = n_eval
    out["trusted_for_s"] = out["trust_miss_before_s"] = out["trust_miss_s"] = None
    if n_eval == 0:
        return out
    if miss is not None:
        out["trust_miss_before_s"] = miss[0]
        out["trust_miss_s"] = miss[1] if math.isfinite(miss[1]) else None
    out["no_estimate_fraction"] = float(1.0 - n_has / n_eval)
    if n_has:
        def values():
            for _, _, rel_e, _, _, _ in _evaluated(chunks, crossing_s, warmup_s, floor_s,
                                                   approach_start_s):
                yield rel_e[np.isfinite(rel_e)]
        out["median_rel_error"], out["p90_rel_error"] = _quantiles(values, n_has)
    approach = crossing_s - start
    if trust_from is not None:    # the last evaluated row is within the tolerance
        out["time_to_trust"] = float((trust_from - start) / approach)
        out["trusted_for_s"] = float(crossing_s - trust_from)
    else:
        out["time_to_trust"] = 1.0
    if intervals and n_interval:
        out["coverage"] = float(n_inside / n_interval)
    return out


def _evaluated(chunks, crossing_s, warmup_s, floor_s, approach_start_s=None):
    """Per chunk: ``(start of the approach, t, rel, remaining, low, high)`` of evaluated rows."""
    start = approach_start_s
    for t, eta, low, high in chunks():
        t = np.asarray(t, dtype=float)
        if not len(t):
            continue
        if start is None:
            start = t[0]
        mask, rel, remaining = relative_errors(t, eta, crossing_s, warmup_s, floor_s,
                                               start_s=start)
        if not mask.any():
            continue
        yield (start, t[mask], rel[mask], remaining[mask],
               None if low is None else np.asarray(low, dtype=float)[mask],
               None if high is None else np.asarray(high, dtype=float)[mask])


P90 = 0.9
_RADIX_BITS = 16
_COLLECT = 1 << 16    # values sorted at once once a rank's bin holds no more


def _quantiles(values, n):
    """``(median, p90)`` of ``n`` values as ``np.median`` and ``np.percentile(.., 90)`` give.

    ``values``: a function returning a fresh iterator of float arrays. The
    median of an even count is the mean of the two middle values; p90 is
    numpy's default ("linear") method: the virtual index ``(n - 1) * 0.9``
    between the sorted values ``a`` and ``b`` around it, interpolated as
    numpy's ``_lerp`` does (from ``b`` when the fraction is 0.5 or more).
    """
    half = n // 2
    mid = [half] if n % 2 else [half - 1, half]
    virtual = (n - 1) * P90
    if virtual >= n - 1:
        around = [n - 1]
    else:
        below = int(math.floor(virtual))
        around = [below, below + 1]
    got = _order_statistics(values, n, mid + around)
    median = got[mid[0]] if n % 2 else (got[mid[0]] + got[mid[1]]) / 2.0
    if len(around) == 1:
        return float(median), float(got[around[0]])
    a, b = got[around[0]], got[around[1]]
    frac = virtual - around[0]
    diff = b - a
    p90 = b - diff * (1.0 - frac) if frac >= 0.5 else a + diff * frac
    return float(median), float(p90)


def _order_statistics(values, n, ranks):
    """The sorted values at 0-based ``ranks`` (dict rank -> value), exactly.

    ``values``: a function returning a fresh iterator of float64 arrays of
    ``n`` non-negative finite values in all. Such floats sort like their
    IEEE-754 bit patterns read as unsigned integers, so a radix select finds
    each rank: a histogram of the top 16 bits picks the bin holding it, then
    one of the next 16 bits within that bin, until the bin holds at most
    ``_COLLECT`` values, which are sorted. Each round reads the values once;
    memory holds the histograms and one bin, never all values.
    """
    # per rank: the bin's leading bits, how many, the values below the bin, and
    # whether the bin is small enough to sort in the next round
    todo = {k: {"prefix": 0, "used": 0, "below": 0, "ready": n <= _COLLECT}
            for k in set(ranks)}
    found = {}
    mask = np.uint64((1 << _RADIX_BITS) - 1)
    while todo:
        hists = {k: np.zeros(1 << _RADIX_BITS, dtype=np.int64)
                 for k, s in todo.items() if not s["ready"]}
        # ranks in the same bin share its values
        kept = {(s["prefix"], s["used"]): [] for s in todo.values() if s["ready"]}
        for chunk in values():
            bits = np.ascontiguousarray(chunk, dtype=np.float64).view(np.uint64)
            for prefix, used in kept:
                kept[prefix, used].append(_in_bin(bits, prefix, used).view(np.float64))
            for k in hists:
                s = todo[k]
                digit = (_in_bin(bits, s["prefix"], s["used"])
                         >> np.uint64(64 - s["used"] - _RADIX_BITS)) & mask
                hists[k] += np.bincount(digit.astype(np.intp), minlength=1 << _RADIX_BITS)
        kept = {key: np.sort(np.concatenate(parts)) for key, parts in kept.items()}
        for k in list(todo):
            s = todo.pop(k)
            if s["ready"]:
                found[k] = float(kept[s["prefix"], s["used"]][k - s["below"]])
                continue
            cum = np.cumsum(hists[k])
            # the first digit whose cumulative count passes the rank within the bin
            digit = int(np.searchsorted(cum, k - s["below"], side="right"))
            s["below"] += int(cum[digit - 1]) if digit else 0
            s["prefix"] = (s["prefix"] << _RADIX_BITS) | digit
            s["used"] += _RADIX_BITS
            if s["used"] == 64:       # every value in the bin has these very bits
                found[k] = float(np.array([s["prefix"]], dtype=np.uint64).view(np.float64)[0])
                continue
            s["ready"] = bool(hists[k][digit] <= _COLLECT)
            todo[k] = s
    return found


def _in_bin(bits, prefix, used):
    """The bit patterns whose leading ``used`` bits equal ``prefix``."""
    if used == 0:
        return bits
    return bits[(bits >> np.uint64(64 - used)) == np.uint64(prefix)]


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
    carried the inputs. ``no_estimate_from_third``: mean over traces that
    have it; ``first_answer_reading``: median over traces that carry it, a
    trace with status given but no answer counting as never (``inf``).
    """
    first = [math.inf if m["first_answer_s"] is None else m["first_answer_s"]
             for m in per_trace if m.get("status_given")]
    early = [m["early_arrival"] for m in per_trace if m.get("early_arrival") is not None]
    by_reading = [math.inf if m.get("first_answer_reading") is None else m["first_answer_reading"]
                  for m in per_trace if m.get("status_given") and "first_answer_reading" in m]
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
        "no_estimate_from_third": _mean([m.get("no_estimate_from_third") for m in per_trace]),
        "first_answer_reading": float(np.median(by_reading)) if by_reading else None,
    }
