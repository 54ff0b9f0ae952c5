"""Calibrate a vessel profile from many recorded uses of one vessel.

``python -m host_sim calibrate TRACE.csv [TRACE.csv ...] --out PROFILE.json``

1. **Dynamics.** Each trace is put on a uniform grid and smoothed by a
   Savitzky-Golay filter (cubic, ``smooth_s`` = 60 s window), which gives the
   reading ``s`` and its first two derivatives. With a first-order probe of
   lag ``tau_p`` the liquid is ``T = s + tau_p s'`` and ``T' = s' + tau_p s''``;
   the heater's effect ``q`` is the duty ``u`` through a first-order lag
   ``tau_h`` (exact zero-order-hold recursion). One joint robust least-squares
   fit (scipy ``least_squares``, soft-L1 loss) over all traces of

       T' = -a_i |T - E_i|^n sign(T - E_i) + g_i q_i(t; tau_h)

   shares ``n``, ``tau_p``, ``tau_h`` and gives each use its own rate
   ``a_i``, equilibrium ``E_i = R_i + offset_i`` (``R_i``: the ambient column
   or ``--ambient``; free when neither) and gain ``g_i``; weak Gaussian
   priors tie the per-use values to their means (sd 1.0 in ln a and ln g,
   3 C in the offset) so a value the data cannot tell stays near the others,
   and weaker ones hold ``n`` near 1 (sd 0.5) and the mean offset near 0
   (sd 5 C) where the data say nothing (a heat-up at full power shows the
   losses only faintly). Residuals are scaled by each use's robust noise sd
   and one smoothing window counts as one observation.
   The per-use rates are reported at |T - E| = 10 K
   (``k_i = a_i 10^(n-1)``, :data:`tinytherm.profile.DIFF_REF_C`); with
   ``--fill-kg`` the fit regresses ``ln k_i`` and ``ln g_i`` on ``ln fill``
   (the device does not know the fill, so that scaling is printed and kept
   in the JSON, not in the blob).
2. **Interval.** Each trace is replayed through the device's estimator
   *without* a profile towards three targets along its approach (30 %, 55 %,
   80 % of the way), and ``r = ln(actual / predicted remaining time)`` is
   collected on every row the device shows an answer. The 10 % and 90 %
   points of ``r`` per horizon bin (predicted remaining time below 60 s,
   60-300 s, 300-1200 s, above) are split-conformal quantiles: each
   (trace, target) pair weighs the same, the levels are widened by the
   finite-sample factor ``(1 + 1/m)`` for ``m`` pairs.
3. **Cross-validation by trace** (``--folds``, default 5): the profile is
   refitted without each fold and checked on it: interval coverage of the
   calibrated 80 % interval against the device's own, and the median
   relative error of the profile model's own forecast (typical parameters,
   current temperature from the readings; a host-side stand-in until the
   device estimator takes a profile) against the device's answer.

Writes ``PROFILE.json`` (everything, with units), ``PROFILE.bin`` and
``PROFILE.hex`` (the device blob, :meth:`tinytherm.profile.VesselProfile.to_blob`)
and, unless ``--no-plots``, ``PROFILE_fit.png`` and ``PROFILE_error.png``.
"""
import json
import math
import os
import sys

import numpy as np
from scipy.optimize import least_squares
from scipy.signal import lfilter, savgol_coeffs, savgol_filter

from tinytherm import profile as tp
from tinytherm.profile import VesselProfile

TARGET_FRACTIONS = (0.30, 0.55, 0.80)
PRIOR_SD = {"ln_a": 1.0, "offset_c": 3.0, "ln_g": 1.0, "eq_free_c": 15.0,
            "rate_exponent": 0.5, "offset_mean_c": 5.0}


# ------------------------------------------------------------- preprocessing
class Prepared:
    """One trace on a uniform grid: ``t`` (s), ``s``, ``ds``, ``d2s`` (reading and
    derivatives, deg C, K/s, K/s^2), ``u`` (duty 0..1), ``amb`` (deg C or None),
    ``fill`` (kg or None), ``dt`` (grid step, s), ``trace`` (the source)."""

    def __init__(self, **kw):
        self.__dict__.update(kw)


def prepare(trace, smooth_s=60.0, fill_kg=None, ambient_c=None):
    """Grid, smooth and differentiate a :class:`host_sim.trace_io.Trace` (see module docstring).

    ``smooth_s``: Savitzky-Golay window in seconds (at least 7 grid points).
    ``ambient_c``: constant ambient (deg C) used when the trace has no
    ambient column. Returns :class:`Prepared`.
    """
    t_raw = np.asarray(trace.time_s, dtype=float)
    y_raw = np.asarray(trace.temp_c, dtype=float)
    keep = np.concatenate([[True], np.diff(t_raw) > 0.0])
    t_raw, y_raw = t_raw[keep], y_raw[keep]
    if len(t_raw) < 8:
        raise ValueError("%s: too few rows to calibrate on (%d)" % (trace.source, len(t_raw)))
    dt = max(float(np.median(np.diff(t_raw))), 0.5)
    t = np.arange(t_raw[0], t_raw[-1] + 1e-9, dt)
    y = np.interp(t, t_raw, y_raw)
    win = int(round(smooth_s / dt)) | 1
    win = max(win, 7)
    if win > len(t):
        win = len(t) if len(t) % 2 else len(t) - 1
    s = savgol_filter(y, win, 3, mode="interp")
    ds = savgol_filter(y, win, 3, deriv=1, delta=dt, mode="interp")
    d2s = savgol_filter(y, win, 3, deriv=2, delta=dt, mode="interp")
    u = np.zeros(len(t))
    if trace.heater is not None:
        h = np.asarray(trace.heater, dtype=float)[keep]
        # a row's duty applies since the previous row: integrate that step function
        # (exact, piecewise linear) and average it over each grid interval
        energy = np.concatenate([[0.0], np.cumsum(h[1:] * np.diff(t_raw))])
        e_grid = np.interp(t, t_raw, energy)
        u = np.empty(len(t))
        u[1:] = np.diff(e_grid) / dt
        u[0] = h[0]
    amb = None
    if trace.ambient_c is not None and np.any(np.isfinite(trace.ambient_c)):
        a_raw = np.asarray(trace.ambient_c, dtype=float)[keep]
        ok = np.isfinite(a_raw)
        amb = np.interp(t, t_raw[ok], a_raw[ok])
    elif ambient_c is not None:
        amb = np.full(len(t), float(ambient_c))
    half = win // 2
    return Prepared(t=t, s=s, ds=ds, d2s=d2s, u=u, amb=amb, fill=fill_kg, dt=dt, trace=trace,
                    edge=half, win=win, sg=savgol_coeffs(win, 3), raw_t=t_raw, raw_y=y_raw)


