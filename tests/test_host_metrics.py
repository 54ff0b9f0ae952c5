"""ETA metrics on hand-made cases, and the batch baselines on exact curves."""
import math

import numpy as np
import pytest

from host_sim.replay.baselines import ExpRefitBaseline, SlopeBaseline
from host_sim.replay.metrics import relative_errors, summarise, trace_metrics


def test_perfect_answers():
    t = np.arange(0.0, 1001.0, 10.0)          # crossing at 1000 s, warm-up 60 s
    eta = [1000.0 - x for x in t]
    m = trace_metrics(t, eta, 1000.0, [e - 5 for e in eta], [e + 5 for e in eta])
    assert m["evaluated_rows"] == 94            # rows at 60..990 s
    assert m["median_rel_error"] == 0.0 and m["p90_rel_error"] == 0.0
    assert m["time_to_trust"] == pytest.approx(0.06)   # first evaluated row, 60 s of 1000 s
    assert m["coverage"] == 1.0 and m["no_estimate_fraction"] == 0.0


def test_relative_error_floor_and_values():
    # remaining 500 s, eta 550 s -> 0.1; remaining 10 s, eta 25 s -> 15/30 (floor 30 s)
    t = [0.0, 500.0, 990.0]
    mask, rel, rem = relative_errors(t, [None, 550.0, 25.0], 1000.0)
    assert list(mask) == [False, True, True]
    assert rel[1] == pytest.approx(0.1) and rel[2] == pytest.approx(0.5)
    assert list(rem) == [1000.0, 500.0, 10.0]


def test_time_to_trust_after_last_bad_row_and_missing_estimates():
    t = np.arange(0.0, 1000.0, 100.0)          # rows 0..900, crossing 1000, evaluated 100..900
    rem = 1000.0 - t
    eta = list(rem * 1.5)                      # 50 % off ...
    for i in range(5, 10):
        eta[i] = rem[i] * 1.05                 # ... within 10 % from t = 500 s on
    eta[2] = None                              # one row without an estimate
    m = trace_metrics(t, eta, 1000.0)
    assert m["time_to_trust"] == pytest.approx(0.5)
    assert m["no_estimate_fraction"] == pytest.approx(1.0 / 9.0)
    # 8 estimates: 0.5 at t = 100, 300, 400 s and 0.05 at 500..900 s -> median 0.05
    assert m["median_rel_error"] == pytest.approx(0.05)
    assert m["p90_rel_error"] == pytest.approx(0.5)
    assert m["coverage"] is None               # no intervals given
    eta[-1] = rem[-1] * 2.0                    # last evaluated row bad: never trusted
    assert trace_metrics(t, eta, 1000.0)["time_to_trust"] == 1.0


def test_coverage_counts_unbounded_upper_end():
    t = [0.0, 100.0, 200.0, 300.0]
    rem = [400.0, 300.0, 200.0, 100.0]
    eta = [None, 310.0, 150.0, 100.0]
    low = [None, 290.0, 100.0, 120.0]          # last row: interval misses (too late)
    high = [None, 330.0, math.inf, 150.0]      # second: unbounded upper end, contains 200
    m = trace_metrics(t, eta, 400.0, low, high, warmup_s=50.0)
    assert m["coverage"] == pytest.approx(2.0 / 3.0)
    assert rem[1] == 300.0


def test_no_crossing_or_all_in_warmup_gives_none():
    assert trace_metrics([0, 10, 20], [5, 4, 3], None)["median_rel_error"] is None
    m = trace_metrics([0, 10, 20], [25, 15, 5], 25.0)
    assert m["evaluated_rows"] == 0 and m["time_to_trust"] is None


