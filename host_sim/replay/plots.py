"""PNG plots of a replay (matplotlib, Agg backend: no display needed).

Top panel: the readings (rejected ones marked), the estimator's current
temperature, the target, the ambient sensor, events and the crossing, and
the curve the estimator had fitted at one moment of the approach, drawn
forward to its ETA, with the ETA interval as a band around it. Bottom panel:
the ETA against time, styled by status (tracking solid, settling grey,
disturbed orange; gathering, settling without an ETA, arrived, out of reach,
disturbed and sensor-fault stretches shaded),
its interval (an unbounded upper end is marked at the top edge, never drawn
as a spike), and the true remaining time. The ETA axis fits the data: values
above it are clipped and marked. Temperatures are drawn in deg C or deg F
(``unit``); times in one unit for the whole figure, minutes or hours by the
span (:class:`TimeAxis`).
"""
import math

import numpy as np

from tinytherm import model
from tinytherm import status as st

# status -> (label, colour) for the ETA line and the shaded stretches
_LINE = {st.TRACKING: ("ETA, tracking (shown as a countdown)", "tab:blue", "-", 1.6),
         st.ARRIVED: ("arrived", "tab:green", "-", 1.6),
         st.SETTLING: ("ETA, settling (too uncertain to show)", "0.55", "-", 0.9),
         st.DISTURBED: ("ETA, disturbed (re-learning after a change)", "tab:orange", "--", 1.1)}
_NO_ETA_SETTLING = -1   # pseudo-code: settling rows without an ETA
_SHADE = {st.GATHERING: ("gathering (no estimate yet)", "0.85"),
          _NO_ETA_SETTLING: ("settling, no ETA yet", "#ececec"),
          st.ARRIVED: ("arrived (at or past the target)", "#d6f0d6"),
          st.DISTURBED: ("disturbed", "moccasin"),
          st.SENSOR_FAULT: ("sensor fault (readings rejected)", "mistyrose"),
          st.OUT_OF_REACH: ("out of reach (levels off before the target)", "#dcdcf5")}


class ReplaySeries:
    """The per-row values a plot needs, as float arrays (NaN = no value).

    ``time_s`` s; ``temp_c``, ``ambient_c`` (or None), ``temp_est_c``,
    ``equilibrium_c`` deg C; ``eta_s``, ``eta_low_s``, ``eta_high_s`` s
    (``inf``: unbounded); ``rate_per_s`` 1/s; ``status``, ``verdict`` int
    codes; ``events`` list of (time_s, text); ``target_c`` deg C;
    ``interval`` the ETA interval's probability. May hold every k-th row of a
    long trace (the CLI keeps at most about 20,000).
    """

    def __init__(self, time_s, temp_c, temp_est_c, eta_s, eta_low_s, eta_high_s, status,
                 rate_per_s, equilibrium_c, target_c, interval=0.8, ambient_c=None,
                 verdict=None, events=()):
        def arr(v):
            return np.array([math.nan if x is None else float(x) for x in v], dtype=float)
        self.time_s = arr(time_s)
        self.temp_c = arr(temp_c)
        self.temp_est_c = arr(temp_est_c)
        self.eta_s, self.eta_low_s, self.eta_high_s = arr(eta_s), arr(eta_low_s), arr(eta_high_s)
        self.status = np.asarray(status, dtype=int)
        self.rate_per_s = arr(rate_per_s)
        self.equilibrium_c = arr(equilibrium_c)
        self.ambient_c = None if ambient_c is None else arr(ambient_c)
        self.verdict = (np.zeros(len(self.time_s), dtype=int) if verdict is None
                        else np.asarray(verdict, dtype=int))
        self.events = [(float(t), str(e)) for t, e in events if e]
        self.target_c = float(target_c)
        self.interval = float(interval)

    @classmethod
    def from_tuples(cls, rows, target_c, interval=0.8, events=(), has_ambient=False):
        """From (time_s, temp_c, ambient_c, temp_est_c, eta_s, eta_low_s, eta_high_s,
        status, verdict, rate_per_s, equilibrium_c) tuples, as the CLI collects them."""
        cols = list(zip(*rows)) if rows else [()] * 11
        return cls(cols[0], cols[1], cols[3], cols[4], cols[5], cols[6], cols[7], cols[9],
                   cols[10], target_c, interval=interval,
                   ambient_c=cols[2] if has_ambient else None, verdict=cols[8], events=events)

    @classmethod
    def from_replay(cls, trace, result):
        """From a :class:`host_sim.replay.trace_io.Trace` and a :class:`host_sim.replay.replay.ReplayResult`."""
        rows = result.rows
        verdicts = [st.VERDICT_NAMES.index(r["verdict"]) if r.get("verdict") in
                    st.VERDICT_NAMES else 0 for r in rows]
        return cls(trace.time_s, trace.temp_c, [r["temp_est_c"] for r in rows],
                   [r["eta_s"] for r in rows], [r["eta_low_s"] for r in rows],
                   [r["eta_high_s"] for r in rows], [r["status_code"] for r in rows],
                   [r["rate_per_s"] for r in rows], [r["equilibrium_c"] for r in rows],
                   result.target_c, interval=result.settings.value("interval"),
                   ambient_c=trace.ambient_c if trace.has_ambient else None,
                   verdict=verdicts, events=list(zip(trace.time_s, trace.events)))


