"""Tables and goal marks of the families benchmark (``benchmarks/families.py``).

Every function takes the per-trace result dicts of ``families.run_traces``
(``seed_set``, ``family``, ``sampling``, ``metrics`` per method label, ...)
and returns markdown lines: per-group tables, the targets of issue 9, the
goals of issue 17 (each marked met or MISSED with the figures behind it),
the sparse-sampling tables, and leave-one-family-out. Figures only; nothing
here passes or fails.
"""
import math
import statistics

from host_sim.replay.metrics import summarise
from host_sim.sim import families as fam

BASELINES = ("slope", "exp_all", "exp_recent")
# issue 9's targets
TARGET_MEDIAN_RATIO = 0.5
TARGET_NO_ESTIMATE = 0.10
TARGET_COVERAGE = (0.70, 0.90)
TARGET_COVERAGE_FAMILY = (0.60, 0.95)
# issue 17's goals (default settings; early arrivals also with approach given)
GOAL_MEDIAN_RATIO = 0.5              # median rel err <= 0.5 x the best baseline, overall
GOAL_NO_ESTIMATE = 0.05              # overall
GOAL_NO_ESTIMATE_FAMILY = 0.10       # every family
GOAL_COVERAGE_FAMILY = (0.75, 0.85)  # every family
GOAL_SPARSE_NO_ESTIMATE = 0.10       # every family, from the third reading on


def _f(v, fmt="%.3f"):
    if v is None:
        return "-"
    if v == math.inf:
        return "never"
    return fmt % v


HEADER = ("| %s | method | traces | median rel err | p90 rel err | no estimate | coverage 80 %% "
          "| early arrivals (traces) | first answer s (never) |")


def table_rows(group_name, sel, methods):
    """Markdown rows: one per method over the result dicts ``sel``."""
    lines = []
    for m in methods:
        s = summarise([r["metrics"][m] for r in sel])
        lines.append("| %s | %s | %d | %s | %s | %s | %s | %s (%s) | %s (%s) |" % (
            group_name, m, s["traces"], _f(s["median_rel_error"]), _f(s["p90_rel_error"]),
            _f(s["no_estimate_fraction"], "%.2f"), _f(s["coverage"], "%.2f"),
            _f(s["early_arrival"], "%d"), _f(s["early_traces"], "%d"),
            _f(s["first_answer_s"], "%.0f"), _f(s["never_answered"], "%d")))
    return lines


def grouped_table(results, methods, key, groups, title):
    """A table of ``results`` split by ``key(result)`` into ``groups``, plus an overall row."""
    lines = [HEADER % title, "|---|---|---|---|---|---|---|---|---|"]
    for g in groups:
        sel = [r for r in results if key(r) == g]
        if sel:
            lines.extend(table_rows(g, sel, methods))
    lines.extend(table_rows("**all**", results, methods))
    return lines


COLUMN_GROUPS = ("heater", "ambient", "heater+ambient", "neither")


def _columns_key(r):
    if r["heater_column"] and r["ambient_column"]:
        return "heater+ambient"
    if r["heater_column"]:
        return "heater"
    if r["ambient_column"]:
        return "ambient"
    return "neither"


def summary_of(results, method, family=None):
    sel = [r for r in results if family is None or r["family"] == family]
    return summarise([r["metrics"][method] for r in sel])


def best_baseline(results, family=None):
    """(name, median rel error) of the baseline with the lowest median error."""
    best = None
    for b in BASELINES:
        v = summary_of(results, b, family)["median_rel_error"]
        if v is not None and (best is None or v < best[1]):
            best = (b, v)
    return best


def worse_than_baseline(results, method):
    """``"family err > baseline err"`` for every family where ``method``'s median
    relative error is above the family's best baseline (or it never answers)."""
    worse = []
    for f in fam.FAMILIES:
        fs = summary_of(results, method, f)["median_rel_error"]
        fb = best_baseline(results, f)
        if fb is not None and (fs is None or fs > fb[1]):
            worse.append("%s %s > %s %s" % (f, _f(fs), fb[0], _f(fb[1])))
    return worse


