"""A mug topped up after it arrived, read by a lagging probe whose step is near its noise.

A drink cooled past its drinking target (48.5 C) is topped up with hot liquid; the
probe (0.5 C steps, noise sd 0.2 C, read every second, lags of 50-90 s) rises a step
at a time while the drink is some 10 C hotter than the target. The arrival shown
before the pour must end once the readings can show the pour
(``tinytherm.settle.Settle.backed_off``): a reading 4 noise sd back from the
extreme's level, or, new, the latest two readings both ``settle.PAIR_SD`` (2.53)
noise sd back (as rare by noise as one beyond 4 sd). Before it, a probe of 0.5 C
steps needed one reading two steps back.

Reference physics: scipy ``solve_ivp`` (DOP853, tight tolerances) of Newton's law of
cooling for the drink and a first-order lag for the probe (common practice, no
source); the pour mixes 40 % hot liquid into the mug (an energy balance of one
liquid, common practice, no source). The probe's peak after the pour (probe =
drink) and its crossing of the target after it by scipy ``brentq``; the drink then
is the judge's target, as in the families benchmark
(``host_sim.replay.metrics.early_rows``; rows no reading could yet show counted
apart, ``unseen_rows``). The scenario's numbers are our own.
"""
import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from host_sim.replay.metrics import early_margin_c, early_rows, unseen_rows
from tinytherm import status as st
from tinytherm.estimator import ThermalEstimator

AIR_C, RATE, START_C, HOT_C, SHARE, END_S = 21.0, 1.0 / 1200.0, 80.0, 90.0, 0.4, 3600.0
TARGET_C, NOISE_SD_C, QUANTUM_C = 48.5, 0.2, 0.5
LAGS_S = (50.0, 70.0, 90.0)
POURS_S = tuple(float(s) for s in range(1500, 1800, 37))


def _trace(pour_s, lag_s, end_s=END_S):
    def rhs(_t, y):
        return [-RATE * (y[0] - AIR_C), (y[0] - y[1]) / lag_s]
    a = solve_ivp(rhs, (0.0, pour_s), [START_C, START_C], method="DOP853", rtol=1e-10,
                  atol=1e-10, dense_output=True)
    drink0 = (1.0 - SHARE) * a.y[0, -1] + SHARE * HOT_C
    b = solve_ivp(rhs, (pour_s, end_s), [drink0, a.y[1, -1]], method="DOP853", rtol=1e-10,
                  atol=1e-10, dense_output=True)
    t = np.arange(0.0, end_s, 1.0)
    sol = np.where(t < pour_s, a.sol(np.minimum(t, pour_s)), b.sol(np.maximum(t, pour_s)))
    return t, sol[0], sol[1], b


def _status(readings, approach, stop=None):
    est = ThermalEstimator(quantum_c=QUANTUM_C)
    out = []
    for i, y in enumerate(readings[:stop]):
        est.update(float(y), 0.0 if i == 0 else 1.0)
        est.predict(TARGET_C, approach)
        out.append("arrived" if est.status == st.ARRIVED else "other")
    return out


def test_a_coarse_probe_rising_after_a_pour_ends_the_arrival():
    total = traces = 0
    for lag in LAGS_S:
        for pour_s in POURS_S:
            t, drink, probe, after = _trace(pour_s, lag)
            peak = brentq(lambda s: after.sol(s)[0] - after.sol(s)[1], pour_s + 1.0, END_S)
            cross = brentq(lambda s: after.sol(s)[1] - TARGET_C, peak, END_S)
            judge_c = float(after.sol(cross)[0])
            assert drink[int(pour_s) + 1] > TARGET_C + 5.0   # (the pour: far hotter than the target)
            unseen = unseen_rows(t, probe, [pour_s], early_margin_c(NOISE_SD_C))
            for seed in range(3):
                rng = np.random.default_rng(int(pour_s) * 10 + seed)
                readings = np.round((probe + rng.normal(0.0, NOISE_SD_C, len(t)))
                                    / QUANTUM_C) * QUANTUM_C
                for approach in (0, -1):
                    status = _status(readings, approach, stop=int(pour_s) + 200)
                    assert "arrived" in status[:int(pour_s)]   # it had arrived before the pour
                    n = len(status)
                    early = early_rows(status, drink[:n], judge_c, NOISE_SD_C, -1) & ~unseen[:n]
                    total += int(np.count_nonzero(early))
                    traces += 1
    # The families benchmark's judge over these 162 runs: 174 early rows at 96477ef, 108
    # with the two-reading line (the rest where one reading alone, or two one step up as
    # noise gives them, show the pour: docs/benchmarks.md). The bound is ours.
    assert traces == 162
    assert total <= 120, total


def test_no_pour_the_two_reading_line_keeps_the_arrival():
    # The same mug with no pour: an arrival, once shown, is withdrawn by noise alone about
    # as rarely as before (11 withdrawals in 36 runs at 96477ef, 12 with the line; each
    # run some 2,000 arrived readings). The bound is ours.
    withdrawn = shown = 0
    for lag in LAGS_S:
        t, _drink, probe, _after = _trace(END_S - 1.0, lag)
        for seed in range(12):
            rng = np.random.default_rng(1000 + seed)
            readings = np.round((probe + rng.normal(0.0, NOISE_SD_C, len(t)))
                                / QUANTUM_C) * QUANTUM_C
            status = _status(readings, 0, stop=3500)
            first = status.index("arrived")
            tail = status[first:]
            shown += tail.count("arrived")
            withdrawn += sum(1 for a, b in zip(tail, tail[1:]) if a == "arrived" and b != "arrived")
    assert shown > 36 * 1500
    assert withdrawn <= 16, withdrawn
