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
    if p.own_fit:
        lines.append("  answers                      the device's own fit (own_fit: the law "
                     "forecast worse on held-out uses); the profile gives the interval")
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
    for warning in fit_warnings(fit) + list(getattr(cal, "warnings", [])):
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


def output_paths(out_path, plots=True):
    """Every file :func:`write_outputs` writes for ``out_path``, in order."""
    base = out_path[:-5] if out_path.endswith(".json") else out_path
    paths = [out_path, base + ".bin", base + ".hex"]
    if plots:
        paths += [base + "_fit.png", base + "_error.png"]
    return paths


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


MAX_PROFILE_BYTES = 1 << 20     # a PROFILE.json is a few KB; /dev/zero never ends
_PROFILE_FIELDS = ("rate_per_s", "rate_log_sd", "eq_offset_c", "eq_offset_sd_c",
                   "gain_k_per_s", "gain_rel_sd", "probe_lag_s", "rate_exponent")


def _read_bounded(path, binary):
    """The file's bytes (or UTF-8 text), refusing more than :data:`MAX_PROFILE_BYTES`."""
    try:
        with open(path, "rb") as fh:
            data = fh.read(MAX_PROFILE_BYTES + 1)
    except FileNotFoundError:
        raise ValueError("no such file") from None
    except IsADirectoryError:
        raise ValueError("is a folder, not a profile") from None
    except OSError as exc:
        raise ValueError(exc.strerror or str(exc)) from None
    if len(data) > MAX_PROFILE_BYTES:
        raise ValueError("larger than %d bytes: not a profile from 'calibrate'"
                         % MAX_PROFILE_BYTES)
    if binary:
        return data
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise ValueError("not UTF-8 text (a .bin blob? name it .bin)") from None


def _profile_json(text):
    """The dict of a PROFILE.json text; ValueError naming what is wrong with its shape."""
    try:
        doc = json.loads(text, parse_constant=_no_constant)
    except RecursionError:
        raise ValueError("JSON nested too deeply: not a profile from 'calibrate'") from None
    except json.JSONDecodeError as exc:
        raise ValueError("not JSON (%s at line %d column %d)" % (exc.msg, exc.lineno,
                                                                 exc.colno)) from None
    if not isinstance(doc, dict):
        raise ValueError("the JSON is %s, not an object with a blob_hex entry: not a "
                         "profile from 'calibrate'" % _json_kind(doc))
    if "blob_hex" not in doc:
        hint = " (this is a truth file from 'scenario')" if "crossing_time_s" in doc else ""
        raise ValueError("no blob_hex entry%s: give the PROFILE.json, .hex or .bin that "
                         "'calibrate' wrote" % hint)
    if not isinstance(doc["blob_hex"], str):
        raise ValueError("blob_hex is %s, not a hex string" % _json_kind(doc["blob_hex"]))
    return doc


def _no_constant(name):
    raise ValueError("JSON holds %s, not a number a profile can hold" % name)


def _json_kind(value):
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, (int, float)):
        return "a number"
    if isinstance(value, str):
        return "a string"
    if isinstance(value, list):
        return "a list"
    return "an object"


def _blob_of(path):
    """``(blob bytes, JSON dict or None)`` of a .json, .hex or .bin profile file."""
    if path.lower().endswith(".bin"):
        return _read_bounded(path, True), None
    text = _read_bounded(path, False)
    doc = None
    if path.lower().endswith(".json"):
        doc = _profile_json(text)
        blob_hex = doc["blob_hex"]
    else:
        blob_hex = text.strip()
    try:
        return bytes.fromhex(blob_hex), doc
    except ValueError:
        raise ValueError("blob_hex is not hexadecimal (%d characters, %d expected)"
                         % (len(blob_hex), 2 * tp.PROFILE_SIZE)) from None


def load_profile(path):
    """``(VesselProfile or None, reason code)`` from a PROFILE.json, .hex or .bin file.

    Always goes through the device form (:meth:`VesselProfile.from_blob`), so
    the host uses the profile exactly as the device would. A file that is not
    a profile at all (no such file, over :data:`MAX_PROFILE_BYTES`, JSON of
    another shape, not hexadecimal) raises ValueError with one line saying why.
    """
    blob, _ = _blob_of(path)
    return VesselProfile.from_blob(blob)


def profile_notes(path, profile, heater):
    """Warnings (list of str) about using the profile at ``path`` on this trace.

    ``profile``: the :class:`VesselProfile` the device form gave; ``heater``:
    whether the estimator runs with a heater. Says when the profile is for the
    other heater mode (the estimator then runs without it), and when a field
    of the JSON's ``profile`` section differs from the device blob (edited by
    hand: the blob is what the device, and so the replay, uses).
    """
    notes = []
    if profile is None:
        return notes
    if bool(profile.heater) != bool(heater):
        notes.append("--profile %s is for a vessel %s a heater but this run is %s one: the "
                     "estimator runs without the profile (%s)"
                     % (path, "with" if profile.heater else "without",
                        "with" if heater else "without",
                        "use --heater off" if profile.heater else
                        "calibrate on traces with a heater column"))
    try:
        _, doc = _blob_of(path)
    except ValueError:
        return notes
    fields = doc.get("profile") if doc else None
    if not isinstance(fields, dict):
        return notes
    edited = []
    for name in _PROFILE_FIELDS + ("heater",):
        if name not in fields:
            continue
        given, used = fields[name], getattr(profile, name)
        if name == "heater":
            same = given is used or given == used
        else:
            same = (isinstance(given, (int, float)) and not isinstance(given, bool)
                    and math.isfinite(given)
                    and abs(given - used) <= 1e-6 * max(1.0, abs(used)))
        if not same:
            edited.append("%s (JSON %r, blob %r)" % (name, given, used))
    if edited:
        notes.append("--profile %s: the JSON's profile section differs from its blob_hex in "
                     "%s: the device blob is what is used; to change a value, calibrate "
                     "again" % (path, ", ".join(edited[:4]) + (" and %d more" % (
                         len(edited) - 4) if len(edited) > 4 else "")))
    return notes


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
    from host_sim.replay.plots import TimeAxis
    paths = []
    m = len(cal.preps)
    # one time unit for every panel, as replay's plots choose it (minutes, hours when long)
    axis = TimeAxis(max((float(pr.raw_t[-1] - pr.raw_t[0]) for pr in cal.preps
                         if len(pr.raw_t)), default=0.0))
    cols = min(4, m)
    rows = int(math.ceil(m / cols))
    fig, axes = plt.subplots(rows, cols, figsize=(3.2 * cols, 2.6 * rows), squeeze=False)
    for i, pr in enumerate(cal.preps):
        ax = axes[i // cols][i % cols]
        ax.plot(axis.of(pr.raw_t), pr.raw_y, ".", ms=1.5, color="0.5", label="readings")
        ax.plot(axis.of(pr.t), simulate_fit(pr, cal.fit, i), "-", color="C3", lw=1.0,
                label="fitted model")
        ax.set_title(os.path.basename(str(pr.trace.source))[:28], fontsize=7)
        ax.tick_params(labelsize=6)
        if i == 0:
            ax.legend(fontsize=6)
    for j in range(m, rows * cols):
        axes[j // cols][j % cols].axis("off")
    fig.supxlabel(axis.label("time since the first reading"), fontsize=8)
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
