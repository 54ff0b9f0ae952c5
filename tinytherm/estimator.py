"""Online fit of the lumped thermal model and the time-to-target answer.

Model (see :mod:`tinytherm.model`)::

    dT/dt = -k (T - R) + g u

How the fit works (the reasons and the measurements are in DEVELOPERS.md):

1. *Integral form.* Integrating the model from any earlier moment gives an
   equation that is linear in the parameters and needs no derivative::

       y(t) = c + k X(t) + k R t + g U(t)

   with ``X = -integral(y dt)`` (or ``integral((R - y) dt)`` when the ambient
   is known or measured; the ``k R t`` term then drops out) and
   ``U = integral(u dt)``. The integrals are taken by the trapezoid rule (exact
   for irregular steps up to the curvature between two readings); ``c`` is an
   unknown level. The reading's noise enters once, as in a batch output-error
   fit, which keeps the estimate close to the Cramer-Rao bound.
2. *Exponentially weighted regression in centred form.* Weighted means and
   co-moments are updated with West's incremental (Welford-style) formulas,
   which keep float32 accurate. The regressors are stored *relative to their
   own weighted means*, so the growing integrals never grow in storage.
3. *Forgetting in proportion to excitation.* A block of readings that sits at
   its recent mean (a long hold at equilibrium) neither adds weight nor
   forgets: no covariance windup, no drift at a standstill. Old data are
   forgotten with time constant ``memory_s`` while the liquid moves.
4. *Block means.* Readings are averaged over ``block_s`` before they enter the
   regression; the equation is linear, so it holds exactly for the means and
   most readings cost only a few float operations (heap use on MicroPython).
5. *Guarded input, change detection, saved state.* Every reading first passes
   a :class:`~tinytherm.guard.ReadingGuard` (rejected readings never touch the
   fit). At each block a :class:`~tinytherm.change.ChangeDetector` watches the
   block's residual against the fit made before it; on an alarm (top-up, lid
   off, ...) the fit keeps only a fraction of its information, re-levels to
   the new readings and reports ``DISTURBED`` until it has re-converged.
   :meth:`ThermalEstimator.save` / :meth:`ThermalEstimator.restore` keep the
   state in a 128-byte blob across deep sleep (see :mod:`tinytherm.blob`).
6. *Answer on demand.* :meth:`ThermalEstimator.predict` solves the small
   ridge-regularised system (the ambient prior enters as one pseudo
   observation), and propagates the parameter uncertainty to the
   time-to-target by the delta method in log-time.

Fixed state, no per-update containers. Runs unchanged on CPython and MicroPython.
"""
import math
import struct

from tinytherm import blob as bl
from tinytherm import status as st
from tinytherm.change import ChangeDetector
from tinytherm.guard import GAP_RESTART, GAP_WIDEN, ReadingGuard

_INF = math.inf
TRUST_FLOOR_S = 30.0  # s: an ETA whose upper bound is at most this much later is trusted
MAX_BLOCK_READINGS = 255  # a block closes after this many readings (kept in one byte)
MAX_AUDIT_BLOCKS = 31  # longest forecast-audit horizon, in blocks (kept in 5 bits)
TURN_WINDOW_S = 300.0  # s: a reversal this early after a (re)start restarts the fit
RELEVEL_BLOCKS = 2  # blocks after a detected change that only re-level the fit
_DETECT_S2_CAP = 0.25 * 0.25  # deg C^2: per-reading residual variance the detector believes at most
MISMATCH_C = 0.02  # deg C: model-mismatch allowance of a block residual (change detector)


def normal_quantile(p):
    """Standard normal quantile ``z`` with ``P(Z <= z) = p``, for 0 < p < 1.

    Rational approximation of Abramowitz & Stegun, Handbook of Mathematical
    Functions, formula 26.2.23 (absolute error < 4.5e-4). Raises ValueError
    outside (0, 1).
    """
    if not 0.0 < p < 1.0:
        raise ValueError("p must be in (0, 1)")
    q = p if p < 0.5 else 1.0 - p
    t = math.sqrt(-2.0 * math.log(q))
    z = t - (2.515517 + 0.802853 * t + 0.010328 * t * t) / (
        1.0 + 1.432788 * t + 0.189269 * t * t + 0.001308 * t * t * t)
    return -z if p < 0.5 else z


def _exp_neg(x):
    """``exp(-x)`` for x >= 0, 0.0 where it underflows (MicroPython raises ValueError)."""
    try:
        return math.exp(-x)
    except (ValueError, OverflowError):
        return 0.0


def _finite(x):
    return x == x and x != _INF and x != -_INF


def _clamp_int(x, lo, hi):
    """``round(x)`` clamped to [lo, hi] (for fixed-point fields of the saved blob)."""
    if not x == x:
        return lo
    if x <= lo:
        return lo
    if x >= hi:
        return hi
    return int(x + 0.5) if x >= 0.0 else -int(0.5 - x)


# Saved blob: fixed part (counts, flags, fixed-point decision state), then the
# value fields in promotion order (see ThermalEstimator._layout).
_FIXED_FMT = "<IBBBHHHHHHf"
# then one byte: blocks to the next forecast audit (5 bits), direction of
# travel + 1 (2 bits), direction seen (1 bit)
_EXTRA_FMT = "<B"
_FIXED_SIZE = struct.calcsize(_FIXED_FMT) + struct.calcsize(_EXTRA_FMT)
# Promotion order (measured with restore -> update -> save on every reading):
# block_t first (it decides where blocks end: float32 there changes the block
# partition and shifts the answer by ~0.5 %), the time carried over a rejected
# reading, then the integrals and levels, the weights and co-moments; w_sq
# (interval width only) matters least.
_PROMOTE = ("_block_t", "pending", "_xr", "_tr", "_sum_x", "_sum_t", "_cxt", "_y_prev", "_my",
            "_sum_y", "_w", "_cxx", "_cxy", "_ctt", "_cty", "_cyy", "_w_blocks", "_r_prev",
            "_u_prev", "_ur", "_sum_u", "_cxu", "_cuu", "_cuy", "_ctu", "_w_sq",
            "_audit_var", "_recent_residual", "_r_mean", "_fit_age_s", "_turn_ext",
            "_audit_level", "_audit_pred")
# int16 fields: the early-turn window's age always (kept in 1/16 s steps),
# the pending forecast check when float32 does not fit
_ALWAYS_SHORT = ("_fit_age_s",)
_SHORT = ("_fit_age_s", "_audit_level", "_audit_pred")


def _short_scale(name):
    """Units per int16 step of a _SHORT field: 1/16 s (exact: see _close_block), 1/1024 C."""
    if name == "_fit_age_s":
        return 16.0
    return 1024.0
_NO_HEATER_ONLY = ("_fit_age_s", "_turn_ext")  # the early-turn restart is off with a heater
# Left out, last first, when the payload is full (heater with an estimated
# ambient): rebuilt or restarted on restore, see _unpack.
_DROPPABLE = ("_audit_pred", "_audit_level", "_w_sq", "_recent_residual", "_audit_var")
_CENTRED_ONLY = ("_tr", "_sum_t", "_cxt", "_ctt", "_cty", "_ctu")
_HEATER_ONLY = ("_u_prev", "_ur", "_sum_u", "_cxu", "_cuu", "_cuy", "_ctu")


def _values_size(names, short):
    """Bytes the value fields take at the least: float32 each, int16 for those in ``short``."""
    size = 0
    for name in names:
        size += 2 if name in short else 4
    return size


def _min_size(fmt):
    """Bytes of a layout's values with every double counted as float32."""
    return struct.calcsize(fmt.replace("d", "f"))


