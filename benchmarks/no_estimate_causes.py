"""Which gate of the answer holds each row without an estimate, and where in the approach.

    python benchmarks/no_estimate_causes.py --family mug --sampling dense --per-family 32
    python benchmarks/no_estimate_causes.py --family topup --sampling sparse

For each family trace of the tune (or holdout) seeds this replays the core
estimator, asks ``predict(target)`` after every reading (no direction given,
as the families benchmark's default), and sorts each evaluated row without an
answer shown (status not ``tracking``/``arrived``) by

- the status shown (:mod:`tinytherm.status`: gathering, settling, out of
  reach, sensor fault, disturbed);
- the ``return`` of ``answer._work_out`` that gave the answer (watched with
  ``sys.settrace`` for the run; named by the return's comment or the ``if`` it
  ends; between block closes the last one: the answer counted down; a sensor
  fault is decided in ``predict`` before it);
  for the "not moving, or turning" return also why: no direction yet
  (``d0``), the fitted slope against the block means' direction
  (``against``), or the level and the readings past the target with no
  arrival yet (``past``), with the block means' direction ``m``;
- for gathering and disturbed rows, what began the fit they gather for (as
  ``benchmarks/miss_causes.py`` names it: the trace's ``start``, a ``turn``, a
  ``jump``, the ``settle`` restart, a ``gap``; ``, spike`` when one of the two
  readings before it was more than max(1 C, 6 noise sd) off the noise-free
  probe, a sensor fault the guard passed);
- where in the approach it lies: the share of the time from the approach's
  start to the true crossing (``<0.1``, ``<0.5``, ``<0.9``, ``>=0.9``).

Rows are those :mod:`host_sim.replay.metrics` scores: dense, after the 60 s
warm-up; sparse, from the approach's third reading (``no_estimate_from_third``);
both before the true crossing. Each trace weighs one (its rows' shares are
averaged over the traces, as ``benchmarks/families.py``'s no-estimate figures
are), so the shares of one family add up to its no-estimate figure there.
Figures only.
"""
import argparse
import inspect
import os
import sys
from collections import Counter

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
for p in (ROOT, os.path.join(ROOT, "benchmarks")):
    if p not in sys.path:
        sys.path.insert(0, p)

import families as F  # noqa: E402
from host_sim.replay.metrics import FROM_READING, WARMUP_S  # noqa: E402
from host_sim.sim import families as fam  # noqa: E402
from tinytherm import answer  # noqa: E402
from tinytherm import status as st  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402
from tinytherm.guard import GAP_RESTART  # noqa: E402

POSITIONS = ((0.1, "<0.1"), (0.5, "<0.5"), (0.9, "<0.9"))


def _return_names():
    """{line number: a short name} for the returns of ``answer._work_out``: the return's
    own comment, else the header of the block it ends (the ``if`` above it)."""
    lines, first = inspect.getsourcelines(answer._work_out)
    names = {}
    for i, text in enumerate(lines):
        code = text.strip()
        if not code.startswith("return"):
            continue
        name = code
        if "#" not in code:
            indent = len(text) - len(text.lstrip())
            for j in range(i - 1, 0, -1):
                prev = lines[j]
                if prev.strip() and not prev.strip().startswith("#") and (
                        len(prev) - len(prev.lstrip()) < indent):
                    name = "return under: " + prev.strip()
                    break
        names[first + i] = name[:90]
    return names


END = "end of _work_out (settling: the show gate, Audits.var_at over MAX_REL_SD^2)"


