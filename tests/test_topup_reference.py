"""A mug topped up, its probe lagging: the drink's time while the probe rises and after it turns.

After a top-up the drink is hotter at once; a lagging probe rises after it,
away from a drinking target below, until it meets the drink and follows it
down. Its rise is the probe's, not the drink's, so the time cannot come from
it.

- Probe lags of 20-70 s (a mug of our own, 85 C, topped up at 1,200 s): a
  probe travelling to a new liquid after a jump moves one way until it meets
  it, so a fall back from its extreme beyond the noise (4 noise sd, at least
  0.3 C) is the turn, and the new fit starts at the reading before it (the
  peak). Before, the estimator waited for the block means to fall back by the
  turn threshold (1 C).
- Probe lags of 60-90 s (another mug, 88 C, topped up at 1,500 s, the fuller
  mug cooling at a rate 15 % lower: more liquid, the wetted wall grows less; our
  own number, the carried law does not know it): while the probe still rises,
  the drink's law fitted before the pour is carried on from where the probe's
  rising fit levels off, plus the probe's lag
  (``tinytherm.settle.Settle.carried``). Before, no time was shown until the
  probe turned.
- Probe lags of 20-45 s (a third mug, gone to 35 C, topped up at 2,000 s
  with water at 95 C, the target 59 C just under the mix): the drink crosses
  the target about 100-150 s after the probe peaks, and the probe's rising fit
  knows no level for most of its rise. The drink is at least as far from the
  target as the probe is now, so the time from the probe's reading under the
  carried law is the lower end, the time from the rising fit's level, its z sd
  further on, the upper end. Before, no time was shown while the probe rose.
- The carried time with the direction given (``approach=-1``, a drink cooling
  to its target): the probe's rise after a pour is away from the product's
  direction, the drink's carried law is not. Before, no time with it.

Reference physics: scipy ``solve_ivp`` (DOP853, tight tolerances) of Newton's
law of cooling for the drink and a first-order lag for the probe (common
practice, no source); the pour mixes two equal volumes of one liquid (an
energy balance, common practice, no source). The probe's peak (``probe =
drink``), its fall of 1 C after the peak and its crossing of the target by
scipy ``brentq``. The scenarios' numbers are our own. Early arrivals are
judged as the families benchmark judges them
(``host_sim.replay.metrics.early_rows``; the drink had arrived before the
pour, and the rows before a reading could show the pour are counted apart,
``unseen_rows``).
"""
import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from host_sim.replay.metrics import early_margin_c, early_rows, unseen_rows
from tinytherm import status as st
from tinytherm.estimator import ThermalEstimator

STEP_S = 2.0
NOISE_SD_C = 0.03
QUANTUM_C = 0.0625

# air (deg C), loss rate before and after the pour (1/s), start, pour time (s), poured
# liquid (deg C), end (s), target (deg C)
TURN_MUG = dict(air_c=21.0, rate=1.0 / 1500.0, rate_after=1.0 / 1500.0, start_c=85.0,
                pour_s=1200.0, pour_c=95.0, end_s=4000.0, target_c=55.0)
CARRIED_MUG = dict(air_c=22.0, rate=1.0 / 1400.0, rate_after=0.85 / 1400.0, start_c=88.0,
                   pour_s=1500.0, pour_c=96.0, end_s=4500.0, target_c=57.0)


def _topped_up(mug, lag_s):
    """Times, drink and probe (deg C), and the solution after the pour; the probe's peak
    and its crossing of the target (s)."""
    def rhs(rate):
        return lambda _t, y: [-rate * (y[0] - mug["air_c"]), (y[0] - y[1]) / lag_s]
    pour_s, end_s = mug["pour_s"], mug["end_s"]
    a = solve_ivp(rhs(mug["rate"]), (0.0, pour_s), [mug["start_c"], mug["start_c"]],
                  method="DOP853", rtol=1e-10, atol=1e-10, dense_output=True)
    mixed = 0.5 * (a.y[0, -1] + mug["pour_c"])
    b = solve_ivp(rhs(mug["rate_after"]), (pour_s, end_s), [mixed, a.y[1, -1]],
                  method="DOP853", rtol=1e-10, atol=1e-10, dense_output=True)
    t = np.arange(0.0, end_s, STEP_S)
    y = np.where(t < pour_s, a.sol(np.minimum(t, pour_s)), b.sol(np.maximum(t, pour_s)))
    peak = brentq(lambda s: b.sol(s)[0] - b.sol(s)[1], pour_s + 1.0, end_s)
    crossing = brentq(lambda s: b.sol(s)[1] - mug["target_c"], peak, end_s)
    return t, y[0], y[1], b.sol, peak, crossing


def _replay(mug, t, probe, seed, each_row, approach=0):
    """Feed the noisy, quantised probe to a default estimator, asking for the target at
    every reading (``approach`` as a product states it: 0 not given, -1 cools to it) and
    calling ``each_row(row, estimator)`` after each; the statuses."""
    rng = np.random.default_rng(seed)
    readings = np.round((probe + rng.normal(0.0, NOISE_SD_C, len(t))) / QUANTUM_C) * QUANTUM_C
    est = ThermalEstimator(quantum_c=QUANTUM_C)
    status = []
    for i, y in enumerate(readings):
        est.update(float(y), 0.0 if i == 0 else STEP_S)
        est.predict(mug["target_c"], approach)
        status.append(st.status_name(est.status))
        each_row(i, est)
    return status


