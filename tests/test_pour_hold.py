"""After an arrival, a pour: the arrival is withdrawn once readings show it.

Physics by scipy's ``solve_ivp`` (Newton's law of cooling for the drink, a
first-order lag for the probe, common practice, no source); the pour mixes in
hot liquid (an energy balance of two volumes of one liquid, common practice,
no source). The judge is the families benchmark's: an "arrived" row is early
when the drink is hotter than the target by more than max(0.3 C, 3 noise sd),
unless no reading could yet show the pour (host_sim.replay.metrics.unseen_rows).
"""
import numpy as np
import pytest
from scipy.integrate import solve_ivp

from host_sim.replay.metrics import early_margin_c, early_rows, unseen_rows
from tinytherm import status as st
from tinytherm.estimator import ThermalEstimator


def _trace(pour_s, k=1.0 / 300.0, air=20.0, start=90.0, lag_s=20.0, hot=85.0, share=0.4,
           end_s=900.0):
    def rhs(_t, y):
        return [-k * (y[0] - air), (y[0] - y[1]) / lag_s]
    a = solve_ivp(rhs, (0.0, pour_s), [start, start], rtol=1e-9, atol=1e-9, dense_output=True)
    drink0 = (1.0 - share) * a.y[0, -1] + share * hot
    b = solve_ivp(rhs, (pour_s, end_s), [drink0, a.y[1, -1]], rtol=1e-9, atol=1e-9,
                  dense_output=True)
    t = np.arange(0.0, end_s, 1.0)
    sol = np.where(t < pour_s, a.sol(np.minimum(t, pour_s)), b.sol(np.maximum(t, pour_s)))
    return t, sol[0], sol[1]


@pytest.mark.parametrize("pour_s", [float(s) for s in range(440, 482, 3)])
def test_an_arrival_before_a_pour_is_withdrawn_once_readings_show_it(pour_s):
    t, drink, probe = _trace(pour_s)
    target, sd = 40.0, 0.03
    rng = np.random.default_rng(int(pour_s))
    readings = np.round((probe + rng.normal(0.0, sd, len(t))) / 0.0625) * 0.0625
    est = ThermalEstimator(quantum_c=0.0625)
    status = []
    for i, y in enumerate(readings):
        est.update(float(y), 0.0 if i == 0 else 1.0)
        est.predict(target)
        status.append("arrived" if est.status == st.ARRIVED else "other")
    assert "arrived" in status[:int(pour_s)]        # it had arrived before the pour
    # the judge: the drink against its value when the probe reads the target
    crossing = np.nonzero(probe <= target)[0][0]
    early = early_rows(status, drink, float(drink[crossing]), sd, -1)
    seen = early & ~unseen_rows(t, probe, [pour_s], early_margin_c(sd))
    assert not seen.any(), t[seen]