def target_marks(results, method, real=None):
    """Lines marking issue 9's targets met / MISSED for one estimator method."""
    lines = []
    s = summary_of(results, method)
    bb = best_baseline(results)
    med = s["median_rel_error"]
    ok = med is not None and bb is not None and med <= TARGET_MEDIAN_RATIO * bb[1]
    lines.append("- median rel err %s <= %.1f x best baseline %s (%s) = %s: **%s**" % (
        _f(med), TARGET_MEDIAN_RATIO, _f(bb[1] if bb else None), bb[0] if bb else "-",
        _f(TARGET_MEDIAN_RATIO * bb[1] if bb else None), _mark(ok)))
    worse = worse_than_baseline(results, method)
    lines.append("- no family worse than its best baseline: **%s**%s" % (
        _mark(not worse), (" (" + "; ".join(worse) + ")") if worse else ""))
    ne = s["no_estimate_fraction"]
    over = ["%s %s" % (f, _f(summary_of(results, method, f)["no_estimate_fraction"], "%.2f"))
            for f in fam.FAMILIES
            if (summary_of(results, method, f)["no_estimate_fraction"] or 0.0) > TARGET_NO_ESTIMATE]
    lines.append("- no estimate %s <= %.2f overall: **%s**%s" % (
        _f(ne, "%.2f"), TARGET_NO_ESTIMATE, _mark(ne is not None and ne <= TARGET_NO_ESTIMATE),
        (" (families over: " + ", ".join(over) + ")") if over else ""))
    cov = s["coverage"]
    lines.append("- coverage %s in %.2f..%.2f overall: **%s**" % (
        _f(cov, "%.2f"), TARGET_COVERAGE[0], TARGET_COVERAGE[1],
        _mark(cov is not None and TARGET_COVERAGE[0] <= cov <= TARGET_COVERAGE[1])))
    bad = []
    for f in fam.FAMILIES:
        c = summary_of(results, method, f)["coverage"]
        if c is None or not TARGET_COVERAGE_FAMILY[0] <= c <= TARGET_COVERAGE_FAMILY[1]:
            bad.append("%s %s" % (f, _f(c, "%.2f")))
    lines.append("- coverage per family in %.2f..%.2f: **%s**%s" % (
        TARGET_COVERAGE_FAMILY[0], TARGET_COVERAGE_FAMILY[1], _mark(not bad),
        (" (" + ", ".join(bad) + ")") if bad else ""))
    early_traces = sum(1 for r in results if (r["metrics"][method]["early_arrival"] or 0) > 0)
    early_rows = sum(r["metrics"][method]["early_arrival"] or 0 for r in results)
    lines.append("- zero early arrivals on every trace: %d rows on %d of %d traces: **%s**" % (
        early_rows, early_traces, len(results), _mark(early_traces == 0)))
    if real is not None:
        worse = []
        for target, per in real:
            base = [per[b]["median_rel_error"] for b in BASELINES
                    if per[b]["median_rel_error"] is not None]
            mine = per[method]["median_rel_error"]
            if base and (mine is None or mine > min(base)):
                worse.append("%g C: %s > %s" % (target, _f(mine), _f(min(base))))
        lines.append("- real recording at or below the best baseline at every target: **%s**%s"
                     % (_mark(not worse), (" (" + "; ".join(worse) + ")") if worse else ""))
    return lines


