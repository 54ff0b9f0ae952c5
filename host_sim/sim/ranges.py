"""Tables of ranges: the drawn parameters of a simulated vessel as data.

A table is a sequence of entries, drawn in order into the parameter dict ``p``:

- ``(name, lo, hi)``: uniform in [lo, hi);
- ``(name, value)``: a fixed value;
- ``(name, rule)``: ``rule(p, draw)`` computes the value from the values drawn so
  far and from ``draw`` (a :class:`Draw`), e.g. :func:`chance`, :func:`half_degree`.

The order of the entries is the order of the random draws, so a table with
the same entries gives the same parameters for the same seed.
"""
import math


class Draw:
    """Random draws from a numpy ``Generator`` as plain floats."""

    def __init__(self, rng):
        self.rng = rng

    def u(self, lo, hi):
        """Uniform in [lo, hi)."""
        return float(self.rng.uniform(lo, hi))

    def logu(self, lo, hi):
        """Log-uniform in [lo, hi)."""
        return float(math.exp(self.rng.uniform(math.log(lo), math.log(hi))))

    def chance(self, prob):
        """True with probability ``prob``."""
        return bool(self.rng.uniform() < prob)

    def choice(self, options, weights=None):
        """One of ``options`` (by index, with ``weights`` when given)."""
        return options[int(self.rng.choice(len(options), p=weights))]


def draw_table(draw, p, table):
    """Draw every entry of ``table`` into ``p`` (a dict), in order; returns ``p``."""
    for entry in table:
        name = entry[0]
        if len(entry) == 3:
            p[name] = draw.u(entry[1], entry[2])
        elif callable(entry[1]):
            p[name] = entry[1](p, draw)
        else:
            p[name] = entry[1]
    return p


def chance(prob):
    """Rule: True with probability ``prob``."""
    return lambda p, draw: draw.chance(prob)


def half_degree(lo, hi):
    """Rule: uniform in [lo, hi) rounded to 0.5 (a target as a user would set it)."""
    return lambda p, draw: round(draw.u(lo, hi) * 2.0) / 2.0


def pick(options):
    """Rule: one of ``options`` (numbers), drawn by numpy's ``choice`` on the values."""
    return lambda p, draw: float(draw.rng.choice(options))


def log_uniform(lo, hi):
    """Rule: log-uniform in [lo, hi)."""
    return lambda p, draw: draw.logu(lo, hi)


def one_of(options, weights=None):
    """Rule: one of ``options`` (by index, optionally weighted)."""
    return lambda p, draw: draw.choice(options, weights)
