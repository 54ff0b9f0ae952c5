"""The equilibrium's drift: what the liquid approaches moves while it approaches.

The first-order law levels off at a fixed equilibrium ``E = level + slope / k``.
Where that moves (an immersion coil's coolant warming, a chiller's tub and its
wort cooling together to the room: a slow second mode), the fitted ``E`` moves
with it, and a time worked out for a fixed ``E`` is too short (a target near
``E``) or none at all (a target just past ``E``, reached as ``E`` moves on).

The audits (:class:`tinytherm.answer.Audits`) know the fitted ``E`` when each
checked forecast started and when it is checked, ``took`` seconds later. This
part keeps the drift they measured, each check weighted by its horizon, the
older ones forgotten by :data:`DRIFT_KEEP` per check::

    b = sum (E_now - E_then) / sum took         (deg C/s)

and the answer works the time out under ``E`` drifting at ``DRIFT_SHARE`` of
``b`` (the law integrated with a linear ``E``)::

    dT/dt = -k (T - E(t)),   E(t) = E0 + b t,   E0 = level + slope / k
    T(t) - level = b t - A (1 - exp(-k t)),     A = (b - slope) / k

solved for ``T(t) = target`` by Newton's method (:func:`time_to_target_drift_s`).
The interval spans the drift off by :data:`DRIFT_SD` of itself either way.
Without a heater only (with one, the duty moves ``E``; its bytes are the
heater's). Runs unchanged on CPython and MicroPython.
"""
import math
import struct

DRIFT_SHARE = 1.0   # share of the measured drift the answer uses (0: a fixed equilibrium)
DRIFT_SD = 0.5      # relative sd of the drift: the interval spans b (1 -+ this)
DRIFT_KEEP = 0.75   # weight an older check keeps at each new one
DRIFT_MIN_S = 120.0  # s: horizons summed before the drift is used
DRIFT_BEND = 1.0    # time constants (k x age) a fit bent through before its E's moves count
_NEWTON_STEPS = 40


class Drift:
    """The measured drift of the fitted equilibrium: its weighted sums (saved)."""

    STATE_SIZE = 16

    def __init__(self):
        self.reset()

    def reset(self):
        self.moved = 0.0   # deg C: weighted sum of the equilibrium's moves
        self.took = 0.0    # s: weighted sum of the horizons they took

    def learn(self, age0_s, level0, slope0, rate0, level, slope, rate, took_s):
        """One checked forecast: the fit then (``age0_s`` s old; level deg C, slope
        deg C/s, rate 1/s) and now, ``took_s`` seconds apart. Skipped when a rate is not
        above 0 (no equilibrium), or when the fit then had bent through less than
        :data:`DRIFT_BEND` time constants (its E an extrapolation still converging)."""
        if not (rate0 > 0.0 and rate > 0.0 and took_s > 0.0 and rate0 * age0_s >= DRIFT_BEND):
            return
        moved = level + slope / rate - level0 - slope0 / rate0
        if not -1e6 < moved < 1e6:
            return
        self.moved = DRIFT_KEEP * self.moved + moved
        self.took = DRIFT_KEEP * self.took + took_s

    def rate(self):
        """The drift to use, deg C/s (0.0 until the checks span :data:`DRIFT_MIN_S`)."""
        if self.took < DRIFT_MIN_S or DRIFT_SHARE == 0.0:
            return 0.0
        return DRIFT_SHARE * self.moved / self.took

    def pack_into(self, buf, offset):
        struct.pack_into("<2d", buf, offset, self.moved, self.took)

    def unpack_from(self, buf, offset):
        """Load the state; False when a value is impossible (the caller resets)."""
        moved, took = struct.unpack_from("<2d", buf, offset)
        if not (-1e9 < moved < 1e9 and 0.0 <= took < 1e12):
            return False
        self.moved = moved
        self.took = took
        return True


def time_to_target_drift_s(gap_c, slope_c_per_s, rate_per_s, drift_c_per_s):
    """Seconds until the liquid has moved ``gap_c`` deg C, its equilibrium drifting.

    The liquid starts with slope ``slope_c_per_s`` (deg C/s) and follows
    ``dT/dt = -k (T - E(t))``, ``k = rate_per_s`` > 0 (1/s), with ``E(t) =
    E0 + b t``, ``b = drift_c_per_s``; the target is ``gap_c`` from now. With
    ``d = sign(gap)``, ``g(t) = d (b t - A (1 - exp(-k t))) - |gap|`` rises from
    ``-|gap|`` at slope ``|slope|``; ``g'`` moves monotonically to ``d b``, so
    ``g`` is convex or concave and Newton's method from 0 converges (overshooting
    once when convex). Returns None when never reached (``g`` peaks below 0, or
    the slope is away from the target) or for bad input.
    """
    k = rate_per_s
    b = drift_c_per_s
    if not (k > 0.0 and gap_c == gap_c and b == b) or gap_c == 0.0:
        return 0.0 if gap_c == 0.0 else None
    d = 1.0 if gap_c > 0.0 else -1.0
    s = slope_c_per_s * d   # > 0 towards the target
    if not s > 0.0:
        return None
    bd = b * d
    a = (bd - s) / k        # A d
    dist = gap_c * d
    t = 0.0
    for _ in range(_NEWTON_STEPS):
        try:
            e = math.exp(-k * t)
        except (ValueError, OverflowError):
            return None
        g = bd * t - a * (1.0 - e) - dist
        dg = bd - (bd - s) * e
        if not dg > 0.0:
            return None     # past the peak short of the target: never reached
        step = g / dg
        t -= step
        if not -1e12 < t < 1e12:
            return None
        if -1e-9 * (t + 1.0) < step < 1e-9 * (t + 1.0):
            return t if t > 0.0 else 0.0
    return None
