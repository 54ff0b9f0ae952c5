"""A slow drink read by a coarse probe: an answer before the slope stands out of its noise.

A drink warming (or cooling) slowly towards a room, its probe lagging 20-30 s,
read every 10 s by a noisy probe with 0.5 C steps: for the first minutes of a
fit the fitted slope lies within 2 sd of 0 and the block means have not moved
1 C, so the estimator has no direction. It answers then with the time at the
fitted slope and no upper bound (the liquid may not be moving at all): the
readings from the first minute to the crossing are answered, and the shown
80 % intervals cover about as often as they say.

Reference physics: scipy ``solve_ivp`` (Radau, rtol = atol = 1e-10) of
``dL/dt = -k (L - R)``, ``dP/dt = (L - P) / lag``; the crossing of the probe by
scipy ``brentq``. Our own invented drinks and rooms.
"""
import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from probe_rows import counted_rows
from tinytherm import status as st

# (liquid and probe at t = 0, room, k 1/s, probe lag s, target): deg C, 1/s, s, deg C
DRINKS = (
    (4.0, 20.0, 1.0 / 6000.0, 20.0, 8.0),     # a cold bottle warming in a room
    (30.0, 20.0, 1.0 / 5000.0, 30.0, 27.0),   # a warm drink cooling in a room
)


def _rows(drink, seed, dt_s=10.0, noise_c=0.15, quantum_c=0.5):
    """(rows, answered, shown, covered) over the readings from 60 s to the crossing."""
    l0, room, k, lag, target = drink
    sol = solve_ivp(lambda _t, y: [-k * (y[0] - room), (y[0] - y[1]) / lag], (0.0, 40000.0),
                    [l0, l0], method="Radau", rtol=1e-10, atol=1e-10, dense_output=True)
    grid = np.arange(0.0, 40000.0, 10.0)
    way = 1.0 if target > l0 else -1.0
    i = int(np.nonzero((sol.sol(grid)[1] - target) * way >= 0.0)[0][0])
    crossing = brentq(lambda t: sol.sol(t)[1] - target, grid[i - 1], grid[i], xtol=1e-9)

    def ordered(est):
        if est.status == st.TRACKING and est.eta_s > 0.0:
            # (counted down between blocks, the low end may reach 0; an open end is inf)
            assert 0.0 <= est.eta_low_s <= est.eta_s <= est.eta_high_s

    return counted_rows(lambda times: sol.sol(times)[1], crossing, target, seed, dt_s,
                        noise_c, quantum_c, ordered)


def test_a_slow_drink_is_answered_before_its_slope_stands_out():
    for drink in DRINKS:
        tot = np.zeros(4)
        for seed in range(8):
            tot += _rows(drink, 700 + seed)
        rows, answered, shown, covered = tot
        # before the rule: 0.85 and 0.81 of the rows answered; after: 0.96 and 0.95
        assert answered >= 0.93 * rows, (drink, answered / rows)
        # the shown intervals: 0.83-0.85 when this test was written
        assert 0.75 <= covered / shown <= 0.92, (drink, covered / shown)