def _unpack_value(kind, name, blob, offset):
    """One saved value of struct kind "d", "f" or "h" (see _short_scale); (value, next offset)."""
    if kind == "d":
        return struct.unpack_from("<d", blob, offset)[0], offset + 8
    if kind == "f":
        return struct.unpack_from("<f", blob, offset)[0], offset + 4
    return struct.unpack_from("<h", blob, offset)[0] / _short_scale(name), offset + 2


class ThermalEstimator:
    """Feed readings in, ask how long until a target temperature.

    Arguments (all optional):

    - ``ambient_c``: known, constant ambient in deg C. ``None`` means the
      ambient is either passed with each reading (``update(..., ambient_c=)``)
      or, when never passed, estimated from the readings.
    - ``ambient_prior_c``, ``ambient_prior_sd_c``: prior for an estimated
      ambient, deg C (centre and standard deviation).
    - ``heater``: ``True`` when a heater duty is passed with each reading and
      its gain (K/s at full duty) must be fitted.
    - ``memory_s``: forgetting time constant of the fit, seconds. Shorter
      tracks a changing world faster; longer averages more noise away.
    - ``block_s``: readings are averaged over blocks of this many seconds
      before entering the regression (0: every reading is its own block).
    - ``interval``: two-sided probability of the reported time interval.
    - ``settle_s``: seconds of data before an answer may be ``TRACKING``.
    - ``max_relative_sd``: an answer whose log-time standard deviation exceeds
      this stays ``SETTLING``.
    - ``rate_prior_per_s``: weak prior on ``k`` (1/s, also its prior standard
      deviation), felt only while the data hold little information.
    - ``excitation_c``: movement (deg C) of a block's mean reading away from
      the recent mean that counts as a fully informative block.
    - ``min_temp_c``, ``max_temp_c``: plausible range of readings, deg C;
      readings outside are rejected as ``OUT_OF_RANGE``.
    - ``quantum_c``: sensor resolution, deg C (0.0625 for a 12-bit 1-Wire
      sensor); the floor of the spike gate's scale.
    - ``spike_window``: 3 or 5 readings for the spike gate, 0 to switch it off.
    - ``max_gap_s``: after a longer time without an accepted reading the fit
      forgets in proportion to the gap (its uncertainty widens).
    - ``restart_gap_s``: after a longer one the fit starts afresh.
    - ``stuck_change_c``: a sensor repeating one exact value while the fit
      says the liquid should have moved this much (deg C, over at least
      ``stuck_min_s`` seconds) is rejected as ``STUCK``; ``None``: no test.
    - ``fault_after``: this many consecutive rejected readings turn the
      answer into ``SENSOR_FAULT`` (no estimate).
    - ``detect_changes``: watch for sudden changes (top-up, lid off) and
      re-adapt; ``keep_fraction``: share of the fit's information kept after a
      detected change.

    Raises ValueError for arguments out of range. See :mod:`tinytherm.guard`
    and :mod:`tinytherm.change` for what is rejected and detected.
    """

    def __init__(self, ambient_c=None, ambient_prior_c=21.0, ambient_prior_sd_c=8.0,
                 heater=False, memory_s=600.0, block_s=20.0, interval=0.8, settle_s=60.0,
                 max_relative_sd=0.25, rate_prior_per_s=1.0 / 1800.0, excitation_c=0.5,
                 min_temp_c=-55.0, max_temp_c=150.0, quantum_c=0.0625, spike_window=3,
                 max_gap_s=120.0, restart_gap_s=3600.0, stuck_change_c=1.0, stuck_min_s=30.0,
                 fault_after=5, detect_changes=True, keep_fraction=0.1, audit_s=60.0,
                 turn_c=1.0):
        if ambient_c is not None and not _finite(ambient_c):
            raise ValueError("ambient_c must be a finite temperature or None")
        if not _finite(ambient_prior_c):
            raise ValueError("ambient_prior_c must be finite")
        if not ambient_prior_sd_c > 0.0:
            raise ValueError("ambient_prior_sd_c must be > 0")
        if not memory_s > 0.0:
            raise ValueError("memory_s must be > 0 seconds")
        if not block_s >= 0.0:
            raise ValueError("block_s must be >= 0 seconds (0: every reading is a block)")
        if not 0.0 < interval < 1.0:
            raise ValueError("interval must be a probability in (0, 1)")
        if not settle_s >= 0.0:
            raise ValueError("settle_s must be >= 0 seconds")
        if not max_relative_sd > 0.0:
            raise ValueError("max_relative_sd must be > 0")
        if not rate_prior_per_s > 0.0:
            raise ValueError("rate_prior_per_s must be > 0 (1/s)")
        if not excitation_c > 0.0:
            raise ValueError("excitation_c must be > 0 deg C")
        if not turn_c > 0.0:
            raise ValueError("turn_c must be > 0 deg C")
        if not audit_s > 0.0:
            raise ValueError("audit_s must be > 0 seconds")
        if not min_temp_c < max_temp_c:
            raise ValueError("min_temp_c must be below max_temp_c")
        if type(fault_after) is not int or not 1 <= fault_after <= 31:
            raise ValueError("fault_after must be an int in 1..31 (readings)")
        if not 0.0 < keep_fraction < 1.0:
            raise ValueError("keep_fraction must be in (0, 1)")
        # ValueError with its own message for bad guard settings
        self.guard = ReadingGuard(min_c=min_temp_c, max_c=max_temp_c, quantum_c=quantum_c,
                                  spike_window=spike_window, max_gap_s=max_gap_s,
                                  restart_gap_s=restart_gap_s, stuck_change_c=stuck_change_c,
                                  stuck_min_s=stuck_min_s)
        self.detector = ChangeDetector(jump_z=12.0) if detect_changes else None
        self.fault_after = fault_after
        self.keep_fraction = float(keep_fraction)
        # per-reading noise variance floor for the change detector: at least
        # the quantisation noise q^2 / 12 (uniform rounding error), deg C^2
        self._s2_floor = max(1e-4, self.guard.quantum_c * self.guard.quantum_c / 12.0)
        self._mismatch_c2 = MISMATCH_C * MISMATCH_C
        self._ambient_fixed = ambient_c
        self._prior_r = float(ambient_prior_c)
        self._prior_r_var = float(ambient_prior_sd_c) ** 2
        self.heater = bool(heater)
        self.memory_s = float(memory_s)
        self._inv_mem = 1.0 / self.memory_s
        self.block_s = float(block_s)
        self._block_close_s = self.block_s * (1.0 - 1e-6)
        self.interval = float(interval)
        self._z = normal_quantile(0.5 + 0.5 * self.interval)
        self.settle_s = float(settle_s)
        self.max_relative_sd = float(max_relative_sd)
        self._k0 = float(rate_prior_per_s)
        self._inv_exc2 = 1.0 / (float(excitation_c) ** 2)
        self.min_temp_c = float(min_temp_c)
        self.max_temp_c = float(max_temp_c)
        # blob layouts without / with a measured ambient, made while the heap
        # is fresh (a small fragmented heap may lack room for them later)
        self._layouts = [None, None]
        self._layout(False)
        self._layout(True)
        self._blob_buf = None          # save() writes into this one buffer
        # fixed-point scales of the saved decision state: each value only
        # matters up to its threshold, so it is clamped there and stored in
        # 16 bits over that range (see save)
        self._age_scale = 65535.0 / self.settle_s if self.settle_s > 0.0 else 1.0
        # the stuck run in 1/64 s up to ~1024 s (its rate is run_expected / run_s)
        self._run_scale = 64.0
        stuck_c = self.guard.stuck_change_c if self.guard.stuck_change_c is not None else 1.0
        self._run_c_scale = 65535.0 / (2.0 * stuck_c)
        self.audit_s = float(audit_s)
        self.turn_c = float(turn_c)
        # a hair above turn_c: quantised readings often differ by exactly
        # turn_c, and must decide the same way after a float32 wake
        self._turn_cut_c = self.turn_c * (1.0 + 1e-6)
        self._audit_floor_c = 0.1  # deg C: changes below this are noise
        self.reset()

    def reset(self):
        """Forget all readings, the guard's window and counts; settings are kept."""
        self.readings = 0
        self.rejected = 0
        self.last_verdict = st.ACCEPTED
        self.guard.reset()
        self.changes = 0          # sudden changes detected since the reset
        self._reset_turns()       # reversals of the direction of travel
        self._restart_fit()

    def _reset_turns(self):
        self.turns = 0
        self._turn_dir = 0
        self._turn_ext = 0.0
        self._turn_seen = False

    def _restart_fit(self):
        """Start the fit afresh (after a reset or a very long gap); counts are kept."""
        self._fresh = True        # the next accepted reading starts the fit
        self._disturbed = False
        self._have_residual = False  # the change detector's previous block residual
        self._last_residual = 0.0
        self._recent_residual = 0.0
        self._relevel_blocks = 0     # blocks still to re-level after a change
        if self.detector is not None:
            self.detector.reset()
        self._age_s = 0.0
        self._fit_age_s = 0.0  # seconds of blocks since the fit started (to TURN_WINDOW_S)
        self._dt_cached = -1.0
        self._half_dt = 0.0
        self._lam_bt = -1.0  # block length of the cached forgetting factor, s
        self._lam = 1.0
        self._lam_sq = 1.0
        self._ambient_dt = 0.0  # known ambient times the cached dt, deg C s
        self._y_prev = 0.0
        self._r_prev = 0.0
        self._r_mean = 0.0  # smoothed measured ambient: what the future will see
        self._u_prev = 0.0
        self._ambient_measured = False
        # Regressors, each relative to its weighted mean: X (temperature
        # integral, deg C s), t (time, s; at the start of the current block),
        # U (duty integral, s).
        self._xr = 0.0
        self._tr = 0.0
        self._ur = 0.0
        # Sums over the current block (_sum_t: of the elapsed block times).
        self._block_n = 0
        self._block_t = 0.0
        self._sum_y = 0.0
        self._sum_x = 0.0
        self._sum_t = 0.0
        self._sum_u = 0.0
        # Weighted regression: weights, mean reading, centred co-moments.
        self._w = 0.0
        self._w_blocks = 0.0
        self._w_sq = 0.0
        self._my = 0.0
        self._cxx = 0.0
        self._cxt = 0.0
        self._cxu = 0.0
        self._ctt = 0.0
        self._ctu = 0.0
        self._cuu = 0.0
        self._cxy = 0.0
        self._cty = 0.0
        self._cuy = 0.0
        self._cyy = 0.0
        # forecast self-check (see _audit)
        self._audit_due = 1  # blocks until the next check (see _audit)
        self._audit_pending = False
        self._audit_level = 0.0
        self._audit_pred = 0.0
        self._audit_var = 0.04  # prior: 20 % relative error until checked
        self._s2 = 1e-4
        # solver outputs (scratch, so the answer path stores no containers)
        self._k = 0.0
        self._kr = 0.0
        self._g = 0.0
        self._i11 = 0.0
        self._i12 = 0.0
        self._i13 = 0.0
        self._i22 = 0.0
        self._i23 = 0.0
        self._i33 = 0.0
        self._clear_answer(st.GATHERING)

    def _clear_answer(self, code):
        self.status = code
        self.eta_s = None
        self.eta_low_s = None
        self.eta_high_s = None
        self.rate_per_s = None
        self.equilibrium_c = None
        self.ambient_est_c = None
        self.gain_k_per_s = 0.0
        self.temp_est_c = None
        self.eta_rel_sd = None

    # ------------------------------------------------------------------ update
    def update_ticks(self, temp_c, ticks_ms, ambient_c=None, duty=0.0):
        """Add a reading stamped with MicroPython-style millisecond ticks.

        ``ticks_ms`` is an int from a counter that wraps at 2**30 (as
        ``time.ticks_ms()``); the difference to the previous call is taken
        wrap-safe. Returns the reading's verdict code (see :meth:`update`).
        After :meth:`restore` the tick reference is unknown (tick counters
        restart at boot): the first call only sets it and returns
        ``BAD_INPUT``; prefer :meth:`update` with the slept time there.
        Rejections decided before the spike gate allocate nothing.
        """
        inputs_ok = self._inputs_ok(ambient_c, duty)
        verdict = self.guard.check_ticks(temp_c, ticks_ms, self._expected_rate(temp_c, duty),
                                         inputs_ok)
        if verdict:
            self.rejected += 1
            self.last_verdict = verdict
            return verdict
        return self._accept(temp_c, ambient_c, duty)

    def update(self, temp_c, dt_s, ambient_c=None, duty=0.0):
        """Add one reading; return its verdict (``status.ACCEPTED`` == 0 if used).

        ``temp_c``: the liquid reading, deg C. ``dt_s``: seconds since the
        previous call (ignored on the first reading). ``ambient_c``: a
        measured ambient for this reading, deg C, or ``None``. ``duty``: heater
        duty in [0, 1] applied since the previous reading. Never raises for a
        bad reading: it is rejected with a verdict code from
        :mod:`tinytherm.status`, counted (``rejected``, and per reason in
        ``guard.count(verdict)``), and leaves the fit untouched; the time it
        spanned still counts for the next accepted reading.
        """
        inputs_ok = self._inputs_ok(ambient_c, duty)
        verdict = self.guard.check(temp_c, dt_s, self._expected_rate(temp_c, duty), inputs_ok)
        if verdict:
            self.rejected += 1
            self.last_verdict = verdict
            return verdict
        return self._accept(temp_c, ambient_c, duty)

    def _inputs_ok(self, ambient_c, duty):
        """Duty in [0, 1] and ambient None or a plausible temperature; comparisons only."""
        t = type(duty)
        if not (t is float or t is int) or not 0.0 <= duty <= 1.0:
            return False
        if ambient_c is None:
            return True
        t = type(ambient_c)
        return (t is float or t is int) and self.min_temp_c <= ambient_c <= self.max_temp_c

    def _expected_rate(self, temp_c, duty):
        """Model dT/dt (deg C/s) at ``temp_c``, only when the reading repeats exactly.

        Feeds the guard's stuck test; 0.0 when the value changed or there is
        no fit yet, so a changing reading costs nothing here.
        """
        if self._fresh or temp_c != self._y_prev or self._w_blocks < 3.0:
            return 0.0
        if not self._solve(1e-4 / (self._k0 * self._k0), 0.0, 0.0, 1e-4):
            return 0.0
        k = self._k
        if not k > 0.0:
            return 0.0
        if self._ambient_measured or self._ambient_fixed is not None:
            r = self._r_prev
        else:
            r = self._kr / k
        return k * (r - temp_c) + self._g * duty

    def _accept(self, temp_c, ambient_c, duty):
        self.last_verdict = st.ACCEPTED
        if self._fresh:
            self._start(temp_c, ambient_c, duty)
            return st.ACCEPTED
        gap = self.guard.gap
        if gap == GAP_RESTART:
            self._restart_fit()
            self._start(temp_c, ambient_c, duty)
            return st.ACCEPTED
        if gap == GAP_WIDEN:
            # forget in proportion to the time without readings: the world may
            # have moved on; lam = exp(-gap / memory)
            try:
                lam = math.exp(-self.guard.elapsed_s * self._inv_mem)
            except (ValueError, OverflowError):
                lam = 0.0
            self._scale_information(lam)
        self._step(temp_c, self.guard.elapsed_s, ambient_c, duty)
        return st.ACCEPTED

    def _start(self, temp_c, ambient_c, duty):
        """First reading of a (re)started fit (the state was zeroed by _restart_fit)."""
        self.readings += 1
        self._fresh = False
        self._y_prev = temp_c
        self._u_prev = duty
        if ambient_c is not None:
            self._ambient_measured = True
            self._r_prev = ambient_c
        elif self._ambient_fixed is not None:
            self._r_prev = self._ambient_fixed
        self._r_mean = self._r_prev

    def _step(self, temp_c, dt_s, ambient_c, duty):
        """One accepted reading after the first: advance integrals, add to block."""
        self.readings += 1
        if dt_s != self._dt_cached:
            self._dt_cached = dt_s
            self._half_dt = 0.5 * dt_s
            if self._ambient_fixed is not None:
                self._ambient_dt = self._ambient_fixed * dt_s
        yp = self._y_prev
        self._y_prev = temp_c
        # trapezoid: X += (R - (y_n + y_(n-1)) / 2) dt, R = 0 when estimated
        if self._ambient_measured:
            rn = self._r_prev if ambient_c is None else ambient_c
            xr = self._xr + (rn + self._r_prev - temp_c - yp) * self._half_dt
            self._r_prev = rn
        elif self._ambient_fixed is not None:
            xr = self._xr + self._ambient_dt - (temp_c + yp) * self._half_dt
        else:
            xr = self._xr - (temp_c + yp) * self._half_dt
        self._xr = xr
        self._sum_x += xr
        self._sum_y += temp_c
        if self.heater:
            # duty is held over the interval: U += u dt exactly
            ur = self._ur + duty * dt_s
            self._ur = ur
            if duty != self._u_prev:
                # the forecast under check assumed the old duty: not a test
                # of the model any more
                self._audit_pending = False
            self._u_prev = duty
            self._sum_u += ur
        self._block_n += 1
        bt = self._block_t + dt_s
        self._block_t = bt
        if not (self._ambient_measured or self._ambient_fixed is not None):
            # the time regressor t = _tr + _block_t within a block: only the
            # elapsed times are summed, _tr moves once per block
            self._sum_t += bt
        # (a hair below block_s: a block of round steps, 5 x 2.0 s, closes the
        # same way whether its time was carried over a wake as float32 or not)
        if bt >= self._block_close_s or self._block_n >= MAX_BLOCK_READINGS:
            self._close_block(bt)

    def _close_block(self, bt):
        n = self._block_n
        inv_n = 1.0 / n
        # Deviations of the block means from the weighted means (regressors are
        # stored relative to their means, so their block mean is the deviation).
        dx = self._sum_x * inv_n
        y_mean = self._sum_y * inv_n
        dy = y_mean - self._my
        heater = self.heater
        centred_t = not (self._ambient_measured or self._ambient_fixed is not None)
        if centred_t:
            # block mean of t (relative to its weighted mean); then t at the
            # block's end, from where the next block's elapsed times count
            dt_ = self._tr + self._sum_t * inv_n
            self._tr += bt
        else:
            dt_ = 0.0
        du = self._sum_u * inv_n if heater else 0.0
        self._sum_x = 0.0
        self._sum_y = 0.0
        self._sum_t = 0.0
        self._sum_u = 0.0
        self._block_n = 0
        self._block_t = 0.0
        if self._ambient_measured:
            # a cycling fridge or a draughty room: predict with the ambient's
            # recent mean (time constant memory_s), not its latest swing
            f = bt * self._inv_mem
            self._r_mean += (self._r_prev - self._r_mean) * (f if f < 1.0 else 1.0)
        if self._age_s < self.settle_s:
            self._age_s += bt
        if self._fit_age_s < TURN_WINDOW_S:
            # whole 1/16 s steps: exact in float32 and in the saved int16
            self._fit_age_s += math.floor(bt * 16.0) * 0.0625
            if not heater and self._turned(y_mean):
                # The liquid reversed early on: the readings so far belong to
                # another process (a probe warming up after the pour); start
                # afresh. Later reversals (a top-up) are the change detector's.
                self.turns += 1
                self._restart_fit()
                return
        if self._relevel_blocks:
            # just after a change: the sensor is still catching up; move the
            # level onto these readings and keep them out of the fit
            self._relevel_blocks -= 1
            if self._solve(self._s2_floor / (self._k0 * self._k0), 0.0, 0.0, self._s2_floor):
                self._my += dy - (self._k * dx + self._kr * dt_ + self._g * du)
            return
        if self.detector is not None and self._w_blocks >= 2.5 \
                and self._watch(n, dx, dy, dt_, du):
            return  # the block that showed the change stays out of the fit
        # Weight q = rho * n with rho in [0, 1] the block's excitation: how far
        # its mean reading sits from the recent mean. West's weighted update:
        #   W <- lam W + q;  a = q / W;  m <- m + a (z - m)
        #   C <- lam C + q (1 - a) (z - m_old)(y - m_old)
        # with lam = exp(-rho * block_t / memory): no new information, no forgetting.
        w = self._w
        full = w < 3.0 * n
        if not full:
            rho = dy * dy * self._inv_exc2
            full = rho >= 1.0
        if full:
            # a fully informative block (the usual case while the liquid
            # moves): rho = 1, and regular sampling repeats the block length,
            # so the forgetting factor comes from a cache (no float on the heap)
            rho = 1.0
            q = n
            if bt == self._lam_bt:
                lam = self._lam
                lam2 = self._lam_sq
            else:
                lam = _exp_neg(bt * self._inv_mem)
                lam2 = lam * lam
                self._lam_bt = bt
                self._lam = lam
                self._lam_sq = lam2
        else:
            q = rho * n
            lam = _exp_neg(rho * bt * self._inv_mem)
            lam2 = lam * lam
        w = lam * w + q
        if not w > 0.0:
            return
        self._w = w
        self._w_blocks = lam * self._w_blocks + rho  # for the degrees of freedom
        # sum of squared per-reading weights: with forgetting the variance of
        # the estimate is about (W2 / W) s^2 times the inverse co-moment matrix
        self._w_sq = lam2 * self._w_sq + rho * q
        a = q / w
        self._my += a * dy
        # the regressors' means move by a * deviation: keep them relative
        self._xr -= a * dx
        b = q - q * a
        bdx = b * dx
        self._cxx = lam * self._cxx + bdx * dx
        self._cxy = lam * self._cxy + bdx * dy
        self._cyy = lam * self._cyy + b * dy * dy
        if centred_t:
            self._tr -= a * dt_
            bdt = b * dt_
            self._cxt = lam * self._cxt + bdx * dt_
            self._ctt = lam * self._ctt + bdt * dt_
            self._cty = lam * self._cty + bdt * dy
        if heater:
            self._ur -= a * du
            bdu = b * du
            self._cxu = lam * self._cxu + bdx * du
            self._cuu = lam * self._cuu + bdu * du
            self._cuy = lam * self._cuy + bdu * dy
            if centred_t:
                self._ctu = lam * self._ctu + bdt * du
        # forecast self-check, counted in whole blocks (an exact integer state)
        self._audit_due -= 1
        if self._audit_due <= 0:
            self._audit(y_mean, bt)

    def _turned(self, y_mean):
        """Track the direction of travel of block means; True at a reversal.

        A reversal is a retreat of more than ``turn_c`` from the extreme block
        mean reached in the direction of travel. Without a heater a first-order
        liquid never reverses, so whatever came before belongs to another
        process.
        """
        direction = self._turn_dir
        ext = self._turn_ext
        if direction == 0:
            if not self._turn_seen:
                self._turn_seen = True
                self._turn_ext = y_mean
            elif abs(y_mean - ext) > self._turn_cut_c:
                self._turn_dir = 1 if y_mean > ext else -1
                self._turn_ext = y_mean
            return False
        if (y_mean - ext) * direction > 0.0:
            self._turn_ext = y_mean
            return False
        if (ext - y_mean) * direction > self._turn_cut_c:
            self._turn_dir = -direction
            self._turn_ext = y_mean
            return True
        return False

    def _watch(self, n, dx, dy, dt_, du):
        """Feed the block's residual against the fit so far to the change detector.

        Residual of the block mean, ``r = dy - (k dx + kR dt + g du)`` (all as
        deviations from the weighted means), against its standard deviation
        ``sqrt(s2 / n)`` with ``s2`` the fit's per-reading residual variance.
        Returns True when a change was detected (and handled).
        """
        if not self._solve(self._s2_floor / (self._k0 * self._k0), 0.0, 0.0, self._s2_floor):
            return False
        k = self._k
        kr = self._kr
        g = self._g
        dof = self._w_blocks - 3.0
        if dof < 1.0:
            dof = 1.0
        s2 = (self._cyy - k * self._cxy - kr * self._cty - g * self._cuy) / dof
        if s2 < self._s2_floor:
            s2 = self._s2_floor
        elif s2 > _DETECT_S2_CAP:
            # a fit spoilt by an earlier, undetected change must not blind the
            # detector to the next one
            s2 = _DETECT_S2_CAP
        r = dy - (k * dx + kr * dt_ + g * du)
        # recent lack of fit (about three blocks): where the readings sit now
        # relative to a fit that averages over memory_s
        self._recent_residual += 0.3 * (r - self._recent_residual)
        prev = self._last_residual
        self._last_residual = r
        if not self._have_residual:
            self._have_residual = True
            return False
        # The detector sees the change of the residual from one block to the
        # next: a slowly growing bias (ambient drift, a liquid at rest between
        # two quantisation steps, a loss law that is not quite exponential)
        # cancels, a jump shows at once and a changed rate as a steady shift.
        # Its standard deviation: two blocks' noise s2 / n plus an allowance.
        if not self.detector.update(r - prev, math.sqrt(2.0 * s2 / n + self._mismatch_c2)):
            return False
        # A change: keep a fraction of the information (k, R, g stay as prior
        # knowledge), re-level the mean onto the next two blocks (so the old
        # data agree with the new level: a top-up shifts the level, not k),
        # and hold the answer at DISTURBED until it re-converges.
        self.changes += 1
        self._disturbed = True
        self._audit_pending = False  # the forecast under check did not know of it
        self._scale_information(self.keep_fraction)
        self._relevel_blocks = RELEVEL_BLOCKS
        self._age_s = 0.0
        self._have_residual = False
        return True

    def _scale_information(self, f):
        """Multiply the fit's information by ``f`` in [0, 1]; means and estimates stay."""
        self._w *= f
        self._w_blocks *= f
        self._w_sq *= f * f
        self._cxx *= f
        self._cxt *= f
        self._cxu *= f
        self._ctt *= f
        self._ctu *= f
        self._cuu *= f
        self._cxy *= f
        self._cty *= f
        self._cuy *= f
        self._cyy *= f

    # ----------------------------------------------------------------- answer
    def _solve(self, p_kk, p_tt, p_kt, p_gg, p_k0=None):
        """Solve the ridge-regularised normal equations for (k, kR, g).

        ``p_*`` are prior precisions added to the co-moment matrix (scaled by
        the residual variance). Unused parameters get an identity row. Sets
        ``_k, _kr, _g`` and the inverse matrix ``_i11 .. _i33``. Returns False
        when the system is singular.
        """
        centred_t = not (self._ambient_measured or self._ambient_fixed is not None)
        a11 = self._cxx + p_kk
        # only the k prior itself pulls towards k0 (the ambient pseudo
        # observation kR - R0 k = 0 has mean zero)
        b1 = self._cxy + (p_kk if p_k0 is None else p_k0) * self._k0
        if not (centred_t or self.heater):
            # one parameter (ambient known or measured, no heater): k alone;
            # the small systems are solved directly, which on MicroPython
            # saves the heap of the padded 3x3 (this runs at every block)
            if not a11 > 0.0:
                return False
            i11 = 1.0 / a11
            self._k = b1 * i11
            self._kr = 0.0
            self._g = 0.0
            self._i11 = i11
            self._i12 = 0.0
            self._i13 = 0.0
            self._i22 = 0.0
            self._i23 = 0.0
            self._i33 = 0.0
            return True
        if not (centred_t and self.heater):
            # two parameters: (k, kR) or (k, g)
            if centred_t:
                a12 = self._cxt + p_kt
                a22 = self._ctt + p_tt
                b2 = self._cty
            else:
                a12 = self._cxu
                a22 = self._cuu + p_gg
                b2 = self._cuy
            det = a11 * a22 - a12 * a12
            if not det > 0.0:
                return False
            inv = 1.0 / det
            i11 = a22 * inv
            i12 = -a12 * inv
            i22 = a11 * inv
            self._k = i11 * b1 + i12 * b2
            second = i12 * b1 + i22 * b2
            self._i11 = i11
            if centred_t:
                self._kr = second
                self._g = 0.0
                self._i12 = i12
                self._i22 = i22
                self._i13 = 0.0
                self._i33 = 0.0
            else:
                self._kr = 0.0
                self._g = second
                self._i13 = i12
                self._i33 = i22
                self._i12 = 0.0
                self._i22 = 0.0
            self._i23 = 0.0
            return True
        if centred_t:
            a12 = self._cxt + p_kt
            a22 = self._ctt + p_tt
            b2 = self._cty
        else:
            a12 = 0.0
            a22 = 1.0
            b2 = 0.0
        if self.heater:
            a13 = self._cxu
            a23 = self._ctu if centred_t else 0.0
            a33 = self._cuu + p_gg
            b3 = self._cuy
        else:
            a13 = 0.0
            a23 = 0.0
            a33 = 1.0
            b3 = 0.0
        # symmetric 3x3 inverse by cofactors
        c11 = a22 * a33 - a23 * a23
        c12 = a13 * a23 - a12 * a33
        c13 = a12 * a23 - a13 * a22
        det = a11 * c11 + a12 * c12 + a13 * c13
        if not det > 0.0:
            return False
        inv = 1.0 / det
        i11 = c11 * inv
        i12 = c12 * inv
        i13 = c13 * inv
        i22 = (a11 * a33 - a13 * a13) * inv
        i23 = (a12 * a13 - a11 * a23) * inv
        i33 = (a11 * a22 - a12 * a12) * inv
        self._k = i11 * b1 + i12 * b2 + i13 * b3
        self._kr = (i12 * b1 + i22 * b2 + i23 * b3) if centred_t else 0.0
        self._g = (i13 * b1 + i23 * b2 + i33 * b3) if self.heater else 0.0
        self._i11 = i11
        self._i12 = i12
        self._i13 = i13
        self._i22 = i22
        self._i23 = i23
        self._i33 = i33
        return True

    def _fit(self, centred_t, heater):
        """Solve for (k, kR, g) with the priors; sets ``_k, _kr, _g, _s2``.

        Priors enter as pseudo-observations, in units of the residual variance
        s2: k ~ N(k0, k0^2); g ~ N(0, (1 K/s)^2); and, for an estimated
        ambient, kR - R0 k ~ N(0, (k sd_R)^2). s2 and k are refined over
        three passes. Returns False when the system is singular.
        """
        n_par = 2.0 + (1.0 if centred_t else 0.0) + (1.0 if heater else 0.0)
        dof = self._w_blocks - n_par
        if dof < 1.0:
            dof = 1.0
        s2 = 1e-4  # deg C^2: a floor of about one hundredth of a degree
        k = self._k0
        sd_r = math.sqrt(self._prior_r_var)
        for _ in (0, 1, 2, 3):
            p_k0 = s2 / (self._k0 * self._k0)
            p_kk = p_k0
            p_gg = s2
            p_tt = 0.0
            p_kt = 0.0
            if centred_t:
                kk = k if k > 0.1 * self._k0 else 0.1 * self._k0
                p_r = s2 / (kk * kk * self._prior_r_var)
                if _ == 3:
                    # The free fit put the ambient where no room is (or made k
                    # negative): the curvature is not Newton's. Pin the ambient
                    # to the prior and fit k alone.
                    p_r *= 1e6
                r0 = self._prior_r
                p_kk += p_r * r0 * r0
                p_tt = p_r
                p_kt = -p_r * r0
            if _ == 3:
                r_fit = self._kr / k if k > 0.0 else _INF
                if not (centred_t and (k <= 0.0 or abs(r_fit - self._prior_r) > 3.0 * sd_r)):
                    break
            if not self._solve(p_kk, p_tt, p_kt, p_gg, p_k0):
                return False
            k = self._k
            rss = self._cyy - k * self._cxy - self._kr * self._cty - self._g * self._cuy
            s2_new = rss / dof
            s2 = s2_new if s2_new > 1e-4 else 1e-4
        self._s2 = s2
        return True

    def _audit(self, level_c, block_t_s):
        """Check the forecast made one horizon ago; make the next one.

        The model's own forecasts are its best test: every horizon (``audit_s``
        or longer for a slow liquid) the change it predicted is compared with the change
        the readings show (block means), and the squared relative error feeds
        an exponentially weighted mean. It is the model-mismatch part of the
        uncertainty (non-exponential physics, a lid, a sensor lag), which the
        residual variance of the fit cannot see.
        """
        if self._audit_pending:
            actual = level_c - self._audit_level
            pred = self._audit_pred
            scale = abs(pred)
            if scale < self._audit_floor_c:
                scale = self._audit_floor_c
            err = (actual - pred) / scale
            self._audit_var = 0.8 * self._audit_var + 0.2 * err * err
            self._audit_pending = False
        due = int(self.audit_s / block_t_s + 0.5) if block_t_s > 0.0 else 1
        if due < 1:
            due = 1
        self._audit_due = due if due < MAX_AUDIT_BLOCKS else MAX_AUDIT_BLOCKS
        centred_t = not (self._ambient_measured or self._ambient_fixed is not None)
        if self._w_blocks < 3.0 or not self._fit(centred_t, self.heater):
            return
        k = self._k
        if not k > 0.0:
            return
        kr = self._kr
        g = self._g
        r = kr / k if centred_t else self._r_mean
        eq = r + g * self._u_prev / k
        lev = self._level(k, kr, g, self._my)
        # horizon: long enough for the model to predict about 1 deg C of
        # change (a slow fermenter needs minutes, a kettle seconds), between
        # audit_s and 20 audit_s
        rate = abs(k * (eq - lev))
        horizon = 1.0 / rate if rate > 0.0 else _INF
        if horizon < self.audit_s:
            horizon = self.audit_s
        elif horizon > 20.0 * self.audit_s:
            horizon = 20.0 * self.audit_s
        # rounded to the nearest block (not up): a horizon of round numbers,
        # 60 s over 10 s blocks, gives the same count after a wake
        blocks = int(horizon / block_t_s + 0.5) if block_t_s > 0.0 else 1
        if blocks < 1:
            blocks = 1
        if blocks > MAX_AUDIT_BLOCKS:
            blocks = MAX_AUDIT_BLOCKS  # the saved state holds the countdown in 5 bits
        self._audit_due = blocks
        horizon = blocks * block_t_s  # the blocks to come last about as long as this one
        try:
            decay = math.exp(-k * horizon)
        except (ValueError, OverflowError):
            decay = 0.0
        self._audit_level = level_c
        self._audit_pred = (eq - lev) * (1.0 - decay)
        self._audit_pending = True

    def _level(self, k, kr, g, my):
        """Current temperature (deg C): the fit's value now plus its recent lack of fit."""
        return (my + k * self._xr + kr * (self._tr + self._block_t) + g * self._ur
                + self._recent_residual)

    def _eta_at(self, k, kr, g, my, target_c, duty):
        """Time to target (s) for given parameters; 1e12 for "never"."""
        if self._ambient_measured or self._ambient_fixed is not None:
            r = self._r_mean
        else:
            r = kr / k
        # time_to_target_s of tinytherm.model for k > 0, inlined so that the
        # estimator does not pull that module (3.5 KB of heap) onto a device
        gap_now = self._level(k, kr, g, my) - (r + g * duty / k)
        gap_target = target_c - (r + g * duty / k)
        if gap_now == 0.0 or gap_target == 0.0 or (gap_now > 0.0) != (gap_target > 0.0) \
                or abs(gap_target) > abs(gap_now):
            return 0.0 if gap_target == gap_now else 1e12
        try:
            return math.log(gap_now / gap_target) / k
        except (ValueError, OverflowError):
            return 1e12

    def predict(self, target_c):
        """Compute the time until ``target_c`` (deg C); return the status code.

        Fills ``status``, ``eta_s``, ``eta_low_s``, ``eta_high_s`` (seconds
        after the latest reading; ``None`` when there is no estimate;
        ``eta_high_s`` may be ``inf`` when the data cannot rule out "never"),
        ``rate_per_s`` (1/s), ``equilibrium_c`` and ``ambient_est_c`` (deg C),
        ``gain_k_per_s`` (K/s at full duty), ``temp_est_c`` (deg C) and
        ``eta_rel_sd`` (standard deviation of log-time: parameters plus the
        forecast audit's model mismatch; ``None`` without an ETA).
        Never raises.
        """
        try:
            self._predict(target_c)
        except (ValueError, OverflowError, ZeroDivisionError, TypeError):
            self._clear_answer(st.SETTLING)
        if self.guard.consecutive_rejections >= self.fault_after:
            # the recent readings were all rejected: show no estimate
            self._clear_answer(st.SENSOR_FAULT)
        elif self._disturbed:
            if self.status == st.TRACKING:
                self._disturbed = False  # re-converged after the change
            elif self.status == st.SETTLING or self.status == st.GATHERING:
                self.status = st.DISTURBED
        return self.status

    def _predict(self, target_c):
        w = self._w
        if self.readings < 2 or self._w_blocks < 3.0 or not _finite(target_c):
            self._clear_answer(st.GATHERING)
            if self.readings and not self._fresh:
                # the last reading (none just after a restart of the fit)
                self.temp_est_c = self._y_prev
            return self.status
        self._clear_answer(st.SETTLING)
        centred_t = not (self._ambient_measured or self._ambient_fixed is not None)
        heater = self.heater
        duty = self._u_prev if heater else 0.0
        if not self._fit(centred_t, heater):
            return self.status
        k = self._k
        s2 = self._s2
        kr = self._kr
        g = self._g
        # variance of the parameters: s2 * (W2 / W) * inverse matrix
        s2p = s2 * self._w_sq / w
        self.rate_per_s = k
        self.gain_k_per_s = g
        if not k > 0.0:
            return self.status
        my = self._my
        r = kr / k if centred_t else self._r_mean
        eq = r + g * duty / k
        temp = self._level(k, kr, g, my)
        self.temp_est_c = temp
        self.equilibrium_c = eq
        self.ambient_est_c = r
        gap_eq = eq - temp
        gap_target = target_c - temp
        if gap_target == 0.0 or (gap_eq != 0.0 and (gap_target > 0.0) != (gap_eq > 0.0)):
            # at the target, or past it in the direction of travel
            self.status = st.ARRIVED
            self.eta_s = 0.0
            self.eta_low_s = 0.0
            self.eta_high_s = 0.0
            return self.status
        if gap_eq == 0.0 or abs(gap_target) >= abs(gap_eq):
            self.status = st.OUT_OF_REACH
            return self.status
        eta = math.log(gap_eq / (eq - target_c)) / k
        # Delta method: var(eta) = grad' Cov grad with forward differences; the
        # mean reading is independent of the slopes in centred form.
        hk = 1e-4 * k
        gk = (self._eta_at(k + hk, kr, g, my, target_c, duty) - eta) / hk
        var_eta = gk * gk * self._i11
        if centred_t:
            hr = 1e-4 * abs(kr) + 1e-12
            gr = (self._eta_at(k, kr + hr, g, my, target_c, duty) - eta) / hr
            var_eta += gr * gr * self._i22 + 2.0 * gk * gr * self._i12
        else:
            gr = 0.0
        if heater:
            hg = 1e-4 * abs(g) + 1e-9
            gg = (self._eta_at(k, kr, g + hg, my, target_c, duty) - eta) / hg
            var_eta += gg * gg * self._i33 + 2.0 * gk * gg * self._i13 + 2.0 * gr * gg * self._i23
        var_eta *= s2p
        # the mean reading: d eta / d level = 1 / (k (T - E)), variance s2p / W
        gm = 1.0 / (k * (temp - eq))
        var_eta += gm * gm * s2p / w
        if var_eta < 0.0:
            var_eta = 0.0
        rel_sd = math.sqrt(var_eta) / eta if eta > 0.0 else 0.0
        # add the model-mismatch part measured by the forecast self-check
        rel_sd = math.sqrt(rel_sd * rel_sd + self._audit_var)
        spread = math.exp(self._z * rel_sd) if self._z * rel_sd < 50.0 else _INF
        self.eta_s = eta
        self.eta_low_s = eta / spread
        self.eta_high_s = eta * spread
        self.eta_rel_sd = rel_sd
        # trusted once the settle time has passed and the answer itself is
        # precise enough (k alone may be loose while the ETA is not: a heater
        # at constant duty barely separates k from g); near the end an upper
        # bound a few seconds above the ETA is still a good answer (TRUST_FLOOR_S)
        if self._age_s >= self.settle_s and (rel_sd <= self.max_relative_sd
                                             or self.eta_high_s - eta <= TRUST_FLOOR_S):
            self.status = st.TRACKING
        return self.status

    # ------------------------------------------------------------- save/restore
    def _settings_byte(self):
        return ((1 if self.heater else 0) | (2 if self._ambient_fixed is not None else 0)
                | (4 if self.guard.spike_window == 5 else 0)
                | (8 if self.detector is not None else 0)
                | (16 if self.guard.spike_window == 0 else 0))

    def _layout(self, measured):
        """(struct format, value field names) of the payload after the fixed part (cached)."""
        if self._layouts[1 if measured else 0] is None:
            self._layouts[1 if measured else 0] = self._make_layout(measured)
        return self._layouts[1 if measured else 0]

    def _make_layout(self, measured):
        """(struct format, value field names) of the payload after the fixed part.

        Every field starts as float32; fields are promoted to float64 in the
        order of _PROMOTE (the values that carry levels and integrals first,
        where float32 rounding would shift the answer most) while the payload
        fits in PAYLOAD_SIZE bytes.
        """
        centred = not (measured or self._ambient_fixed is not None)
        names = []
        for name in _PROMOTE:
            if name in _CENTRED_ONLY and not centred:
                continue
            if name in _HEATER_ONLY and not self.heater:
                continue
            if (name == "_r_prev" or name == "_r_mean") and not measured:
                continue
            if name in _NO_HEATER_ONLY and self.heater:
                continue
            names.append(name)
        window = 8 if self.guard.spike_window == 5 else 4  # the spike gate's older readings
        # the pending forecast check goes as float32 where it fits, else as
        # int16 (1/1024 deg C), else (after _w_sq) not at all
        n_always = len([n for n in names if n in _ALWAYS_SHORT])
        fits = _FIXED_SIZE + window + 4 * len(names) - 2 * n_always <= bl.PAYLOAD_SIZE
        short = _ALWAYS_SHORT if fits else _SHORT
        for name in _DROPPABLE:
            # a full payload (an estimated ambient, a heater): the least
            # important fields go (the pending forecast check is dropped,
            # _w_sq rebuilt) before the spike gate loses its window
            if _FIXED_SIZE + window + _values_size(names, short) <= bl.PAYLOAD_SIZE:
                break
            if name in names:
                names.remove(name)
        # int16 fields first: the payload then ends with a float, so any NaN
        # written over its tail is caught on restore
        shorts = [n for n in names if n in short]
        names = shorts + [n for n in names if n not in short]
        n_float = len(names) - len(shorts)
        values = _values_size(names, short)
        fixed = _FIXED_SIZE + 2 * self._window_slots(values)
        spare = bl.PAYLOAD_SIZE - fixed - values
        doubles = spare // 4
        if doubles > n_float:
            doubles = n_float
        fmt = "<" + "h" * len(shorts) + "d" * doubles + "f" * (n_float - doubles)
        return fmt, tuple(names)

    @staticmethod
    def _values_offset(fmt, slots):
        """Where the guard window and the values start: they end at the CRC."""
        return bl.PAYLOAD_OFFSET + bl.PAYLOAD_SIZE - 2 * slots - struct.calcsize(fmt)

    def _window_slots(self, values_size):
        """How many older readings of the guard's spike window fit in the blob (0, 2 or 4).

        Those left out are restored as copies of the last reading (heater with
        an estimated ambient: the fit needs every byte there).
        """
        room = (bl.PAYLOAD_SIZE - _FIXED_SIZE - values_size) // 2
        want = 4 if self.guard.spike_window == 5 else 2
        if room >= want:
            return want
        return 2 if room >= 2 else 0

    def save(self):
        """The whole state as a blob of ``tinytherm.blob.BLOB_SIZE`` (128) bytes.

        Returns the estimator's own ``bytearray``, rewritten by the next
        ``save()`` (no allocation for the frame on a small heap): write it to
        RTC memory or flash, or copy it with ``bytes(...)`` to keep it.

        Layout: magic, layout version, settings byte, payload, CRC-32 (see
        :mod:`tinytherm.blob`). The payload holds counts and flags, the state
        behind the accept/reject and change decisions as float32 (age, stuck
        run, detector sums, last residual) and the guard's window as 1/256 C
        offsets from the last reading (exact for sensors with a 1/16 C step),
        then the fit: the mean and block sum of the readings as float32
        offsets from the last reading, everything else as float64 where it
        fits (in :data:`_PROMOTE` order) and float32 beyond. The per-reason
        guard counts, ``rejected`` and ``changes`` count since the last
        restore. Allocates a little; call it once per wake, not per reading.
        """
        g = self.guard
        d = self.detector
        if self._blob_buf is None:
            self._blob_buf = bl.new_frame(self._settings_byte())
        buf = self._blob_buf
        flags = ((1 if self._fresh else 0) | (2 if self._disturbed else 0)
                 | (4 if self._have_residual else 0) | (8 if self._ambient_measured else 0)
                 | (16 if g._has_accepted else 0))
        y = self._y_prev
        flags |= self._relevel_blocks << 5
        fmt, names = self._layout(self._ambient_measured)
        if self._audit_pending and "_audit_level" in names:
            flags |= 128  # a pending forecast check travels only with its start level
        age = self._age_s if self._age_s < self.settle_s else self.settle_s
        struct.pack_into(
            _FIXED_FMT, buf, bl.PAYLOAD_OFFSET,
            _clamp_int(self.readings, 0, 0xFFFFFFFF), _clamp_int(self._block_n, 0, 0xFF),
            flags, g._win_n | (_clamp_int(g.consecutive_rejections, 0, 31) << 3),
            _clamp_int(age * self._age_scale, 0, 0xFFFF),
            _clamp_int(g._run_s * self._run_scale, 0, 0xFFFF),
            _clamp_int(g._run_expected_c * self._run_c_scale, 0, 0xFFFF),
            _clamp_int(d.up / d.threshold * 65535.0, 0, 0xFFFF) if d is not None else 0,
            _clamp_int(d.down / d.threshold * 65535.0, 0, 0xFFFF) if d is not None else 0,
            _clamp_int(d.mean_abs_z * 4096.0, 0, 0xFFFF) if d is not None else 0,
            self._last_residual)
        struct.pack_into(
            _EXTRA_FMT, buf, bl.PAYLOAD_OFFSET + struct.calcsize(_FIXED_FMT),
            _clamp_int(self._audit_due, 0, MAX_AUDIT_BLOCKS) | ((self._turn_dir + 1) << 5)
            | (128 if self._turn_seen else 0))
        slots = self._window_slots(_min_size(fmt))
        offset = self._values_offset(fmt, slots)
        if slots:
            struct.pack_into("<hh", buf, offset, _clamp_int((g._w1 - y) * 256.0, -32767, 32767),
                             _clamp_int((g._w2 - y) * 256.0, -32767, 32767))
            offset += 4
        if slots == 4:
            struct.pack_into("<hh", buf, offset, _clamp_int((g._w3 - y) * 256.0, -32767, 32767),
                             _clamp_int((g._w4 - y) * 256.0, -32767, 32767))
            offset += 4
        # one field at a time: no list of values on a small, fragmented heap
        for i in range(len(names)):
            kind = fmt[i + 1]
            if kind == "d":
                struct.pack_into("<d", buf, offset, self._saved_value(names[i]))
                offset += 8
            elif kind == "f":
                struct.pack_into("<f", buf, offset, self._saved_value(names[i]))
                offset += 4
            else:
                code = _clamp_int(self._saved_value(names[i]) * _short_scale(names[i]),
                                  -32767, 32767)
                struct.pack_into("<h", buf, offset, code)
                offset += 2
        return bl.seal(buf)

    def _saved_value(self, name):
        if name == "pending":
            return self.guard._pending_s + self.guard._pending_ms * 0.001
        if name == "_my":
            return self._my - self._y_prev  # small offset: float32 keeps it precise
        if name == "_sum_y":
            return self._sum_y - self._block_n * self._y_prev
        if name == "_audit_level":
            return self._audit_level - self._y_prev
        if name == "_r_mean":
            return self._r_mean - self._r_prev
        if name == "_turn_ext":
            return self._turn_ext - self._y_prev
        return getattr(self, name)

    def restore(self, blob):
        """Load a blob written by :meth:`save`; returns a ``tinytherm.blob`` code.

        ``blob.RESTORED`` (0) when the state is back. Anything else (wrong
        length, not a state blob, another layout version, CRC mismatch, a blob
        written by an estimator with other settings, impossible values) leaves a
        fresh estimator, as after :meth:`reset`. Never raises. After a restore
        feed the first reading with :meth:`update` and the time slept.
        """
        code = bl.check(blob, self._settings_byte())
        if code == bl.RESTORED:
            try:
                code = self._unpack(blob)
            except Exception:  # noqa: BLE001 - a blob must never crash the device
                code = bl.BLOB_VALUES
        if code != bl.RESTORED:
            self.reset()
        return code

    def _unpack(self, blob):
        (readings, block_n, flags, flags2, age_code, run_code, run_exp_code,
         up_code, down_code, mabs_code, last_residual) = struct.unpack_from(
            _FIXED_FMT, blob, bl.PAYLOAD_OFFSET)
        age_s = age_code / self._age_scale
        if age_s >= self.settle_s:
            age_s = self.settle_s
        run_s = run_code / self._run_scale
        run_expected_c = run_exp_code / self._run_c_scale
        d = self.detector
        threshold = d.threshold if d is not None else 0.0
        up = up_code * threshold / 65535.0
        down = down_code * threshold / 65535.0
        mean_abs_z = mabs_code / 4096.0
        consecutive = flags2 >> 3
        bits = struct.unpack_from(
            _EXTRA_FMT, blob, bl.PAYLOAD_OFFSET + struct.calcsize(_FIXED_FMT))[0]
        if (bits >> 5) & 3 > 2:
            return bl.BLOB_VALUES
        measured = bool(flags & 8)
        fmt, names = self._layout(measured)
        slots = self._window_slots(_min_size(fmt))
        offset = self._values_offset(fmt, slots)
        w1_code = w2_code = 0
        if slots:
            w1_code, w2_code = struct.unpack_from("<hh", blob, offset)
            offset += 4
        w3_code = w4_code = w2_code
        if slots == 4:
            w3_code, w4_code = struct.unpack_from("<hh", blob, offset)
            offset += 4
        # check every value before touching the state, one at a time (no tuple)
        start = offset
        for i in range(len(names)):
            v, offset = _unpack_value(fmt[i + 1], names[i], blob, offset)
            if not _finite(v):
                return bl.BLOB_VALUES
        if not _finite(last_residual):
            return bl.BLOB_VALUES
        relevel = (flags >> 5) & 3
        win_n = flags2 & 7
        if relevel > RELEVEL_BLOCKS or win_n > 4:
            return bl.BLOB_VALUES
        self.reset()
        pending = 0.0
        offset = start
        for i in range(len(names)):
            v, offset = _unpack_value(fmt[i + 1], names[i], blob, offset)
            if names[i] == "pending":
                pending = v
            else:
                setattr(self, names[i], v)
        y = self._y_prev
        self._my += y
        self._sum_y += block_n * y
        if self._ambient_fixed is not None:
            self._r_prev = self._ambient_fixed
        if "_w_sq" not in names and self._w_blocks > 0.0:
            # equal blocks: sum of squared weights ~ W^2 / (number of blocks)
            self._w_sq = self._w * self._w / self._w_blocks
        g = self.guard
        self.readings = readings
        self._block_n = block_n
        self._fresh = bool(flags & 1)
        self._disturbed = bool(flags & 2)
        self._have_residual = bool(flags & 4)
        self._ambient_measured = measured
        self._relevel_blocks = relevel
        self._age_s = age_s
        self._last_residual = last_residual
        self._turn_dir = ((bits >> 5) & 3) - 1
        self._turn_seen = bool(bits & 128)
        if not self.heater:
            self._turn_ext += y
        self._audit_due = bits & 31
        if "_audit_level" in names:
            self._audit_pending = bool(flags & 128)
            self._audit_level += y
        if measured:
            self._r_mean += self._r_prev
        else:
            self._r_mean = self._r_prev
        g._has_accepted = bool(flags & 16)
        g._last_c = y
        g._win_n = win_n
        g._w1 = y + w1_code / 256.0
        g._w2 = y + w2_code / 256.0
        g._w3 = y + w3_code / 256.0
        g._w4 = y + w4_code / 256.0
        g._run_s = run_s
        g._run_expected_c = run_expected_c
        g._run_rate = run_expected_c / run_s if run_s > 0.0 else 0.0
        g.consecutive_rejections = consecutive
        g._pending_s = pending
        if d is not None:
            d.up = up
            d.down = down
            d.mean_abs_z = mean_abs_z
        return bl.RESTORED

    def __repr__(self):
        return "ThermalEstimator(readings=%d, status=%s, k=%s, equilibrium_c=%s, eta_s=%s)" % (
            self.readings, st.status_name(self.status), self.rate_per_s, self.equilibrium_c,
            self.eta_s)