def heater_state(u, dt, lag_s):
    """Duty through a first-order lag (s), zero-order hold, element cold at the start."""
    b = 1.0 - math.exp(-dt / max(lag_s, 1e-6))
    return lfilter([b], [1.0, -(1.0 - b)], u)


def _signed_power(d, n):
    return np.sign(d) * np.abs(d) ** n


# ------------------------------------------------------------------ the fit
class DynamicsFit:
    """Result of :func:`fit_dynamics`. Shared: ``rate_exponent``, ``probe_lag_s``,
    ``heater_lag_s``; per use (arrays): ``rate_per_s`` (k at 10 K, 1/s),
    ``eq_c`` (deg C, mean over the use), ``offset_c`` (E - ambient, deg C; NaN
    without an ambient), ``gain_k_per_s`` (K/s at full duty; 0 without heater);
    ``heater`` (bool); ``has_ambient`` (bool); ``rms_k_per_s`` residual rms per use."""

    def __init__(self, **kw):
        self.__dict__.update(kw)


def fit_dynamics(preps, heater):
    """Joint fit of the model in the module docstring over :class:`Prepared` traces."""
    m = len(preps)
    has_amb = all(p.amb is not None for p in preps)
    n_shared = 3 if heater else 2            # n, ln tau_p [, ln tau_h]
    per = 3 if heater else 2                 # ln a, E or offset [, ln g]
    n_hyper = per                            # means of the per-use values
    x0 = [1.1, math.log(10.0)] + ([math.log(20.0)] if heater else [])
    lo = [0.5, math.log(0.5)] + ([math.log(0.5)] if heater else [])
    hi = [2.5, math.log(900.0)] + ([math.log(1800.0)] if heater else [])
    sl = []
    for p in preps:
        core = slice(p.edge, len(p.t) - p.edge) if len(p.t) > 2 * p.edge + 8 else slice(None)
        sl.append(core)
        ds = p.ds[core]
        s = p.s[core]
        u = p.u[core]
        passive = u <= 0.0
        if heater and np.any(u > 0.0):
            g0 = max(float(np.percentile(ds[u > 0.0], 75)) / max(float(np.mean(u[u > 0.0])), 1e-3),
                     1e-5)
        else:
            g0 = 1e-4
        if has_amb:
            e0 = 0.0
        else:
            e0 = float(s[-1]) - 5.0 * float(np.sign(ds[-1]) if ds[-1] != 0 else 1.0)
        ref = p.amb[core] if has_amb else np.full(len(s), e0)
        diff = s - ref
        sel = passive & (np.abs(diff) > 2.0)
        if np.sum(sel) > 5:
            k0 = float(np.median(np.clip(-ds[sel] / diff[sel], 1e-6, 1.0)))
        else:
            k0 = 1e-3
        x0 += [math.log(k0), e0] + ([math.log(g0)] if heater else [])
        lo += [-25.0, -60.0 if has_amb else -40.0] + ([-15.0] if heater else [])
        hi += [3.0, 60.0 if has_amb else 160.0] + ([3.0] if heater else [])
    # hyper-means start at the mean of the starts
    starts = np.array(x0[n_shared:]).reshape(m, per)
    x0 += list(starts.mean(axis=0))
    lo += [-25.0, -60.0 if has_amb else -40.0] + ([-15.0] if heater else [])
    hi += [3.0, 60.0 if has_amb else 160.0] + ([3.0] if heater else [])
    x0 = np.clip(np.array(x0), np.array(lo) + 1e-9, np.array(hi) - 1e-9)
    prior = [PRIOR_SD["ln_a"], PRIOR_SD["offset_c"] if has_amb else PRIOR_SD["eq_free_c"]]
    if heater:
        prior.append(PRIOR_SD["ln_g"])
    # residual scale per use (K/s): a start from the spread of s', then its noise
    scales = np.array([0.05 * float(np.sqrt(np.mean(p.ds[c] ** 2))) + 1e-7
                       for p, c in zip(preps, sl)])
    # Savitzky-Golay residuals are correlated over a window: one window ~ one observation
    eff = np.array([math.sqrt(p.win) for p in preps])

    def residuals(x, out_parts=False):
        n = x[0]
        tau_p = math.exp(x[1])
        tau_h = math.exp(x[2]) if heater else None
        hyper = x[n_shared + m * per:]
        parts = []
        for i, p in enumerate(preps):
            v = x[n_shared + i * per: n_shared + (i + 1) * per]
            c = sl[i]
            temp = p.s[c] + tau_p * p.ds[c]
            dtemp = p.ds[c] + tau_p * p.d2s[c]
            eq = (p.amb[c] + v[1]) if has_amb else v[1]
            a = math.exp(v[0]) / 10.0 ** (n - 1.0)
            model = -a * _signed_power(temp - eq, n)
            if heater:
                # the readings' derivatives are Savitzky-Golay smoothed: smooth q the same way
                q = np.convolve(heater_state(p.u, p.dt, tau_h), p.sg, mode="same")
                model = model + math.exp(v[2]) * q[c]
            r = (dtemp - model) / (scales[i] * eff[i])
            parts.append(r)
        if out_parts:
            return parts
        pri = [(x[n_shared + i * per + j] - hyper[j]) / prior[j]
               for i in range(m) for j in range(per)]
        # weak priors where heating alone cannot tell: first order, no offset
        pri.append((x[0] - 1.0) / PRIOR_SD["rate_exponent"])
        if has_amb:
            pri.append(hyper[1] / PRIOR_SD["offset_mean_c"])
        return np.concatenate(parts + [np.array(pri)])

    # sparsity: shared columns touch every data row; a use's columns its rows and priors
    sizes = [len(p.s[c]) for p, c in zip(preps, sl)]
    n_rows = sum(sizes) + m * per + (2 if has_amb else 1)
    n_cols = len(x0)
    sparsity = np.zeros((n_rows, n_cols), dtype=bool)
    row = 0
    for i, size in enumerate(sizes):
        sparsity[row:row + size, :n_shared] = True
        sparsity[row:row + size, n_shared + i * per:n_shared + (i + 1) * per] = True
        row += size
    for i in range(m):
        for j in range(per):
            sparsity[row, n_shared + i * per + j] = True
            sparsity[row, n_shared + m * per + j] = True
            row += 1
    sparsity[row, 0] = True
    if has_amb:
        sparsity[row + 1, n_shared + m * per + 1] = True
    x = x0
    f_scale = 3.0 / float(np.median(eff))   # soft-L1 bends beyond ~3 noise sd
    for _ in range(3):
        # re-estimate each use's residual scale (robust sd) from the last fit
        res = least_squares(residuals, x, bounds=(lo, hi), loss="soft_l1", f_scale=f_scale,
                            jac_sparsity=sparsity, x_scale="jac", max_nfev=400)
        x = res.x
        for i, r in enumerate(residuals(x, out_parts=True)):
            raw = r * scales[i] * eff[i]
            mad = float(np.median(np.abs(raw - np.median(raw)))) * 1.4826
            scales[i] = max(mad, 1e-7)
    n = float(x[0])
    per_use = x[n_shared:n_shared + m * per].reshape(m, per)
    k10 = np.exp(per_use[:, 0])
    eq = np.array([float(np.mean(p.amb[c])) + v[1] if has_amb else v[1]
                   for p, c, v in zip(preps, sl, per_use)])
    offset = per_use[:, 1] if has_amb else np.full(m, np.nan)
    gain = np.exp(per_use[:, 2]) if heater else np.zeros(m)
    rms = np.array([float(np.sqrt(np.mean((r * scales[i] * eff[i]) ** 2)))
                    for i, r in enumerate(residuals(x, out_parts=True))])
    return DynamicsFit(rate_exponent=n, probe_lag_s=float(math.exp(x[1])),
                       heater_lag_s=float(math.exp(x[2])) if heater else 0.0,
                       rate_per_s=k10, eq_c=eq, offset_c=offset, gain_k_per_s=gain,
                       heater=heater, has_ambient=has_amb, rms_k_per_s=rms,
                       converged=bool(res.success))