def test_summarise_medians_and_means():
    per = [dict(median_rel_error=0.1, p90_rel_error=0.3, time_to_trust=0.2, coverage=0.8,
                no_estimate_fraction=0.0),
           dict(median_rel_error=0.3, p90_rel_error=0.5, time_to_trust=1.0, coverage=None,
                no_estimate_fraction=0.5),
           dict(median_rel_error=None, p90_rel_error=None, time_to_trust=1.0, coverage=0.6,
                no_estimate_fraction=1.0)]
    s = summarise(per)
    assert s["median_rel_error"] == pytest.approx(0.2) and s["p90_rel_error"] == pytest.approx(0.4)
    assert s["time_to_trust"] == 1.0
    assert s["coverage"] == pytest.approx(0.7) and s["no_estimate_fraction"] == pytest.approx(0.5)


def test_slope_baseline_on_a_line():
    b = SlopeBaseline(window_s=120.0)
    for t in range(0, 300, 5):
        b.update(t, 80.0 - 0.02 * t)             # cooling 0.02 K/s
    # at t = 295 s the line is at 74.1 C; 60 C is 705 s away
    assert b.predict(60.0) == pytest.approx(705.0, rel=1e-9)
    assert b.predict(90.0) is None              # behind the direction of travel


def test_exponential_refit_recovers_an_exact_curve():
    # T = 21 + 59 exp(-t/1500): the crossing of 50 C is at 1500 ln(59/29) s
    # (closed form of Newton cooling, solved by hand).
    b = ExpRefitBaseline(window_s=None, refit_every=5)
    for t in range(0, 605, 5):
        b.update(float(t), 21.0 + 59.0 * math.exp(-t / 1500.0))
        eta = b.predict(50.0)
    crossing = 1500.0 * math.log(59.0 / 29.0)
    assert eta == pytest.approx(crossing - 600.0, rel=1e-4)
    w = ExpRefitBaseline(window_s=300.0, refit_every=5)
    for t in range(0, 605, 5):
        w.update(float(t), 21.0 + 59.0 * math.exp(-t / 1500.0))
        eta_w = w.predict(50.0)
    assert eta_w == pytest.approx(crossing - 600.0, rel=1e-3)
    assert w.predict(10.0) is None               # beyond the fitted equilibrium


def test_paired_medians_use_only_the_rows_both_answer():
    # Arithmetic on made-up rows (common practice, no source): the crossing at 1000 s, rows
    # every 100 s from 0, warm-up 60 s. Method a answers every row 10 % long; method b
    # leaves the first three evaluated rows blank and answers the rest 20 % long.
    from host_sim.replay.metrics import paired_median_rel_errors
    t = np.arange(0.0, 1001.0, 100.0)
    rem = 1000.0 - t
    eta_a = rem * 1.1
    eta_b = rem * 1.2
    eta_b[:4] = np.nan                       # t = 0 (warm-up), 100, 200, 300: blank
    a, b = paired_median_rel_errors(t, eta_a, eta_b, 1000.0, warmup_s=60.0, floor_s=1.0)
    shared = (t >= 400.0) & (t < 1000.0)
    rel_a = np.abs(eta_a - rem)[shared] / rem[shared]
    rel_b = np.abs(eta_b - rem)[shared] / rem[shared]
    assert a == pytest.approx(np.median(rel_a)) and a == pytest.approx(0.1)
    assert b == pytest.approx(np.median(rel_b)) and b == pytest.approx(0.2)
    # a 50 % off on the rows b leaves blank: its own median (trace_metrics, over its own
    # rows) rises, the paired one does not
    eta_a[1:4] = rem[1:4] * 1.5
    own = trace_metrics(t, eta_a, 1000.0, warmup_s=60.0, floor_s=1.0)["median_rel_error"]
    a2, b2 = paired_median_rel_errors(t, eta_a, eta_b, 1000.0, warmup_s=60.0, floor_s=1.0)
    assert own == pytest.approx(np.median([0.5] * 3 + [0.1] * 6))
    assert a2 == pytest.approx(0.1) and b2 == pytest.approx(0.2)
    # no shared row, no crossing: nothing to compare
    assert paired_median_rel_errors(t, eta_a, np.full(len(t), np.nan), 1000.0) == (None, None)
    assert paired_median_rel_errors(t, eta_a, eta_b, None) == (None, None)
