"""Readings minutes apart from a liquid seen through a lagging probe (both runtimes).

A battery device that wakes every few minutes, or one thermometer moved between
vessels: one reading every ``min_s`` to ``max_s`` seconds, irregular. The
liquid follows the first-order law towards ``eq_c`` (an ambient, or ambient plus
a heater's constant gain over its loss rate); the probe lags it with its own
time constant::

    dL/dt = -k (L - E),    dP/dt = (L - P) / lag

With ``L(0) = L0`` and ``P(0) = P0`` the probe reads (for ``k lag != 1``)::

    P(t) = E + A e^(-k t) + (P0 - E - A) e^(-t / lag),    A = (L0 - E) / (1 - k lag)

``tests/test_sparse_reference.py`` checks this closed form against scipy's
``solve_ivp`` on the same two equations. ``P0`` different from ``L0`` is a
probe put into the liquid (or a drink poured onto it) at t = 0: the first
reading is the probe's own temperature, the next ones the lagging rise.
Invented parameters for tests; no list is kept (the MicroPython test heap is
small).
"""
import math

from prng import XorShift


class SparseTrace:
    """Step through readings; after :meth:`step` read ``t_s``, ``dt_s``, ``temp_c``
    (the quantised noisy reading), ``probe_c`` and ``liquid_c`` (noise-free)."""

    def __init__(self, liquid0_c, eq_c, k_per_s, lag_s=10.0, probe0_c=None, min_s=60.0,
                 max_s=600.0, noise_c=0.05, quantum_c=0.0625, seed=1):
        self.l0 = liquid0_c
        self.eq = eq_c
        self.k = k_per_s
        self.lag = lag_s
        self.p0 = liquid0_c if probe0_c is None else probe0_c
        self.min_s = min_s
        self.max_s = max_s
        self.noise = noise_c
        self.quantum = quantum_c
        self.rng = XorShift(seed)
        self.t_s = -1.0
        self.dt_s = 0.0
        self.temp_c = 0.0
        self.probe_c = 0.0
        self.liquid_c = 0.0

    def liquid_at(self, t_s):
        """Noise-free liquid temperature at ``t_s`` seconds, deg C."""
        return self.eq + (self.l0 - self.eq) * math.exp(-self.k * t_s)

    def probe_at(self, t_s):
        """Noise-free probe reading at ``t_s`` seconds, deg C (the closed form above)."""
        a = (self.l0 - self.eq) / (1.0 - self.k * self.lag)
        return (self.eq + a * math.exp(-self.k * t_s)
                + (self.p0 - self.eq - a) * math.exp(-t_s / self.lag))

    def crossing_s(self, target_c):
        """When the probe reading passes ``target_c`` for the last time, s; None if never.

        The reading ends on the equilibrium's side: walk back from a late time in
        steps shorter than the lag to the last reading on the other side, then bisect.
        """
        final = self.eq > target_c
        hi = 50.0 * self.lag
        while (self.probe_at(hi) > target_c) != final:
            hi *= 2.0
            if hi > 1e8:
                return None
        step = 0.25 * self.lag
        if step < hi / 4000.0:
            step = hi / 4000.0
        t = hi
        while (self.probe_at(t) > target_c) == final:
            t -= step
            if t <= 0.0:
                return 0.0 if (self.probe_at(0.0) > target_c) == final else None
        lo = t
        hi = t + step
        for _ in range(100):
            mid = 0.5 * (lo + hi)
            if (self.probe_at(mid) > target_c) == final:
                hi = mid
            else:
                lo = mid
        return 0.5 * (lo + hi)

    def step(self):
        """The next reading (the first at t = 0)."""
        if self.t_s < 0.0:
            self.dt_s = 0.0
            self.t_s = 0.0
        else:
            self.dt_s = self.rng.uniform(self.min_s, self.max_s)
            self.t_s += self.dt_s
        self.liquid_c = self.liquid_at(self.t_s)
        self.probe_c = self.probe_at(self.t_s)
        y = self.probe_c + self.rng.gauss(self.noise)
        self.temp_c = math.floor(y / self.quantum + 0.5) * self.quantum
        return self.temp_c
