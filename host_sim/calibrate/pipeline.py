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
   *with* the profile of step 1 (its device blob; the interval table not yet
   known, so the default ``+-1.28 rate_log_sd``, which the answer uses only
   to reject a failing profile) towards three targets along its approach
   (30 %, 55 %, 80 % of the way), and ``r = ln(actual / predicted remaining
   time)`` is collected on every row the device shows an answer, as at the
   answer's work-out (the device looks the table up then and counts the bounds
   down with the answer until the next block): the table describes the answers
   the device gives with the profile. The 10 % and 90 %
   points of ``r`` per horizon bin (predicted remaining time below 60 s,
   60-300 s, 300-1200 s, above) are split-conformal quantiles: each
   (trace, target) pair weighs the same, the levels are widened by the
   finite-sample factor ``(1 + 1/m)`` for ``m`` pairs.
3. **Cross-validation by trace** (``--folds``, default 5): the profile is
   refitted (dynamics and table) without each fold and checked on it:
   interval coverage of the device with that profile (its calibrated 80 %
   interval) against the device's own without a profile, and the median
   relative error of the profile model's own forecast (typical parameters,
   current temperature from the readings; a host-side stand-in until the
   device estimator takes a profile) against the device's answer.

4. **The law or the device's own fit.** A passive vessel whose profile model
   forecast worse than the device without a profile in step 3 gets
   ``own_fit`` (:func:`own_fit`): the device answers with its own fit and takes
   only the interval from the table, which step 2 then calibrates on those
   answers (the figures of step 3 stay the law's).

Writes ``PROFILE.json`` (everything, with units), ``PROFILE.bin`` and
``PROFILE.hex`` (the device blob, :meth:`tinytherm.profile.VesselProfile.to_blob`)
and, unless ``--no-plots``, ``PROFILE_fit.png`` and ``PROFILE_error.png``.
"""
import sys

import numpy as np

from host_sim.calibrate.checks import check_arguments, data_warnings
from host_sim.calibrate.conformal import conformal_table, coverage, replay_pairs
from host_sim.calibrate.dynamics import fill_scaling, fit_dynamics, profile_from_fit
from host_sim.calibrate.forecast import forecast_errors
from host_sim.calibrate.prepare import prepare
from host_sim.calibrate.report import fit_warnings
from tinytherm import profile as tp


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
                "own_fit": p.own_fit,
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
            "warnings": list(getattr(self, "warnings", [])),
            "units": {"rate_per_s": "1/s at |T-E| = diff_ref_c K", "eq_offset_c": "deg C",
                      "gain_k_per_s": "K/s at full duty", "probe_lag_s": "s",
                      "heater_lag_s": "s", "log_q_*": "ln(actual/predicted remaining time)",
                      "bin_edges_s": "predicted remaining time, s"},
        }
        return d


def calibrate(traces, fills=None, ambient_c=None, folds=5, smooth_s=60.0, settings=None,
              progress=True):
    """Fit dynamics, the conformal interval table and the k-fold CV figures.

    ``traces``: list of :class:`host_sim.replay.trace_io.Trace` of one vessel;
    ``fills``: list of fills (kg) or None; ``ambient_c``: room (deg C) for
    traces without an ambient column; ``settings``: the
    :class:`host_sim.replay.settings.ReplaySettings` of the device's replays
    (no ``heater``: the traces decide it; no ``profile``). Returns :class:`Calibration`.
    """
    check_arguments(len(traces), fills, ambient_c, folds, smooth_s)
    fills = list(fills) if fills is not None else [None] * len(traces)
    preps = [prepare(tr, smooth_s=smooth_s, fill_kg=f, ambient_c=ambient_c)
             for tr, f in zip(traces, fills)]
    heater = any(tr.heater is not None and np.any(np.asarray(tr.heater) > 0.0) for tr in traces)
    fit = fit_dynamics(preps, heater)
    pairs_by_trace = []
    with _bar(len(preps), "replay (no profile)", progress) as bar:
        for pr in preps:
            pairs_by_trace.append(replay_pairs(pr, heater, settings))
            bar.update(1)
    all_pairs = [p for ps in pairs_by_trace for p in ps]
    cv = cross_validate(preps, pairs_by_trace, heater, folds, ambient_c, progress, settings)
    own = own_fit(heater, cv)
    table = profile_table(preps, heater, profile_from_fit(fit, None, own), settings, progress,
                          pairs_by_trace if own else None)
    prof = profile_from_fit(fit, None if table is None else table[:2], own)
    scaling = None
    if all(f is not None for f in fills):
        ks = fill_scaling(fills, fit.rate_per_s)
        gs = fill_scaling(fills, fit.gain_k_per_s) if heater else None
        scaling = {"rate_exponent_in_fill": None if ks is None else ks[0],
                   "rate_per_s_at_median_fill": None if ks is None else ks[1],
                   "gain_exponent_in_fill": None if gs is None else gs[0],
                   "gain_k_per_s_at_median_fill": None if gs is None else gs[1],
                   "median_fill_kg": None if ks is None else ks[2]}
    cal = Calibration(profile=prof, fit=fit, preps=preps, pairs=all_pairs,
                      pairs_by_trace=pairs_by_trace, fill_scaling=scaling,
                      table_counts=None if table is None else table[2], cv=cv,
                      ambient_c=ambient_c)
    cal.warnings = data_warnings(cal)
    return cal


def own_fit(heater, cv):
    """True when the device should answer with its own fit and take only the interval
    from the profile (:attr:`tinytherm.profile.VesselProfile.own_fit`): a passive vessel
    whose law forecast worse than the device without a profile on the held-out uses of
    the cross-validation (``cv``). A passive liquid's answer with a profile is the law's
    (the host's profile model stands in for it: the mug's device with the profile
    0.039 against the model's 0.042, the flask's 0.107 against 0.102, tune uses at
    7ff18f6); a heated vessel's is the fit's with the profile's priors, which the
    model does not show (the kettle's model 0.12 against the device's 0.08, the
    device with the profile 0.048 against 0.066 without), so it keeps the profile."""
    return (not heater and cv.get("folds", 0) > 0
            and cv["median_rel_error_profile_model"] > cv["median_rel_error_device"])


def profile_table(preps, heater, dynamics, settings=None, progress=False, fit_pairs=None):
    """The split-conformal table of the device's answers with the profile ``dynamics``
    (a :class:`VesselProfile` without its table): ``(low, high, counts)`` or None.
    ``fit_pairs`` (own fit): the pairs of the device without a profile, per prep; the
    table then holds only the rows that device shows too, the fit's own answers (the
    law's first answers from a probe still meeting the drink, before the fit shows one,
    take their own interval: ``VesselProfile.first_answer``)."""
    pairs = []
    with _bar(len(preps), "replay (with the profile)", progress) as bar:
        for i, pr in enumerate(preps):
            got = replay_pairs(pr, heater, settings, profile=dynamics)
            if fit_pairs is not None:
                if len(got) != len(fit_pairs[i]):
                    raise ValueError("fit_pairs: another set of targets")
                for p, q in zip(got, fit_pairs[i]):
                    p.shown = p.shown & q.shown
            pairs += got
            bar.update(1)
    return conformal_table(pairs)


def cross_validate(preps, pairs_by_trace, heater, folds, ambient_c=None, progress=True,
                   settings=None):
    """k-fold CV by trace; a dict of figures (see :func:`calibrate`), or a reason why not."""
    m = len(preps)
    k = min(int(folds), m)
    if k < 2:
        return {"folds": 0, "reason": "cross-validation needs at least 2 traces"}
    fold_of = np.arange(m) % k
    cov_dev, cov_prof, err_prof, err_dev = [], [], [], []
    curves = []
    with _bar(k, "cross-validation", progress) as bar:
        _folds(preps, pairs_by_trace, heater, ambient_c, fold_of, k, bar, cov_dev, cov_prof,
               err_prof, err_dev, curves, settings)
    return _cv_figures(k, cov_dev, cov_prof, err_prof, err_dev, curves)


def _folds(preps, pairs_by_trace, heater, ambient_c, fold_of, k, bar, cov_dev, cov_prof,
           err_prof, err_dev, curves, settings=None):
    """Refit without each fold and score the held-out traces (appends to the lists)."""
    m = len(preps)
    for f in range(k):
        train = [i for i in range(m) if fold_of[i] != f]
        test = [i for i in range(m) if fold_of[i] == f]
        fit = fit_dynamics([preps[i] for i in train], heater)
        table = profile_table([preps[i] for i in train], heater, profile_from_fit(fit, None),
                              settings)
        prof = profile_from_fit(fit, None if table is None else table[:2])
        held = [p for i in test for p in pairs_by_trace[i]]
        if not held:
            bar.update(1)
            continue
        held_with = [p for i in test
                     for p in replay_pairs(preps[i], heater, settings, profile=prof)]
        cov_dev.append((coverage(held), len(held)))
        cov_prof.append((coverage(held_with), len(held_with)))
        e_p, e_d, per_pair = forecast_errors(prof, held, fit.heater_lag_s, ambient_c)
        if np.isfinite(e_p):
            err_prof.append((e_p, len(per_pair)))
            err_dev.append((e_d, len(per_pair)))
        for p, rows, ep, ed in per_pair:
            curves.append((p.frac[rows], ep, ed))
        bar.update(1)


def _cv_figures(k, cov_dev, cov_prof, err_prof, err_dev, curves):
    """The cross-validation dict of :func:`cross_validate` from the per-fold figures."""
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

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return False


def _bar(total, desc, on):
    if not on:
        return _NoBar()
    try:
        from tqdm import tqdm
    except ImportError:
        return _NoBar()
    return tqdm(total=total, desc=desc, unit="step", file=sys.stderr, leave=False)
