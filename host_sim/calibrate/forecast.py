"""The profile model's own forecast (a host-side stand-in for the device) and its errors."""
import math

import numpy as np

from host_sim.calibrate.prepare import signed_power
from tinytherm import profile as tp
from tinytherm.profile import VesselProfile


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
        return -a * signed_power(x - eq, n) + gain * qq, (duty - qq) / lag
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