def fill_scaling(fills, values):
    """Least-squares exponent b and value at the median fill of ``values ~ c fill^b``.

    Returns ``(b, value_at_median_fill)`` or None when fewer than 3 fills or no spread.
    """
    f = np.asarray(fills, dtype=float)
    v = np.asarray(values, dtype=float)
    ok = np.isfinite(f) & (f > 0) & np.isfinite(v) & (v > 0)
    if np.sum(ok) < 3 or np.ptp(np.log(f[ok])) < 1e-6:
        return None
    b, c = np.polyfit(np.log(f[ok]), np.log(v[ok]), 1)
    med = float(np.median(f[ok]))
    return float(b), float(math.exp(c + b * math.log(med))), med


def profile_from_fit(fit, table=None):
    """A :class:`VesselProfile` from a :class:`DynamicsFit` (+ optional (low, high) table).

    With a heater the blob's ``probe_lag_s`` is probe lag + heater lag: a duty
    change reaches the reading through both, and the two are not separable
    from duty changes alone (the fit's split is kept in the JSON).
    """
    ln_k = np.log(fit.rate_per_s)
    sd = float(np.std(ln_k, ddof=1)) if len(ln_k) > 1 else 0.0
    if fit.has_ambient:
        off = float(np.mean(fit.offset_c))
        off_sd = float(np.std(fit.offset_c, ddof=1)) if len(ln_k) > 1 else 0.0
    else:
        off = 0.0
        off_sd = float(np.std(fit.eq_c, ddof=1)) if len(ln_k) > 1 else PRIOR_SD["eq_free_c"]
    gain = 0.0
    gsd = 0.0
    if fit.heater:
        ln_g = np.log(fit.gain_k_per_s)
        gain = float(math.exp(np.mean(ln_g)))
        gsd = float(np.std(ln_g, ddof=1)) if len(ln_g) > 1 else 0.0
    low, high = (None, None) if table is None else table
    return VesselProfile(heater=fit.heater, rate_per_s=float(math.exp(np.mean(ln_k))),
                         rate_log_sd=min(sd, 5.0), eq_offset_c=max(-50.0, min(50.0, off)),
                         eq_offset_sd_c=min(off_sd, 50.0), gain_k_per_s=gain,
                         gain_rel_sd=min(gsd, 10.0),
                         probe_lag_s=min(fit.probe_lag_s + fit.heater_lag_s, 3600.0),
                         rate_exponent=max(0.25, min(4.0, fit.rate_exponent)),
                         log_q_low=low, log_q_high=high)


# --------------------------------------------------------- approach/targets
def approach(prep):
    """``(i0, i1, direction)``: grid indices of the approach and +1 heating / -1 cooling.

    The approach runs from the global maximum or minimum of the smoothed
    reading, whichever is followed by the larger change, to the end of the
    trace (a probe warming up after the pour, or a heat-up before a cool-down,
    is not the approach).
    """
    i1 = len(prep.s) - 1
    i_max = int(np.argmax(prep.s))
    i_min = int(np.argmin(prep.s))
    if abs(prep.s[i1] - prep.s[i_max]) >= abs(prep.s[i1] - prep.s[i_min]):
        return i_max, i1, -1
    return i_min, i1, 1


def targets_for(prep, fractions=TARGET_FRACTIONS):
    """Target temperatures (deg C) along the approach: ``start + f (end - start)``."""
    i0, i1, _ = approach(prep)
    a, b = float(prep.s[i0]), float(prep.s[i1])
    return [a + f * (b - a) for f in fractions]


def crossing_s(prep, target_c):
    """First time (s) the smoothed reading passes ``target_c`` within the approach, or None."""
    i0, i1, direction = approach(prep)
    seg = (prep.s[i0:i1 + 1] - target_c) * direction
    hit = np.nonzero(seg >= 0.0)[0]
    if len(hit) == 0 or hit[0] == 0:
        return None
    j = i0 + int(hit[0])
    g0, g1 = prep.s[j - 1] - target_c, prep.s[j] - target_c
    return float(prep.t[j - 1] + prep.dt * (-g0) / (g1 - g0)) if g1 != g0 else float(prep.t[j])


# -------------------------------------------------------------- replay part
class Pair:
    """Replay of one trace towards one target: row arrays over the approach before
    the crossing: ``t``, ``actual`` (s), ``eta``, ``low``, ``high`` (s, NaN when
    none), ``shown`` (bool), ``frac`` (elapsed fraction of the approach)."""

    def __init__(self, **kw):
        self.__dict__.update(kw)


