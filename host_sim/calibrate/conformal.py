"""The interval: replayed (trace, target) pairs and their split-conformal table per horizon bin."""
import numpy as np

from host_sim.calibrate.prepare import TARGET_FRACTIONS, approach, crossing_s, targets_for
from tinytherm import profile as tp


# -------------------------------------------------------------- replay part
class Pair:
    """Replay of one trace towards one target: row arrays over the approach before
    the crossing: ``t``, ``actual`` (s), ``eta``, ``low``, ``high`` (s, NaN when
    none), ``shown`` (bool), ``frac`` (elapsed fraction of the approach)."""

    def __init__(self, **kw):
        self.__dict__.update(kw)


def replay_pairs(prep, use_heater, settings=None, fractions=TARGET_FRACTIONS, profile=None):
    """Replay ``prep.trace`` through the estimator, one run per target.

    ``settings``: a :class:`host_sim.replay.settings.ReplaySettings` (or None:
    the core's defaults) without ``heater`` (``use_heater`` decides it) and
    without ``profile``; ``profile``: a
    :class:`tinytherm.profile.VesselProfile` the estimator is given through
    its device blob (None: no profile).
    """
    from host_sim.replay.replay import SHOWN_STATUSES, replay
    i0, _, _ = approach(prep)
    t_start = float(prep.t[i0])
    pairs = []
    for target in targets_for(prep, fractions):
        cross = crossing_s(prep, target)
        if cross is None or cross - t_start < 30.0:
            continue
        extra = {} if profile is None else {"profile": profile.to_blob()}
        result = replay(prep.trace, target, settings, heater="on" if use_heater else "off",
                        **extra)
        t = np.asarray(prep.trace.time_s, dtype=float)
        col = {name: np.array([np.nan if v is None else float(v) for v in result.column(name)])
               for name in ("eta_s", "eta_low_s", "eta_high_s")}
        shown = np.array([r["status_code"] in SHOWN_STATUSES for r in result.rows])
        sel = (t >= t_start) & (t < cross)
        pairs.append(Pair(trace=prep.trace, target=target, crossing=cross, t=t[sel],
                          actual=cross - t[sel], eta=col["eta_s"][sel], low=col["eta_low_s"][sel],
                          high=col["eta_high_s"][sel], shown=shown[sel],
                          frac=(t[sel] - t_start) / (cross - t_start), prep=prep))
    return pairs


def _at_work_out(p, ok):
    """``(actual, eta)`` per row as at the device's latest work-out of its answer (s).

    Between block closes the device counts its answer down: ``eta_s``,
    ``eta_low_s`` and ``eta_high_s`` each lose the elapsed time, so ``eta + t``
    stays constant and a row is inside its interval exactly when the work-out's
    ``ln(actual / eta)`` is inside the table's bounds for the work-out's ``eta``
    (the table is looked up then, not at the counted-down time). A run of
    consecutive shown rows with the same ``eta + t`` is one work-out, dated at
    its first row.
    """
    idx = np.nonzero(ok)[0]
    act = p.actual.copy()
    eta = p.eta.copy()
    key = p.eta + p.t
    first = -1
    for j, i in enumerate(idx):
        if j == 0 or i != idx[j - 1] + 1 or abs(key[i] - key[idx[j - 1]]) > 1e-6 * (
                1.0 + abs(key[i])):
            first = i
        act[i] = p.actual[first]
        eta[i] = p.eta[first]
    return act, eta


def _ratio_rows(pairs):
    """(r, eta, weight, pair index) over the shown rows with a positive ETA, each row
    as at the device's work-out of its answer (:func:`_at_work_out`)."""
    rs, etas, ws, idx = [], [], [], []
    for j, p in enumerate(pairs):
        ok = p.shown & np.isfinite(p.eta) & (p.eta > 0.0) & (p.actual > 0.0)
        if not np.any(ok):
            continue
        act, eta = _at_work_out(p, ok)
        rs.append(np.log(act[ok] / eta[ok]))
        etas.append(eta[ok])
        ws.append(np.full(int(np.sum(ok)), 1.0 / np.sum(ok)))
        idx.append(np.full(int(np.sum(ok)), j))
    if not rs:
        return np.zeros(0), np.zeros(0), np.zeros(0), np.zeros(0, dtype=int)
    return np.concatenate(rs), np.concatenate(etas), np.concatenate(ws), np.concatenate(idx)