def leave_one_family_out(results, plan, grid_method):
    """LOFO table for the grid method's settings; lines (empty if one setting)."""
    labels = [label for label, name, _s, _st in plan if name == grid_method]
    if len(labels) < 2:
        return []
    tune = [r for r in results if r["seed_set"] == "tune"]
    hold = [r for r in results if r["seed_set"] == "holdout"]

    def med(sel, label):
        v = summarise([r["metrics"][label] for r in sel])["median_rel_error"]
        return math.inf if v is None else v
    chosen_all = min(labels, key=lambda lab: med(tune, lab))
    lines = ["setting chosen on the tune traces of all families: `%s` (the choice looks at the "
             "median error only; compare the no-estimate column)" % chosen_all, "",
             "| left-out family | setting chosen without it | its median err on the family (tune / "
             "holdout) | its no estimate (holdout) | all-family choice on the family (holdout) "
             "| best baseline (holdout) |",
             "|---|---|---|---|---|---|"]
    lofo_hold = []
    for f in fam.FAMILIES:
        others = [r for r in tune if r["family"] != f]
        if not others:
            continue
        choice = min(labels, key=lambda lab: med(others, lab))
        on_t = [r for r in tune if r["family"] == f]
        on_h = [r for r in hold if r["family"] == f]
        lofo_hold.extend(r["metrics"][choice] for r in on_h)
        bb = best_baseline(on_h) if on_h else None
        ne = summarise([r["metrics"][choice] for r in on_h])["no_estimate_fraction"] if on_h else None
        lines.append("| %s | `%s` | %s / %s | %s | %s | %s |" % (
            f, choice, _f(med(on_t, choice) if on_t else None),
            _f(med(on_h, choice) if on_h else None), _f(ne, "%.2f"),
            _f(med(on_h, chosen_all) if on_h else None),
            "-" if bb is None else "%s %s" % (bb[0], _f(bb[1]))))
    if lofo_hold:
        s = summarise(lofo_hold)
        lines.append("")
        lines.append("left-out answers pooled over families (holdout): median rel err %s, "
                     "no estimate %s, coverage %s" % (
                         _f(s["median_rel_error"]), _f(s["no_estimate_fraction"], "%.2f"),
                         _f(s["coverage"], "%.2f")))
    return lines


# ------------------------------------------------------------------ issue 17
def approach_pairs(plan):
    """``[(default label, approach-given label or None)]``: one pair per estimator and
    per setting other than ``approach`` (``plan`` as ``families.estimator_plan`` gives)."""
    groups = {}
    for label, name, _spec, setting in plan:
        rest = tuple(sorted((k, v) for k, v in setting.items() if k != "approach"))
        slot = groups.setdefault((name, rest), [None, None])
        slot[1 if setting.get("approach") else 0] = label
    return [tuple(slot) for slot in groups.values() if slot[0] is not None]


def _pair(results, labels, key, fmt):
    return " / ".join(_f(summary_of(results, lab)[key], fmt) if lab else "-" for lab in labels)


def _early(results, label):
    if label is None:
        return "-"
    s = summary_of(results, label)
    return "%s (%s)" % (_f(s["early_arrival"], "%d"), _f(s["early_traces"], "%d"))


def default_and_approach_table(results, pair, families):
    """Per family and overall: the estimator with default settings and with ``approach``
    given, beside the family's best baseline (lines)."""
    lines = ["| family | traces | median rel err default / approach | best baseline | default / "
             "best baseline | no estimate default / approach | coverage 80 % default / "
             "approach | early arrivals default, approach: rows (traces) | default / best "
             "baseline on the rows both answer |",
             "|---|---|---|---|---|---|---|---|---|"]
    for f in list(families) + [None]:
        sel = [r for r in results if f is None or r["family"] == f]
        if not sel:
            continue
        bb = best_baseline(sel)
        med = summary_of(sel, pair[0])["median_rel_error"]
        ratio = med / bb[1] if med is not None and bb and bb[1] else None
        lines.append("| %s | %d | %s | %s | %s | %s | %s | %s, %s | %s |" % (
            f or "**all**", len(sel), _pair(sel, pair, "median_rel_error", "%.3f"),
            "-" if bb is None else "%s %s" % (bb[0], _f(bb[1])), _f(ratio, "%.2fx"),
            _pair(sel, pair, "no_estimate_fraction", "%.2f"), _pair(sel, pair, "coverage", "%.2f"),
            _early(sel, pair[0]), _early(sel, pair[1]),
            "-" if bb is None else _paired(sel, pair[0], bb[0])))
    return lines