def replay_pairs(prep, use_heater, settings=None, fractions=TARGET_FRACTIONS):
    """Replay ``prep.trace`` through the estimator without a profile, one run per target."""
    from host_sim.replay import SHOWN_STATUSES, replay
    i0, _, _ = approach(prep)
    t_start = float(prep.t[i0])
    pairs = []
    for target in targets_for(prep, fractions):
        cross = crossing_s(prep, target)
        if cross is None or cross - t_start < 30.0:
            continue
        result = replay(prep.trace, target, heater="on" if use_heater else "off",
                        **(settings or {}))
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


def _ratio_rows(pairs):
    """(r, eta, weight, pair index) over the shown rows with a positive ETA."""
    rs, etas, ws, idx = [], [], [], []
    for j, p in enumerate(pairs):
        ok = p.shown & np.isfinite(p.eta) & (p.eta > 0.0) & (p.actual > 0.0)
        if not np.any(ok):
            continue
        rs.append(np.log(p.actual[ok] / p.eta[ok]))
        etas.append(p.eta[ok])
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


# ---------------------------------------------------- profile model forecast
def _causal_level_slope(raw_t, raw_y, t, window_s):
    """Straight-line fit over the readings in (t - window_s, t]: level at t (deg C),
    slope (K/s) and the slope's standard error (K/s; inf with fewer than 4 readings)."""
    sel = (raw_t <= t) & (raw_t > t - window_s)
    if np.sum(sel) < 4:
        idx = np.nonzero(raw_t <= t)[0][-4:]
        sel = np.zeros(len(raw_t), dtype=bool)
        sel[idx] = True
    x = raw_t[sel] - t
    y = raw_y[sel]
    if len(x) < 2 or np.ptp(x) == 0.0:
        return float(y[-1]), 0.0, math.inf
    slope, level = np.polyfit(x, y, 1)
    if len(x) < 4:
        return float(level), float(slope), math.inf
    resid = y - (level + slope * x)
    se = math.sqrt(float(np.sum(resid ** 2)) / (len(x) - 2) / float(np.sum((x - x.mean()) ** 2)))
    return float(level), float(slope), max(se, 1e-9)


def _shrink_log(prior, prior_sd, value, value_sd):
    """Precision-weighted mean of two estimates of a log value (Gaussian)."""
    if not (math.isfinite(value) and math.isfinite(value_sd)) or prior_sd <= 0.0:
        return prior
    wp = 1.0 / prior_sd ** 2
    wv = 1.0 / value_sd ** 2
    return (prior * wp + value * wv) / (wp + wv)


def profile_forecast(prof, prep, pair, heater_lag_s=0.0, window_s=60.0, ambient_c=None,
                     max_rows=60):
    """Remaining time (s) to ``pair.target`` predicted by the profile's model alone.

    At up to ``max_rows`` rows of the pair: the liquid is the straight-line
    level of the last ``window_s`` of readings plus ``probe_lag_s`` x slope;
    the equilibrium the ambient (column, ``ambient_c`` or, without either,
    solved from the slope with the typical rate) plus ``eq_offset_c``; this
    use's heater gain (or, without a heater and with an ambient, its rate)
    is the one the recent slope implies, shrunk towards the profile's
    typical value by precision; the duty stays at its last value; the sensor
    crosses ``probe_lag_s`` after the liquid. Returns ``(row indices, predictions)``; NaN where the model has no
    crossing.
    """
    n_rows = len(pair.t)
    rows = np.unique(np.linspace(0, n_rows - 1, min(max_rows, n_rows)).astype(int))
    tr = prep.trace
    raw_t = np.asarray(tr.time_s, dtype=float)
    raw_y = np.asarray(tr.temp_c, dtype=float)
    amb_col = None
    if tr.ambient_c is not None and np.any(np.isfinite(tr.ambient_c)):
        amb_col = np.asarray(tr.ambient_c, dtype=float)
    duty_col = np.asarray(tr.heater, dtype=float) if tr.heater is not None else None
    n = prof.rate_exponent
    a = prof.rate_per_s / tp.DIFF_REF_C ** (n - 1.0)
    out = np.full(len(rows), np.nan)
    temps = np.zeros(len(rows))
    eqs = np.zeros(len(rows))
    duties = np.zeros(len(rows))
    qs = np.zeros(len(rows))
    gains = np.full(len(rows), prof.gain_k_per_s)
    scale = np.ones(len(rows))       # this use's rate over the typical rate
    q_all = None
    if prof.heater and duty_col is not None:
        # q_k = q_(k-1) + b_k (u_k - q_(k-1)), b_k = 1 - exp(-dt_k / lag): once per trace
        b = 1.0 - np.exp(-np.diff(raw_t, prepend=raw_t[0]) / max(heater_lag_s, 1e-6))
        q_all = np.zeros(len(raw_t))
        q = 0.0
        for k in range(len(raw_t)):
            q += b[k] * (duty_col[k] - q)
            q_all[k] = q
    for j, i in enumerate(rows):
        t = pair.t[i]
        level, slope, se = _causal_level_slope(raw_t, raw_y, t, window_s)
        temp = level + prof.probe_lag_s * slope
        past = raw_t <= t
        duty = float(duty_col[past][-1]) if duty_col is not None else 0.0
        if amb_col is not None:
            recent = past & (raw_t > t - window_s) & np.isfinite(amb_col)
            amb = float(np.mean(amb_col[recent])) if np.any(recent) else float(
                amb_col[past & np.isfinite(amb_col)][-1])
            eq = amb + prof.eq_offset_c
        elif ambient_c is not None:
            eq = float(ambient_c) + prof.eq_offset_c
        elif duty == 0.0 and slope != 0.0:
            eq = temp - math.copysign((abs(slope) / a) ** (1.0 / n), -slope)
        else:
            eq = 21.0      # nothing to go on: the estimator's default ambient prior
        temps[j], eqs[j], duties[j] = temp, eq, duty
        if q_all is not None:
            qs[j] = q_all[past][-1]
        # the use's own scale from the recent slope, shrunk to the profile's typical
        # value by precision (ln g with a heater, ln a without)
        loss = a * math.copysign(abs(temp - eq) ** n, temp - eq)
        if prof.heater and qs[j] > 0.05:
            g_hat = (slope + loss) / qs[j]
            if g_hat * prof.gain_k_per_s > 0.0:
                ln_g = _shrink_log(math.log(abs(prof.gain_k_per_s)), prof.gain_rel_sd,
                                   math.log(abs(g_hat)), se / abs(slope + loss + 1e-12))
                gains[j] = math.copysign(math.exp(ln_g), prof.gain_k_per_s)
        elif amb_col is not None or ambient_c is not None:
            if loss != 0.0 and -slope / loss > 0.0:
                ln_s = _shrink_log(0.0, prof.rate_log_sd, math.log(-slope / loss), se / abs(slope))
                scale[j] = math.exp(ln_s)
        if not prof.heater or duty == 0.0:
            use = VesselProfile(rate_per_s=min(1.0, prof.rate_per_s * scale[j]),
                                rate_exponent=prof.rate_exponent, rate_log_sd=0.0)
            rem = use.time_to_target_s(temp, pair.target, eq)
            if rem is not None:
                out[j] = rem + prof.probe_lag_s
    if prof.heater:
        need = np.nonzero((duties > 0.0) | ~np.isfinite(out))[0]
        if len(need):
            horizon = 5.0 * float(np.max(pair.actual)) + 600.0
            out[need] = _integrate_to_target(temps[need], qs[need], duties[need], eqs[need],
                                             pair.target, a * scale[need], n, gains[need],
                                             heater_lag_s, horizon_s=horizon) + prof.probe_lag_s
    return rows, out