HOURS_FROM_S = 3 * 3600.0   # spans from three hours on are drawn in hours, shorter in minutes


class TimeAxis:
    """One time unit for a whole plot, chosen for its span: minutes below
    :data:`HOURS_FROM_S`, hours from there on. Every time on the plot (axes, legends,
    labels) goes through it, so an axis in minutes never sits beside "8.6 h".

    ``unit``: "min" or "h"; ``seconds``: seconds per unit. :meth:`of` scales
    seconds (a number or an array) to the unit; :meth:`text` writes a time with
    its unit; :meth:`label` an axis label ("time since the first reading (min)").
    Replay's, calibrate's and fleet's plots all use it.
    """

    def __init__(self, span_s):
        span_s = float(span_s) if span_s is not None and math.isfinite(span_s) else 0.0
        self.unit, self.seconds = ("h", 3600.0) if span_s >= HOURS_FROM_S else ("min", 60.0)

    def of(self, seconds):
        """Seconds -> the axis unit (float or numpy array)."""
        if isinstance(seconds, (int, float)):
            return seconds / self.seconds
        return np.asarray(seconds, dtype=float) / self.seconds

    def text(self, seconds):
        """A time in the axis unit with the unit: "7.1 min", "8.60 h"."""
        return ("%.1f %s" if self.unit == "min" else "%.2f %s") % (self.of(seconds), self.unit)

    def label(self, what):
        """An axis label: ``what`` and the unit in brackets."""
        return "%s (%s)" % (what, self.unit)


def duration_text(seconds):
    """A duration for a reader: seconds under two minutes, minutes up to two hours,
    then hours ("38 s", "7.1 min", "8.6 h")."""
    if seconds < 119.5:
        return "%.0f s" % seconds
    if seconds < 7200.0:
        return "%.1f min" % (seconds / 60.0)
    return "%.1f h" % (seconds / 3600.0)


def _plain(text, limit=60):
    """Text from a file for the figure: no control characters, no mathtext, cut short."""
    text = "".join(ch if ch.isprintable() else " " for ch in str(text))
    if len(text) > limit:
        text = text[:limit - 3] + "..."
    return text.replace("$", r"\$")


def _runs(codes):
    """(first index, last index, value) of runs of equal values."""
    out = []
    start = 0
    for i in range(1, len(codes) + 1):
        if i == len(codes) or codes[i] != codes[start]:
            out.append((start, i - 1, int(codes[start])))
            start = i
    return out


