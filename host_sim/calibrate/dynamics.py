"""The dynamics fit: one joint robust least-squares fit of the power-law rate, probe lag,
ambient offset, heater gain and lag over all uses; the profile made from it.

See :mod:`host_sim.calibrate.pipeline` for the equations.
"""
import math

import numpy as np
from scipy.optimize import least_squares

from host_sim.calibrate.prepare import heater_state, signed_power
from tinytherm.profile import VesselProfile

PRIOR_SD = {"ln_a": 1.0, "offset_c": 3.0, "ln_g": 1.0, "eq_free_c": 15.0,
            "rate_exponent": 0.5, "offset_mean_c": 5.0}


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
            model = -a * signed_power(temp - eq, n)
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


def profile_from_fit(fit, table=None, own_fit=False):
    """A :class:`VesselProfile` from a :class:`DynamicsFit` (+ optional (low, high) table;
    ``own_fit``: :attr:`VesselProfile.own_fit`).

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
                         log_q_low=low, log_q_high=high, own_fit=own_fit)