def _integrate_to_target(temp, q, duty, eq, target, a, n, gain, lag_s, dt=1.0,
                         horizon_s=6 * 3600.0):
    """Time (s) for ``T' = -a|T-E|^n sign + g q``, ``q' = (u - q)/lag`` to reach target (RK2)."""
    temp = temp.astype(float).copy()
    q = q.astype(float).copy()
    side = np.sign(target - temp)
    done = np.full(len(temp), np.nan)
    done[side == 0] = 0.0
    t = 0.0
    lag = max(lag_s, 1e-6)

    def f(x, qq):
        return -a * _signed_power(x - eq, n) + gain * qq, (duty - qq) / lag
    while t < horizon_s and np.any(np.isnan(done)):
        k1t, k1q = f(temp, q)
        mt, mq = temp + 0.5 * dt * k1t, q + 0.5 * dt * k1q
        k2t, k2q = f(mt, mq)
        new = temp + dt * k2t
        q = np.minimum(np.maximum(q + dt * k2q, 0.0), 1.0) if lag_s > 0 else duty
        hit = np.isnan(done) & ((target - new) * side <= 0.0)
        frac = np.where(new != temp, (target - temp) / np.where(new != temp, new - temp, 1.0), 1.0)
        done[hit] = t + dt * np.clip(frac[hit], 0.0, 1.0)
        temp = new
        t += dt
        if t > 600.0:
            dt = 5.0
    return done


def forecast_errors(prof, pairs, heater_lag_s, ambient_c=None):
    """Pair-weighted medians of |relative error| on the same rows: (profile model, device)."""
    prof_err, dev_err = [], []
    per_pair = []
    for p in pairs:
        rows, pred = profile_forecast(prof, p.prep, p, heater_lag_s, ambient_c=ambient_c)
        ok = np.isfinite(pred) & p.shown[rows] & np.isfinite(p.eta[rows])
        if not np.any(ok):
            continue
        e_prof = np.abs(pred[ok] - p.actual[rows][ok]) / p.actual[rows][ok]
        e_dev = np.abs(p.eta[rows][ok] - p.actual[rows][ok]) / p.actual[rows][ok]
        prof_err.append(float(np.median(e_prof)))
        dev_err.append(float(np.median(e_dev)))
        per_pair.append((p, rows[ok], e_prof, e_dev))
    if not prof_err:
        return float("nan"), float("nan"), per_pair
    return float(np.median(prof_err)), float(np.median(dev_err)), per_pair


def transfer_check(cal, traces, ambient_c=None, settings=None):
    """Does a calibration help on other traces? A dict with the figures and the reasons.

    Replays each trace (three targets along its approach) through the device
    without a profile and compares, on the same shown rows, the median
    relative error of the device with that of the profile model
    (:func:`profile_forecast`). ``improves`` is True when the profile model's
    error is lower; ``reasons`` lists what the data show against the profile
    (temperature ranges that do not overlap, a fitted exponent at its bound,
    no ambient to anchor the equilibrium, too few training uses).
    """
    preps = [prepare(tr, ambient_c=ambient_c) for tr in traces]
    pairs = [p for pr in preps for p in replay_pairs(pr, cal.fit.heater, settings)]
    e_prof, e_dev, per_pair = forecast_errors(cal.profile, pairs, cal.fit.heater_lag_s,
                                              ambient_c)
    fit_lo = min(float(np.min(pr.s)) for pr in cal.preps)
    fit_hi = max(float(np.max(pr.s)) for pr in cal.preps)
    test_lo = min(float(np.min(pr.s)) for pr in preps)
    test_hi = max(float(np.max(pr.s)) for pr in preps)
    reasons = []
    overlap = min(fit_hi, test_hi) - max(fit_lo, test_lo)
    if overlap < 0.5 * (test_hi - test_lo):
        reasons.append("the test temperatures (%.1f-%.1f C) lie mostly outside the range the "
                       "profile was fitted on (%.1f-%.1f C): its rate law is extrapolated"
                       % (test_lo, test_hi, fit_lo, fit_hi))
    reasons += fit_warnings(cal.fit)
    if not cal.fit.has_ambient and ambient_c is None:
        reasons.append("no ambient reading: the equilibrium is inferred from the slope with "
                       "the typical rate, so a wrong rate moves the equilibrium too")
    if len(cal.preps) < 3:
        reasons.append("calibrated on %d use(s): the spread across uses is unknown"
                       % len(cal.preps))
    improves = bool(np.isfinite(e_prof) and np.isfinite(e_dev) and e_prof < e_dev)
    return {"improves": improves, "median_rel_error_profile_model": e_prof,
            "median_rel_error_device": e_dev, "pairs": len(per_pair),
            "fit_range_c": (fit_lo, fit_hi), "test_range_c": (test_lo, test_hi),
            "reasons": reasons}


