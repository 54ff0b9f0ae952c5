"""Online fit of the lumped thermal model and the time-to-target answer.

One principle: *fit the first-order law on the recent part of the approach,
anchor the answer at the current reading, and judge the answer by the fit's
own forecasts.*

Model, with ``G = T - R`` the gap to a reference ``R`` (the known ambient, the
measured ambient smoothed, or 0 when nothing is known) and ``u`` the duty::

    dT/dt = s - k (G - G0) + g (u - u0)

``s`` is the slope at the reference gap ``G0`` and duty ``u0`` (both moved to
the latest block at every block, so ``s`` is the slope *now*), ``k`` the rate
(1/s) and ``g`` the heater gain (K/s at full duty). The equilibrium is free:
``E = T + s/k``. Integrating from any earlier moment gives an equation linear
in the parameters and free of derivatives::

    y(t) = c + s t - k x(t) + g v(t),   x = int (G - G0) dt,  v = int (u - u0) dt

(``c`` an unknown level, trapezoid integrals). Readings are averaged over
short blocks (at most ``block_s``, shorter early on) and each block mean is
one observation of this equation.

1. *Memory that follows the approach.* The regression forgets with a time
   constant of ``memory_fraction`` (0.35, chosen by leave-one-family-out on
   the tune seeds, see DEVELOPERS.md) times the time since the fit started, between ``MIN_MEMORY_S`` and ``memory_s``: about the recent half
   of the approach (and at least ``SPAN_BLOCKS`` block durations, for sparse
   readings), wherever the liquid is on its curve, so a rate that bends
   along the approach (convection ~ dT^(1/4), evaporation, a warming wall) is
   followed instead of averaged. Weighted means and co-moments are updated
   with West's incremental formulas; coordinates are kept relative to their
   weighted means and to the latest block (small numbers, float32-safe).
2. *Weak hints, never the direction.* ``k`` has a ridge prior. With nothing
   known it is ``rate_prior_per_s`` (loose). The ambient (known, measured or the
   ``ambient_prior_c`` hint) enters only as a prior on ``k`` given the fitted
   slope, ``k = s / (E - G0)`` with ``E - R ~ N(0, sd)``, used only when the
   liquid moves towards it: the prior can change how fast the curve bends,
   never which way the liquid goes.
3. *Anchored at now.* The level for the answer (``temp_est_c``) is the fit's
   value at the latest reading plus the residual of the latest blocks against
   the fit (smoothed with gain ``ANCHOR_GAIN``): where the curve bends more
   than one exponential can follow, the answer still starts from the
   readings, and the fit gives only the shape of the future. Its slope gives
   the direction. A fit that accelerates (``k < 0``) is refitted as the exact
   straight line (``k = 0``).
4. *Every regime has a closed form*: ``eta = -log1p(-k D / s) / k`` with ``D``
   the distance to the target (:func:`tinytherm.model.time_to_target_from_slope_s`),
   ``D / s`` when ``k = 0``.
5. *Interval from the fit's own forecasts.* Three audits at horizons of 1/8,
   1/4 and 1/2 of the fit's age record the level, slope and rate, and when the
   horizon has passed compare the time the fit predicted for the observed
   change with the time it took; the squared log ratios (exponentially
   averaged, prior :data:`AUDIT_PRIOR_VAR`) are added to the delta-method
   variance of log(eta) at the matching horizon.
6. *Restart on what the law cannot explain*: a jump (CUSUM and jump gate of
   :class:`~tinytherm.change.ChangeDetector` on block innovations, reported
   as ``DISTURBED`` until answered again), a reversal of the direction of
   travel by more than ``turn_c`` (no heater), and a gap over
   ``restart_gap_s``. Every reading first passes a
   :class:`~tinytherm.guard.ReadingGuard`.
7. *Honest arrival.* ``ARRIVED`` once the block means or the anchored level
   have crossed the target in the direction of travel (and the fit is at
   least ``ARRIVE_MIN_S`` old) and the latest reading is at most
   min(0.3 C, 3 noise sd) short of it; the extreme of the block means holds
   it until the fit restarts (a real turn is a new approach).

The state is the attribute block in :meth:`ThermalEstimator._restart_fit`
(the fit) and :meth:`ThermalEstimator.reset` (counts and audits). It is saved
plainly as float64 in a 480-byte blob (:mod:`tinytherm.blob`); the fit
itself is re-solved on restore. Fixed state, no per-update containers. Runs
unchanged on CPython and MicroPython.
"""
import math
import struct

from tinytherm import blob as bl
from tinytherm import status as st
from tinytherm.change import ChangeDetector
from tinytherm.guard import GAP_RESTART, ReadingGuard
from tinytherm.model import time_to_target_from_slope_s

_INF = math.inf
MAX_BLOCK_READINGS = 255        # a block closes after this many readings
MIN_MEMORY_S = 30.0             # s: shortest forgetting time constant
SPAN_BLOCKS = 4.0               # forgetting time constant at least this many block durations
AMBIENT_SMOOTH_S = 300.0        # s: time constant of the measured-ambient smoothing
KNOWN_AMBIENT_SD_C = 2.0        # deg C: default equilibrium hint sd with a known or measured ambient
AUDIT_FRACTIONS = (0.125, 0.25, 0.5)  # audit horizons, fractions of the fit's age
AUDIT_MIN_S = (10.0, 20.0, 40.0)      # s: shortest audit horizons
AUDIT_PRIOR_VAR = 0.04          # (log time)^2: forecast error assumed before any audit
AUDIT_MEMORY = 8                # audits in the running mean of squared log errors
AUDIT_STRETCH = 4.0             # most the longest audit's variance is stretched beyond it
AUDIT_LOG_CAP = 2.0794          # ln 8: one audit counts at most a factor 8
ARRIVE_TOL_C = 0.3              # deg C: most a reading may be short of the target at arrival
ARRIVE_MIN_S = 30.0             # s: no arrival in a fit younger than this (a probe warming up)
DETECT_MIN_BLOCKS = 5           # blocks before the change detector listens
ANCHOR_GAIN = 0.5               # weight of the newest block residual in the anchor
MISMATCH_C = 0.03               # deg C: model-mismatch allowance of a block innovation
NOISE_PRIOR_C = 0.05            # deg C: reading noise sd assumed before it is measured
NOISE_PRIOR_N = 4               # readings that prior is worth
PROFILE_HEATER_MISMATCH = 100   # profile_reason: a heater profile for a passive estimator, or back
PROFILE_REJECTED = 101         # profile_reason: dropped, its forecasts failed (see _audit)
PROFILE_Z80 = 1.2815515655446004  # the profile's table holds 10 % / 90 % points
PROFILE_MISMATCH_VAR = 4.0      # a profile is dropped when the audits' error variance exceeds
PROFILE_MISMATCH_N = 3          # this many times its own, over at least this many checks


def normal_quantile(p):
    """Standard normal quantile ``z`` with ``P(Z <= z) = p``, for 0 < p < 1.

    Rational approximation of Abramowitz & Stegun, Handbook of Mathematical
    Functions, formula 26.2.23 (absolute error < 4.5e-4); exactly 0 at 0.5.
    Raises ValueError outside (0, 1).
    """
    if not 0.0 < p < 1.0:
        raise ValueError("p must be in (0, 1)")
    if p == 0.5:
        return 0.0
    q = p if p < 0.5 else 1.0 - p
    t = math.sqrt(-2.0 * math.log(q))
    z = t - (2.515517 + 0.802853 * t + 0.010328 * t * t) / (
        1.0 + 1.432788 * t + 0.189269 * t * t + 0.001308 * t * t * t)
    return -z if p < 0.5 else z


