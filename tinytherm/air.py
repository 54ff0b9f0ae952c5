"""The measured air: the reference the law is driven by, and the mean the future will see.

Imported by :class:`tinytherm.fit.Inputs` with the first measured air (a
product without an air sensor does not load it). Runs unchanged on CPython
and MicroPython; integers only per reading.
"""
import math
import struct

from tinytherm.fit import SCALE

AIR_SMOOTH_S = 60.0       # s: time constant of the measured air's smoothing (its noise)
CYCLE_SLOW_S = 600.0      # s: the slow mean of the air, about which its cycles cross
CYCLE_BAND_C = 0.25       # deg C: hysteresis of a crossing (above an air sensor's noise)
CYCLE_MIN_S = 300.0       # s: a shorter cycle is noise, not a cycle
CYCLE_MAX_S = 14400.0     # s: a longer one means the air stopped cycling
_BAND = int(CYCLE_BAND_C * SCALE * 256)
_CYCLE_MIN_MS = int(CYCLE_MIN_S * 1000)
_CYCLE_MAX_MS = int(CYCLE_MAX_S * 1000)


class Air:
    """A measured air: the reference ``R`` the law is driven by, and its future mean.

    ``R`` is the air reading smoothed with a time constant of
    :data:`AIR_SMOOTH_S` (its noise only: the law is driven by the air as it
    moves). What the air *will* do (:meth:`ahead_fine`): its mean over the
    last whole cycle. A cycle runs from one upward crossing of the slow mean
    (time constant :data:`CYCLE_SLOW_S`, hysteresis :data:`CYCLE_BAND_C`) to
    the next (a fridge's compressor, a room's heating); its mean is the
    trapezoid integral of the readings over it divided by its length::

        M = sum((a_i + a_(i-1)) dt_i) / (2 sum(dt_i))      (counts, exact integers)

    Before a whole cycle has been seen, or when the current one has run
    longer than :data:`CYCLE_MAX_S` (the air stopped cycling), the slow mean
    stands in. All of it in integers per reading (8 fractional bits in the
    smoothed values and the cycle's mean, rounded: a slow mean at 1 s steps
    moves for a difference of 0.005 C); a cycle's mean is divided once, when
    it closes.
    """

    # saved: smoothed air and slow mean (counts * 2**8), cycle integral (doubled
    # count ms), last air counts, cycle mean (counts * 2**8), cycle length (ms),
    # flags (measured 1, a cycle running 2, a mean kept 4, trigger side + 1 in bits 3-4)
    _FMT = "<iiqiiiB"
    STATE_SIZE = 29

    def __init__(self):
        self.fine = 0          # smoothed measured air, counts * 2**8
        self.slow = 0          # slow mean of the air, counts * 2**8
        self.last = 0          # latest air reading, counts
        self.side = 0          # Schmitt trigger: +1 above the slow mean, -1 below, 0 not yet
        self.running = False   # a cycle is being integrated (since an upward crossing)
        self.cyc_int = 0       # doubled trapezoid integral of the air over it, count ms
        self.cyc_ms = 0        # its length so far, ms
        self.has_mean = False  # a whole cycle has been seen
        self.mean = 0          # mean of the last whole cycle, counts * 2**8
        self.alpha_ms = -1     # step length the smoothing weights were worked out for
        self.alpha = 0         # weights per step, 1/2**16: the reference's and the slow mean's
        self.beta = 0

    def start(self, a):
        """The first air reading ``a`` (counts); returns ``R`` in counts."""
        self.fine = self.slow = a << 8
        self.last = a
        return a

    def step(self, a, dt_ms, restart):
        """An air reading ``a`` (counts) ``dt_ms`` after the previous reading; ``R`` in counts.

        ``restart``: the fit starts with this reading (the smoothing starts
        again at it; the cycle and the slow mean go on).
        """
        if dt_ms != self.alpha_ms:
            self.alpha = _weight(dt_ms, AIR_SMOOTH_S)
            self.beta = _weight(dt_ms, CYCLE_SLOW_S)
            self.alpha_ms = dt_ms
        if restart:
            self.fine = a << 8
        else:
            self.fine += (((a << 8) - self.fine) * self.alpha + 32768) >> 16
        self.slow += (((a << 8) - self.slow) * self.beta + 32768) >> 16
        if self.running:
            self.cyc_int += (a + self.last) * dt_ms
            self.cyc_ms += dt_ms
            if self.cyc_ms > _CYCLE_MAX_MS:
                self.running = False  # no cycle this long: the air stopped cycling
                self.has_mean = False
        self.last = a
        # the trigger: the smoothed air against the slow mean, with hysteresis
        if self.side <= 0 and self.fine > self.slow + _BAND:
            self.side = 1
            if self.running and self.cyc_ms >= _CYCLE_MIN_MS:
                # a whole cycle: M = integral / (2 length), kept with 8 fractional bits
                self.mean = (self.cyc_int * 128 + self.cyc_ms // 2) // self.cyc_ms
                self.has_mean = True
            self.running = True
            self.cyc_int = 0
            self.cyc_ms = 0
        elif self.side >= 0 and self.fine < self.slow - _BAND:
            self.side = -1
        return (self.fine + 128) >> 8

    def ahead_fine(self):
        """The air the future will see on average, counts * 2**8 (int): the mean of
        the last whole cycle; the slow mean before one is seen."""
        return self.mean if self.has_mean else self.slow

    def pack_into(self, buf, offset):
        flags = (1 | (2 if self.running else 0) | (4 if self.has_mean else 0)
                 | ((self.side + 1) << 3))
        struct.pack_into(self._FMT, buf, offset, self.fine, self.slow, self.cyc_int, self.last,
                         self.mean, self.cyc_ms, flags)

    def unpack_from(self, buf, offset):
        """Load the state; False when a value is impossible (the caller resets)."""
        fine, slow, cyc_int, last, mean, cyc_ms, flags = struct.unpack_from(
            self._FMT, buf, offset)
        side = ((flags >> 3) & 3) - 1
        if flags > 31 or side > 1 or not 0 <= cyc_ms <= _CYCLE_MAX_MS:
            return False
        self.fine, self.slow, self.cyc_int, self.last = fine, slow, cyc_int, last
        self.mean, self.cyc_ms, self.side = mean, cyc_ms, side
        self.running = bool(flags & 2)
        self.has_mean = bool(flags & 4)
        return True


def _weight(dt_ms, tau_s):
    """Smoothing weight of one step ``dt_ms`` long for a time constant ``tau_s``, 1/2**16."""
    if tau_s <= 0.0:
        return 65536
    try:
        return int((1.0 - math.exp(-dt_ms * 0.001 / tau_s)) * 65536.0 + 0.5)
    except (ValueError, OverflowError):
        return 65536