# ------------------------------------------------------------- the pipeline
class Calibration:
    """Everything :func:`calibrate` learned; see :meth:`as_dict` for the fields and units."""

    def __init__(self, **kw):
        self.__dict__.update(kw)

    def as_dict(self):
        """JSON-ready dict (units in the key names or in ``units``)."""
        p = self.profile
        fit = self.fit
        d = {
            "format": "tinytherm vessel profile (host_sim.calibrate)",
            "profile": {
                "heater": p.heater, "rate_per_s": p.rate_per_s, "rate_log_sd": p.rate_log_sd,
                "eq_offset_c": p.eq_offset_c, "eq_offset_sd_c": p.eq_offset_sd_c,
                "gain_k_per_s": p.gain_k_per_s, "gain_rel_sd": p.gain_rel_sd,
                "probe_lag_s": p.probe_lag_s, "rate_exponent": p.rate_exponent,
                "log_q_low": list(p.log_q_low), "log_q_high": list(p.log_q_high),
                "diff_ref_c": tp.DIFF_REF_C, "bin_edges_s": list(tp.BIN_EDGES_S),
            },
            "blob_hex": p.to_blob().hex(),
            "heater_lag_s": fit.heater_lag_s,
            "has_ambient": fit.has_ambient,
            "traces": [{"source": str(pr.trace.source), "rows": len(pr.trace),
                        "skipped_rows": int(getattr(pr.trace, "skipped_rows", 0)),
                        "fill_kg": pr.fill,
                        "rate_per_s": float(fit.rate_per_s[i]), "eq_c": float(fit.eq_c[i]),
                        "offset_c": None if not fit.has_ambient else float(fit.offset_c[i]),
                        "gain_k_per_s": float(fit.gain_k_per_s[i]),
                        "residual_rms_k_per_s": float(fit.rms_k_per_s[i])}
                       for i, pr in enumerate(self.preps)],
            "fill_scaling": self.fill_scaling,
            "table_pairs_per_bin": self.table_counts,
            "cross_validation": self.cv,
            "units": {"rate_per_s": "1/s at |T-E| = diff_ref_c K", "eq_offset_c": "deg C",
                      "gain_k_per_s": "K/s at full duty", "probe_lag_s": "s",
                      "heater_lag_s": "s", "log_q_*": "ln(actual/predicted remaining time)",
                      "bin_edges_s": "predicted remaining time, s"},
        }
        return d


def calibrate(traces, fills=None, ambient_c=None, folds=5, smooth_s=60.0, settings=None,
              progress=True):
    """Fit dynamics, the conformal interval table and the k-fold CV figures.

    ``traces``: list of :class:`host_sim.trace_io.Trace` of one vessel;
    ``fills``: list of fills (kg) or None; ``ambient_c``: room (deg C) for
    traces without an ambient column; ``settings``: estimator keyword
    arguments for the replay. Returns :class:`Calibration`.
    """
    if len(traces) < 1:
        raise ValueError("calibrate needs at least one trace")
    fills = list(fills) if fills is not None else [None] * len(traces)
    if len(fills) != len(traces):
        raise ValueError("--fill-kg needs one value per trace (%d traces, %d fills)"
                         % (len(traces), len(fills)))
    preps = [prepare(tr, smooth_s=smooth_s, fill_kg=f, ambient_c=ambient_c)
             for tr, f in zip(traces, fills)]
    heater = any(tr.heater is not None and np.any(np.asarray(tr.heater) > 0.0) for tr in traces)
    fit = fit_dynamics(preps, heater)
    bar = _bar(len(preps), "replay (no profile)", progress)
    pairs_by_trace = []
    for pr in preps:
        pairs_by_trace.append(replay_pairs(pr, heater, settings))
        bar.update(1)
    bar.close()
    all_pairs = [p for ps in pairs_by_trace for p in ps]
    table = conformal_table(all_pairs)
    prof = profile_from_fit(fit, None if table is None else table[:2])
    scaling = None
    if all(f is not None for f in fills):
        ks = fill_scaling(fills, fit.rate_per_s)
        gs = fill_scaling(fills, fit.gain_k_per_s) if heater else None
        scaling = {"rate_exponent_in_fill": None if ks is None else ks[0],
                   "rate_per_s_at_median_fill": None if ks is None else ks[1],
                   "gain_exponent_in_fill": None if gs is None else gs[0],
                   "gain_k_per_s_at_median_fill": None if gs is None else gs[1],
                   "median_fill_kg": None if ks is None else ks[2]}
    cv = cross_validate(preps, pairs_by_trace, heater, folds, ambient_c, progress)
    return Calibration(profile=prof, fit=fit, preps=preps, pairs=all_pairs,
                       pairs_by_trace=pairs_by_trace, fill_scaling=scaling,
                       table_counts=None if table is None else table[2], cv=cv,
                       ambient_c=ambient_c)


def cross_validate(preps, pairs_by_trace, heater, folds, ambient_c=None, progress=True):
    """k-fold CV by trace; a dict of figures (see :func:`calibrate`), or a reason why not."""
    m = len(preps)
    k = min(int(folds), m)
    if k < 2:
        return {"folds": 0, "reason": "cross-validation needs at least 2 traces"}
    fold_of = np.arange(m) % k
    cov_dev, cov_prof, err_prof, err_dev = [], [], [], []
    curves = []
    bar = _bar(k, "cross-validation", progress)
    for f in range(k):
        train = [i for i in range(m) if fold_of[i] != f]
        test = [i for i in range(m) if fold_of[i] == f]
        fit = fit_dynamics([preps[i] for i in train], heater)
        table = conformal_table([p for i in train for p in pairs_by_trace[i]])
        prof = profile_from_fit(fit, None if table is None else table[:2])
        held = [p for i in test for p in pairs_by_trace[i]]
        if not held:
            bar.update(1)
            continue
        cov_dev.append((coverage(held), len(held)))
        cov_prof.append((coverage(held, prof), len(held)))
        e_p, e_d, per_pair = forecast_errors(prof, held, fit.heater_lag_s, ambient_c)
        if np.isfinite(e_p):
            err_prof.append((e_p, len(per_pair)))
            err_dev.append((e_d, len(per_pair)))
        for p, rows, ep, ed in per_pair:
            curves.append((p.frac[rows], ep, ed))
        bar.update(1)
    bar.close()

    def wmean(v):
        v = [(a, w) for a, w in v if np.isfinite(a)]
        return float(sum(a * w for a, w in v) / sum(w for _, w in v)) if v else float("nan")
    out = {"folds": k,
           "coverage_device_interval": wmean(cov_dev),
           "coverage_profile_interval": wmean(cov_prof),
           "median_rel_error_device": wmean(err_dev),
           "median_rel_error_profile_model": wmean(err_prof)}
    edges = np.linspace(0.0, 1.0, 11)
    prof_curve, dev_curve = [], []
    if curves:
        fr = np.concatenate([c[0] for c in curves])
        ep = np.concatenate([c[1] for c in curves])
        ed = np.concatenate([c[2] for c in curves])
        for a, b in zip(edges[:-1], edges[1:]):
            sel = (fr >= a) & (fr < b)
            prof_curve.append(float(np.median(ep[sel])) if np.any(sel) else None)
            dev_curve.append(float(np.median(ed[sel])) if np.any(sel) else None)
    out["error_by_elapsed_fraction"] = {"edges": edges.tolist(), "device": dev_curve,
                                        "profile_model": prof_curve}
    gain = out["median_rel_error_profile_model"] / out["median_rel_error_device"] \
        if out["median_rel_error_device"] else float("nan")
    out["error_ratio_profile_model_to_device"] = gain
    return out