def trace_causes(family, seed, sampling):
    """(Counter of causes of the unanswered rows, evaluated rows) of one trace."""
    ft = fam.load_or_generate(family, seed, sensor_faults=True, sampling=sampling)
    tr = ft.truth
    code = answer._work_out.__code__
    seen = {"line": None, "why": ""}

    def local(frame, event, _arg):
        if event == "return":
            seen["line"] = frame.f_lineno
            f = frame.f_locals
            seen["why"] = ""
            if "not moving, or turning" in _NAMES.get(frame.f_lineno, ""):
                d, slope, gap = f.get("d"), f.get("slope"), f.get("gap")
                if d == 0:
                    seen["why"] = " [d0]"
                elif slope * d <= 0.0:
                    seen["why"] = " [against, m=%s]" % f.get("m")
                elif gap * d <= 0.0:
                    seen["why"] = " [past, m=%s]" % f.get("m")
        return local

    def tracer(frame, event, _arg):
        if event == "call" and frame.f_code is code:
            seen["line"] = "called"
            return local
        return None

    est = ThermalEstimator(**F.device_kwargs(ThermalEstimator, ft.heater is not None,
                                             tr["quantum_c"]))
    start = float(tr.get("approach_start_s") or ft.time_s[0])
    crossing = tr["crossing_time_s"]
    out = Counter()
    evaluated = reading = 0
    began = {"why": "start", "turns": 0, "i": 0}  # what began the current fit
    off = max(1.0, 6.0 * tr["noise_sd_c"])  # deg C: a reading this far off the probe is a fault
    begin_again = est._begin_again

    def traced_begin(disturbed, from_previous=False):
        why = "jump" if disturbed else ("turn" if est.turns != began["turns"] else "settle")
        began["turns"] = est.turns
        i = began["i"]
        if any(abs(ft.temp_c[j] - ft.clean_c[j]) > off
               for j in range(max(0, i - 1), min(i + 1, len(ft.temp_c)))):
            why += ", spike"
        began["why"] = why
        return begin_again(disturbed, from_previous)

    est._begin_again = traced_begin
    sys.settrace(tracer)
    try:
        for i, t in enumerate(F.feed(est, ft.time_s, ft.temp_c, ft.ambient_c, ft.heater)):
            began["i"] = i + 1  # (the reading fed next: _begin_again runs inside its update)
            if est.guard.gap == GAP_RESTART and est.last_verdict == st.ACCEPTED and i:
                began["why"] = "gap"
            seen["line"] = None
            est.predict(tr["target_c"])
            line = seen["line"]
            if t >= start:
                reading += 1
            if t >= crossing:
                continue
            if (t - start < WARMUP_S) if sampling == "dense" else (t < start or reading < FROM_READING):
                continue
            evaluated += 1
            if est.status in (st.TRACKING, st.ARRIVED):
                continue
            if line is not None:
                seen["last"] = _NAMES.get(line, END) + seen["why"]
            where = seen.get("last", "-")  # (no block closed since: the answer counted down)
            if est.status == st.SENSOR_FAULT:
                where = "predict: answer.FAULT_AFTER readings rejected in a row (the guard)"
            if est.status in (st.GATHERING, st.DISTURBED):
                where += " (after %s)" % began["why"]
            frac = (t - start) / max(crossing - start, 1e-9)
            pos = next((name for edge, name in POSITIONS if frac < edge), ">=0.9")
            out[(st.status_name(est.status), where, pos)] += 1
    finally:
        sys.settrace(None)
    return out, evaluated


_NAMES = _return_names()


def main(argv=None):
    ap = argparse.ArgumentParser(description="Which gate holds the rows without an estimate, "
                                             "per family (per-trace shares).")
    F.add_family_arguments(ap)
    args = ap.parse_args(argv)
    names = F.chosen_families(ap, args)
    print("| family | status | held by (answer._work_out's return) | share of rows | "
          "by the share of the approach |")
    print("|---|---|---|---|---|")
    for f in names:
        shares, n = Counter(), 0
        for i in range(args.per_family):
            c, rows = trace_causes(f, F.SEED_BASE[args.seeds] + i, args.sampling)
            if not rows:
                continue
            n += 1
            for k, v in c.items():
                shares[k] += v / rows
        if not n:
            continue
        total = sum(shares.values()) / n
        by_cause = Counter()
        for (status, where, _pos), v in shares.items():
            by_cause[(status, where)] += v / n
        for (status, where), v in by_cause.most_common():
            pos = ", ".join("%s %.3f" % (p, shares[(status, where, p)] / n)
                            for _e, p in POSITIONS + ((None, ">=0.9"),)
                            if shares[(status, where, p)])
            print("| %s | %s | `%s` | %.3f | %s |" % (f, status, where, v, pos))
        print("| %s | **all** | | %.3f | (%d traces) |" % (f, total, n))
    return 0


if __name__ == "__main__":
    sys.exit(main())
