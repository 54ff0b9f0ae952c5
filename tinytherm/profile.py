"""A vessel profile: what calibration on the PC learned about one vessel, for the device.

A product ships one vessel (the same mug, kettle or bath, heater, probe and
probe position in every unit); only the fill, the start temperature and the
room change between uses. ``host_sim.calibrate.pipeline`` fits a richer model than the
device's to many recorded uses of prototypes and freezes the result here:

    dT/dt = -a |T - E|^n sign(T - E) + g q(t),    a = k / DIFF_REF_C^(n - 1)
    E = R + eq_offset_c                            (R: the given or measured ambient)
    probe: ds/dt = (T - s) / probe_lag_s

``k`` (:attr:`VesselProfile.rate_per_s`) is the effective first-order rate
``-(dT/dt) / (T - E)`` at a temperature difference of :data:`DIFF_REF_C`
(10 K); ``n`` (:attr:`VesselProfile.rate_exponent`) bends it (1.0 = first
order, 1.25 ~ natural convection). ``q`` is the heater duty; ``g``
(:attr:`VesselProfile.gain_k_per_s`) the heating rate at full duty.

The interval table holds the 10 % and 90 % points of
``ln(actual / predicted remaining time)`` of the estimator with the profile,
in four bins of the predicted remaining time (edges :data:`BIN_EDGES_S`:
60, 300, 1200 s), calibrated split-conformally on held-out uses.

Device form (:meth:`VesselProfile.to_blob`, :data:`PROFILE_SIZE` = 54 bytes,
little-endian)::

    offset  size  field
    0       1     format version (:data:`PROFILE_FORMAT`)
    1       1     flags (bit 0: the vessel has a heater; bit 1: own fit, see
                  :attr:`VesselProfile.own_fit`)
    2       32    8 x float32: rate_per_s, rate_log_sd, eq_offset_c,
                  eq_offset_sd_c, gain_k_per_s, gain_rel_sd, probe_lag_s,
                  rate_exponent
    34      16    8 x int16, 1/1000 units: log_q_low[0..3], log_q_high[0..3]
    50      4     CRC-32 (IEEE, :mod:`tinytherm.crc`) of bytes 0..49

:meth:`VesselProfile.from_blob` never raises: it returns ``(profile, REASON_OK)``
or ``(None, reason)`` with one of the ``REASON_*`` codes; the estimator then
runs without a profile.
"""
import math
import struct

from tinytherm import status as _st
from tinytherm.answer import move_c as _move_c
from tinytherm.num import spread as _spread
from tinytherm.crc import crc32
from tinytherm.fit import DUTY_SCALE as _DUTY_SCALE
from tinytherm.fit import SCALE as _SCALE
from tinytherm.num import as_float, finite, number

PROFILE_FORMAT = 1
PROFILE_Z80 = 1.2815515655446004  # the table holds 10 % / 90 % points: z of 0.9
_INV = 1.0 / _SCALE  # deg C per count
PROFILE_SIZE = 54
_FLOATS = "<8f"
_QUANTS = "<8h"
_FLOATS_AT = 2
_QUANTS_AT = 34
_CRC_AT = 50
FLAG_HEATER = 1
FLAG_OWN_FIT = 2                  # the device answers with its own fit, the table's interval

DIFF_REF_C = 10.0                 # K: the difference at which rate_per_s is the rate
PROFILE_MISMATCH_Z = 4.0          # sds between this liquid's fitted rate and the profile's
#   beyond which the estimator drops the profile (:meth:`VesselProfile.rate_fails`)
PROFILE_JUDGE_LAGS = 3.0          # a heated fit is judged from this many profile lags on: a
#   ramp seen through a first-order lag has 95 % of its slope by then (1 - e^-3)
_JUDGE_MS_PER_S = 1000.0 * PROFILE_JUDGE_LAGS  # ms of fit age per s of profile lag
PROFILE_YOUNG_S = 180.0           # s: a passive fit younger than this answers with the law at
#   its typical rate (60-240 tried on the tune uses of the mug and the flask: each vessel's
#   best setting lowers the other's error too; 180 the best of both)
_YOUNG_MS = int(PROFILE_YOUNG_S * 1000)
BIN_EDGES_S = (60.0, 300.0, 1200.0)
QUANTILE_LOW = 0.1
QUANTILE_HIGH = 0.9
_Z90 = 1.2815515655446004         # standard normal 90 % point