class _NoBar:
    def update(self, n):
        pass

    def close(self):
        pass


def _bar(total, desc, on):
    if not on:
        return _NoBar()
    try:
        from tqdm import tqdm
    except ImportError:
        return _NoBar()
    return tqdm(total=total, desc=desc, unit="step", file=sys.stderr, leave=False)


# -------------------------------------------------------------- report, I/O
def fit_warnings(fit):
    """Plain-language warnings about a :class:`DynamicsFit` (parameters at their bounds)."""
    out = []
    if fit.rate_exponent >= 2.49 or fit.rate_exponent <= 0.51:
        out.append("rate exponent at its bound (%.2f): the rate changes along the approach "
                   "more than a power law towards one equilibrium can show (a fast early "
                   "transient such as a cold vessel wall?); the fitted equilibrium offset is "
                   "then an empirical value, not the room" % fit.rate_exponent)
    if fit.has_ambient and np.any(np.abs(fit.offset_c) > 15.0):
        out.append("equilibrium offset beyond 15 C on some uses: not a physical ambient offset")
    if not fit.converged:
        out.append("the least-squares fit stopped before converging")
    return out


def report_lines(cal):
    """Human-readable summary of a :class:`Calibration`, with units."""
    p = cal.profile
    fit = cal.fit
    lines = ["calibrated on %d trace(s), %s" % (len(cal.preps),
                                                 "heater" if p.heater else "no heater"),
             "  rate k at |T-E| = %.0f K   %.3g 1/s (time constant %.0f s), "
             "spread of ln k across uses %.3f" % (tp.DIFF_REF_C, p.rate_per_s,
                                                 1.0 / p.rate_per_s, p.rate_log_sd),
             "  rate exponent n              %.3f (1 = first order; dT/dt = -a|T-E|^n)"
             % p.rate_exponent,
             "  probe lag                    %.1f s" % p.probe_lag_s]
    if fit.has_ambient:
        lines.append("  equilibrium - ambient        %+.2f C (sd %.2f C across uses)"
                     % (p.eq_offset_c, p.eq_offset_sd_c))
    else:
        lines.append("  equilibrium - ambient        not learned (no ambient column or "
                     "--ambient); equilibria spread %.2f C across uses" % p.eq_offset_sd_c)
    if p.heater:
        lines.append("  heater gain at full duty     %.4g K/s (relative spread %.3f), "
                     "heater lag %.1f s" % (p.gain_k_per_s, p.gain_rel_sd, fit.heater_lag_s))
    if cal.fill_scaling:
        fs = cal.fill_scaling
        if fs["rate_exponent_in_fill"] is not None:
            lines.append("  fill scaling                 k ~ fill^%.2f (k = %.3g 1/s at %.3g kg)"
                         % (fs["rate_exponent_in_fill"], fs["rate_per_s_at_median_fill"],
                            fs["median_fill_kg"]))
        if fs.get("gain_exponent_in_fill") is not None:
            lines.append("                               g ~ fill^%.2f (g = %.3g K/s at %.3g kg)"
                         % (fs["gain_exponent_in_fill"], fs["gain_k_per_s_at_median_fill"],
                            fs["median_fill_kg"]))
    lines.append("  80 %% interval, ln(actual/predicted) by predicted remaining time "
                 "(<60 s, 60-300 s, 300-1200 s, >1200 s; pairs per bin %s):"
                 % (cal.table_counts,))
    lines.append("    10 %%: %s" % "  ".join("%+.3f" % v for v in p.log_q_low))
    lines.append("    90 %%: %s" % "  ".join("%+.3f" % v for v in p.log_q_high))
    for warning in fit_warnings(fit):
        lines.append("  warning: " + warning)
    cv = cal.cv
    if cv.get("folds"):
        lines.append("  cross-validated by trace (%d folds, held-out traces):" % cv["folds"])
        lines.append("    80 %% interval coverage: device's own %.3f, with the profile's table %.3f"
                     % (cv["coverage_device_interval"], cv["coverage_profile_interval"]))
        lines.append("    median relative error: device without profile %.3f, profile model "
                     "alone %.3f (ratio %.2f)" % (cv["median_rel_error_device"],
                                                  cv["median_rel_error_profile_model"],
                                                  cv["error_ratio_profile_model_to_device"]))
    else:
        lines.append("  no cross-validation: %s" % cv.get("reason"))
    return lines


def write_outputs(cal, out_path, plots=True):
    """Write PROFILE.json, PROFILE.bin, PROFILE.hex (and the PNGs); returns the paths."""
    base = out_path[:-5] if out_path.endswith(".json") else out_path
    paths = [out_path, base + ".bin", base + ".hex"]
    with open(out_path, "w") as fh:
        json.dump(cal.as_dict(), fh, indent=2, sort_keys=True, default=_json_default)
        fh.write("\n")
    blob = cal.profile.to_blob()
    with open(base + ".bin", "wb") as fh:
        fh.write(blob)
    with open(base + ".hex", "w") as fh:
        fh.write(blob.hex() + "\n")
    if plots:
        paths += plot_calibration(cal, base)
    return paths


def _json_default(x):
    if isinstance(x, (np.floating, np.integer)):
        return x.item()
    if isinstance(x, np.ndarray):
        return x.tolist()
    raise TypeError(type(x))


def load_profile(path):
    """``(VesselProfile or None, reason code)`` from a PROFILE.json, .hex or .bin file.

    Always goes through the device form (:meth:`VesselProfile.from_blob`), so
    the host uses the profile exactly as the device would.
    """
    if path.endswith(".bin"):
        with open(path, "rb") as fh:
            blob = fh.read()
    else:
        with open(path) as fh:
            text = fh.read()
        blob_hex = json.loads(text)["blob_hex"] if path.endswith(".json") else text.strip()
        try:
            blob = bytes.fromhex(blob_hex)
        except ValueError:
            return None, tp.REASON_LENGTH
    return VesselProfile.from_blob(blob)