def _finite(x):
    t = type(x)
    return (t is float or t is int) and x == x and x != _INF and x != -_INF


def _number(x, lo, hi):
    """True for an int or float in [lo, hi] (comparisons only: never raises)."""
    t = type(x)
    return (t is float or t is int) and lo <= x <= hi


def _exp_neg(x):
    try:
        return math.exp(-x)
    except (ValueError, OverflowError):
        return 0.0


# Saved state (after the blob header): ints, then float64 fields by name, then
# the guard's and the change detector's own bytes (their pack_into)
_INT_FMT = "<IHHBBBBBB"  # readings, changes, turns, block n, fit readings (capped),
#   flags | direction, audits 0 | 1, audits 2, noise samples
_FLOATS = ("_w", "_w2", "_nb", "_my", "_ctt", "_ctx", "_ctu", "_cty", "_cxx", "_cxu",
           "_cxy", "_cuu", "_cuy", "_cyy", "_t", "_x", "_v", "_age", "_b_dur", "_g0", "_u0",
           "_bt", "_bx", "_bv", "_by", "_y_prev", "_r_prev", "_u_prev", "_noise2", "_s2_fit",
           "_ext", "_anchor")
_AUDIT_FLOATS = ("age", "level", "slope", "rate", "var")


class _Audit:
    """One forecast check: the fit's level, slope and rate when it started, and
    the running mean of squared log errors (time taken / time predicted)."""

    def __init__(self, fraction, min_s):
        self.fraction = fraction   # horizon as a fraction of the fit's age
        self.min_s = min_s         # shortest horizon, s
        self.var = AUDIT_PRIOR_VAR  # (log time)^2
        self.n = 0                 # checks in the running mean (at most AUDIT_MEMORY)
        self.clear()

    def clear(self):
        self.age = -1.0            # fit age at the start, s; < 0: nothing waiting
        self.level = 0.0           # fitted level then, deg C
        self.slope = 0.0           # fitted slope then, deg C/s
        self.rate = 0.0            # fitted k then, 1/s

    def horizon_s(self, age_s):
        h = self.fraction * age_s
        return h if h > self.min_s else self.min_s

    def check(self, est, age_s, level, slope, rate, need_c):
        """At a block: learn from the waiting forecast if due, then start a new one.

        ``est`` makes the forecast (:meth:`ThermalEstimator._forecast_s`): the
        law its answers use.
        """
        if self.age >= 0.0:
            took = age_s - self.age
            if took < self.horizon_s(self.age):
                return
            moved = level - self.level
            if moved > need_c or moved < -need_c:
                pred = est._forecast_s(moved, self.level, self.slope, self.rate)
                err = AUDIT_LOG_CAP
                if pred is not None and pred > 0.0:
                    try:
                        err = math.log(took / pred)
                    except (ValueError, OverflowError):
                        pass
                    if err > AUDIT_LOG_CAP:
                        err = AUDIT_LOG_CAP
                    elif err < -AUDIT_LOG_CAP:
                        err = -AUDIT_LOG_CAP
                if self.n < AUDIT_MEMORY:
                    self.n += 1
                self.var += (err * err - self.var) / (self.n + 1)
        self.age = age_s
        self.level = level
        self.slope = slope
        self.rate = rate


