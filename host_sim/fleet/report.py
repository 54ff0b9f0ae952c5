"""Outputs of a fleet replay: results table, report by tag, plots, A/B worse list.

Beside ``RESULTS.csv`` (one row per manifest row, manifest order):

- ``RESULTS.parquet``: the same table (pyarrow), numbers as numbers;
- ``RESULTS_by_tag.csv``: per tag column and value, :func:`host_sim.replay.metrics.summarise`
  of the replayed traces (median over traces of the per-trace median and p90
  relative error, mean coverage and no-estimate fraction, ...), and ``failed``;
- ``RESULTS_error_vs_elapsed.png``: median and p90 relative error of the shown
  answers of all traces against the elapsed fraction of the approach (per value
  of the first tag column too);
- ``RESULTS_errors_by_tag.png``: distribution over traces of the per-trace
  median relative error, per value of each tag column;
- ``RESULTS_report.md``: the figures above in text, and with an A/B the list
  of traces that got worse, worst first, each with a link to its replay plot
  (``RESULTS_worse/NNNN.png``, both cores' ETAs against the true remaining
  time; prediction CSVs beside it).

The candidate's figures are the plain columns; with a baseline, ``base_*``
columns, ``delta_median_rel_error`` (candidate minus baseline) and ``worse``.
"""
import csv
import math
import os

import numpy as np

from host_sim.fleet import core as fleet_core
from host_sim.fleet import metrics as fleet_metrics
from host_sim.replay.metrics import summarise

FIGURES = ("rows", "median_rel_error", "p90_rel_error", "coverage", "no_estimate",
           "early_arrival", "first_answer_s", "error")
EXTRA = ("crossing_s", "time_to_trust", "evaluated_rows", "skipped_rows", "metrics_exact")
INT_COLUMNS = ("rows", "early_arrival", "evaluated_rows", "skipped_rows", "worse",
               "base_rows", "base_early_arrival")
TEXT_COLUMNS = ("path", "error", "base_error", "plot")
MAX_PLOT_POINTS = 4000


def _stem(out):
    root, ext = os.path.splitext(out)
    return root if ext.lower() == ".csv" else out


def _figures(res, prefix=""):
    row = {}
    for key in FIGURES + (EXTRA if not prefix else ()):
        src = "no_estimate_fraction" if key == "no_estimate" else key
        row[prefix + key] = res.get(src)
    return row


def worse_key(row):
    """How much worse the candidate did on a row (larger is worse), or None.

    A trace the candidate failed, or left without an error figure, while the
    baseline had one, counts as infinitely worse.
    """
    base, cand = row.get("base_median_rel_error"), row.get("median_rel_error")
    if row.get("base_error") or base is None:
        return None
    if row.get("error") or cand is None:
        return math.inf
    return cand - base


def result_rows(items, tag_names, variants, results, worse_by=0.02):
    """One dict per item, manifest order: the columns of ``RESULTS.csv``."""
    ab = "base" in variants
    rows = []
    for it in sorted(items, key=lambda i: i.index):
        res = results[it.index]
        row = {"_index": it.index, "path": it.path, "target": it.spec.get("target_c")}
        row.update(_figures(res["cand"]))
        row.update(it.tags)
        if ab:
            row.update(_figures(res["base"], "base_"))
            delta = worse_key(row)
            row["delta_median_rel_error"] = delta
            row["worse"] = int(delta is not None and delta > worse_by)
            row["plot"] = ""
        rows.append(row)
    return rows


def columns(tag_names, ab):
    """Column order of the results table."""
    cols = ["path", "target"] + list(FIGURES) + list(tag_names) + list(EXTRA)
    if ab:
        cols += ["base_" + k for k in FIGURES] + ["delta_median_rel_error", "worse", "plot"]
    return cols


# a text cell a spreadsheet would read as a formula (or a DDE call): OWASP "CSV
# Injection" guidance, a leading single quote makes it text
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def spreadsheet_text(text):
    """``text`` as a CSV cell a spreadsheet shows as text: ``'`` before a formula start."""
    return "'" + text if text.startswith(FORMULA_STARTS) else text