def simulate_fit(prep, fit, i):
    """Model sensor reading (deg C) of use ``i`` on its grid, from the fitted parameters."""
    n = fit.rate_exponent
    a = fit.rate_per_s[i] / tp.DIFF_REF_C ** (n - 1.0)
    eq = (prep.amb + fit.offset_c[i]) if fit.has_ambient else np.full(len(prep.t), fit.eq_c[i])
    q = heater_state(prep.u, prep.dt, fit.heater_lag_s) if fit.heater else np.zeros(len(prep.t))
    g = fit.gain_k_per_s[i]
    j0 = prep.edge
    temp = prep.s[j0] + fit.probe_lag_s * prep.ds[j0]
    sens = prep.s[j0]
    out = np.full(len(prep.t), np.nan)
    out[j0] = sens
    sub = max(1, int(math.ceil(prep.dt / 1.0)))
    h = prep.dt / sub
    lag = max(fit.probe_lag_s, 1e-6)
    for j in range(j0 + 1, len(prep.t)):
        for _ in range(sub):
            d = temp - eq[j]
            temp = temp + h * (-a * math.copysign(abs(d) ** n, d) + g * q[j])
            sens = sens + (temp - sens) * (1.0 - math.exp(-h / lag))
        out[j] = sens
    return out


def plot_calibration(cal, base):
    """PNG plots: fit per trace (``base_fit.png``), error vs elapsed fraction (``base_error.png``)."""
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    paths = []
    m = len(cal.preps)
    cols = min(4, m)
    rows = int(math.ceil(m / cols))
    fig, axes = plt.subplots(rows, cols, figsize=(3.2 * cols, 2.6 * rows), squeeze=False)
    for i, pr in enumerate(cal.preps):
        ax = axes[i // cols][i % cols]
        ax.plot(pr.raw_t, pr.raw_y, ".", ms=1.5, color="0.5", label="readings")
        ax.plot(pr.t, simulate_fit(pr, cal.fit, i), "-", color="C3", lw=1.0, label="fitted model")
        ax.set_title(os.path.basename(str(pr.trace.source))[:28], fontsize=7)
        ax.tick_params(labelsize=6)
        if i == 0:
            ax.legend(fontsize=6)
    for j in range(m, rows * cols):
        axes[j // cols][j % cols].axis("off")
    fig.supxlabel("time, s", fontsize=8)
    fig.supylabel("temperature, C", fontsize=8)
    fig.tight_layout()
    fig.savefig(base + "_fit.png", dpi=110)
    plt.close(fig)
    paths.append(base + "_fit.png")
    curve = cal.cv.get("error_by_elapsed_fraction") if cal.cv.get("folds") else None
    fig, ax = plt.subplots(figsize=(6, 3.5))
    if curve and curve["device"]:
        mid = 0.5 * (np.array(curve["edges"][:-1]) + np.array(curve["edges"][1:]))
        dev = [np.nan if v is None else v for v in curve["device"]]
        pro = [np.nan if v is None else v for v in curve["profile_model"]]
        ax.plot(mid, dev, "o-", label="device estimator, no profile")
        ax.plot(mid, pro, "s-", label="profile model (cross-validated)")
        ax.set_yscale("log")
        ax.legend(fontsize=8)
    else:
        ax.text(0.5, 0.5, "no cross-validation (needs 2+ traces)", ha="center",
                transform=ax.transAxes)
    ax.set_xlabel("elapsed fraction of the approach")
    ax.set_ylabel("median |relative error| of remaining time")
    ax.set_title("held-out traces", fontsize=9)
    fig.tight_layout()
    fig.savefig(base + "_error.png", dpi=110)
    plt.close(fig)
    paths.append(base + "_error.png")
    return paths


# ----------------------------------------------------------------- the CLI
def add_parser(sub):
    """Add the ``calibrate`` subcommand to an argparse subparsers object."""
    c = sub.add_parser(
        "calibrate", help="learn a vessel profile from many traces of one vessel",
        description="Fit a vessel's dynamics (power-law rate, probe lag, ambient offset, heater "
                    "gain and lag) across TRACE.csv files of one vessel, calibrate the ETA "
                    "interval split-conformally with k-fold cross-validation by trace, and "
                    "write PROFILE.json, the device blob (.bin, .hex) and PNG plots. Traces "
                    "are in the replay format; no target is needed.")
    c.add_argument("traces", nargs="+", metavar="TRACE.csv")
    c.add_argument("--out", required=True, metavar="PROFILE.json", help="profile JSON to write")
    c.add_argument("--fill-kg", type=float, nargs="+", metavar="KG", default=None,
                   help="fill of each trace in kg (one per trace, same order): fits how the "
                        "rate and gain scale with the fill")
    c.add_argument("--ambient", type=float, metavar="C", default=None,
                   help="room temperature, deg C, for traces without an ambient_c column")
    c.add_argument("--folds", type=int, default=5, metavar="K",
                   help="cross-validation folds by trace (default 5)")
    c.add_argument("--smooth-s", type=float, default=60.0, metavar="S",
                   help="smoothing window for the derivatives, seconds (default 60)")
    c.add_argument("--fahrenheit", action="store_true",
                   help="the traces' temp_c/ambient_c columns hold deg F")
    c.add_argument("--strict", action="store_true",
                   help="stop at a malformed row instead of skipping and counting it")
    c.add_argument("--no-plots", action="store_true", help="do not write the PNG plots")
    c.set_defaults(func=cmd_calibrate)
    return c


def cmd_calibrate(args):
    """Run the ``calibrate`` subcommand; returns the exit code."""
    from host_sim.trace_io import TraceError, read_trace
    traces = []
    for path in args.traces:
        try:
            tr = read_trace(path, fahrenheit=args.fahrenheit, skip_bad=not args.strict)
        except (OSError, TraceError) as exc:
            print("error: %s" % exc, file=sys.stderr)
            return 2
        if tr.skipped_rows:
            print("%s: skipped %d bad row(s) (a torn last row after a power loss is one)"
                  % (path, tr.skipped_rows), file=sys.stderr)
        traces.append(tr)
    try:
        cal = calibrate(traces, fills=args.fill_kg, ambient_c=args.ambient, folds=args.folds,
                        smooth_s=args.smooth_s)
    except ValueError as exc:
        print("error: %s" % exc, file=sys.stderr)
        return 2
    for line in report_lines(cal):
        print(line)
    paths = write_outputs(cal, args.out, plots=not args.no_plots)
    print("device blob: %d bytes, %s" % (tp.PROFILE_SIZE, cal.profile.to_blob().hex()))
    print("written: %s" % ", ".join(paths))
    return 0
