"""Seeded PRNG shared by the core tests and the trace generators (both runtimes).

Kept apart from support.py so that a small-heap run on MicroPython loads only
what the trace generator needs.
"""
import math


class XorShift:
    """Small seeded PRNG (xorshift64*) so both runtimes draw the same numbers."""

    def __init__(self, seed):
        self.state = (seed * 2654435761 + 0x9E3779B97F4A7C15) & 0xFFFFFFFFFFFFFFFF
        if self.state == 0:
            self.state = 1

    def next_u32(self):
        x = self.state
        x ^= (x >> 12)
        x ^= (x << 25) & 0xFFFFFFFFFFFFFFFF
        x ^= (x >> 27)
        self.state = x
        return ((x * 0x2545F4914F6CDD1D) & 0xFFFFFFFFFFFFFFFF) >> 32

    def uniform(self, lo=0.0, hi=1.0):
        """Uniform float in [lo, hi)."""
        return lo + (hi - lo) * (self.next_u32() / 4294967296.0)

    def gauss(self, sigma=1.0):
        """Normal deviate with standard deviation ``sigma`` (Box-Muller)."""
        u1 = self.uniform()
        u2 = self.uniform()
        if u1 < 1e-12:
            u1 = 1e-12
        return sigma * math.sqrt(-2.0 * math.log(u1)) * math.cos(2.0 * math.pi * u2)