def _cell(v):
    if v is None:
        return ""
    if isinstance(v, bool):
        return "1" if v else "0"
    if isinstance(v, float):
        if v == math.inf:
            return "inf"
        return "%.6g" % v if math.isfinite(v) else ""
    if isinstance(v, (int, np.integer)):
        return str(v)
    return spreadsheet_text(str(v))


def write_csv(path, cols, rows):
    """A table of dicts as CSV (None as an empty cell)."""
    with open(path, "w", newline="") as handle:
        w = csv.writer(handle, lineterminator="\n")
        w.writerow(cols)
        for r in rows:
            w.writerow([_cell(r.get(c)) for c in cols])


def write_parquet(path, cols, rows, tag_names):
    """The results table as Parquet (pyarrow): numbers as float64/int64, tags as text."""
    import pyarrow as pa
    import pyarrow.parquet as pq
    arrays = {}
    for c in cols:
        vals = [r.get(c) for r in rows]
        if c in TEXT_COLUMNS or c in tag_names:
            arrays[c] = pa.array([None if v is None else str(v) for v in vals], pa.string())
        elif c in INT_COLUMNS:
            arrays[c] = pa.array([None if v is None else int(v) for v in vals], pa.int64())
        elif c == "metrics_exact":
            arrays[c] = pa.array([None if v is None else bool(v) for v in vals], pa.bool_())
        else:
            arrays[c] = pa.array([None if v is None else float(v) for v in vals], pa.float64())
    pq.write_table(pa.table(arrays), path)


def _metric_dicts(rows, prefix=""):
    out = []
    for r in rows:
        if r.get(prefix + "error"):
            continue
        out.append({"median_rel_error": r.get(prefix + "median_rel_error"),
                    "p90_rel_error": r.get(prefix + "p90_rel_error"),
                    "time_to_trust": r.get("time_to_trust") if not prefix else None,
                    "coverage": r.get(prefix + "coverage"),
                    "no_estimate_fraction": r.get(prefix + "no_estimate"),
                    "first_answer_s": r.get(prefix + "first_answer_s"),
                    "early_arrival": r.get(prefix + "early_arrival"),
                    "status_given": True})
    return out


BY_TAG_FIGURES = ("traces", "failed", "median_rel_error", "p90_rel_error", "coverage",
                  "no_estimate_fraction", "early_arrival", "first_answer_s", "never_answered")


def by_tag(rows, tag_names, ab):
    """Rows of the report by tag: ``(all)`` first, then each tag column's values."""
    groups = [("(all)", "", rows)]
    for tag in tag_names:
        values = sorted(set(r.get(tag, "") for r in rows))
        for v in values:
            groups.append((tag, v, [r for r in rows if r.get(tag, "") == v]))
    out = []
    for tag, value, members in groups:
        rec = {"tag": tag, "value": value}
        for prefix in ("", "base_") if ab else ("",):
            s = summarise(_metric_dicts(members, prefix))
            s["traces"] = len(members)
            s["failed"] = sum(1 for r in members if r.get(prefix + "error"))
            for k in BY_TAG_FIGURES:
                rec[prefix + k] = s.get(k)
        if ab:
            rec["worse"] = sum(r.get("worse", 0) for r in members)
        out.append(rec)
    return out


def by_tag_columns(ab):
    """Column order of ``RESULTS_by_tag.csv``."""
    cols = ["tag", "value"] + list(BY_TAG_FIGURES)
    if ab:
        cols += ["base_" + k for k in BY_TAG_FIGURES] + ["worse"]
    return cols


def profiles(items, tag_names, results, name="cand"):
    """Summed elapsed-fraction profiles: dict (tag, value) -> counts array."""
    shape = (fleet_metrics.PROFILE_BINS,
             fleet_metrics.PROFILE_PER_DECADE * fleet_metrics.PROFILE_DECADES + 2)
    out = {("(all)", ""): np.zeros(shape, dtype=np.int64)}
    first = tag_names[0] if tag_names else None
    for it in items:
        prof = results[it.index][name].get("profile") or []
        keys = [("(all)", "")]
        if first is not None:
            keys.append((first, it.tags.get(first, "")))
        for key in keys:
            if key not in out:
                out[key] = np.zeros(shape, dtype=np.int64)
            for fb, eb, n in prof:
                out[key][fb, eb] += n
    return out