def _early(mug, t, status, drink, probe, crossing):
    """Early arrivals (rows), the rows before a reading could show the pour counted apart."""
    early = early_rows(status, drink, float(np.interp(crossing, t, drink)), NOISE_SD_C, -1)
    return early & ~unseen_rows(t, probe, [mug["pour_s"]], early_margin_c(NOISE_SD_C))


@pytest.mark.parametrize("lag_s", [20.0, 40.0, 70.0])
@pytest.mark.parametrize("seed", [1, 2, 3])
def test_the_time_returns_once_the_probe_falls_back_beyond_the_noise(lag_s, seed):
    mug = TURN_MUG
    t, drink, probe, sol, peak, crossing = _topped_up(mug, lag_s)
    top = sol(peak)[1]
    fell_1c = brentq(lambda s: sol(s)[1] - (top - 1.0), peak, mug["end_s"])
    shown = []

    def each_row(i, est):
        if peak <= t[i] < crossing and est.status == st.TRACKING:
            shown.append((t[i], est.eta_low_s <= crossing - t[i] <= est.eta_high_s))
    status = _replay(mug, t, probe, seed, each_row)
    # a time before the probe fell back by the old turn threshold (1 C) ...
    assert shown and shown[0][0] < fell_1c, (shown[:1], peak, fell_1c)
    # ... whose interval holds the reference's remaining time within two minutes
    assert any(ok for s, ok in shown if s < shown[0][0] + 120.0), shown[:60]
    early = _early(mug, t, status, drink, probe, crossing)
    assert not early.any(), t[early]


@pytest.mark.parametrize("lag_s", [60.0, 75.0, 90.0])
@pytest.mark.parametrize("seed", [1, 2, 3])
@pytest.mark.parametrize("approach", [0, -1])
def test_a_time_while_the_probe_still_rises_after_a_top_up(lag_s, seed, approach):
    mug = CARRIED_MUG
    t, drink, probe, _sol, peak, crossing = _topped_up(mug, lag_s)
    held = []

    def each_row(i, est):
        # (the probe rising away from the target, 1 C past it: the drink's time is wanted)
        if (mug["pour_s"] < t[i] < peak and probe[i] > mug["target_c"] + 1.0
                and est.status == st.TRACKING):
            held.append(est.eta_low_s <= crossing - t[i] <= est.eta_high_s)
    status = _replay(mug, t, probe, seed, each_row, approach)
    # a time on at least ten rows (20 s) while the probe still rises (before: none) ...
    assert len(held) >= 10, (len(held), peak)
    # ... whose 80 % interval holds the reference's remaining time on most of them
    assert np.mean(held) >= 0.8, (np.mean(held), len(held))
    early = _early(mug, t, status, drink, probe, crossing)
    assert not early.any(), t[early]


# (a third mug: a drink gone lukewarm topped up with a kettle's water, the target just under
# the mix, so the drink crosses it soon after the probe meets it: the probe's rising fit
# knows no level for most of its rise)
UNSURE_MUG = dict(air_c=20.0, rate=1.0 / 1500.0, rate_after=1.0 / 1500.0, start_c=75.0,
                  pour_s=2000.0, pour_c=95.0, end_s=4000.0, target_c=59.0)


@pytest.mark.parametrize("lag_s", [20.0, 30.0, 45.0])
@pytest.mark.parametrize("seed", [1, 2, 3])
@pytest.mark.parametrize("approach", [0, -1])
def test_a_time_from_where_the_probe_is_while_the_level_is_not_known(lag_s, seed, approach):
    mug = UNSURE_MUG
    t, drink, probe, _sol, peak, crossing = _topped_up(mug, lag_s)
    rows, held, bounded = [], [], []

    def each_row(i, est):
        # (the probe past the target and still rising to the drink, three readings on)
        if mug["pour_s"] + 3 * STEP_S < t[i] < peak and probe[i] > mug["target_c"] + 0.5:
            rows.append(est.status == st.TRACKING)
            if est.status == st.TRACKING:
                held.append(est.eta_low_s <= crossing - t[i] <= est.eta_high_s)
                bounded.append(est.eta_high_s < float("inf"))
    status = _replay(mug, t, probe, seed, each_row, approach)
    # a time on most rows while the probe still rises (before: 0-5 %; with the direction
    # given, none) ...
    assert np.mean(rows) >= 0.75, (np.mean(rows), len(rows), peak)
    # ... whose 80 % interval holds the reference's remaining time on most of them, with an
    # upper end (wide: the level is not known yet; an open end would hold every crossing)
    assert np.mean(held) >= 0.8, (np.mean(held), len(held))
    assert np.mean(bounded) >= 0.9, np.mean(bounded)
    early = _early(mug, t, status, drink, probe, crossing)
    assert not early.any(), t[early]
