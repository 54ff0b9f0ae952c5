"""Report lines, the profile files (JSON, device blob) and the calibration plots."""
import json
import math
import os

import numpy as np

from host_sim.calibrate.prepare import heater_state
from tinytherm import profile as tp
from tinytherm.profile import VesselProfile


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
