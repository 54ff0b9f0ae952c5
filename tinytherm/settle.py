"""Whether the probe has met the liquid: the part that keeps a settling probe from arriving.

A strap-on or clip-on probe attached at the air's temperature (or a cold probe
put in a warm drink) travels to the liquid's temperature over a few of its own
time constants, and may cross the target on the way while the liquid is still
far from it. With no direction given and no heater on, an arrival needs the
probe to have met the liquid, which :class:`Settle` judges from one reading:

- while settling (the fit younger than ``answer.SETTLE_S``), its reference is
  the fit's first reading: an arrival only when that was already past the
  target (the probe never showed the liquid short of it);
- settled (the first block closed ``SETTLE_S`` into the fit, or a fit seeded at
  a turn, where the probe has met the liquid), the reference is that block's
  closing reading: an arrival when it was short of the target (the crossing
  came after it), or when the reading has since moved on past the target by
  at least 4 noise sd (at least ``answer.ARRIVE_TOL_C``): a liquid past its
  target when the probe met it, still going that way.

A clip-on probe reading partly the air and a probe's lag of tens of seconds
are common practice, no source. Runs unchanged on CPython and MicroPython.
"""
import struct

from tinytherm.fit import to_counts

_LIMIT = 10001 * 256  # counts (1/256 deg C): beyond any reading (the guard's limits: 1e4 C)


class Settle:
    """The settle reference: a reading in counts, and whether the probe has met the liquid."""

    STATE_SIZE = 4  # int32: the reference x 2, plus 1 while settling

    def __init__(self):
        self.ref = 0          # counts: the fit's first reading, then the settle reading
        self.settled = False

    def first(self, c):
        """The fit's first reading (counts): settling, with it as the reference."""
        self.ref = c
        self.settled = False

    def seeded(self):
        """The fit was seeded at a turn: the probe has met the liquid there (its reference)."""
        self.settled = True

    def block_closed(self, age_ms, settle_ms, cb):
        """A block closed ``age_ms`` into the fit at reading ``cb`` (counts)."""
        if not self.settled and age_ms >= settle_ms:
            self.ref = cb
            self.settled = True

    def allows(self, target_counts, m, c, noise_sd_c, move_min_c):
        """False when an arrival in direction ``m`` (+1 / -1) at reading ``c`` (counts) may be
        the probe still settling; a liquid past the target when settled must have moved
        on by 4 ``noise_sd_c``, at least ``move_min_c`` (deg C)."""
        ref = self.ref
        if not self.settled:
            return (ref - target_counts) * m >= 0
        if (target_counts - ref) * m > 0:
            return True
        on = 4.0 * noise_sd_c
        return (c - ref) * m >= to_counts(on if on > move_min_c else move_min_c)

    def pack_into(self, buf, offset):
        struct.pack_into("<i", buf, offset, self.ref * 2 + (0 if self.settled else 1))

    def unpack_from(self, buf, offset):
        """Load the state; False when the value is impossible (the caller resets)."""
        v = struct.unpack_from("<i", buf, offset)[0]
        if not -2 * _LIMIT < v < 2 * _LIMIT:
            return False
        self.ref = v >> 1
        self.settled = not v & 1
        return True
