"""PNG plots of a replay (matplotlib, Agg backend: no display needed).

Top panel: the readings, the estimator's smoothed temperature, the target,
the curve the estimator had fitted at one moment of the approach with its
interval band (the curve shifted to arrive at the low and high ends of the
ETA interval), and forecasts from a few other moments. Bottom panel: the
ETA and its interval against time, with the true remaining time.
"""
import math

import numpy as np


def _forecast_curve(row, horizon_s, points=200):
    """Times (s after the row) and temperatures (deg C) of the fitted model."""
    k = row["rate_per_s"]
    eq = row["equilibrium_c"]
    start = row["temp_est_c"]
    if k is None or eq is None or start is None or not k > 0.0:
        return None, None
    tau = np.linspace(0.0, horizon_s, points)
    return tau, eq + (start - eq) * np.exp(-k * tau)


def _snapshot_rows(result, t0, t_end, fractions):
    """Indices of rows nearest the given fractions of [t0, t_end] that have a forecast."""
    rows = result.rows
    times = np.array([r["time_s"] for r in rows])
    picks = []
    for f in fractions:
        want = t0 + f * (t_end - t0)
        order = np.argsort(np.abs(times - want))
        for i in order[:50]:
            r = rows[i]
            if r["eta_s"] is not None and r["rate_per_s"] and r["rate_per_s"] > 0.0 \
                    and r["temp_est_c"] is not None and r["eta_s"] > 0.0:
                picks.append(int(i))
                break
    return picks


def plot_replay(trace, result, out_path, crossing_s=None, title=None, clean_c=None):
    """Write the two-panel replay figure to ``out_path`` (PNG).

    ``trace``: the :class:`host_sim.trace_io.Trace`; ``result``: the
    :class:`host_sim.replay.ReplayResult`; ``crossing_s``: the true (or
    trace-derived) crossing time in seconds, or None; ``clean_c``: optional
    noise-free sensor signal at the trace times (deg C), drawn if given.
    """
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    target = result.target_c
    t = trace.time_s
    minutes = t / 60.0
    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(9, 7.5), sharex=True)
    ax1.plot(minutes, trace.temp_c, ".", ms=2.5, color="0.55", label="readings")
    if clean_c is not None:
        ax1.plot(minutes, clean_c, "-", lw=0.8, color="0.3", label="noise-free sensor signal")
    est = np.array([np.nan if r["temp_est_c"] is None else r["temp_est_c"] for r in result.rows])
    ax1.plot(minutes, est, "-", lw=1.2, color="tab:blue", label="estimator's current temperature")
    ax1.axhline(target, color="tab:red", lw=1.0, ls="--", label="target %.1f C" % target)
    if trace.has_ambient:
        ax1.plot(minutes, trace.ambient_c, "-", lw=0.8, color="tab:cyan", label="ambient sensor")
    t_end = crossing_s if crossing_s is not None else t[-1]
    picks = _snapshot_rows(result, t[0], t_end, (0.5, 0.25, 0.75))
    for n, i in enumerate(picks):
        r = result.rows[i]
        span = min(max(r["eta_high_s"] if r["eta_high_s"] is not None and math.isfinite(
            r["eta_high_s"]) else 2.0 * r["eta_s"], r["eta_s"]) * 1.2, 3.0 * (t[-1] - t[0]))
        tau, curve = _forecast_curve(r, span)
        if tau is None:
            continue
        x = (r["time_s"] + tau) / 60.0
        if n == 0:
            ax1.plot(x, curve, "-", lw=1.6, color="tab:orange",
                     label="fitted curve at %.1f min" % (r["time_s"] / 60.0))
            low, high = r["eta_low_s"], r["eta_high_s"]
            if low is not None and high is not None:
                eta = r["eta_s"]
                early = np.interp(tau + (eta - low), tau, curve, right=np.nan)
                late = np.interp(tau - (high - eta), tau, curve, left=curve[0]) \
                    if math.isfinite(high) else np.full_like(curve, curve[0])
                ax1.fill_between(x, early, late, color="tab:orange", alpha=0.2,
                                 label="%d%% interval band" % round(100 * result.settings.get(
                                     "interval", 0.8)))
        else:
            ax1.plot(x, curve, ":", lw=1.0, color="tab:orange")
    if crossing_s is not None:
        for ax in (ax1, ax2):
            ax.axvline(crossing_s / 60.0, color="k", lw=0.8, ls=":")
    lo_t, hi_t = np.nanmin(trace.temp_c), np.nanmax(trace.temp_c)
    pad = 0.1 * (hi_t - lo_t + 1.0)
    ax1.set_ylim(min(lo_t, target) - pad, max(hi_t, target) + pad)
    ax1.set_ylabel("temperature (deg C)")
    ax1.legend(loc="best", fontsize=7)
    ax1.grid(alpha=0.3)

    def col(name):
        return np.array([np.nan if r[name] is None else r[name] for r in result.rows], dtype=float)

    eta, low, high = col("eta_s"), col("eta_low_s"), col("eta_high_s")
    shown = np.array([r["status"] in ("tracking", "arrived") for r in result.rows])
    cap = 3.0 * (t_end - t[0]) + 60.0
    high_c = np.where(np.isfinite(high), high, cap)
    ax2.fill_between(minutes, low / 60.0, np.minimum(high_c, cap) / 60.0, color="tab:blue",
                     alpha=0.2, label="ETA interval")
    ax2.plot(minutes, np.where(shown, np.nan, eta) / 60.0, "-", lw=0.8, color="tab:gray",
             label="ETA (settling, not shown)")
    ax2.plot(minutes, np.where(shown, eta, np.nan) / 60.0, "-", lw=1.4, color="tab:blue",
             label="ETA (tracking)")
    if crossing_s is not None:
        before = t <= crossing_s
        ax2.plot(minutes[before], (crossing_s - t[before]) / 60.0, "k--", lw=1.0,
                 label="true remaining time")
    ax2.set_ylim(0.0, cap / 60.0)
    right = max(t[-1], crossing_s if crossing_s is not None else t[-1])
    ax2.set_xlim(t[0] / 60.0, (t[0] + 1.05 * (right - t[0])) / 60.0)
    ax2.set_xlabel("time since start (min)")
    ax2.set_ylabel("time to target (min)")
    ax2.legend(loc="upper right", fontsize=7)
    ax2.grid(alpha=0.3)
    if title:
        ax1.set_title(title)
    fig.tight_layout()
    fig.savefig(out_path, dpi=110)
    plt.close(fig)
    return out_path
