"""Detect a sudden change (top-up, lid off, stirring, a move) from the innovations.

:class:`ChangeDetector` runs a two-sided CUSUM on normalised innovations
``z = (reading - prediction) / sigma``, where ``sigma`` is the standard
deviation the estimator expects for that difference::

    up   = max(0, up   + z - drift)      # evidence the liquid is warmer than predicted
    down = max(0, down - z - drift)      # ... colder than predicted
    alarm when up > threshold or down > threshold

``z`` is clipped to ``+-z_clip`` inside the sums so one wild reading cannot
fill them on its own. A sudden jump (a top-up seen by a fast sensor) is one
huge innovation followed by ordinary ones, so a one-reading gate also alarms
when ``|z| >= jump_z``. This gate is meant to sit behind a spike filter (see
:mod:`tinytherm.guard`) that has already rejected lone outliers: what reaches
it is a jump that held for more than one reading.

An estimator whose ``sigma`` is too small (model mismatch, sensor lag,
quantisation) would feed the CUSUM a steady excess of ``|z|`` and raise false
alarms; with ``scale_n > 0`` the detector also keeps a slow running mean of
``|z|`` (over about ``scale_n`` readings, frozen while either sum is above half
the threshold or ``|z|`` is beyond the clip) and divides ``z`` by it when it
exceeds its nominal value for Gaussian innovations, ``sqrt(2/pi)``. It only ever
deflates ``z``, never amplifies it.

State is fixed: a few floats and ints. An update costs about ten float
operations. Never raises for bad input: a non-finite innovation or a sigma that
is not a finite positive number is ignored (returns 0). :meth:`ChangeDetector.pack_into`
and :meth:`ChangeDetector.unpack_from` save and check the two sums and the
scale (``STATE_SIZE`` bytes, float64; the code is :mod:`tinytherm.state`'s, loaded
only then); the counts are not saved.

For Gaussian white innovations, Siegmund's approximation of the one-sided
average run length between false alarms is
``(exp(2 d b) - 2 d b - 1) / (2 d**2)`` with ``b = threshold + 1.166``,
``d = drift`` (Siegmund, *Sequential Analysis*, 1985; from memory): about
3e8 readings for the defaults. Real innovations are not that clean; the
benchmark ``benchmarks/change_detection.py`` measures the rate on traces.
"""
from tinytherm.num import finite, refused

_MEAN_ABS_GAUSS = 0.7978845608028654  # E|z| for a standard normal z: sqrt(2/pi)


class ChangeDetector:
    """Two-sided CUSUM on normalised innovations.

    ``drift``      allowance per reading, in standard deviations (> 0).
    ``threshold``  alarm level of either sum, in standard deviations (> 0).
    ``z_clip``     clip of each normalised innovation (> drift).
    ``scale_n``    readings in the running mean of ``|z|`` (0 switches it off).
    ``jump_z``     one-reading gate, standard deviations (> z_clip), or None (off).
    """

    STATE_SIZE = 24  # bytes written by pack_into: up, down, mean_abs_z

    def __init__(self, drift=0.75, threshold=12.0, z_clip=7.0, scale_n=200, jump_z=None):
        if not finite(drift) or drift <= 0.0:
            raise refused("drift", (drift,))
        if not finite(threshold) or threshold <= 0.0:
            raise refused("threshold", (threshold,))
        if not finite(z_clip) or z_clip <= drift:
            raise refused("z_clip", (drift, z_clip))
        if type(scale_n) is not int or scale_n < 0:
            raise refused("scale_n", (scale_n,))
        if jump_z is not None and (not finite(jump_z) or jump_z <= z_clip):
            raise refused("jump_z", (z_clip, jump_z))
        self.jump_z = None if jump_z is None else float(jump_z)
        self._neg_jump_z = None if jump_z is None else -float(jump_z)
        self.drift = float(drift)
        self.threshold = float(threshold)
        self.z_clip = float(z_clip)
        self._neg_clip = -self.z_clip
        self.scale_n = scale_n
        self._scale_weight = 1.0 / scale_n if scale_n else 0.0
        self._half_threshold = 0.5 * self.threshold
        self.alarms = 0
        # the estimator's: since a jump, until its new fit is established (not reset here)
        self.disturbed = False
        self.reset()

    def reset(self):
        """Zero both sums and the scale estimate (the alarm count is kept)."""
        self.up = 0.0            # upper CUSUM sum, standard deviations
        self.down = 0.0          # lower CUSUM sum, standard deviations
        self.mean_abs_z = _MEAN_ABS_GAUSS  # running mean of |z| (dimensionless)
        self.last_direction = 0  # +1 warmer / -1 colder than predicted at the last alarm
        self.readings = 0

    def update(self, innovation_c, sigma_c):
        """Feed one innovation (deg C) and its expected standard deviation (deg C).

        Returns +1 when an upward change is detected (readings warmer than
        predicted), -1 for a downward one, else 0. After an alarm both sums
        restart from zero.
        """
        if not (finite(innovation_c) and finite(sigma_c)) or sigma_c <= 0.0:
            return 0
        raw = innovation_c / sigma_c
        if raw != raw:
            return 0
        z = raw
        self.readings += 1
        if self._scale_weight and self.mean_abs_z > _MEAN_ABS_GAUSS:
            z = z * (_MEAN_ABS_GAUSS / self.mean_abs_z)
        if self.jump_z is not None and (z >= self.jump_z or z <= self._neg_jump_z):
            return self._alarm(1 if z > 0.0 else -1)
        clipped = False
        if z > self.z_clip:
            z = self.z_clip
            clipped = True
        elif z < self._neg_clip:
            z = self._neg_clip
            clipped = True
        if self._scale_weight and not clipped and self.up < self._half_threshold \
                and self.down < self._half_threshold:
            # running mean of the undeflated |z|: s += w * (|raw| - s)
            s = self.mean_abs_z
            self.mean_abs_z = s + self._scale_weight * ((raw if raw >= 0.0 else -raw) - s)
        up = self.up + (z - self.drift)
        down = self.down - (z + self.drift)
        self.up = up if up > 0.0 else 0.0
        self.down = down if down > 0.0 else 0.0
        if self.up > self.threshold:
            return self._alarm(1)
        if self.down > self.threshold:
            return self._alarm(-1)
        return 0

    def pack_into(self, buf, offset):
        """Write both sums and the scale into ``buf[offset:offset + STATE_SIZE]``
        (:func:`tinytherm.state.pack_detector`, loaded only here)."""
        from tinytherm import state
        state.pack_detector(self, buf, offset)

    def unpack_from(self, buf, offset):
        """Load a state written by :meth:`pack_into`; True when every value is valid
        (:func:`tinytherm.state.unpack_detector`); on False nothing changes."""
        from tinytherm import state
        return state.unpack_detector(self, buf, offset)

    def _alarm(self, direction):
        self.up = 0.0
        self.down = 0.0
        self.alarms += 1
        self.last_direction = direction
        return direction

    def __repr__(self):
        from tinytherm import texts  # (loaded only when printed)
        return texts.detector(self)