def weighted_quantile(x, w, q):
    """Quantile ``q`` of ``x`` with weights ``w`` (inverse of the weighted CDF, step form)."""
    order = np.argsort(x)
    x, w = x[order], w[order]
    c = np.cumsum(w) / np.sum(w)
    i = int(np.searchsorted(c, q, side="left"))
    return float(x[min(i, len(x) - 1)])


def bin_of(eta_s):
    """Horizon bin 0..3 of predicted remaining times (edges 60, 300, 1200 s)."""
    return np.searchsorted(np.array(tp.BIN_EDGES_S), eta_s, side="right")


def conformal_table(pairs, min_pairs_per_bin=3):
    """``(low[4], high[4], counts[4])``: split-conformal 10 %/90 % points of ln(actual/eta).

    Each pair weighs the same in a bin; levels widened by ``(1 + 1/m)``
    (``m`` pairs in the bin). A bin with fewer than ``min_pairs_per_bin``
    pairs borrows the nearest filled bin's values; with no rows at all the
    table is None.
    """
    r, eta, w, idx = _ratio_rows(pairs)
    if len(r) == 0:
        return None
    b = bin_of(eta)
    low, high, counts = [None] * 4, [None] * 4, [0] * 4
    for k in range(4):
        sel = b == k
        m = len(set(idx[sel].tolist()))
        counts[k] = m
        if m < min_pairs_per_bin:
            continue
        # each pair's rows in this bin share one unit of weight
        ww = np.zeros(int(np.sum(sel)))
        ids = idx[sel]
        for j in set(ids.tolist()):
            ww[ids == j] = 1.0 / np.sum(ids == j)
        a_lo = max(0.0, tp.QUANTILE_LOW * (1.0 - 1.0 / m))
        a_hi = min(1.0, tp.QUANTILE_HIGH + (1.0 - tp.QUANTILE_HIGH) / m)
        low[k] = weighted_quantile(r[sel], ww, a_lo)
        high[k] = weighted_quantile(r[sel], ww, a_hi)
    filled = [k for k in range(4) if low[k] is not None]
    if not filled:
        lo = weighted_quantile(r, w, tp.QUANTILE_LOW)
        hi = weighted_quantile(r, w, tp.QUANTILE_HIGH)
        return [lo] * 4, [hi] * 4, counts
    for k in range(4):
        if low[k] is None:
            near = min(filled, key=lambda f: abs(f - k))
            low[k], high[k] = low[near], high[near]
    low = [max(-30.0, min(30.0, v)) for v in low]
    high = [max(lo_, min(30.0, v)) for lo_, v in zip(low, high)]
    return low, high, counts


def coverage(pairs, prof=None):
    """Pair-weighted share of shown rows whose actual remaining time lies in the interval.

    ``prof`` None: the device's own ``eta_low_s``..``eta_high_s``; else the
    profile's table around the device's ETA.
    """
    num = 0.0
    den = 0.0
    for p in pairs:
        ok = p.shown & np.isfinite(p.eta) & (p.eta > 0.0)
        if not np.any(ok):
            continue
        if prof is None:
            lo = np.where(np.isfinite(p.low), p.low, 0.0)[ok]
            hi = np.where(np.isnan(p.high), np.inf, p.high)[ok]
        else:
            bounds = np.array([prof.interval_log_bounds(float(e)) for e in p.eta[ok]])
            lo = p.eta[ok] * np.exp(bounds[:, 0])
            hi = p.eta[ok] * np.exp(bounds[:, 1])
        inside = (p.actual[ok] >= lo) & (p.actual[ok] <= hi)
        num += float(np.mean(inside))
        den += 1.0
    return num / den if den else float("nan")