def plot_error_vs_elapsed(path, profs, title):
    """Median (solid) and p90 (dashed) relative error against elapsed fraction."""
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    centres = (np.arange(fleet_metrics.PROFILE_BINS) + 0.5) / fleet_metrics.PROFILE_BINS
    fig, ax = plt.subplots(figsize=(8, 5))
    for n, (key, counts) in enumerate(sorted(profs.items())[:9]):
        med = [fleet_metrics.profile_quantile(c, 0.5) for c in counts]
        p90 = [fleet_metrics.profile_quantile(c, 0.9) for c in counts]
        label = "all traces" if key[0] == "(all)" else "%s=%s" % key
        color = "C%d" % n
        ax.plot(centres, [np.nan if v is None else v for v in med], "-o", color=color,
                ms=3, label=label + " median")
        ax.plot(centres, [np.nan if v is None else v for v in p90], "--", color=color,
                label=label + " p90")
    ax.set_yscale("log")
    ax.set_xlabel("elapsed fraction of the approach to the target")
    ax.set_ylabel("relative ETA error of shown answers")
    ax.set_title(title)
    ax.grid(True, which="both", alpha=0.3)
    ax.legend(fontsize=7)
    fig.tight_layout()
    fig.savefig(path, dpi=100)
    plt.close(fig)


def plot_errors_by_tag(path, rows, tag_names, title):
    """Box plots of the per-trace median relative error, per tag value."""
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    tags = list(tag_names[:3]) or [None]
    fig, axes = plt.subplots(1, len(tags), figsize=(5 * len(tags), 4.5), squeeze=False)
    for ax, tag in zip(axes[0], tags):
        values = sorted(set(r.get(tag, "") for r in rows)) if tag else [""]
        data, labels = [], []
        for v in values[:20]:
            errs = [r["median_rel_error"] for r in rows
                    if (tag is None or r.get(tag, "") == v) and r.get("median_rel_error") is not None]
            if errs:
                data.append(errs)
                labels.append("%s\n(%d)" % (v or "all", len(errs)))
        if data:
            ax.boxplot(data)
            ax.set_xticks(range(1, len(labels) + 1), labels, fontsize=7)
            if all(min(d) > 0 for d in data):
                ax.set_yscale("log")
        ax.set_xlabel(tag or "all traces")
        ax.set_ylabel("per-trace median relative error")
        ax.grid(True, alpha=0.3)
    fig.suptitle(title)
    fig.tight_layout()
    fig.savefig(path, dpi=100)
    plt.close(fig)


def _read_thinned(path, rows_total):
    """Time, temperature and shown ETA columns of a prediction CSV, every k-th row."""
    step = max(1, int(math.ceil((rows_total or 1) / MAX_PLOT_POINTS)))
    t, y, eta = [], [], []
    with open(path, newline="") as handle:
        reader = csv.reader(handle)
        header = next(reader)
        it, iy, ie, ist = (header.index(c) for c in ("time_s", "temp_c", "eta_s", "status"))
        for n, row in enumerate(reader):
            if n % step:
                continue
            t.append(float(row[it]))
            y.append(float(row[iy]) if row[iy] else math.nan)
            shown = row[ist] in fleet_metrics.SHOWN and row[ie] not in ("", "inf")
            eta.append(float(row[ie]) if shown else math.nan)
    return np.array(t), np.array(y), np.array(eta)


