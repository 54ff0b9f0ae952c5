"""Whether a time is shown follows the variance its interval is drawn from.

A hot drink cooling towards a room, its target 4 C above the room (near the
fitted equilibrium, where the fit's own delta-method variance of ln(eta) is
largest), read every 10 s by a noisy 12-bit probe (``probe_rows.counted_rows``).
The answer is shown when the forecast variance at its horizon
(``Audits.var_at``: the audits' measured errors with the fit's own variance as
their prior, the variance the interval is drawn from) is within
``answer.MAX_REL_SD`` squared; before, the fit's own variance alone decided, and
a fit whose audits had measured small errors still showed nothing near the
equilibrium. The rows so answered hold the crossing.

Reference physics: scipy ``solve_ivp`` (Radau, rtol = atol = 1e-10) of
``dL/dt = -k (L - R)``, ``dP/dt = (L - P) / lag``; the probe's crossing by scipy
``brentq``. Our own invented drink and room.
"""
import numpy as np
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from probe_rows import counted_rows

# liquid at t = 0, room, k (1/s), probe lag (s), target: deg C, 1/s, s, deg C
DRINK = (70.0, 18.0, 1.0 / 2000.0, 5.0, 22.0)


def test_a_time_is_shown_when_its_forecast_variance_allows_it():
    l0, room, k, lag, target = DRINK
    sol = solve_ivp(lambda _t, y: [-k * (y[0] - room), (y[0] - y[1]) / lag], (0.0, 20000.0),
                    [l0, l0], method="Radau", rtol=1e-10, atol=1e-10, dense_output=True)
    grid = np.arange(0.0, 20000.0, 10.0)
    i = int(np.nonzero(sol.sol(grid)[1] <= target)[0][0])
    crossing = brentq(lambda t: sol.sol(t)[1] - target, grid[i - 1], grid[i], xtol=1e-9)
    rows = unanswered = shown = covered = 0
    for seed in range(12):
        counts = counted_rows(lambda times: sol.sol(times)[1], crossing, target, 800 + seed,
                              10.0, 0.12, 0.0625)
        rows += counts[0]
        unanswered += counts[0] - counts[1]
        shown += counts[2]
        covered += counts[3]
    # the fit's own variance deciding: 98 of the 6096 rows unanswered; the forecast
    # variance deciding: 62, the 36 rows answered so all covered
    assert unanswered <= 75, (unanswered, rows)
    # the shown 80 % intervals: 0.948 before, 0.949 after (this drink's were conservative);
    # 0.825 once a time within the fit's age of a law that explains its readings has no
    # model term (the audits measure a bend there): within issue 17's band 0.75-0.85
    assert 0.75 <= covered / shown <= 0.97, covered / shown
