"""Readings minutes apart: an answer from the third reading, honest intervals, no early
arrival after a pour, saved state on every wake (both runtimes).

Traces: :mod:`sparse_trace` (a liquid through a lagging probe, one reading every
60-600 s, irregular; its closed form is checked against scipy's solve_ivp in
tests/test_sparse_reference.py). The checks are what the estimator promises for
such readings (docs/design.md, "Estimator"), over a handful of invented
vessels and seeds.
"""
from sparse_trace import SparseTrace

from tinytherm import blob as bl
from tinytherm import status as st
from tinytherm.estimator import ThermalEstimator

# (name, liquid at t = 0, equilibrium, k 1/s, probe lag s, probe at t = 0 or None,
#  target, heater duty or None, approach)  -- invented vessels
CASES = (
    ("mug, probe in the drink", 82.0, 21.0, 1.0 / 1500.0, 8.0, None, 45.0, None, -1),
    ("mug poured onto a cold probe", 85.0, 20.0, 1.0 / 1800.0, 30.0, 20.0, 50.0, None, -1),
    ("fridge drink", 24.0, 4.0, 1.0 / 4000.0, 20.0, None, 8.0, None, -1),
    ("bath heating at full power", 18.0, 90.0, 1.0 / 6000.0, 10.0, None, 55.0, 1.0, 1),
)
SEEDS = (1, 2, 3)


def run(case, seed, approach, on_row, save_every=False, min_s=60.0, max_s=600.0):
    """Feed one trace up to 20 readings past its crossing; ``on_row(i, trace, est,
    crossing_s)`` sees each reading (i from 1). With ``save_every`` the estimator is
    saved and restored into a fresh one on every reading, as a sleeping device does."""
    name, l0, eq, k, lag, p0, target, duty, direction = case
    heater = duty is not None
    tr = SparseTrace(l0, eq, k, lag_s=lag, probe0_c=p0, min_s=min_s, max_s=max_s,
                     noise_c=0.05, quantum_c=0.0625, seed=seed)
    crossing = tr.crossing_s(target)
    est = ThermalEstimator(heater=heater)
    i = 0
    while True:
        i += 1
        y = tr.step()
        if save_every and i > 1:
            blob = bytes(est.save())
            est = ThermalEstimator(heater=heater)
            assert est.restore(blob) == bl.RESTORED
        est.update(y, tr.dt_s, duty=duty if heater else 0.0)
        est.predict(target, direction if approach else 0)
        on_row(i, tr, est, crossing)
        if tr.t_s > crossing + 20 * max_s:
            return


def test_an_answer_from_the_third_reading_on():
    for case in CASES:
        for seed in SEEDS:
            for approach in (False, True):
                counts = [0, 0, None]  # rows from the third reading to the crossing, answered

                def row(i, tr, est, crossing):
                    if i == 3:
                        counts[2] = est.status
                    if i >= 3 and tr.t_s < crossing:
                        counts[0] += 1
                        counts[1] += est.status in (st.TRACKING, st.ARRIVED)

                run(case, seed, approach, row)
                assert counts[2] == st.TRACKING, (case[0], seed, approach, counts)
                assert counts[1] >= 0.9 * counts[0], (case[0], seed, approach, counts)


def test_sparse_intervals_cover_about_as_often_as_they_say():
    # 80 % intervals over every answered row before the crossing, pooled over the
    # vessels and seeds: a union of everything (coverage near 1) or a point (near 0)
    # fails; the families benchmark measures it per family (docs/benchmarks.md)
    tally = [0, 0]

    def row(i, tr, est, crossing):
        if tr.t_s < crossing and est.status == st.TRACKING:
            remaining = crossing - tr.t_s
            tally[0] += 1
            tally[1] += est.eta_low_s <= remaining <= est.eta_high_s

    for case in CASES:
        for seed in SEEDS:
            run(case, seed, True, row)
    share = tally[1] / tally[0]
    assert tally[0] > 100, tally
    assert 0.70 <= share <= 0.97, (share, tally)


def test_no_early_arrival_after_a_pour_without_a_direction():
    # drinks poured onto a probe at room temperature: it rises through the drinking
    # target while the drink is 20-40 C hotter; with no direction given that rise is
    # no arrival (every lag, every target below the pour, readings 60-600 s and 10 s)
    for lag in (8.0, 30.0, 60.0):
        for target in (35.0, 50.0, 65.0):
            for spacing in ((60.0, 600.0), (10.0, 10.0)):
                case = ("pour", 85.0, 20.0, 1.0 / 1800.0, lag, 20.0, target, None, -1)
                early = [0]

                def row(i, tr, est, crossing):
                    # early: arrived while the probe is still more than 0.3 C short
                    if est.status == st.ARRIVED and tr.probe_c - target > 0.3:
                        early[0] += 1

                run(case, 1, False, row, min_s=spacing[0], max_s=spacing[1])
                assert early[0] == 0, (lag, target, spacing, early)


def test_saved_and_restored_on_every_wake_answers_the_same():
    # a battery device saves after every reading and restores on the next wake
    for case in (CASES[1], CASES[3]):
        plain = []
        woken = []
        run(case, 2, True, lambda i, tr, est, c: plain.append((est.status, est.eta_s)))
        run(case, 2, True, lambda i, tr, est, c: woken.append((est.status, est.eta_s)),
            save_every=True)
        assert plain == woken, case[0]