def plot_ab_replay(path, pred_base, pred_cand, rows_total, target_c, crossing_s, title):
    """Two panels: readings and target; both cores' shown ETAs and the true remaining time."""
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from host_sim.replay.plots import TimeAxis
    tb, yb, eb = _read_thinned(pred_base, rows_total)
    tc, _, ec = _read_thinned(pred_cand, rows_total)
    # one time unit for the figure, as replay's plots choose it (minutes, hours when long)
    axis = TimeAxis(max(tb[-1] - tb[0], (crossing_s or 0.0) - tb[0]) if len(tb) else 0.0)
    fig, (ax1, ax2) = plt.subplots(2, 1, figsize=(9, 7), sharex=True)
    ax1.plot(axis.of(tb), yb, ".", ms=2, color="0.5", label="readings")
    ax1.axhline(target_c, color="tab:red", ls="--", lw=1, label="target %.1f C" % target_c)
    ax1.set_ylabel("temperature, C")
    ax1.legend(fontsize=8)
    ax2.plot(axis.of(tb), axis.of(eb), "-", color="tab:blue", lw=1.2, label="baseline ETA")
    ax2.plot(axis.of(tc), axis.of(ec), "-", color="tab:orange", lw=1.2, label="candidate ETA")
    if crossing_s is not None:
        rem = np.where(tb < crossing_s, axis.of(crossing_s - tb), np.nan)
        ax2.plot(axis.of(tb), rem, "k:", lw=1.2, label="true remaining time")
        ax1.axvline(axis.of(crossing_s), color="0.3", lw=0.8)
    ax2.set_xlabel(axis.label("time since the first reading"))
    ax2.set_ylabel(axis.label("time to target (shown answers)"))
    ax2.legend(fontsize=8)
    ax1.set_title(title, fontsize=9)
    fig.tight_layout()
    fig.savefig(path, dpi=100)
    plt.close(fig)


def _fmt(v, fmt="%.3f"):
    if v is None:
        return "-"
    if isinstance(v, float) and not math.isfinite(v):
        return "inf" if v > 0 else "-"
    return fmt % v


def failed_count(results):
    """Traces with an error in any variant, from :func:`host_sim.fleet.run.run_fleet`'s results."""
    return sum(1 for res in results.values() if any(r.get("error") for r in res.values()))


def output_paths(out, plots=True):
    """Every file :func:`write_all` writes beside ``out`` (not the A/B plot folder)."""
    stem = _stem(out)
    paths = [out, stem + ".parquet", stem + "_by_tag.csv", stem + "_report.md"]
    if plots:
        paths += [stem + "_error_vs_elapsed.png", stem + "_errors_by_tag.png"]
    return paths


def write_all(out, items, tag_names, variants, results, worse_by=0.02, plot_worse=10,
              plots=True):
    """Write every output of a fleet run (see the module docstring); returns summary lines."""
    ab = "base" in variants
    stem = _stem(out)
    folder = os.path.dirname(os.path.abspath(out))
    rows = result_rows(items, tag_names, variants, results, worse_by)
    worse = []
    if ab:
        worse = sorted((r for r in rows if r["worse"]),
                       key=lambda r: (-r["delta_median_rel_error"], r["_index"]))
        by_index = {it.index: it for it in items}
        wdir = stem + "_worse"
        if plot_worse and worse:
            os.makedirs(wdir, exist_ok=True)
        for n, r in enumerate(worse[:plot_worse] if plots else []):
            it = by_index[r["_index"]]
            base_csv = os.path.join(wdir, "%04d.base.csv" % (n + 1))
            cand_csv = os.path.join(wdir, "%04d.cand.csv" % (n + 1))
            png = os.path.join(wdir, "%04d.png" % (n + 1))
            fleet_core.run_variant(it.spec, variants["base"], base_csv)
            fleet_core.run_variant(it.spec, variants["cand"], cand_csv)
            if os.path.exists(base_csv) and os.path.exists(cand_csv):
                plot_ab_replay(png, base_csv, cand_csv, r["rows"], it.spec["target_c"],
                               r["crossing_s"],
                               "%s: median rel. error %s -> %s" % (
                                   r["path"], _fmt(r["base_median_rel_error"]),
                                   _fmt(r["median_rel_error"])))
                r["plot"] = os.path.relpath(png, folder)
    cols = columns(tag_names, ab)
    write_csv(out, cols, rows)
    write_parquet(stem + ".parquet", cols, rows, tag_names)
    tag_rows = by_tag(rows, tag_names, ab)
    write_csv(stem + "_by_tag.csv", by_tag_columns(ab), tag_rows)
    written = [out, stem + ".parquet", stem + "_by_tag.csv"]
    if plots:
        plot_error_vs_elapsed(stem + "_error_vs_elapsed.png",
                              profiles(items, tag_names, results),
                              "%d traces (candidate)" % len(rows) if ab else
                              "%d traces" % len(rows))
        plot_errors_by_tag(stem + "_errors_by_tag.png", rows, tag_names,
                           "per-trace median relative error")
        written += [stem + "_error_vs_elapsed.png", stem + "_errors_by_tag.png"]
    lines = report_lines(rows, tag_rows, variants, worse, worse_by, folder)
    with open(stem + "_report.md", "w") as handle:
        handle.write("\n".join(lines) + "\n")
    written.append(stem + "_report.md")
    failed = sum(1 for r in rows if r["error"])
    summary = ["%d trace(s), %d failed; wrote %s" % (len(rows), failed, ", ".join(written))]
    summary += [ln for ln in lines if ln.startswith("|")][:12]
    if ab:
        summary.append("%d trace(s) got worse by more than %g in median relative error%s"
                       % (len(worse), worse_by, " (worst first in the report)" if worse else ""))
        for r in worse[:5]:
            summary.append("  %s: %s -> %s%s" % (r["path"], _fmt(r["base_median_rel_error"]),
                                                 _fmt(r["median_rel_error"]),
                                                 "  plot " + r["plot"] if r["plot"] else ""))
    return summary