# from_blob results; anything but REASON_OK means "run without a profile"
REASON_OK = 0
REASON_LENGTH = 1      # not bytes-like, or not exactly PROFILE_SIZE bytes
REASON_VERSION = 2     # another format version
REASON_CRC = 3         # checksum mismatch: corrupted
REASON_FLAGS = 4       # unknown flag bits set
REASON_RANGE = 5       # checksum fine, but a value is impossible or out of range
REASON_NAMES = ("ok", "profile_length", "profile_version", "profile_crc", "profile_flags",
                "profile_range")


def reason_name(code):
    """Lower-case name of a :meth:`VesselProfile.from_blob` reason code."""
    if 0 <= code < len(REASON_NAMES):
        return REASON_NAMES[code]
    return "unknown"


def _number_arg(value, name):
    """``value`` as a float, or ValueError naming ``name`` when it is no finite number."""
    v = as_float(value)
    if v is None or not finite(v):
        raise ValueError("bad profile value: " + name + " (a finite number)")
    return v


def _table_arg(values, name):
    """A tuple or list of 4 finite numbers as a tuple of floats, or ValueError naming ``name``."""
    t = type(values)
    if (t is not tuple and t is not list) or len(values) != 4:
        raise ValueError("bad profile value: " + name + " (4 numbers, one per horizon bin)")
    return (_number_arg(values[0], name), _number_arg(values[1], name),
            _number_arg(values[2], name), _number_arg(values[3], name))