def _paired(results, method, baseline):
    """``"0.86x (0.037 / 0.043)"``: the median over traces of each one's median relative
    error on the rows both answer (families.score_all's ``paired_`` figures); "-" without."""
    mine = [r["metrics"][method].get("paired_" + baseline) for r in results]
    theirs = [r["metrics"][baseline].get("paired_" + method) for r in results]
    mine = [v for v in mine if v is not None]
    theirs = [v for v in theirs if v is not None]
    if not mine or not theirs or not statistics.median(theirs):
        return "-"
    mine, theirs = statistics.median(mine), statistics.median(theirs)
    return "%.2fx (%.3f / %.3f)" % (mine / theirs, mine, theirs)


def _mark(ok):
    return "met" if ok else "MISSED"


def _over(results, label, key, limit, families, inside=None):
    """Families whose ``key`` figure is over ``limit`` (or outside ``inside``), as text."""
    bad = []
    for f in families:
        v = summary_of(results, label, f)[key]
        if v is None or (inside and not inside[0] <= v <= inside[1]) or (limit is not None
                                                                            and v > limit):
            bad.append("%s %s" % (f, _f(v, "%.2f")))
    return bad


def issue17_goals(dense, sparse, pair):
    """Lines marking the goals of issue 17 met or MISSED for one (default, approach) pair.

    ``dense``: results on the default grid (one seed set); ``sparse``: results on
    the sparse grid (same seed set); either None when it was not run.
    """
    lines = _dense_goals(dense, pair) if dense else ["- default grid: not run"]
    return lines + _sparse_goals(sparse, pair)


def _dense_goals(dense, pair):
    default, approach = pair
    lines = []
    s = summary_of(dense, default)
    bb = best_baseline(dense)
    med = s["median_rel_error"]
    ok = med is not None and bb is not None and med <= GOAL_MEDIAN_RATIO * bb[1]
    lines.append("- median rel err %s = %s x the best baseline (%s %s), goal <= %.1f x: **%s**" % (
        _f(med), _f(med / bb[1] if med is not None and bb and bb[1] else None, "%.2f"),
        bb[0] if bb else "-", _f(bb[1] if bb else None), GOAL_MEDIAN_RATIO, _mark(ok)))
    worse = worse_than_baseline(dense, default)
    lines.append("- no family worse than its best baseline: **%s**%s" % (
        _mark(not worse), (" (" + "; ".join(worse) + ")") if worse else ""))
    ne = s["no_estimate_fraction"]
    lines.append("- no estimate %s <= %.2f overall: **%s**" % (
        _f(ne, "%.2f"), GOAL_NO_ESTIMATE, _mark(ne is not None and ne <= GOAL_NO_ESTIMATE)))
    over = _over(dense, default, "no_estimate_fraction", GOAL_NO_ESTIMATE_FAMILY, fam.FAMILIES)
    lines.append("- no estimate <= %.2f in every family: **%s**%s" % (
        GOAL_NO_ESTIMATE_FAMILY, _mark(not over), (" (over: " + ", ".join(over) + ")") if over
        else ""))
    for label, what in ((default, "default"), (approach, "approach given")):
        if label is None:
            continue
        bad = _over(dense, label, "coverage", None, fam.FAMILIES, GOAL_COVERAGE_FAMILY)
        lines.append("- coverage 80 %% in %.2f..%.2f in every family (%s): **%s**%s" % (
            GOAL_COVERAGE_FAMILY[0], GOAL_COVERAGE_FAMILY[1], what, _mark(not bad),
            (" (outside: " + ", ".join(bad) + ")") if bad else ""))
    for label, what in ((default, "default settings"), (approach, "approach given")):
        if label is None:
            lines.append("- zero early arrivals, %s: not run (add --grid approach=0,1)" % what)
            continue
        rows = sum(r["metrics"][label]["early_arrival"] or 0 for r in dense)
        traces = sum(1 for r in dense if (r["metrics"][label]["early_arrival"] or 0) > 0)
        by_family = ["%s %d" % (f, sum(r["metrics"][label]["early_arrival"] or 0
                                       for r in dense if r["family"] == f))
                     for f in fam.FAMILIES
                     if any((r["metrics"][label]["early_arrival"] or 0) > 0
                            for r in dense if r["family"] == f)]
        unseen = sum(r["metrics"][label].get("early_unseen") or 0 for r in dense)
        unseen_traces = sum(1 for r in dense if (r["metrics"][label].get("early_unseen") or 0) > 0)
        apart = []
        if by_family:
            apart.append("rows by family: " + ", ".join(by_family))
        if unseen:
            apart.append("apart: %d rows on %d traces no reading could yet show, after a pour "
                         "before two readings of the lagging probe moved past the margin"
                         % (unseen, unseen_traces))
        lines.append("- zero early arrivals, %s: %d rows on %d of %d traces: **%s**%s" % (
            what, rows, traces, len(dense), _mark(rows == 0),
            (" (" + "; ".join(apart) + ")") if apart else ""))
    return lines