class ThermalEstimator:
    """Feed readings in, ask how long until a target temperature.

    Arguments (all optional; each is range-checked, ValueError names it):

    - ``ambient_c``: known, constant ambient in deg C (a strong hint for the
      equilibrium). ``None``: passed with each reading
      (``update(..., ambient_c=)``) or, when never passed, unknown.
    - ``ambient_prior_c``, ``ambient_prior_sd_c``: weak hint for the
      equilibrium when no ambient is known, deg C (centre and sd).
    - ``ambient_sd_c``: how far the effective equilibrium may lie from a known
      or measured ambient, deg C (evaporation, a bending rate); small values
      pin it there.
    - ``heater``: ``True`` when a heater duty is passed with each reading and
      its gain (K/s at full duty) must be fitted.
    - ``memory_s``: longest forgetting time constant, seconds.
    - ``memory_fraction``: forgetting time constant as a fraction of the time
      since the fit started (0.35: most weight on about the recent half).
    - ``block_s``: longest block of readings averaged into one observation, s.
    - ``interval``: two-sided probability of the reported time interval.
    - ``settle_s``: seconds of data before an answer may be ``TRACKING``.
    - ``max_relative_sd``: an answer whose log-time sd exceeds this stays
      ``SETTLING``.
    - ``rate_prior_per_s``: sd (1/s) of the loose prior on ``k``, centred on
      0 (a straight line until the data show a bend).
    - ``min_temp_c``, ``max_temp_c``: plausible range of readings, deg C.
    - ``quantum_c``: sensor resolution, deg C (0.0625 for a 12-bit 1-Wire
      sensor).
    - ``spike_window``, ``max_gap_s``, ``restart_gap_s``, ``stuck_change_c``,
      ``stuck_min_s``: see :class:`~tinytherm.guard.ReadingGuard`.
    - ``fault_after``: this many consecutive rejected readings turn the
      answer into ``SENSOR_FAULT``.
    - ``detect_changes``: restart the fit on a sudden change (top-up, lid
      off) and report ``DISTURBED`` until it answers again.
    - ``turn_c``: a retreat of the block means from their extreme by more
      than this (deg C) restarts the fit (a new approach; not with a heater).
    - ``profile``: a :class:`~tinytherm.profile.VesselProfile` or its device
      blob. It sets the priors (rate bent by its power law at the current
      distance to the equilibrium, equilibrium offset from the ambient, heater
      gain) and the interval (its calibrated quantiles). A bad blob or a profile
      for the other heater mode is not used (``profile_reason`` says why, a
      :mod:`tinytherm.profile` reason code or ``PROFILE_HEATER_MISMATCH``);
      a profile whose forecasts fail on this liquid (audit errors beyond
      ``PROFILE_MISMATCH_VAR`` times its own spread) is dropped for the rest of
      the use (``PROFILE_REJECTED``) and the free fit carries on.
    """

    def __init__(self, ambient_c=None, ambient_prior_c=21.0, ambient_prior_sd_c=8.0,
                 ambient_sd_c=KNOWN_AMBIENT_SD_C, heater=False, memory_s=7200.0,
                 memory_fraction=0.35, block_s=20.0,
                 interval=0.8, settle_s=0.0, max_relative_sd=5.0,
                 rate_prior_per_s=1.0 / 1800.0, min_temp_c=-55.0, max_temp_c=150.0,
                 quantum_c=0.0625, spike_window=3, max_gap_s=900.0, restart_gap_s=3600.0,
                 stuck_change_c=1.0, stuck_min_s=30.0, fault_after=5, detect_changes=True,
                 turn_c=1.0, profile=None):
        if not _number(min_temp_c, -1e4, 1e4) or not _number(max_temp_c, -1e4, 1e4) \
                or not min_temp_c < max_temp_c:
            raise ValueError("min_temp_c < max_temp_c must be finite deg C within +-1e4")
        if ambient_c is not None and not _number(ambient_c, min_temp_c, max_temp_c):
            raise ValueError("ambient_c must be None or a temperature in [min_temp_c, max_temp_c]")
        if not _number(ambient_prior_c, -1e4, 1e4):
            raise ValueError("ambient_prior_c must be a finite temperature (deg C)")
        if not _number(ambient_prior_sd_c, 1e-3, 1e4):
            raise ValueError("ambient_prior_sd_c must be in [1e-3, 1e4] deg C")
        if not _number(ambient_sd_c, 1e-4, 1e4):
            raise ValueError("ambient_sd_c must be in [1e-4, 1e4] deg C")
        if not _number(memory_s, MIN_MEMORY_S, 1e7):
            raise ValueError("memory_s must be in [%r, 1e7] seconds" % MIN_MEMORY_S)
        if not _number(memory_fraction, 0.05, 10.0):
            raise ValueError("memory_fraction must be in [0.05, 10]")
        if not _number(block_s, 0.0, 600.0):
            raise ValueError("block_s must be in [0, 600] seconds")
        if not _number(interval, 0.01, 0.999):
            raise ValueError("interval must be a probability in [0.01, 0.999]")
        if not _number(settle_s, 0.0, 1e6):
            raise ValueError("settle_s must be in [0, 1e6] seconds")
        if not _number(max_relative_sd, 1e-3, 1e3):
            raise ValueError("max_relative_sd must be in [1e-3, 1e3]")
        if not _number(rate_prior_per_s, 1e-8, 1.0):
            raise ValueError("rate_prior_per_s must be in [1e-8, 1] (1/s)")
        if not _number(turn_c, 0.01, 1e3):
            raise ValueError("turn_c must be in [0.01, 1e3] deg C")
        if type(fault_after) is not int or not 1 <= fault_after <= 255:
            raise ValueError("fault_after must be an int in 1..255 (readings)")
        if not _number(quantum_c, 1e-6, 10.0):
            raise ValueError("quantum_c must be in [1e-6, 10] deg C")
        if stuck_change_c is not None and not _number(stuck_change_c, 1e-3, 1e3):
            raise ValueError("stuck_change_c must be None or in [1e-3, 1e3] deg C")
        if not _number(stuck_min_s, 0.0, 1e6):
            raise ValueError("stuck_min_s must be in [0, 1e6] seconds")
        if not _number(max_gap_s, 1e-3, 1e5) or not _number(restart_gap_s, 1e-3, 1e5):
            raise ValueError("max_gap_s and restart_gap_s must be in [1e-3, 1e5] seconds")
        # a vessel profile (tinytherm.profile): an object, or its device blob; a
        # bad blob is not an error: the estimator runs without it and says why
        self._profile = None
        self.profile_reason = 0
        if profile is not None:
            # imported only when used: the module costs about 10 KB of RAM
            from tinytherm.profile import VesselProfile
            t = type(profile)
            if t is bytes or t is bytearray or t is memoryview:
                profile, self.profile_reason = VesselProfile.from_blob(profile)
            elif not isinstance(profile, VesselProfile):
                raise ValueError("profile must be a VesselProfile, its blob or None")
            if profile is not None and profile.heater != bool(heater):
                profile = None
                self.profile_reason = PROFILE_HEATER_MISMATCH
            self._profile = profile
        # the guard checks the rest of its own settings (ValueError that names them)
        self.guard = ReadingGuard(min_c=min_temp_c, max_c=max_temp_c, quantum_c=quantum_c,
                                  spike_window=spike_window, max_gap_s=max_gap_s,
                                  restart_gap_s=restart_gap_s, stuck_change_c=stuck_change_c,
                                  stuck_min_s=stuck_min_s, probe_codes=True)
        self.detector = ChangeDetector(jump_z=12.0) if detect_changes else None
        self._ambient_fixed = None if ambient_c is None else float(ambient_c)
        self._prior_r = float(ambient_prior_c)
        self._prior_sd = float(ambient_prior_sd_c)
        self._known_sd = float(ambient_sd_c)
        self.heater = bool(heater)
        self.memory_s = float(memory_s)
        self.memory_fraction = float(memory_fraction)
        self.block_s = float(block_s)
        self.interval = float(interval)
        self._z = normal_quantile(0.5 + 0.5 * self.interval)
        self.settle_s = float(settle_s)
        self.max_relative_sd = float(max_relative_sd)
        self._k0 = float(rate_prior_per_s)
        self.min_temp_c = float(min_temp_c)
        self.max_temp_c = float(max_temp_c)
        self.fault_after = fault_after
        self.turn_c = float(turn_c)
        # reading noise variance floor: the rounding error of the sensor step, q^2 / 12
        self._noise_floor = max(1e-6, self.guard.quantum_c * self.guard.quantum_c / 12.0)
        # save() writes into this one buffer, made while the heap is fresh (a
        # small fragmented heap may lack 480 contiguous bytes later)
        self._blob_buf = bl.new_frame(self._settings_byte())
        self.reset()

    # ------------------------------------------------------------------ state
    def reset(self):
        """Forget all readings, the guard's window, counts and audits; settings are kept."""
        self.readings = 0           # accepted readings since the reset
        self.rejected = 0           # rejected readings since the reset (or restore)
        self.last_verdict = st.ACCEPTED
        self.changes = 0            # sudden changes detected
        self.turns = 0              # reversals of the direction of travel
        self.guard.reset()
        # audits: three horizons; *_age < 0 means no forecast is waiting
        self._audits = (_Audit(AUDIT_FRACTIONS[0], AUDIT_MIN_S[0]),
                        _Audit(AUDIT_FRACTIONS[1], AUDIT_MIN_S[1]),
                        _Audit(AUDIT_FRACTIONS[2], AUDIT_MIN_S[2]))
        self._measured = False      # an ambient came with a reading
        # reading noise variance, deg C^2: a prior of 0.05 C sd worth NOISE_PRIOR_N readings
        self._noise2 = max(self._noise_floor, NOISE_PRIOR_C * NOISE_PRIOR_C)
        self._noise_n = NOISE_PRIOR_N
        self._s2_fit = self._noise2
        self._disturbed = False
        self._profile_on = self._profile is not None  # dropped when its forecasts fail
        self._restart_fit()

    def _restart_fit(self):
        """Zero the fit: the next accepted reading starts a new approach."""
        self._fresh = True          # no reading in this fit yet
        self._fit_readings = 0
        # weighted sums: weight, sum of squared weights, effective blocks, mean reading
        self._w = 0.0
        self._w2 = 0.0
        self._nb = 0.0
        self._my = 0.0
        # co-moments of (t, x, v, y) about their weighted means
        self._ctt = self._ctx = self._ctu = self._cty = 0.0
        self._cxx = self._cxu = self._cxy = 0.0
        self._cuu = self._cuy = self._cyy = 0.0
        # current t, x, v relative to their weighted means; the fit's age
        self._t = self._x = self._v = 0.0
        self._age = 0.0
        self._g0 = 0.0              # reference gap G0 = T - R, deg C
        self._u0 = 0.0              # reference duty
        # the open block: readings, duration, sums of t, x, v, y
        self._bn = 0
        self._b_dur = 0.0
        self._bt = self._bx = self._bv = self._by = 0.0
        self._y_prev = 0.0          # latest accepted reading, deg C
        self._r_prev = 0.0          # reference R at it (0 when unknown), deg C
        self._u_prev = 0.0          # duty over the latest interval
        self._dir = 0               # direction of travel of the block means (+1, -1, 0)
        self._ext = 0.0             # first block mean while _dir == 0, then the extreme
        self._anchor = 0.0          # smoothed residual of the latest blocks, deg C
        for a in self._audits:
            a.clear()
        self._clear_fit()
        self._clear_answer(st.GATHERING)

    def _clear_fit(self):
        """Derived from the state by _solve (never saved)."""
        self._ok = False
        self._s = 0.0               # slope at G0, u0, deg C/s
        self._k = 0.0               # rate, 1/s
        self._g = 0.0               # heater gain, K/s
        self._p_ss = self._p_sk = self._p_sg = self._p_kk = self._p_kg = self._p_gg = 0.0
        self._var_my = 0.0

    def _clear_answer(self, code):
        self.status = code
        self.eta_s = None
        self.eta_low_s = None
        self.eta_high_s = None
        self.eta_rel_sd = None
        self.rate_per_s = None
        self.equilibrium_c = None
        self.ambient_est_c = None
        self.gain_k_per_s = 0.0
        self.temp_est_c = None

    # ---------------------------------------------------------------- readings
    def update_ticks(self, temp_c, ticks_ms, ambient_c=None, duty=0.0):
        """Add a reading stamped with millisecond ticks that wrap at 2**30.

        ``ticks_ms`` is an int as from ``time.ticks_ms()``; the difference to
        the previous call is taken wrap-safe. Returns the verdict code (see
        :meth:`update`). After :meth:`restore` the first call only sets the
        tick reference and returns ``BAD_INPUT``; prefer :meth:`update` with
        the slept time there.
        """
        ok = self._inputs_ok(ambient_c, duty)
        verdict = self.guard.check_ticks(temp_c, ticks_ms,
                                         self._expected_rate(temp_c, duty) if ok else 0.0, ok)
        return self._after_guard(verdict, temp_c, ambient_c, duty)

    def update(self, temp_c, dt_s, ambient_c=None, duty=0.0):
        """Add one reading; return its verdict (``status.ACCEPTED`` == 0 if used).

        ``temp_c``: the liquid reading, deg C. ``dt_s``: seconds since the
        previous call (ignored on the first reading). ``ambient_c``: a measured
        ambient for this reading, deg C, or ``None``. ``duty``: heater duty in
        [0, 1] applied since the previous reading. Never raises: a bad reading
        or argument is rejected with a verdict code from :mod:`tinytherm.status`,
        counted, and leaves the fit untouched (its time still counts).
        """
        try:
            if not _number(dt_s, -1e300, 1e300):
                dt_s = math.nan  # a huge int, a string, None: BAD_INPUT in the guard
        except (OverflowError, ValueError):  # MicroPython compares big ints as floats
            dt_s = math.nan
        ok = self._inputs_ok(ambient_c, duty)
        verdict = self.guard.check(temp_c, dt_s,
                                   self._expected_rate(temp_c, duty) if ok else 0.0, ok)
        return self._after_guard(verdict, temp_c, ambient_c, duty)

    def _inputs_ok(self, ambient_c, duty):
        """Duty a number in [0, 1], ambient None or a plausible temperature."""
        if not _number(duty, 0.0, 1.0):
            return False
        return ambient_c is None or _number(ambient_c, self.min_temp_c, self.max_temp_c)

    def _expected_rate(self, temp_c, duty):
        """Model dT/dt (deg C/s) when the reading repeats exactly (the guard's stuck test)."""
        if not self._ok or temp_c != self._y_prev:
            return 0.0
        return self._s - self._k * (temp_c - self._r_prev - self._g0) + self._g * (duty - self._u0)

    def _after_guard(self, verdict, temp_c, ambient_c, duty):
        self.last_verdict = verdict
        if verdict:
            self.rejected += 1
            return verdict
        temp_c = float(temp_c)
        if not self.heater:
            duty = 0.0
        if ambient_c is not None:
            self._measured = True
        try:
            if self._fresh or self.guard.gap == GAP_RESTART:
                self._restart_fit()
                self._start(temp_c, ambient_c, duty)
            else:
                self._step(temp_c, self.guard.elapsed_s, ambient_c, float(duty))
        except (ValueError, OverflowError, ZeroDivisionError):
            # arithmetic at the edge of the float range (a reading of 1e-305 C):
            # never raise; the fit starts again from this reading
            self._restart_fit()
            self._start(temp_c, ambient_c, duty)
        self.readings += 1
        self._fit_readings += 1
        return st.ACCEPTED

    def _reference(self, ambient_c, dt_s):
        """The reference R for this reading, deg C: fixed, measured (smoothed) or 0."""
        if self._ambient_fixed is not None and not self._measured:
            return self._ambient_fixed
        if not self._measured:
            return 0.0
        if ambient_c is None:
            return self._r_prev
        if self._fresh:
            return float(ambient_c)
        a = 1.0 - _exp_neg(dt_s / AMBIENT_SMOOTH_S)
        return self._r_prev + a * (ambient_c - self._r_prev)

    def _start(self, temp_c, ambient_c, duty):
        """First reading of a (re)started fit."""
        self._first(temp_c, self._reference(ambient_c, 0.0), duty)

    def _first(self, temp_c, r, duty):
        """The fit's first reading (reference ``r``): the first block's first reading."""
        self._fresh = False
        self._y_prev = temp_c
        self._r_prev = r
        self._u_prev = duty
        self._g0 = temp_c - r
        self._u0 = duty
        self._ext = temp_c
        self._bn = 1
        self._by = temp_c
        self._close_block()

    def _step(self, temp_c, dt_s, ambient_c, duty):
        """An accepted reading after the first: advance the integrals, add to the block."""
        r = self._reference(ambient_c, dt_s)
        # noise: successive differences less the fitted slope, var = 2 sigma^2
        if self._ok and dt_s <= 120.0 and self._nb >= DETECT_MIN_BLOCKS:
            # clipped at 2 sd, and only from a fit of a few blocks: a misfit (a
            # jump, a young fit's slope) must not pass for noise
            d2 = temp_c - self._y_prev - self._s * dt_s
            d2 = 0.5 * d2 * d2
            cap = 4.0 * self._noise2
            n = self._noise_n + 1 if self._noise_n < 100 else 100
            self._noise_n = n
            v = self._noise2 + ((d2 if d2 < cap else cap) - self._noise2) / n
            self._noise2 = v if v > self._noise_floor else self._noise_floor
        if duty != self._u_prev:
            for a in self._audits:
                a.clear()  # the forecasts assumed the old duty
        # trapezoid: x += ((G_n + G_(n-1)) / 2 - G0) dt, v += (u - u0) dt
        if r == 0.0 and self._r_prev == 0.0:
            self._x += (0.5 * (temp_c + self._y_prev) - self._g0) * dt_s
        else:
            self._x += (0.5 * (temp_c - r + self._y_prev - self._r_prev) - self._g0) * dt_s
        self._t += dt_s
        self._age += dt_s
        self._b_dur += dt_s
        self._y_prev = temp_c
        self._r_prev = r
        self._bn += 1
        self._bt += self._t
        self._bx += self._x
        self._by += temp_c
        if self.heater:
            self._v += (duty - self._u0) * dt_s
            self._u_prev = duty
            self._bv += self._v
        # blocks grow with the fit's age (every reading counts early on)
        if self._b_dur >= self.block_s or self._b_dur >= self._age * 0.0625 \
                or self._bn >= MAX_BLOCK_READINGS:
            self._close_block()

    def _close_block(self):
        n = self._bn
        inv = 1.0 / n
        tb = self._bt * inv
        xb = self._bx * inv
        vb = self._bv * inv
        yb = self._by * inv
        if self._ok and self.detector is not None and self._nb >= DETECT_MIN_BLOCKS:
            pred = self._my + self._s * tb - self._k * xb + self._g * vb + self._anchor
            sd = math.sqrt(self._noise2 * inv + 4.0 * self._var_my + MISMATCH_C * MISMATCH_C)
            if self.detector.update(yb - pred, sd):
                self.changes += 1
                self._begin_again(True)
                return
        # forgetting: time constant memory_fraction x age, clamped; at least a
        # few block durations, so that sparse readings still overlap
        mem = self.memory_fraction * self._age
        if mem < SPAN_BLOCKS * self._b_dur:
            mem = SPAN_BLOCKS * self._b_dur
        if mem < MIN_MEMORY_S:
            mem = MIN_MEMORY_S
        elif mem > self.memory_s:
            mem = self.memory_s
        lam = _exp_neg(self._b_dur / mem)
        # West's weighted update with the new point at (tb, xb, vb) (means are 0)
        w = lam * self._w + n
        f = n / w
        h = n * (1.0 - f)
        dy = yb - self._my
        self._ctt = lam * self._ctt + h * tb * tb
        self._ctx = lam * self._ctx + h * tb * xb
        self._ctu = lam * self._ctu + h * tb * vb
        self._cty = lam * self._cty + h * tb * dy
        self._cxx = lam * self._cxx + h * xb * xb
        self._cxu = lam * self._cxu + h * xb * vb
        self._cxy = lam * self._cxy + h * xb * dy
        self._cuu = lam * self._cuu + h * vb * vb
        self._cuy = lam * self._cuy + h * vb * dy
        self._cyy = lam * self._cyy + h * dy * dy
        self._my += f * dy
        self._w = w
        self._w2 = lam * lam * self._w2 + n
        self._nb = lam * self._nb + 1.0
        # new origin: the weighted means
        self._t -= f * tb
        self._x -= f * xb
        self._v -= f * vb
        # new reference gap and duty: the latest reading's, x' = x - dG t, v' = v - du t
        dg = self._y_prev - self._r_prev - self._g0
        t = self._t
        self._cxx += dg * (dg * self._ctt - 2.0 * self._ctx)
        self._ctx -= dg * self._ctt
        self._cxu -= dg * self._ctu
        self._cxy -= dg * self._cty
        self._x -= dg * t
        self._g0 += dg
        du = self._u_prev - self._u0
        if du != 0.0:
            self._cuu += du * (du * self._ctt - 2.0 * self._ctu)
            self._ctu -= du * self._ctt
            self._cxu -= du * self._ctx
            self._cuy -= du * self._cty
            self._v -= du * t
            self._u0 += du
        # (the shifts are exact up to rounding, which may leave -1e-19 on a diagonal)
        if self._cxx < 0.0:
            self._cxx = 0.0
        if self._cuu < 0.0:
            self._cuu = 0.0
        self._bn = 0
        self._b_dur = 0.0
        self._bt = self._bx = self._bv = self._by = 0.0
        self._s2_fit = self._noise2
        self._solve()
        if self._ok:
            # anchor: the block's residual against the new fit, smoothed over
            # about two blocks, moves the level onto the latest readings
            tb -= f * tb
            res = yb - (self._my + self._s * tb
                        - self._k * (xb - f * xb - dg * tb) + self._g * (vb - f * vb - du * tb))
            self._anchor += ANCHOR_GAIN * (res - self._anchor)
            self._audit()
        if self._turned(yb):
            self.turns += 1
            self._begin_again(False)

    def _begin_again(self, disturbed):
        """Restart the fit from the latest reading (a jump or a turn)."""
        y = self._y_prev
        r = self._r_prev
        u = self._u_prev
        self._restart_fit()
        if disturbed:
            self._disturbed = True
        if self.detector is not None:
            self.detector.reset()
        self._first(y, r, u)

    def _turned(self, yb):
        """Track the extreme of the block means; True on a retreat beyond turn_c."""
        cut = self.turn_c
        noise = 4.0 * math.sqrt(self._noise2)
        if noise > cut:
            cut = noise
        if self._dir == 0:
            if yb - self._ext > cut:
                self._dir = 1
                self._ext = yb
            elif self._ext - yb > cut:
                self._dir = -1
                self._ext = yb
            return False
        if (yb - self._ext) * self._dir > 0.0:
            self._ext = yb
            return False
        return not self.heater and (self._ext - yb) * self._dir > cut

    # --------------------------------------------------------------------- fit
    def _solve(self):
        """Ridge-regularised least squares for (s, -k, g); caches the fit."""
        self._clear_fit()
        if self._nb < 1.5 or not self._w > 0.0:
            return
        s2 = self._s2_fit  # the noise level at the last block (a restore re-solves with it)
        prof = self._profile if self._profile_on else None
        # the equilibrium hint E ~ N(e, sd^2) as a gap G = T - R
        if self._ambient_fixed is not None or self._measured:
            e_gap = 0.0
            sd = self._known_sd
        else:
            e_gap = self._prior_r
            sd = self._prior_sd
        dist = e_gap - self._g0
        if prof is not None:
            # the first-order law tangent to the profile's power law at this gap:
            # k = n rate_at(d), E = T - d / n (tinytherm.profile.local_first_order)
            n = prof.rate_exponent
            d = -(dist + prof.eq_offset_c)
            dist = -d / n
            sd = prof.eq_offset_sd_c / n
            if sd < 0.05:
                sd = 0.05
        # prior on k: loose N(0, k0^2) (a straight line until the data show a
        # bend), or the profile's rate at this distance, N(kp, (kp sd_ln k)^2)
        kp = 0.0
        lk = s2 / (self._k0 * self._k0)
        gp = 0.0
        lg = s2  # heater gain ~ N(0, 1 K/s) without a profile
        if prof is not None:
            kp = prof.rate_exponent * prof.rate_at(d)
            rel = prof.rate_log_sd if prof.rate_log_sd > 0.02 else 0.02
            lk = s2 / (kp * kp * rel * rel)
            gp = prof.gain_k_per_s
            rel = prof.gain_rel_sd if prof.gain_rel_sd > 0.02 else 0.02
            if gp != 0.0:
                lg = s2 / (gp * gp * rel * rel)
        # the slope without heat input, from the fit with the loose prior alone
        # (without a heater only the slope is needed: a 2x2 solve for one value)
        solved = False
        if self.heater:
            if not self._solve_with(lk, kp, 0.0, 0.0, lg, gp, s2):
                return
            solved = True
            slope = self._s - self._g * self._u0
        else:
            a22 = self._cxx + lk
            det = self._ctt * a22 - self._ctx * self._ctx
            if not det > 1e-300 * (1.0 + self._ctt * a22):
                return
            slope = (a22 * self._cty - self._ctx * (self._cxy - kp * lk)) / det
        # the hint, used only when the liquid moves towards it: one
        # pseudo-observation 0 = s - k (e - G0) with sd k sd (k scaled from the slope)
        den = slope * slope * sd * sd
        if (dist > 2.0 * sd or dist < -2.0 * sd) and slope * dist > 0.0 and den > 0.0:
            lh = s2 * dist * dist / den
            if _finite(lh) and self._solve_with(0.0 if prof is None else lk, kp, lh, dist, lg,
                                                gp, s2):
                solved = True  # (without a profile the hint replaces the loose prior)
        if not solved and not self._solve_with(lk, kp, 0.0, 0.0, lg, gp, s2):
            return
        if self._ok and self._k < 0.0:
            # accelerating: the exact straight line instead
            self._solve_with(-1.0, 0.0, 0.0, 0.0, lg, gp, s2)

    def _solve_with(self, lk, kp, lh, dist, lg, gp, s2):
        """One solve with priors k ~ N(kp, s2 / lk) (``lk < 0`` pins k = 0),
        g ~ N(gp, s2 / lg) and weight ``lh`` on the hint 0 = s + dist * m (m = -k)."""
        a11 = self._ctt + lh
        if lk < 0.0:
            a12 = 0.0
            a22 = 1.0
            b2 = 0.0
        else:
            a12 = self._ctx + lh * dist
            a22 = self._cxx + lk + lh * dist * dist
            b2 = self._cxy - kp * lk
        b1 = self._cty
        if self.heater:
            a13 = self._ctu
            a23 = 0.0 if lk < 0.0 else self._cxu
            a33 = self._cuu + lg
            b3 = self._cuy + lg * gp
            # symmetric 3x3 inverse by cofactors
            c11 = a22 * a33 - a23 * a23
            c12 = a13 * a23 - a12 * a33
            c13 = a12 * a23 - a13 * a22
            c22 = a11 * a33 - a13 * a13
            c23 = a12 * a13 - a11 * a23
            c33 = a11 * a22 - a12 * a12
            det = a11 * c11 + a12 * c12 + a13 * c13
            if not det > 1e-300 * (1.0 + a11 * a22 * a33):
                return False
            inv = 1.0 / det
            s = (c11 * b1 + c12 * b2 + c13 * b3) * inv
            m = (c12 * b1 + c22 * b2 + c23 * b3) * inv
            g = (c13 * b1 + c23 * b2 + c33 * b3) * inv
            dof = self._nb - 3.0
        else:
            # 2x2 (the common case: fewer floats on a MicroPython heap)
            c11 = a22
            c12 = -a12
            c22 = a11
            c13 = c23 = c33 = b3 = g = 0.0
            det = a11 * a22 - a12 * a12
            if not det > 1e-300 * (1.0 + a11 * a22):
                return False
            inv = 1.0 / det
            s = (a22 * b1 - a12 * b2) * inv
            m = (a11 * b2 - a12 * b1) * inv
            dof = self._nb - 2.0
        if lk < 0.0:
            m = 0.0
        # residual variance per reading: weighted SSR over the effective blocks
        ssr = self._cyy - s * b1 - m * self._cxy - g * b3
        s2r = ssr / dof if dof > 1.0 else s2
        if s2r < s2:
            s2r = s2
        scale = s2r * self._w2 / self._w * inv
        if not (_finite(s) and _finite(m) and _finite(g) and _finite(scale)):
            return False
        self._s = s
        self._k = -m
        self._g = g
        # covariance of (s, k, g): k = -m flips the sign of its cross terms
        self._p_ss = c11 * scale
        self._p_sk = -c12 * scale
        self._p_kk = c22 * scale if lk >= 0.0 else 0.0  # (pinned: no spread)
        if self.heater:
            self._p_sg = c13 * scale
            self._p_kg = -c23 * scale
            self._p_gg = c33 * scale
        self._var_my = s2r * self._w2 / (self._w * self._w)
        self._ok = True
        return True

    def _level(self):
        """Temperature at the latest reading, deg C: the fit there, anchored."""
        return (self._my + self._s * self._t - self._k * self._x + self._g * self._v
                + self._anchor)

    def _slope(self, level):
        """Fitted dT/dt at ``level`` (deg C) and the latest duty, deg C/s."""
        return (self._s - self._k * (level - self._r_prev - self._g0)
                + self._g * (self._u_prev - self._u0))

    # ------------------------------------------------------------------ audits
    def _audit(self):
        if self._nb < DETECT_MIN_BLOCKS:
            return  # a fit of a few readings forecasts noise, not the model's error
        for a in self._audits:
            if a.age < 0.0 or self._age - a.age >= a.horizon_s(a.age):
                break
        else:
            return  # nothing due (most blocks): the level and its variance wait
        level = self._level()
        slope = self._slope(level)
        need = 4.0 * math.sqrt(self._var_level()) + 0.5 * self.guard.quantum_c
        for a in self._audits:
            a.check(self, self._age, level, slope, self._k, need)
            if self._profile_on and a.n >= PROFILE_MISMATCH_N:
                lo, hi = self._profile.interval_log_bounds(a.horizon_s(self._age))
                own = (hi - lo) / (2.0 * PROFILE_Z80)
                if own < 0.05:
                    own = 0.05
                if a.var > PROFILE_MISMATCH_VAR * own * own:
                    # its forecasts fail on this liquid: another vessel's profile
                    self._profile_on = False
                    self.profile_reason = PROFILE_REJECTED
                    self._solve()
                    return

    def _audit_var(self, eta_s):
        """Forecast-error variance of log(eta) at horizon ``eta_s`` (interpolated in log h)."""
        a0 = self._audits[0]
        a1 = self._audits[1]
        a2 = self._audits[2]
        h0 = a0.horizon_s(self._age)
        h2 = a2.horizon_s(self._age)
        if eta_s <= h0:
            return a0.var
        if eta_s >= h2:
            # beyond the longest audit: grow with the horizon, at most AUDIT_STRETCH x
            f = eta_s / h2
            return a2.var * (f if f < AUDIT_STRETCH else AUDIT_STRETCH)
        # the horizons are a factor 2 apart: interpolate on log2(eta / h0)
        pos = math.log(eta_s / h0) / math.log(h2 / h0) * 2.0
        if pos <= 1.0:
            return a0.var + pos * (a1.var - a0.var)
        return a1.var + (pos - 1.0) * (a2.var - a1.var)

    def _var_level(self):
        """Variance of the fitted level at the latest reading, deg C^2."""
        t = self._t
        x = -self._x   # d level / d k
        v = self._v
        return (self._var_my + t * t * self._p_ss + x * x * self._p_kk + v * v * self._p_gg
                + 2.0 * (t * x * self._p_sk + t * v * self._p_sg + x * v * self._p_kg))

    # ----------------------------------------------------------------- answer
    def predict(self, target_c, approach=0):
        """Compute the time until ``target_c`` (deg C); return the status code.

        ``approach``: how the product reaches its target, when it knows: -1
        cools to it (a drink to a drinkable temperature), +1 heats to it (a
        kettle, a bath), 0 either way (the default: the direction of travel
        decides). With -1 or +1 a liquid moving the other way is never
        ``ARRIVED`` and gets no time (a probe warming up after the pour crosses
        a drinking target on its way up): ``SETTLING``.

        Fills ``status``, ``eta_s``, ``eta_low_s``, ``eta_high_s`` (seconds
        after the latest reading; ``None`` without an estimate; ``eta_high_s``
        may be ``inf``), ``rate_per_s`` (1/s), ``equilibrium_c`` (deg C, ``None``
        when the fit does not level off), ``ambient_est_c`` (the reference in
        use, deg C, ``None`` when unknown), ``gain_k_per_s`` (K/s at full duty),
        ``temp_est_c`` (the fitted temperature now, deg C) and ``eta_rel_sd``
        (sd of log eta). Never raises.
        """
        try:
            self._predict(target_c, approach)
        except (ValueError, OverflowError, ZeroDivisionError, TypeError):
            self._clear_answer(st.SETTLING)
        if self.guard.consecutive_rejections >= self.fault_after:
            self._clear_answer(st.SENSOR_FAULT)
        elif self._disturbed:
            if self.status == st.TRACKING or self.status == st.ARRIVED:
                self._disturbed = False  # answering again after the change
            elif self.status == st.SETTLING or self.status == st.GATHERING:
                self.status = st.DISTURBED
        return self.status

    def _predict(self, target_c, approach):
        if self._fit_readings < 3 or not self._ok or not _number(target_c, -1e4, 1e4):
            self._clear_answer(st.GATHERING)
            if self.readings and not self._fresh:
                self.temp_est_c = self._y_prev
            return
        self._clear_answer(st.SETTLING)
        target_c = float(target_c)
        level = self._level()
        slope = self._slope(level)
        k = self._k
        self.temp_est_c = level
        self.rate_per_s = k
        self.gain_k_per_s = self._g
        if k > 0.0:
            e = level + slope / k
            if _finite(e):  # (a vanishing k levels off nowhere in range)
                self.equilibrium_c = e
        if self._ambient_fixed is not None or self._measured:
            self.ambient_est_c = self._r_prev
        elif self.equilibrium_c is not None:
            # unknown ambient: where the liquid would level off without heat input
            r = self.equilibrium_c - self._g * self._u_prev / k
            if _finite(r):
                self.ambient_est_c = r
        # slope uncertainty at the level: d slope / d(s, k, g) = (1, -(G - G0), u - u0)
        gk = -(level - self._r_prev - self._g0)
        gg = self._u_prev - self._u0
        var_slope = (self._p_ss + gk * gk * self._p_kk + gg * gg * self._p_gg
                     + 2.0 * (gk * self._p_sk + gg * self._p_sg + gk * gg * self._p_kg))
        noise = math.sqrt(self._noise2)
        # direction of travel: the slope when it stands out of its noise, else the block means
        if slope * slope > 4.0 * var_slope:
            d = 1 if slope > 0.0 else -1
        else:
            d = self._dir
        gap = target_c - level
        # arrived: the block means have travelled past the target (their
        # extreme holds until the fit restarts on a real turn) and the latest
        # reading is not more than min(0.3 C, 3 noise sd) short of it
        m = self._dir
        if approach != 0 and approach != -1 and approach != 1:
            approach = 0  # (a bad value: as if not given, never an exception)
        if approach != 0 and ((m if m != 0 else d) != approach or d == -approach):
            return  # moving away from how this product reaches its target
        if m != 0 and self._age >= ARRIVE_MIN_S and ((self._ext - target_c) * m >= 0.0
                                                     or gap * m <= 0.0):
            tol = 3.0 * noise
            if tol > ARRIVE_TOL_C:
                tol = ARRIVE_TOL_C
            if (self._y_prev - target_c) * m >= -tol:
                if (self._ext - target_c) * m < 0.0:
                    self._ext = target_c  # the level crossed first: hold it there
                self._arrive()
                return
        if gap * d <= 0.0:
            gap = target_c - self._y_prev  # the level crossed, the readings not yet
        if d == 0 or slope * d <= 0.0 or gap * d <= 0.0:
            return  # not moving, or turning: no honest time
        eta = time_to_target_from_slope_s(gap, slope, k)
        eta_shape = self._profile_law_s(gap, level, slope)
        if eta is None and eta_shape is None:
            # beyond the equilibrium: say so only when even a slow bend reaches it
            k_lo = k - 2.0 * math.sqrt(self._p_kk)
            if k_lo * gap / slope >= 1.0:
                self.status = st.OUT_OF_REACH
            return
        rel2 = 0.0
        if eta is not None:
            # delta method on eta(D, slope, k): D = target - level
            q = k * gap / slope
            if q > -1e-4 and q < 1e-4:
                de_dk = gap * gap / (slope * slope) * (0.5 + q / 1.5)
            else:
                de_dk = (math.log(1.0 - q) + q / (1.0 - q)) / (k * k)
            de_ds = -gap / (slope * slope * (1.0 - q))
            de_dl = -1.0 / (slope * (1.0 - q))      # d eta / d level
            # level and slope are both linear in (my, s, k, g)
            t = self._t
            xk = -self._x
            v = self._v
            a_s = de_dl * t + de_ds
            a_k = de_dl * xk + de_ds * gk + de_dk
            a_g = de_dl * v + de_ds * gg
            var_eta = (de_dl * de_dl * self._var_my + a_s * a_s * self._p_ss
                       + a_k * a_k * self._p_kk + a_g * a_g * self._p_gg
                       + 2.0 * (a_s * a_k * self._p_sk + a_s * a_g * self._p_sg
                                + a_k * a_g * self._p_kg))
            if not var_eta > 0.0:
                var_eta = 0.0
            rel2 = var_eta / (eta * eta) if eta > 0.0 else 0.0
        if eta_shape is not None:
            # the profile's law gives the shape, scaled by the fitted slope now
            # (the parameters' relative spread carried over)
            eta = eta_shape
        self.eta_s = eta
        rel = math.sqrt(rel2 + self._audit_var(eta))
        zr = self._z * rel
        spread = math.exp(zr) if zr < 50.0 else _INF
        self.eta_low_s = eta / spread
        self.eta_high_s = eta * spread
        if self._profile_on:
            # and the profile's: quantiles of ln(actual / predicted) measured on
            # held-out uses of this vessel (split-conformal, see host_sim.calibrate);
            # the union, since the table was measured on the estimator without it
            lo, hi = self._profile.interval_log_bounds(eta)
            z = self._z / PROFILE_Z80
            low = eta * math.exp(z * lo)
            high = eta * math.exp(z * hi) if z * hi < 50.0 else _INF
            if low < self.eta_low_s:
                self.eta_low_s = low
            if high > self.eta_high_s:
                self.eta_high_s = high
            own = (hi - lo) / (2.0 * PROFILE_Z80)
            if own < rel:
                rel = own  # the sd that decides TRACKING: the profile's when tighter
        self.eta_rel_sd = rel
        if self._age >= self.settle_s and rel <= self.max_relative_sd:
            self.status = st.TRACKING

    def _forecast_s(self, moved_c, level_c, slope_c_per_s, rate_per_s):
        """Seconds the answer's law takes to move ``moved_c`` from ``level_c`` (audits)."""
        t = self._profile_law_s(moved_c, level_c, slope_c_per_s)
        if t is not None:
            return t
        return time_to_target_from_slope_s(moved_c, slope_c_per_s, rate_per_s)

    def _profile_law_s(self, gap_c, level_c, slope_c_per_s):
        """Seconds to move ``gap_c`` under the profile's power law, or None.

        ``dT/dt = -a |T - E|^n sign(T - E)`` with the profile's ``n`` and ``E``
        (the ambient in use, or the hint, plus its offset) and ``a`` set so that
        the law's slope at ``level_c`` is the fitted one: the profile gives the
        shape, the data the scale. Passive liquids only (no heater); None without
        a profile, when the liquid moves away from E, or when the target is not
        between the level and E.
        """
        if not self._profile_on or self.heater:
            return None
        prof = self._profile
        if self._ambient_fixed is not None or self._measured:
            e = self._r_prev + prof.eq_offset_c
        else:
            e = self._prior_r + prof.eq_offset_c
        d0 = level_c - e
        d1 = d0 + gap_c
        if d0 == 0.0 or slope_c_per_s * d0 >= 0.0 or d1 * d0 <= 0.0:
            return None
        # the profile's own closed form, rescaled: time goes as 1 / a, and
        # the fitted local rate -slope / d0 stands for the profile's rate_at(d0)
        t = prof.time_to_target_s(level_c, level_c + gap_c, e)
        if t is None:
            return None
        try:
            return t * prof.rate_at(d0) * d0 / -slope_c_per_s
        except (ValueError, OverflowError, ZeroDivisionError):
            return None

    def _arrive(self):
        self.status = st.ARRIVED
        self.eta_s = 0.0
        self.eta_low_s = 0.0
        self.eta_high_s = 0.0

    # ------------------------------------------------------------ save/restore
    def _settings_byte(self):
        return ((1 if self.heater else 0) | (2 if self._ambient_fixed is not None else 0)
                | (8 if self.detector is not None else 0)
                | (16 if self._profile is not None else 0)
                | (self.guard.settings_key() << 5))

    def save(self):
        """The whole state as a blob of ``tinytherm.blob.BLOB_SIZE`` (480) bytes.

        Returns the estimator's own ``bytearray``, rewritten by the next
        ``save()``: write it to RTC memory or flash, or copy it with
        ``bytes(...)``. Every value is stored exactly (float64); the guard's
        per-reason counts and ``rejected`` count since the last restore.
        """
        g = self.guard
        buf = self._blob_buf
        flags = ((1 if self._fresh else 0) | (2 if self._disturbed else 0)
                 | (4 if self._measured else 0))
        struct.pack_into(_INT_FMT, buf, bl.PAYLOAD_OFFSET, self.readings & 0xFFFFFFFF,
                         self.changes & 0xFFFF, self.turns & 0xFFFF, self._bn,
                         self._fit_readings if self._fit_readings < 255 else 255,
                         flags | ((self._dir + 1) << 4) | (64 if self._profile_on else 0),
                         self._audits[0].n | (self._audits[1].n << 4), self._audits[2].n,
                         self._noise_n)
        offset = bl.PAYLOAD_OFFSET + struct.calcsize(_INT_FMT)
        for name in _FLOATS:
            struct.pack_into("<d", buf, offset, getattr(self, name))
            offset += 8
        for a in self._audits:
            for name in _AUDIT_FLOATS:
                struct.pack_into("<d", buf, offset, getattr(a, name))
                offset += 8
        g.pack_into(buf, offset)
        offset += g.STATE_SIZE
        if self.detector is not None:
            self.detector.pack_into(buf, offset)
        return bl.seal(buf)

    def restore(self, blob):
        """Load a blob written by :meth:`save`; returns a ``tinytherm.blob`` code.

        ``blob.RESTORED`` (0) when the state is back and every value is within
        its valid range. Anything else leaves a fresh estimator, as after
        :meth:`reset`. Never raises. After a restore feed the next reading
        with :meth:`update` and the time slept.
        """
        try:
            code = bl.check(blob, self._settings_byte())
            if code == bl.RESTORED:
                code = self._unpack(blob)
        except Exception:  # noqa: BLE001 - a blob must never crash the device
            code = bl.BLOB_VALUES
        if code != bl.RESTORED:
            self.reset()
        return code

    def _unpack(self, blob):
        g = self.guard
        (readings, changes, turns, bn, fit_readings, flags, n01, n2,
         noise_n) = struct.unpack_from(_INT_FMT, blob, bl.PAYLOAD_OFFSET)
        offset = bl.PAYLOAD_OFFSET + struct.calcsize(_INT_FMT)
        direction = ((flags >> 4) & 3) - 1
        profile_on = bool(flags & 64)
        if flags & 128 or (profile_on and self._profile is None):
            return bl.BLOB_VALUES
        flags &= 15
        n0 = n01 & 15
        n1 = n01 >> 4
        if not (bn <= MAX_BLOCK_READINGS and -1 <= direction <= 1 and n0 <= AUDIT_MEMORY
                and n1 <= AUDIT_MEMORY and n2 <= AUDIT_MEMORY and noise_n <= 100
                and fit_readings <= readings):
            return bl.BLOB_VALUES
        # every float must be finite and of a plausible size before any is used
        big = 1e12
        for i in range(len(_FLOATS) + 3 * len(_AUDIT_FLOATS)):
            if not _number(struct.unpack_from("<d", blob, offset + 8 * i)[0], -big, big):
                return bl.BLOB_VALUES
        self.reset()
        for name in _FLOATS:
            setattr(self, name, struct.unpack_from("<d", blob, offset)[0])
            offset += 8
        for a in self._audits:
            for name in _AUDIT_FLOATS:
                setattr(a, name, struct.unpack_from("<d", blob, offset)[0])
                offset += 8
            if not (a.var >= 0.0 and a.age <= self._age):
                return bl.BLOB_VALUES
        # the guard and the detector check their own bytes
        if not g.unpack_from(blob, offset):
            return bl.BLOB_VALUES
        offset += g.STATE_SIZE
        d = self.detector
        if d is not None and not d.unpack_from(blob, offset):
            return bl.BLOB_VALUES
        lo = self.min_temp_c
        hi = self.max_temp_c
        if not (self._w >= 0.0 and self._w2 >= 0.0 and self._nb >= 0.0
                and self._ctt >= 0.0 and self._cxx >= 0.0 and self._cuu >= 0.0
                and self._cyy >= 0.0 and self._age >= 0.0 and 0.0 <= self._b_dur <= self._age
                and 0.0 <= self._u0 <= 1.0 and 0.0 <= self._u_prev <= 1.0
                and self._noise2 > 0.0
                and self._s2_fit > 0.0 and lo <= self._y_prev <= hi):
            return bl.BLOB_VALUES
        self.readings = readings
        self.changes = changes
        self.turns = turns
        self._bn = bn
        self._dir = direction
        self._audits[0].n = n0
        self._audits[1].n = n1
        self._audits[2].n = n2
        self._fit_readings = fit_readings
        self._noise_n = noise_n
        self._profile_on = profile_on
        self._fresh = bool(flags & 1)
        self._disturbed = bool(flags & 2)
        self._measured = bool(flags & 4)
        self._solve()
        if self._nb >= 1.5 and not self._ok:
            return bl.BLOB_VALUES
        return bl.RESTORED

    def __repr__(self):
        return "ThermalEstimator(readings=%d, status=%s, k=%s, equilibrium_c=%s, eta_s=%s)" % (
            self.readings, st.status_name(self.status), self.rate_per_s, self.equilibrium_c,
            self.eta_s)