def _snapshot(s, t_end):
    """Index of the row nearest the middle of the approach with a usable forecast."""
    t = s.time_s
    ok = (np.isfinite(s.eta_s) & (s.eta_s > 0.0) & np.isfinite(s.rate_per_s)
          & (s.rate_per_s > 0.0) & np.isfinite(s.temp_est_c) & np.isfinite(s.equilibrium_c)
          & np.isin(s.status, (st.TRACKING, st.SETTLING)))
    if not ok.any():
        return None
    want = t[0] + 0.5 * (t_end - t[0])
    idx = np.nonzero(ok)[0]
    tracking = idx[s.status[idx] == st.TRACKING]
    pool = tracking if len(tracking) else idx
    return int(pool[np.argmin(np.abs(t[pool] - want))])


def plot_series(s, out_path, crossing_s=None, title=None, clean_c=None, unit="C",
                crossing_label="true crossing"):
    """Write the two-panel replay figure for a :class:`ReplaySeries` to ``out_path`` (PNG).

    ``crossing_s``: crossing time in seconds (truth or trace-derived) or None;
    ``clean_c``: optional noise-free sensor signal at ``s.time_s`` (deg C);
    ``unit``: ``"C"`` or ``"F"`` for the temperature axis. Returns what was
    drawn (for tests): ``eta_axis_top_s`` (s), ``temp_axis_c`` (limits in the
    plot's unit), counts of ``events``, ``eta_clipped``, ``unbounded_rows``
    and ``rejected`` readings, the ``shaded`` status codes, the ``legend`` texts.
    """
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    def temp(v):
        v = np.asarray(v, dtype=float)
        return v * 9.0 / 5.0 + 32.0 if unit == "F" else v

    t = s.time_s
    t_end = crossing_s if crossing_s is not None else t[-1]
    axis = TimeAxis(max(t[-1], t_end) - t[0])
    xs = axis.of(t)       # the x values, in the plot's one time unit
    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(10, 8), sharex=True,
                                   gridspec_kw={"height_ratios": (1.15, 1.0)})

    # --- top: temperatures ---
    rejected = s.verdict != st.ACCEPTED
    ax1.plot(xs[~rejected], temp(s.temp_c[~rejected]), ".", ms=2.5, color="0.6",
             label="readings")
    if clean_c is not None:
        ax1.plot(xs, temp(clean_c), "-", lw=0.8, color="0.25",
                 label="noise-free sensor signal (simulation truth)")
    ax1.plot(xs, temp(s.temp_est_c), "-", lw=1.2, color="tab:blue",
             label="estimator's current temperature")
    ax1.axhline(temp(s.target_c), color="tab:red", lw=1.0, ls="--",
                label="target %.1f %s" % (temp(s.target_c), unit))
    lo_list = [np.nanmin(s.temp_c[~rejected]) if (~rejected).any() else s.target_c, s.target_c]
    hi_list = [np.nanmax(s.temp_c[~rejected]) if (~rejected).any() else s.target_c, s.target_c]
    if s.ambient_c is not None and np.isfinite(s.ambient_c).any():
        ax1.plot(xs, temp(s.ambient_c), "-", lw=0.8, color="tab:cyan",
                 label="ambient sensor")
        lo_list.append(np.nanpercentile(s.ambient_c, 1))
        hi_list.append(np.nanpercentile(s.ambient_c, 99))
    lo_t, hi_t = temp(min(lo_list)), temp(max(hi_list))
    pad = 0.08 * (hi_t - lo_t) + 0.5
    ylim1 = (lo_t - pad, hi_t + pad)
    if rejected.any():
        y_rej = np.clip(temp(s.temp_c[rejected]), ylim1[0], ylim1[1])
        ax1.plot(xs[rejected], y_rej, "x", ms=4, color="tab:red", mew=0.9,
                 label="rejected by the guard (%d; off-scale ones at the edge)"
                 % int(rejected.sum()))
    i = _snapshot(s, t_end)
    if i is not None:
        k, eq, start, eta = s.rate_per_s[i], s.equilibrium_c[i], s.temp_est_c[i], s.eta_s[i]
        low, high = s.eta_low_s[i], s.eta_high_s[i]
        span = min(1.25 * eta, 3.0 * (t[-1] - t[0]) + 60.0)
        tau = np.linspace(0.0, span, 200)
        curve = np.array([model.temperature_at(x, start, k, eq) for x in tau])
        x = axis.of(t[i] + tau)
        ax1.plot(x, temp(curve), "-", lw=1.6, color="tab:orange",
                 label="model fitted at %s, drawn forward (ETA %s then)"
                 % (axis.text(t[i]), axis.text(eta)))
        ax1.plot([axis.of(t[i])], [temp(start)], "o", ms=5, color="tab:orange")
        if np.isfinite(low):
            # the same curve shifted to arrive at the interval's ends
            early = np.interp(tau + (eta - low), tau, curve, right=np.nan)
            if np.isfinite(high):
                late = np.interp(tau - (high - eta), tau, curve, left=curve[0])
                band_label = "%d%% ETA interval then (%s..%s)" % (
                    round(100 * s.interval), axis.text(low), axis.text(high))
            else:
                late = np.full_like(curve, curve[0])
                band_label = "%d%% ETA interval then (%s..never)" % (
                    round(100 * s.interval), axis.text(low))
            ax1.fill_between(x, temp(early), temp(late), color="tab:orange", alpha=0.18,
                             label=band_label)
    ax1.set_ylim(*ylim1)
    ax1.set_ylabel("temperature (deg %s)" % unit)
    ax1.grid(alpha=0.3)

    # --- bottom: time to target ---
    eta, low, high = s.eta_s, s.eta_low_s, s.eta_high_s
    rem0 = (crossing_s - t[0]) if crossing_s is not None and crossing_s > t[0] else 0.0
    shown_eta = eta[np.isin(s.status, (st.TRACKING, st.ARRIVED)) & np.isfinite(eta)]
    any_eta = eta[np.isfinite(eta)]
    ref = max(rem0, np.percentile(shown_eta, 95) if len(shown_eta) else 0.0,
              np.percentile(any_eta, 50) if len(any_eta) else 0.0)
    if ref <= 0.0:
        ref = max(t[-1] - t[0], 60.0)
    top = 1.2 * ref
    finite_high = np.isfinite(high)
    band_hi = np.where(finite_high, np.minimum(high, top), np.nan)
    ax2.fill_between(xs, axis.of(np.minimum(low, top)), axis.of(band_hi), color="tab:blue",
                     alpha=0.15, lw=0, label="%d%% ETA interval" % round(100 * s.interval))
    unbounded = np.isinf(high) & np.isfinite(low)
    if unbounded.any():
        ax2.fill_between(xs, axis.of(np.minimum(low, top)), axis.of(top), where=unbounded,
                         color="tab:blue", alpha=0.06, lw=0, hatch="///",
                         label="interval with no upper end (\"never\" not ruled out)")
    for code, (label, colour, style, width) in _LINE.items():
        mask = (s.status == code) & np.isfinite(eta)
        if not mask.any() or code == st.ARRIVED:
            continue
        # values above the axis are left out of the line (marked below), not drawn on the edge
        ax2.plot(xs, axis.of(np.where(mask & (eta <= top), eta, np.nan)), style, lw=width,
                 color=colour, label=label)
    off = np.isfinite(eta) & (eta > top)
    if off.any():
        ax2.plot(xs[off], np.full(int(off.sum()), axis.of(top)), "^", ms=3,
                 color="0.4", label="ETA above the axis (clipped)")
    if crossing_s is not None:
        before = t <= crossing_s
        ax2.plot(xs[before], axis.of(crossing_s - t[before]), "k--", lw=1.0,
                 label="true remaining time" if crossing_label == "true crossing"
                 else "remaining time (crossing from the trace)")
    ax2.set_ylim(0.0, axis.of(top))
    ax2.set_ylabel(axis.label("time to target"))
    ax2.set_xlabel(axis.label("time since the first reading"))
    ax2.grid(alpha=0.3)

    # --- status stretches, events and the crossing on both panels ---
    seen = set()
    shade_codes = np.where((s.status == st.SETTLING) & ~np.isfinite(eta), _NO_ETA_SETTLING,
                           s.status)
    for a, b, code in _runs(shade_codes):
        if code not in _SHADE:
            continue
        label, colour = _SHADE[code]
        x0 = xs[a]
        x1 = xs[b + 1] if b + 1 < len(xs) else xs[b]
        for ax in (ax1, ax2):
            ax.axvspan(x0, x1, color=colour, alpha=0.5, lw=0,
                       label=None if (code in seen or ax is ax1) else label)
        seen.add(code)
    ev_shown = s.events[:30]
    for n, (te, text) in enumerate(ev_shown):
        for ax in (ax1, ax2):
            ax.axvline(axis.of(te), color="tab:purple", lw=0.9, ls="-.",
                       label="event" if (n == 0 and ax is ax2) else None)
        ax1.annotate(_plain(text, 30), (axis.of(te), 1.0), xycoords=("data", "axes fraction"),
                     xytext=(2, -4), textcoords="offset points", rotation=90, va="top",
                     ha="left", fontsize=7, color="tab:purple")
    if crossing_s is not None:
        for ax in (ax1, ax2):
            ax.axvline(axis.of(crossing_s), color="k", lw=0.9, ls=":",
                       label=None if ax is ax2 else "%s, %s" % (crossing_label,
                                                                axis.text(crossing_s)))
    right = max(t[-1], crossing_s if crossing_s is not None else t[-1])
    ax2.set_xlim(axis.of(t[0]), axis.of(t[0] + 1.03 * (right - t[0]) + 1.0))
    ax1.legend(loc="best", fontsize=7, framealpha=0.85)
    ax2.legend(loc="upper right", fontsize=7, framealpha=0.85)
    if title:
        ax1.set_title(_plain(title, 100))
    fig.tight_layout()
    fig.savefig(out_path, dpi=110, format="png")
    drawn = {"eta_axis_top_s": top, "temp_axis_c": ylim1, "events": len(ev_shown),
             "time_unit": axis.unit,
             "eta_clipped": int(off.sum()), "unbounded_rows": int(unbounded.sum()),
             "rejected": int(rejected.sum()),
             "shaded": sorted(set(int(c) for c in shade_codes if int(c) in _SHADE)),
             "legend": [t.get_text() for ax in (ax1, ax2) for t in ax.get_legend().get_texts()]}
    plt.close(fig)
    return drawn


def plot_replay(trace, result, out_path, crossing_s=None, title=None, clean_c=None, unit="C",
                crossing_label="true crossing"):
    """Write the two-panel replay figure to ``out_path`` (PNG).

    ``trace``: the :class:`host_sim.replay.trace_io.Trace`; ``result``: the
    :class:`host_sim.replay.replay.ReplayResult`; ``crossing_s``: the true (or
    trace-derived) crossing time in seconds, or None; ``clean_c``: optional
    noise-free sensor signal at the trace times (deg C), drawn if given;
    ``unit``: ``"C"`` or ``"F"`` for the temperature axis. Returns what
    :func:`plot_series` returns.
    """
    return plot_series(ReplaySeries.from_replay(trace, result), out_path,
                       crossing_s=crossing_s, title=title, clean_c=clean_c, unit=unit,
                       crossing_label=crossing_label)