def _sparse_goals(sparse, pair):
    default, approach = pair
    lines = []
    if not sparse:
        lines.append("- sparse grid, no family over %.2f no estimate from the third reading: "
                     "not run (add --sampling sparse or both)" % GOAL_SPARSE_NO_ESTIMATE)
    else:
        for label, what in ((default, "default"), (approach, "approach given")):
            if label is None:
                continue
            over = _over(sparse, label, "no_estimate_from_third", GOAL_SPARSE_NO_ESTIMATE,
                         fam.sparse_families())
            allv = summary_of(sparse, label)["no_estimate_from_third"]
            lines.append("- sparse grid (%s): no family over %.2f no estimate from the third "
                         "reading (all: %s): **%s**%s" % (
                             what, GOAL_SPARSE_NO_ESTIMATE, _f(allv, "%.2f"), _mark(not over),
                             (" (over: " + ", ".join(over) + ")") if over else ""))
    return lines


SPARSE_HEADER = ("| %s | method | traces | median rel err | p90 rel err | no estimate | no estimate "
                 "from reading 3 | first answer: reading (median) | first answer s (never) "
                 "| coverage 80 %% | early arrivals (traces) |")


def sparse_table(results, methods, key, groups, title):
    """The sparse grid's table: ``results`` split by ``key`` into ``groups``, plus all."""
    lines = [SPARSE_HEADER % title, "|---|---|---|---|---|---|---|---|---|---|---|"]
    for g in list(groups) + ["**all**"]:
        sel = results if g == "**all**" else [r for r in results if key(r) == g]
        for m in methods if sel else ():
            s = summarise([r["metrics"][m] for r in sel])
            lines.append("| %s | %s | %d | %s | %s | %s | %s | %s | %s (%s) | %s | %s (%s) |" % (
                g, m, s["traces"], _f(s["median_rel_error"]), _f(s["p90_rel_error"]),
                _f(s["no_estimate_fraction"], "%.2f"), _f(s["no_estimate_from_third"], "%.2f"),
                _f(s["first_answer_reading"], "%.0f"), _f(s["first_answer_s"], "%.0f"),
                _f(s["never_answered"], "%d"), _f(s["coverage"], "%.2f"),
                _f(s["early_arrival"], "%d"), _f(s["early_traces"], "%d")))
    return lines