class VesselProfile:
    """One vessel's calibrated dynamics and ETA interval table (SI units, deg C).

    Attributes (all read by the estimator, none changed by it):

    - ``heater`` (bool): the vessel has a heater;
    - ``rate_per_s`` (1/s): typical effective rate k at |T - E| = DIFF_REF_C;
    - ``rate_log_sd``: standard deviation of ln k across uses (fill, room...);
    - ``eq_offset_c`` (deg C): effective equilibrium minus the given or
      measured ambient (evaporation pulls it below the room, a warm base above);
    - ``eq_offset_sd_c`` (deg C): its spread across uses;
    - ``gain_k_per_s`` (K/s): heating rate at full duty (0.0 without heater);
    - ``gain_rel_sd``: relative spread of that gain across uses;
    - ``probe_lag_s`` (s): first-order time constant of the probe (and, with a
      heater, of the element, which the fit cannot tell apart from it);
    - ``rate_exponent``: n in ``dT/dt = -a |T-E|^n sign(T-E)`` (1.0 = first order);
    - ``log_q_low``, ``log_q_high`` (tuples of 4): 10 % and 90 % points of
      ``ln(actual / predicted remaining time)`` for predicted remaining times
      below 60 s, 60-300 s, 300-1200 s and above 1200 s;
    - ``own_fit`` (bool): the estimator answers with its own fit as without a
      profile (no law, no priors, no first answer, no rate check) and takes
      only the interval from the table. Calibration sets it for a passive
      vessel whose law forecast worse than the device without a profile on
      held-out uses (host_sim.calibrate.pipeline): there the law's answers and
      priors would make the device worse, its interval table still holds.

    The constructor checks every argument and raises ``ValueError`` naming
    the first bad one (never TypeError or OverflowError): ``heater`` must be
    a bool or the int 0 or 1; every number an int or float (not a bool, a
    string or None; on CPython also anything ``float()`` takes, such as a
    numpy scalar) that is finite and within the ranges of :meth:`problem`;
    ``log_q_low``/``log_q_high`` a tuple or list of 4 such numbers. Without
    them the table is ``-+1.2816 * rate_log_sd`` in every bin
    (ln T_remaining ~ -ln k).
    """

    def __init__(self, heater=False, rate_per_s=1.0 / 1200.0, rate_log_sd=0.5,
                 eq_offset_c=0.0, eq_offset_sd_c=3.0, gain_k_per_s=0.0, gain_rel_sd=0.0,
                 probe_lag_s=0.0, rate_exponent=1.0, log_q_low=None, log_q_high=None,
                 own_fit=False):
        # bool(x) would take "no" or [0] as True: only a bool or the ints 0 and 1 mean one
        if heater is True or heater is False or (type(heater) is int and 0 <= heater <= 1):
            self.heater = heater == 1
        else:
            raise ValueError("bad profile value: heater (True, False, 0 or 1)")
        if own_fit is True or own_fit is False or (type(own_fit) is int and 0 <= own_fit <= 1):
            self.own_fit = own_fit == 1
        else:
            raise ValueError("bad profile value: own_fit (True, False, 0 or 1)")
        self.rate_per_s = _number_arg(rate_per_s, "rate_per_s")
        self.rate_log_sd = _number_arg(rate_log_sd, "rate_log_sd")
        self.eq_offset_c = _number_arg(eq_offset_c, "eq_offset_c")
        self.eq_offset_sd_c = _number_arg(eq_offset_sd_c, "eq_offset_sd_c")
        self.gain_k_per_s = _number_arg(gain_k_per_s, "gain_k_per_s")
        self.gain_rel_sd = _number_arg(gain_rel_sd, "gain_rel_sd")
        self.probe_lag_s = _number_arg(probe_lag_s, "probe_lag_s")
        self.rate_exponent = _number_arg(rate_exponent, "rate_exponent")
        half = _Z90 * self.rate_log_sd
        if log_q_low is None:
            log_q_low = (-half, -half, -half, -half)
        if log_q_high is None:
            log_q_high = (half, half, half, half)
        self.log_q_low = _table_arg(log_q_low, "log_q_low")
        self.log_q_high = _table_arg(log_q_high, "log_q_high")
        bad = self.problem()
        if bad is not None:
            raise ValueError("bad profile value: " + bad)

    def problem(self):
        """Name of the first out-of-range value (a short text), or None when all are valid.

        Ranges: 1e-7 <= rate_per_s <= 1 1/s; 0 <= rate_log_sd <= 5;
        |eq_offset_c| <= 50 C; 0 <= eq_offset_sd_c <= 50 C; |gain_k_per_s| <= 10
        K/s and exactly 0 without a heater; 0 <= gain_rel_sd <= 10;
        0 <= probe_lag_s <= 3600 s; 0.25 <= rate_exponent <= 4; every quantile
        within +-30 and low <= high in each bin.
        """
        if not number(self.rate_per_s, 1e-7, 1.0):
            return "rate_per_s"
        if not number(self.rate_log_sd, 0.0, 5.0):
            return "rate_log_sd"
        if not number(self.eq_offset_c, -50.0, 50.0):
            return "eq_offset_c"
        if not number(self.eq_offset_sd_c, 0.0, 50.0):
            return "eq_offset_sd_c"
        if not number(self.gain_k_per_s, -10.0, 10.0):
            return "gain_k_per_s"
        if not self.heater and self.gain_k_per_s != 0.0:
            return "gain_k_per_s (no heater)"
        if not number(self.gain_rel_sd, 0.0, 10.0):
            return "gain_rel_sd"
        if not number(self.probe_lag_s, 0.0, 3600.0):
            return "probe_lag_s"
        if not number(self.rate_exponent, 0.25, 4.0):
            return "rate_exponent"
        for i in range(4):
            lo = self.log_q_low[i]
            hi = self.log_q_high[i]
            if not (number(lo, -30.0, 30.0) and number(hi, -30.0, 30.0)) or lo > hi:
                return "log_q_low/log_q_high[%d]" % i
        return None

    # ---------------------------------------------------------------- the model
    def rate_at(self, diff_c):
        """Effective first-order rate (1/s) at a temperature difference ``diff_c`` (K).

        ``k (|diff| / DIFF_REF_C)^(n - 1)``; at ``diff_c == 0`` the limit for
        n < 1 is unbounded and 0.0 is returned for n > 1.
        """
        d = abs(diff_c)
        n = self.rate_exponent
        if n == 1.0:
            return self.rate_per_s
        if d == 0.0:
            return 0.0 if n > 1.0 else self.rate_per_s
        try:
            return self.rate_per_s * math.exp((n - 1.0) * math.log(d / DIFF_REF_C))
        except (ValueError, OverflowError):
            return self.rate_per_s

    def local_first_order(self, temp_c, ambient_c):
        """``(k_local, e_local)``: the first-order law tangent to the profile's law at ``temp_c``.

        With ``d = temp_c - (ambient_c + eq_offset_c)`` (deg C) the passive law
        ``f(T) = -a |d|^n sign(d)`` has ``f'(T) = -n a |d|^(n-1) = -n rate_at(d)``,
        so the straight line ``dT/dt = -k_local (T - e_local)`` that matches
        both the rate of change and its slope at ``temp_c`` has
        ``k_local = n * rate_at(d)`` (1/s) and ``e_local = temp_c - d / n``
        (deg C). This is what a first-order fit over a short recent window sees;
        for n = 1 it is ``(rate_per_s, ambient_c + eq_offset_c)``.
        """
        n = self.rate_exponent
        d = temp_c - (ambient_c + self.eq_offset_c)
        return n * self.rate_at(d), temp_c - d / n

    def time_to_target_s(self, temp_c, target_c, equilibrium_c):
        """Seconds for the passive law to take the liquid from ``temp_c`` to ``target_c``.

        Closed form of ``dT/dt = -a |T-E|^n sign(T-E)`` (deg C in, seconds
        out): with ``d = |T - E|``, ``d^(1-n)`` moves linearly in time, so
        ``t = (d0^(1-n) - d1^(1-n)) / (a (1-n))``; for n = 1,
        ``t = ln(d0/d1) / k``. Returns 0.0 when already there, None when the
        target is not between the temperature and the equilibrium (never
        reached without a heater; the equilibrium itself only when n < 1).
        """
        d0 = temp_c - equilibrium_c
        d1 = target_c - equilibrium_c
        if d0 == d1:
            return 0.0
        n = self.rate_exponent
        if d0 * d1 < 0.0 or abs(d1) > abs(d0) or (d1 == 0.0 and n >= 1.0):
            return None
        d0 = abs(d0)
        d1 = abs(d1)
        k = self.rate_per_s
        try:
            if n == 1.0:
                return math.log(d0 / d1) / k
            p = 1.0 - n
            a = k * math.exp(p * math.log(DIFF_REF_C))
            end = 0.0 if d1 == 0.0 else math.exp(p * math.log(d1))
            return (math.exp(p * math.log(d0)) - end) / (a * p)
        except (ValueError, OverflowError, ZeroDivisionError):
            return None

    def priors(self, dist_c, s2, duty=0.0):
        """The estimator's priors from this profile: the first-order law tangent
        to its power law at the distance ``dist_c`` (deg C) from the latest
        reading's gap to the ambient hint, with the heater at ``duty`` (0..1).

        Returns ``(dist_c, sd_c, rate, rate_weight, gain, gain_weight)``: the
        distance to where that law levels off and its sd (deg C), the rate
        prior's centre (1/s) and the gain prior's centre (K/s), each weight
        being ``s2`` (the reading noise variance, deg C^2) over the prior's
        variance. With heat the tangent law ``dT/dt = -k (T - E) + g duty``
        levels off ``g duty / k`` beyond the passive equilibrium ``E`` (the
        estimator's fitted slope includes the heat at that duty), with the
        relative spread of ``g / k``.
        """
        n = self.rate_exponent
        d = -(dist_c + self.eq_offset_c)
        sd = self.eq_offset_sd_c / n
        # (at the law's own equilibrium an n > 1 law is flat, its tangent rate 0: no scale
        # for the rate prior's sd; the tangent at DIFF_REF_C, as rate_per_s is quoted)
        kp = n * self.rate_at(d if d != 0.0 else DIFF_REF_C)
        rel = self.rate_log_sd if self.rate_log_sd > 0.02 else 0.02
        gp = self.gain_k_per_s
        rel_g = self.gain_rel_sd if self.gain_rel_sd > 0.02 else 0.02
        dist = -d / n
        if duty > 0.0 and gp != 0.0 and kp > 0.0:
            heat = gp * duty / kp  # deg C: how far the heat moves the level-off point
            dist += heat
            sd = math.sqrt(sd * sd + heat * heat * (rel * rel + rel_g * rel_g))
        return (dist, sd if sd > 0.05 else 0.05, kp, s2 / (kp * kp * rel * rel), gp,
                s2 / (gp * gp * rel_g * rel_g) if gp != 0.0 else s2)

    def law_s(self, gap_c, level_c, slope_c_per_s, ambient_c, slope_rel_var=0.0):
        """Seconds to move ``gap_c`` (deg C) from ``level_c`` under this power law, or None.

        ``dT/dt = -a |T - E|^n sign(T - E)`` with ``E = ambient_c +
        eq_offset_c``: the profile gives the shape, and the scale of ``a``
        is this liquid's: the ratio ``r`` of the fitted ``slope_c_per_s`` to
        the typical law's slope at ``level_c``, shrunk towards 1 by precision
        (the host's profile model does the same)::

            ln r' = ln r * w / (w + 1 / rate_log_sd^2),   w = 1 / slope_rel_var

        ``slope_rel_var``: the relative variance of the fitted slope (0: the
        data's scale alone; ``inf`` or a zero slope: the typical law alone).
        None when the liquid moves away from E or the target is not between
        the level and E.
        """
        e = ambient_c + self.eq_offset_c
        d0 = level_c - e
        if d0 == 0.0 or slope_c_per_s * d0 > 0.0 or (d0 + gap_c) * d0 <= 0.0:
            return None
        t = self.time_to_target_s(level_c, level_c + gap_c, e)
        if t is None or slope_c_per_s == 0.0:
            return t
        ratio = -slope_c_per_s / (self.rate_at(d0) * d0)  # this liquid's rate / the typical
        if slope_rel_var > 0.0:
            sd = self.rate_log_sd if self.rate_log_sd > 0.02 else 0.02
            try:
                ratio = math.exp(math.log(ratio) / (1.0 + slope_rel_var / (sd * sd)))
            except (ValueError, OverflowError):
                return t
        return t / ratio

    def law_for(self, est, gap_c, level_c, slope_c_per_s, slope_rel_var=0.0):
        """:meth:`law_s` for ``est``'s liquid (the reference :meth:`reference_c`), or
        None with a heater (the law is a passive liquid's). Seconds. A fit younger than
        :data:`PROFILE_YOUNG_S` (at its latest block close) gets the law at its typical
        rate: the slope of the first minutes after a pour is the cold wall's and the
        probe's catching up as much as the liquid's, which its variance does not show."""
        if est.heater:
            return None
        b = est.blocks
        if b.age_ms - b.it < _YOUNG_MS:
            slope_c_per_s = 0.0
        return self.law_s(gap_c, level_c, slope_c_per_s, self.reference_c(est), slope_rel_var)

    def rate_z(self, level_c, slope_c_per_s, ambient_c, slope_rel_var, duty=0.0):
        """How far this liquid's rate lies from the profile's, in sds (>= 0), or None.

        ``|ln r| / sqrt(var_law + slope_rel_var)`` with ``r`` the ratio of the
        fitted ``slope_c_per_s`` (deg C/s, relative variance ``slope_rel_var``)
        at ``level_c`` to the law's slope there at the heater ``duty`` (0..1),
        ``g duty - a |d|^n sign(d)`` (``d = level_c - E``, E = ``ambient_c`` +
        eq_offset_c), whose relative variance ``var_law`` comes from
        rate_log_sd and gain_rel_sd (passive: rate_log_sd^2). None when the
        liquid moves against the law's slope (or the law's slope is 0).
        """
        d0 = level_c - (ambient_c + self.eq_offset_c)
        loss = self.rate_at(d0) * d0        # deg C/s the law loses at the level
        heat = self.gain_k_per_s * duty     # deg C/s the heater adds at that duty
        law = heat - loss
        if law == 0.0 or slope_c_per_s * law <= 0.0:
            return None
        sd = self.rate_log_sd if self.rate_log_sd > 0.02 else 0.02
        var = sd * sd
        if heat != 0.0:
            sd_g = self.gain_rel_sd if self.gain_rel_sd > 0.02 else 0.02
            var = (loss * loss * var + heat * heat * sd_g * sd_g) / (law * law)
        try:
            return abs(math.log(slope_c_per_s / law)) / math.sqrt(var + slope_rel_var)
        except (ValueError, OverflowError, ZeroDivisionError):
            return None

    def reference_c(self, est):
        """The reference ``est``'s equilibrium under this profile is offset from, deg C
        (the ambient at the block close, ``est._ambient_ahead_c()``, else the ambient prior)."""
        r = est._ambient_ahead_c()
        return est.inputs.prior[0] if r is None else r

    def toward_e(self, est, direction):
        """True when moving in ``direction`` (+1 / -1) goes towards this (passive)
        profile's equilibrium for ``est`` (its reference plus the offset) from the
        extreme of its block means."""
        return (self.reference_c(est) + self.eq_offset_c - est._extreme_c()) * direction > 0.0

    def rate_fails(self, est, slope_c_per_s):
        """True when ``est``'s liquid is another vessel's: its fitted slope lies more
        than :data:`PROFILE_MISMATCH_Z` sds from this profile's law at the level and the
        latest duty (:meth:`rate_z` with the fitted slope's own variance at the level).
        ``slope_c_per_s``: the fitted slope at the level, deg C/s, not 0, paired with
        :meth:`reference_c` (both as ahead, as the answer's). The audits' errors judge
        no profile: a probe catching up after a pour, or a heater's start-up, fails any
        law's short forecasts for a while. A heated fit younger than
        :data:`PROFILE_JUDGE_LAGS` profile lags is not judged (its slope still lags the
        heat); a passive fit younger than :data:`PROFILE_YOUNG_S` only for a gross
        mismatch, beyond twice :data:`PROFILE_MISMATCH_Z` (its slope is the pour's as
        much as the liquid's: the mug's own profile lay up to 4.1 sds off then)."""
        reg = est.reg
        b = est.blocks
        age_ms = b.age_ms - b.it
        z_max = PROFILE_MISMATCH_Z
        duty = 0.0
        if est.heater:
            if age_ms < _JUDGE_MS_PER_S * self.probe_lag_s:
                return False
            duty = b.u0 / _DUTY_SCALE
        elif age_ms < _YOUNG_MS:
            z_max = 2.0 * PROFILE_MISMATCH_Z
        gk = b.cb * _INV - est.blocks.level  # d slope / d k at the level
        var_slope = reg.pss + gk * gk * reg.pkk + 2.0 * gk * reg.psk
        z = self.rate_z(est.blocks.level, slope_c_per_s, self.reference_c(est),
                        var_slope / (slope_c_per_s * slope_c_per_s), duty)
        return z is not None and z > z_max

    def interval_log_bounds(self, eta_s):
        """``(low, high)``: 10 % and 90 % points of ln(actual / predicted) for ``eta_s`` (s).

        The values of the bin of :data:`BIN_EDGES_S` that holds ``eta_s`` (an edge
        opens the bin above it; NaN and negative times fall in the first), as the
        table was calibrated (split-conformal per bin of the predicted time,
        host_sim.calibrate.conformal): a lookup between bins would apply
        quantiles no bin measured. The interval for a predicted remaining time
        ``eta_s`` is ``eta_s * exp(low)`` .. ``eta_s * exp(high)``.
        """
        i = 0
        while i < 3 and eta_s >= BIN_EDGES_S[i]:
            i += 1
        return self.log_q_low[i], self.log_q_high[i]

    def interval_into(self, est, eta_s, wide=0.0):
        """Set ``est``'s interval around the answer ``eta_s`` (s) from this profile's
        calibrated quantiles of ln(actual / predicted) (split-conformal,
        host_sim.calibrate.pipeline) at that horizon, or ``-+wide`` if given, scaled to the
        interval asked for, and ``est.eta_s``: ``eta_s``, or the nearer end when the
        interval lies wholly on one side of it."""
        lo, hi = (-wide, wide) if wide else self.interval_log_bounds(eta_s)
        z = est.audits.z / PROFILE_Z80
        low = eta_s * _spread(z * lo)
        high = eta_s * _spread(z * hi)
        est.eta_low_s = low
        est.eta_high_s = high
        # the point within its interval: a bin whose 10-90 % of ln(actual / predicted)
        # lies wholly on one side says the answer is off by at least that much (the
        # heated bath's long times: actual 0.56-0.94 of the fit's). Left outside, the
        # count-down (tinytherm.status) lifted the upper end to the point, wider than
        # calibrated: the bath covered 0.86 on its test uses
        est.eta_s = low if low > eta_s else (high if high < eta_s else eta_s)
        sd = (hi - lo) / (2.0 * _Z90)  # (the sd of ln(actual / predicted) its table gives)
        est.eta_rel_sd = sd if wide or sd > 0.05 else 0.05

    def first_answer(self, est, target_c, approach):
        """A passive liquid's answer (deg C ``target_c``, ``approach`` as ``predict``'s) while
        ``est``'s fit shows none. The law on, in the first readings after the turn that set
        ``est.blocks.dir`` towards E: the law at its typical rate from the latest reading,
        the table's interval. Else (own fit too), a fit younger than PROFILE_YOUNG_S whose
        probe still moves away from E beyond the noise (``answer.move_c``; meeting the
        drink: the flask's peaks 60-70 s in):
        the law from the liquid read through the probe's lag ``tau``, ``T = s + (s - s_p)
        / (exp(dt / tau) - 1)`` (the latest block's readings, dt s apart; exact for a
        liquid holding still), the interval ``-+Z90 rate_log_sd`` (ln t ~ -ln k)."""
        b = est.blocks
        on = est._profile_on
        if est.heater or not (on or self.own_fit) or not (
                est.readings and b.readings and -1e4 <= target_c <= 1e4):
            return
        y, m, wide = b.c * _INV, b.dir, 0.0
        if not (on and est.status == _st.GATHERING):
            if b.age_ms - b.it >= _YOUNG_MS or b.ip <= 0 or b.c != b.cb or b.readings < 3:
                return
            x = b.ip * 0.001 / self.probe_lag_s if self.probe_lag_s > 0.0 else 99.0
            y += (b.cb - b.cp) * _INV / (math.exp(x) - 1.0) if x < 30.0 else 0.0  # (e^-30)
            m = 1 if self.reference_c(est) + self.eq_offset_c > y else -1
            if (b.cp - b.cb) * m * _INV < _move_c(est.noise.sd):
                return  # (no rise beyond the noise: the probe has met the liquid)
            wide = _Z90 * self.rate_log_sd
        if approach != 0 and approach != m:
            return
        eta = self.law_for(est, target_c - y, y, 0.0) if (target_c - y) * m > 0.0 else None
        if eta is None or not eta > 0.0:
            return
        self.interval_into(est, eta, wide)
        est.status = _st.TRACKING
        est.temp_est_c = y

    # ----------------------------------------------------------- device form
    def to_blob(self):
        """The device form: :data:`PROFILE_SIZE` bytes (layout in the module docstring).

        Floats are rounded to float32, quantiles to 1/1000 (at most 0.0005 off).
        """
        buf = bytearray(PROFILE_SIZE)
        buf[0] = PROFILE_FORMAT
        buf[1] = (FLAG_HEATER if self.heater else 0) | (FLAG_OWN_FIT if self.own_fit else 0)
        struct.pack_into(_FLOATS, buf, _FLOATS_AT, self.rate_per_s, self.rate_log_sd,
                         self.eq_offset_c, self.eq_offset_sd_c, self.gain_k_per_s,
                         self.gain_rel_sd, self.probe_lag_s, self.rate_exponent)
        q = self.log_q_low
        r = self.log_q_high
        struct.pack_into(_QUANTS, buf, _QUANTS_AT,
                         _milli(q[0]), _milli(q[1]), _milli(q[2]), _milli(q[3]),
                         _milli(r[0]), _milli(r[1]), _milli(r[2]), _milli(r[3]))
        struct.pack_into("<I", buf, _CRC_AT, crc32(buf, 0, 0, _CRC_AT))
        return bytes(buf)

    @staticmethod
    def given(profile, heater, mismatch_reason):
        """``(profile, reason)`` for what a product passed as a profile: a
        :class:`VesselProfile` or its device blob. A bad blob gives ``(None,
        REASON_*)`` (:meth:`from_blob`), a profile for the other heater mode than
        ``heater`` (bool) ``(None, mismatch_reason)``; anything else raises
        ValueError."""
        t = type(profile)
        reason = REASON_OK
        if t is bytes or t is bytearray or t is memoryview:
            profile, reason = VesselProfile.from_blob(profile)
        elif not isinstance(profile, VesselProfile):
            raise ValueError("profile must be a VesselProfile, its blob or None")
        if profile is not None and profile.heater != heater:
            return None, mismatch_reason
        return profile, reason

    @staticmethod
    def from_blob(blob):
        """``(VesselProfile, REASON_OK)`` from a device blob, or ``(None, REASON_*)``.

        Never raises, whatever ``blob`` is: wrong type or length, another
        format version, a CRC mismatch, unknown flags or a value outside the
        ranges of :meth:`problem` each give their reason code. ``blob`` is a
        ``bytes``, ``bytearray`` or ``memoryview`` of exactly
        :data:`PROFILE_SIZE` bytes; a view is read as the bytes it covers,
        whatever its item format (54 doubles are 432 bytes: REASON_LENGTH);
        anything else, a subclass included, is REASON_LENGTH.
        """
        t = type(blob)
        if t is memoryview:
            # Read a view as the bytes it covers, whatever its item format: a view of
            # 54 doubles is 432 bytes (its len() says 54). A view of more than
            # PROFILE_SIZE bytes (CPython) or items (MicroPython) is refused uncopied.
            try:
                size = getattr(blob, "nbytes", None)   # CPython; MicroPython views are 1-D
                if (len(blob) if size is None else size) > PROFILE_SIZE:
                    return None, REASON_LENGTH
                blob = bytes(blob)
            except (TypeError, ValueError):          # a released or a 0-D view
                return None, REASON_LENGTH
        elif not (t is bytes or t is bytearray):
            return None, REASON_LENGTH
        if len(blob) != PROFILE_SIZE:
            return None, REASON_LENGTH
        if blob[0] != PROFILE_FORMAT:
            return None, REASON_VERSION
        if struct.unpack_from("<I", blob, _CRC_AT)[0] != crc32(blob, 0, 0, _CRC_AT):
            return None, REASON_CRC
        flags = blob[1]
        if flags & ~(FLAG_HEATER | FLAG_OWN_FIT):
            return None, REASON_FLAGS
        f = struct.unpack_from(_FLOATS, blob, _FLOATS_AT)
        q = struct.unpack_from(_QUANTS, blob, _QUANTS_AT)
        try:
            prof = VesselProfile(
                heater=bool(flags & FLAG_HEATER), rate_per_s=f[0], rate_log_sd=f[1],
                eq_offset_c=f[2], eq_offset_sd_c=f[3], gain_k_per_s=f[4], gain_rel_sd=f[5],
                probe_lag_s=f[6], rate_exponent=f[7],
                log_q_low=(q[0] * 0.001, q[1] * 0.001, q[2] * 0.001, q[3] * 0.001),
                log_q_high=(q[4] * 0.001, q[5] * 0.001, q[6] * 0.001, q[7] * 0.001),
                own_fit=bool(flags & FLAG_OWN_FIT))
        except (ValueError, OverflowError):
            return None, REASON_RANGE
        return prof, REASON_OK

    def __repr__(self):
        return ("VesselProfile(heater=%r, rate_per_s=%r, rate_log_sd=%r, eq_offset_c=%r, "
                "eq_offset_sd_c=%r, gain_k_per_s=%r, gain_rel_sd=%r, probe_lag_s=%r, "
                "rate_exponent=%r, log_q_low=%r, log_q_high=%r, own_fit=%r)" % (
                    self.heater, self.rate_per_s, self.rate_log_sd, self.eq_offset_c,
                    self.eq_offset_sd_c, self.gain_k_per_s, self.gain_rel_sd,
                    self.probe_lag_s, self.rate_exponent, self.log_q_low, self.log_q_high,
                    self.own_fit))


def _milli(x):
    """x in 1/1000 units, rounded half away from zero, as an int16-range int."""
    v = int(x * 1000.0 + (0.5 if x >= 0.0 else -0.5))
    if v > 32767:
        return 32767
    if v < -32768:
        return -32768
    return v