def report_lines(rows, tag_rows, variants, worse, worse_by, folder):
    """The markdown report."""
    ab = "base" in variants
    lines = ["# Fleet replay", ""]
    for name, label in (("cand", "candidate"), ("base", "baseline")):
        if name in variants:
            v = variants[name]
            lines.append("- %s core: %s (version %s), settings: %s"
                         % (label, v.get("core_file"), v.get("core_version"),
                            ", ".join(v.get("settings") or ()) or "core defaults"))
    lines += ["- traces: %d, failed: %d" % (len(rows), sum(1 for r in rows if r["error"])),
              "- figures: answers a device shows (status tracking or arrived); "
              "median/p90 are medians over traces of the per-trace figures", ""]
    head = "| tag | value | traces | failed | median | p90 | coverage | no estimate | early |"
    lines += [head, "|" + "---|" * 9]
    for t in tag_rows:
        lines.append("| %s | %s | %d | %d | %s | %s | %s | %s | %s |" % (
            t["tag"], t["value"], t["traces"], t["failed"], _fmt(t["median_rel_error"]),
            _fmt(t["p90_rel_error"]), _fmt(t["coverage"], "%.2f"),
            _fmt(t["no_estimate_fraction"], "%.2f"), _fmt(t["early_arrival"], "%d")))
        if ab:
            lines.append("| %s | %s | %d | %d | %s | %s | %s | %s | %s |" % (
                t["tag"], ("%s (baseline)" % t["value"]).strip(), t["base_traces"], t["base_failed"],
                _fmt(t["base_median_rel_error"]), _fmt(t["base_p90_rel_error"]),
                _fmt(t["base_coverage"], "%.2f"), _fmt(t["base_no_estimate_fraction"], "%.2f"),
                _fmt(t["base_early_arrival"], "%d")))
    failed = [r for r in rows if r["error"]]
    if failed:
        lines += ["", "## Failed traces", ""]
        lines += ["- %s: %s" % (r["path"], r["error"]) for r in failed[:200]]
    if ab:
        lines += ["", "## Traces that got worse (median relative error up by more than %g), "
                  "worst first" % worse_by, ""]
        if not worse:
            lines.append("none")
        for r in worse:
            link = " [replay plot](%s)" % r["plot"] if r["plot"] else ""
            lines.append("- %s: %s -> %s (%s)%s" % (
                r["path"], _fmt(r["base_median_rel_error"]), _fmt(r["median_rel_error"]),
                _fmt(r["delta_median_rel_error"], "%+.3f"), link))
    return lines
