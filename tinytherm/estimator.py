"""Online fit of the lumped thermal model and the time-to-target answer.

One principle: *fit the first-order law on the recent part of the approach, anchor the answer
at the latest readings, and judge the answer by the fit's own forecasts.* Model
(:mod:`tinytherm.fit`), ``G = T - R`` the gap to a reference ``R`` (the known ambient, the measured
air, or 0), ``u`` the heater duty (no heater, a measured air ``A``: ``A - A0``, the probe's view)::

    dT/dt = s - k (G - G0) + g (u - u0)        (equilibrium E = T + s / k)

A reading flows through parts that each own their state (and their bytes of
the saved state, :mod:`tinytherm.state`): the guard judges it, the block sums
add it; about every :data:`BLOCK_S` seconds (sooner in a young fit) the block
closes: the change detector tests its mean against the forecast (a jump
restarts the fit), the regression adds it with a memory of
:data:`MEMORY_FRACTION` of the fit's age and solves with weak priors (the
ambient a hint on ``k`` given the slope: it may bend the curve, never turn it),
the level is anchored on the block's residual, a retreat beyond :data:`TURN_C`
restarts the fit (no heater), the audits check old forecasts. ``predict``
(:mod:`tinytherm.answer`) works the answer out once per block and target and
counts it down between blocks. A vessel profile (:mod:`tinytherm.profile`,
imported only when given) sets the priors, the interval and a passive liquid's
law. The reasons, the arrival rules and when a profile is dropped: docs/design.md.
Fixed state, no per-reading containers; runs unchanged on CPython and MicroPython.
"""
import math

from tinytherm import status as st
from tinytherm import answer, fit
from tinytherm.status import Answer
from tinytherm.change import ChangeDetector
from tinytherm.fit import MAX_BLOCK_READINGS, SCALE
from tinytherm.guard import GAP_RESTART, ReadingGuard
from tinytherm.num import (as_float, normal_quantile, number, refused,
                           time_to_target_from_slope_s)
from tinytherm.settle import NO_REF, Settle

# Fixed choices (module constants, not arguments: no product needs another value).
BLOCK_S = 40.0            # s: longest block averaged into one observation (the device budget: 20 s
#   cost twice the heap per reading for the same tune-seed accuracy, docs/benchmarks.md)
_BLOCK_MS = 40000
MEMORY_FRACTION = 0.35    # forgetting time constant / fit age (leave-one-family-out choice)
MIN_MEMORY_S = 30.0       # s: shortest forgetting time constant
MAX_MEMORY_S = 7200.0     # s: longest
SPAN_BLOCKS = 4.0         # the memory spans at least this many blocks (sparse readings)
RATE_PRIOR_PER_S = 1.0 / 1800.0  # 1/s: sd of the loose prior on k (a line until the data bend)
RATE_PRIOR_MEAN_PER_S = 1.0 / 7200.0  # 1/s: its mean: a liquid loses heat to its room (k > 0),
#   so a fit not bent yet is no straight line (leave-one-family-out, 32 tune: 0, 1/14400, 1/7200, 1/3600)
KNOWN_AMBIENT_SD_C = 2.0  # deg C: sd with a known or measured ambient (evaporation, a bent rate)
AIR_VIEW_SD = 0.3         # prior sd of the probe's view of a measured air (no heater; 0: off)
TURN_C = 1.0              # deg C: a retreat from the extreme that restarts the fit
DETECT_MIN_BLOCKS = 5     # blocks before the change detector listens (weighted), and readings
#   before the noise is learnt and the audits start (counted: with readings minutes apart,
#   a block each, the weighted count of a memory of SPAN_BLOCKS blocks stays near 4.5)
ANCHOR_GAIN = 0.5         # weight of the newest block residual in the anchor
MISMATCH_C = 0.03         # deg C: model-mismatch allowance of a block innovation
MAX_GAP_S = 900.0         # s: a longer gap is counted as a long gap (the guard's counts)
PROFILE_HEATER_MISMATCH = 100  # profile_reason: a profile for the other heater mode
PROFILE_REJECTED = 101    # profile_reason: dropped, this liquid's rate is another vessel's
_INV = 1.0 / SCALE
_FINE_INV = _INV / 256    # deg C per count * 2**8 (the air ahead; one multiplication, exact)


class ThermalEstimator(Answer):
    """Feed readings in, ask how long until a target temperature.

    Arguments (all optional; each is range-checked, ValueError names it):

    - ``ambient_c``: known, constant ambient, deg C (``None``: pass a measured
      one with each reading, ``update(..., ambient_c=)``, or none is known).
    - ``ambient_prior_c``, ``ambient_prior_sd_c``: where the room usually
      is and how well the product knows it, deg C (a weak hint when no
      ambient is known: 21 +- 8 for a kitchen, 4 +- 2 for a fridge).
    - ``heater``: ``True`` when a heater duty is passed with each reading.
    - ``interval``: two-sided probability of the reported time interval.
    - ``quantum_c``: the probe's resolution, deg C (0.0625 for a 12-bit
      1-Wire probe).
    - ``min_temp_c``, ``max_temp_c``: plausible readings, deg C.
    - ``spike_window``: 0 (off), 3 or 5 readings in the spike gate.
    - ``restart_gap_s``: a gap longer than this (s) starts a new fit.
    - ``probe_codes``: the probe reports -127.0 when disconnected and 85.0 at
      power-up (12-bit 1-Wire probes): reject those values.
    - ``profile``: a :class:`~tinytherm.profile.VesselProfile` or its device
      blob (see ``profile_reason`` when it is not used).
    """

    def __init__(self, ambient_c=None, ambient_prior_c=21.0, ambient_prior_sd_c=8.0,
                 heater=False, interval=0.8,
                 quantum_c=0.0625, min_temp_c=-55.0, max_temp_c=150.0, spike_window=3,
                 restart_gap_s=3600.0, probe_codes=False, profile=None):
        if not number(min_temp_c, -10000, 10000) or not number(max_temp_c, -10000, 10000) \
                or not min_temp_c < max_temp_c:
            raise refused("min_temp_c")
        if ambient_c is not None and not number(ambient_c, min_temp_c, max_temp_c):
            raise refused("ambient_c")
        if not number(ambient_prior_c, -10000, 10000):
            raise refused("ambient_prior_c")
        if not number(ambient_prior_sd_c, 0.1, 10000):
            raise refused("ambient_prior_sd_c")
        if heater is not True and heater is not False:
            raise refused("heater")
        if not number(interval, 0.01, 0.999):
            raise refused("interval")
        if probe_codes is not True and probe_codes is not False:
            raise refused("probe_codes")
        if not number(quantum_c, 1e-6, 10):
            raise refused("quantum_c")
        if not number(restart_gap_s, 1, 500000):
            raise refused("restart_gap_s")
        # save()'s one buffer (blob.BLOB_SIZE bytes), the largest piece, made first while the
        # heap is fresh (later, smaller ones fill the gaps)
        buf = bytearray(512)
        # the answer's fields and the counts next (reset() sets them again): its table grows early
        self.clear(st.GATHERING)
        self.heater = heater
        self.readings = self.rejected = self.changes = self.turns = self.last_verdict = 0
        self._profile_on = False
        self.profile_reason = 0
        self._profile = None
        if profile is not None:
            # a bad blob or another heater mode is not used (the reason kept)
            from tinytherm.profile import VesselProfile  # (only when used: it costs RAM)
            self._profile, self.profile_reason = VesselProfile.given(
                profile, heater, PROFILE_HEATER_MISMATCH)
        # the guard checks its own settings (ValueError naming them)
        self.guard = ReadingGuard(min_c=min_temp_c, max_c=max_temp_c, quantum_c=quantum_c,
                                  spike_window=spike_window, restart_gap_s=restart_gap_s,
                                  max_gap_s=MAX_GAP_S if MAX_GAP_S < restart_gap_s else restart_gap_s,
                                  probe_codes=probe_codes)
        self.detector = ChangeDetector(jump_z=12.0)
        # (the parts through their modules: a name imported here is a slot of this module's table)
        self.inputs = fit.Inputs(ambient_c, ambient_prior_c, ambient_prior_sd_c)
        self.noise = fit.Noise(self.guard.quantum_c)
        self.blocks = fit.BlockSums()
        self.reg = fit.Regression(heater)
        # the audits and the answer's cache, with the interval's half-width in sd
        self.audits = answer.Audits(normal_quantile(0.5 + 0.5 * interval))
        self.settle = Settle()  # whether the probe has met the liquid (no direction given)
        # the blob's buffer beside the text of every setting that changes the state's meaning
        # (its CRC-32 is the frame's settings key, written at the first save or restore)
        self._blob_buf = (buf, "%r %r %r %r %r %r %r %r %r %r" % (
            ambient_c, self.inputs.prior[0], self.inputs.prior[1], heater, float(interval),
            self.guard.quantum_c, self.guard.min_c, self.guard.max_c, self.guard.settings_key(),
            self._profile is not None))
        self.reset()

    # ------------------------------------------------------------------ state
    def reset(self):
        """Forget all readings, counts and audits; settings are kept."""
        self.readings = 0           # accepted readings since the reset
        self.rejected = 0           # rejected readings since the reset (or restore)
        self.last_verdict = st.ACCEPTED
        self.changes = 0            # sudden changes detected
        self.turns = 0              # reversals of the direction of travel
        self.guard.reset()
        self.inputs.reset()
        self.noise.reset()
        self.audits.reset()
        fit.use_air_column(self, False)  # (none until a measured air comes again)
        self.detector.disturbed = False     # since a jump, until the new fit is established
        # (a profile of the fit's own answers gives the interval alone: answer.py)
        self._profile_on = self._profile is not None and not self._profile.own_fit
        self._restart_fit()

    def _restart_fit(self):
        """Zero the fit: the next accepted reading starts a new approach."""
        self.blocks.reset()
        self.reg.reset()
        self.audits.clear()
        self.detector.reset()
        b = self.blocks
        b.dir = 0                   # direction of the block means (+1, -1, 0)
        b.ext_sy = 0                # first block mean while dir == 0, then the extreme: its
        b.ext_n = 1                 # block's sum (counts) and readings (its noise): _extreme_c
        b.level = self._slope = 0.0  # fitted level and slope at the latest block close
        self.audits.done = 0        # blocks finished: the answer's cache key
        b.pending = 0               # 1: a block closed, its second half not done; 2: audits due
        self.inputs.ahead = None    # the ambient ahead at the latest block close (fit.Inputs)
        self.audits.forget()
        self.clear(st.GATHERING)

    # ---------------------------------------------------------------- readings
    def update(self, temp_c, dt_s, ambient_c=None, duty=0.0):
        """Add one reading; return its verdict (``status.ACCEPTED`` == 0 if used).

        ``temp_c``: the liquid reading, deg C. ``dt_s``: seconds since the
        previous call (ignored on the first reading; resolution 1 ms).
        ``ambient_c``: a measured ambient for this reading, deg C, or ``None``.
        ``duty``: heater duty in [0, 1] applied since the previous reading.
        Never raises: a bad reading or argument is rejected with a verdict
        code from :mod:`tinytherm.status`, counted, and leaves the fit
        untouched (its time still counts).
        """
        if self.blocks.pending:
            # a closed block's work, one step a reading, before the guard (it uses the
            # fitted slope); a step's result depends on no reading after the block
            self._next_step()
        # (anything float() refuses, or an int beyond the float range: BAD_INPUT,
        # the same verdict on both runtimes; plain floats take no call)
        t = temp_c if type(temp_c) is float else as_float(temp_c)
        dt = dt_s if type(dt_s) is float else as_float(dt_s)
        if type(duty) is float and 0.0 <= duty <= 1.0 and ambient_c is None:
            ok = True  # (the everyday call: no checks beyond these comparisons)
        else:
            ok = self._inputs_ok(ambient_c, duty)
        verdict = self.guard.check(t, math.nan if dt is None else dt, self._slope, ok)
        return self._after_guard(verdict, t, ambient_c, duty)

    def update_ticks(self, temp_c, ticks_ms, ambient_c=None, duty=0.0, slept_s=None):
        """Add a reading stamped with millisecond ticks that wrap at 2**30.

        ``ticks_ms``: an int as from ``time.ticks_ms()`` (difference taken
        wrap-safe). ``slept_s``: for the first reading after :meth:`restore`,
        the seconds since the last reading before the save (the tick counter
        restarted meanwhile), so nothing is lost. Returns the verdict code.
        """
        if self.blocks.pending:
            self._next_step()  # (as in update)
        t = as_float(temp_c)
        ok = self._inputs_ok(ambient_c, duty)
        verdict = self.guard.check_ticks(t, ticks_ms, self._slope, ok, slept_s)
        return self._after_guard(verdict, t, ambient_c, duty)

    def _inputs_ok(self, ambient_c, duty):
        """Duty a number in [0, 1], ambient None or a plausible temperature."""
        if not number(duty, 0.0, 1.0):
            return False
        return ambient_c is None or number(ambient_c, self.guard.min_c, self.guard.max_c)

    def _after_guard(self, verdict, temp_c, ambient_c, duty):
        self.last_verdict = verdict
        if verdict:
            self.rejected += 1
            return verdict
        c = math.floor(temp_c * SCALE + 0.5)  # counts of 1/SCALE deg C (fit.to_counts)
        uc = self.inputs.duty_counts(duty) if self.heater else 0
        if ambient_c is not None and not self.reg.heater and AIR_VIEW_SD > 0.0:
            fit.use_air_column(self, True)  # the first measured air: a new fit, with its column
        b = self.blocks
        try:
            if not b.readings or self.guard.gap == GAP_RESTART:  # (none: a new fit)
                dt_ms = self.guard.elapsed_ms if b.readings else 0  # (the air's cycle goes on)
                self._restart_fit()
                self._first(c, self.inputs.reference(ambient_c, dt_ms, True), uc)
            else:
                dt_ms = self.guard.elapsed_ms
                if ambient_c is None and not self.inputs.measured:
                    rc = b.rc  # (fixed or none: the reference never moves)
                else:
                    rc = self.inputs.reference(ambient_c, dt_ms, False)
                if uc != b.uc:
                    self.audits.clear()  # the forecasts assumed the old duty
                nz = self.noise
                b.add(c, rc, uc, dt_ms,
                      nz.expect if dt_ms == nz.expect_ms else nz.expectation(self._slope, dt_ms),
                      nz.clip)
                # the block closes when long enough, or long for the fit's age
                # (every reading counts early on), or full
                if b.it >= _BLOCK_MS or b.it * 16 >= b.age_ms or b.n >= MAX_BLOCK_READINGS:
                    while self.blocks.pending:
                        self._next_step()  # (sparse readings: a block per reading)
                    self._close_block()
        except (ValueError, OverflowError, ZeroDivisionError):
            # arithmetic at the edge of the float range: never raise; start again here
            self._restart_fit()
            self._first(c, self.inputs.reference(ambient_c, 0, True), uc)
        self.readings += 1
        return st.ACCEPTED

    def _first(self, c, rc, uc):
        """The fit's first reading: the first block, closed at once."""
        self.blocks.ext_sy = c
        self.blocks.ext_n = 1
        self.settle.first(c)
        self.blocks.first(c, rc, uc)
        self._close_block()
        self._next_step()

    # ------------------------------------------------------------------ blocks
    def _close_block(self):
        """Close the block, first half: the change check and the regression's update. The
        second half (:meth:`_finish_block`) runs in the next ``predict``, reading or ``save``,
        and the audits with the reading after it: no call carries a whole block's cost."""
        b = self.blocks
        reg = self.reg
        n = b.n
        heater = self.heater
        # block means and the latest reading in the fit's coordinates (s, deg C s, s)
        tb = reg.t + b.st / (n * 1000)
        xb = reg.x + b.sx / (n * 2000 * SCALE)
        yb = b.sy / (n * SCALE)
        vb = reg.v + (b.sv / (n * 1024000) if heater else b.sv / (n * SCALE)) if reg.heater else 0.0
        if reg.ok and b.readings > DETECT_MIN_BLOCKS:
            if reg.nb >= DETECT_MIN_BLOCKS:
                # innovation of the block mean against the fit's forecast (weighted blocks:
                # a sparse fit's forecast over minutes is no test of a jump)
                pred = reg.my + reg.s * tb - reg.k * xb + reg.anchor
                if reg.heater:
                    pred += reg.g * vb
                sd = math.sqrt(self.noise.var / n + 4.0 * reg.var_my + MISMATCH_C * MISMATCH_C)
                if self.detector.update(yb - pred, sd):
                    self.changes += 1
                    self._begin_again(True)
                    return
            self.noise.learn(b)
        # forgetting: time constant MEMORY_FRACTION x age, at least a few blocks
        dur = b.it * 0.001
        mem = MEMORY_FRACTION * b.age_ms * 0.001
        if mem < SPAN_BLOCKS * dur:
            mem = SPAN_BLOCKS * dur
        if mem < MIN_MEMORY_S:
            mem = MIN_MEMORY_S
        elif mem > MAX_MEMORY_S:
            mem = MAX_MEMORY_S
        try:
            lam = math.exp(-dur / mem)
        except (ValueError, OverflowError):
            lam = 0.0
        dg = b.c - b.rc - b.g0
        du = b.uc - b.u0
        reg.add_block(n, tb, xb, vb, yb, lam, reg.t + b.it * 0.001,
                      reg.x + b.ix / (2000 * SCALE),
                      reg.v + (b.iv / 1024000 if heater else b.iv * _INV) if reg.heater else 0.0,
                      dg * _INV if dg else 0.0, du / 1024 if du else 0.0)
        b.next_block()
        if self.settle.block_closed(b.age_ms, b.cb, reg.k if reg.ok and not heater else 0.0,
                                    reg, self._slope, self.noise.sd, b.readings):
            ref = self.settle.ref
            # (read a block apart: answers from two readings, as a fit seeded at a turn)
            apart = b.ip >= _BLOCK_MS and b.np == 1
            self._begin_again(False)  # the probe was travelling to the liquid: the liquid's
            self.settle.seeded(apart, ref)  # own approach starts here (tinytherm.settle)
            return
        self.inputs.ahead = self.inputs.ahead_fine() if self.inputs.known() else None
        self.blocks.pending = 1

    def _next_step(self):
        if self.blocks.pending == 1:
            self._finish_block()
        else:
            self.blocks.pending = 0
            self._audit()

    def _finish_block(self):
        """Close the block, second half: solve, anchor, level and slope, turn (audits next)."""
        self.blocks.pending = 0
        reg = self.reg
        b = self.blocks
        self.audits.done += 1
        self._solve()
        yb = reg.yb
        if reg.ok:
            # anchor: the block's residual against the new fit, smoothed over about two blocks
            res = yb - (reg.my + reg.s * reg.rt - reg.k * reg.rx)
            if reg.heater:
                res -= reg.g * reg.rv
            reg.anchor += ANCHOR_GAIN * (res - reg.anchor)
            self._level_and_slope()
            if b.readings >= DETECT_MIN_BLOCKS:
                self.detector.disturbed = False  # established again after a jump
                if self.audits.any_due((b.age_ms - b.it) * 0.001) and (
                        self.heater or self.settle.ref != NO_REF):
                    # (none while the probe travels to the liquid after a jump: those
                    # forecasts are the probe's, their errors not the liquid's)
                    self.blocks.pending = 2  # the audits with the next reading
        else:
            self._slope = 0.0
        # the noise's expected step follows the new slope (worked out afresh, as after a restore)
        self.noise.expect_ms = -1
        if self._turned(yb):
            self.turns += 1
            r = self.settle.ref
            if b.ip >= _BLOCK_MS and self.settle.turn and b.readings == 3 and (
                    (b.c - r) * (1 if b.cp > r else -1) <= TURN_C * SCALE):
                # readings a block apart, a fit begun at a turn with two readings turned back
                # at its third to within TURN_C of its first: the middle one was a spike the
                # guard passed (on a steep fall its window's scale is the fall's own step):
                # the fit goes on from its first reading and the latest, the spike dropped
                b.cp = r
                b.ip = b.age_ms
                self._begin_again(False, True)
                return
            # from the reading before it, the peak: when the probe travelled after a jump,
            # and readings a block apart whose extreme is that reading (a lagging probe reads
            # its liquid at its peak, dP/dt = 0); else from the latest reading
            self._begin_again(False, b.readings == 3 or r == NO_REF or (
                b.ip >= _BLOCK_MS and b.ext_n == 1 and b.ext_sy == b.cp))
        elif b.ip >= _BLOCK_MS and self.settle.turn and b.readings == 3:
            # a fit begun at a turn, its third reading no spike's return: the reading that
            # seeded it is one reading, maybe a spike the guard passed or the last before a
            # pour (the liquid jumped after it): an arrival needs the crossing after the
            # reading that followed it (tinytherm.settle: the reference)
            self.settle.reseed(b.cp)

    def _level_and_slope(self):
        """The anchored level and the slope at it, from the solution (also after a restore)."""
        reg = self.reg
        self.blocks.level = reg.level() + reg.anchor
        # slope at the level (the reference gap and duty are the closing reading's)
        self._slope = reg.s - reg.k * (self.blocks.level - self.blocks.cb * _INV)

    def _begin_again(self, disturbed, from_previous=False):
        """Restart the fit from the latest reading (a jump or a turn); ``from_previous``: from
        the reading that closed the block before it, keeping both (a turn right after the jump
        that set the direction: readings minutes apart, the peak after a pour)."""
        b = self.blocks
        c, rc, uc = b.c, b.rc, b.uc
        cp, ip = b.cp, b.ip
        turned_to = -self.blocks.dir
        a = self.audits.a[2]
        level, slope, rate = a.level, a.slope, a.rate  # (locals, not a tuple: 32 B less)
        self._restart_fit()
        if disturbed:
            self.detector.disturbed = True
            if not (self.heater or self._profile_on):
                # (the liquid's law before it: Settle.carried)
                a.level, a.slope, a.rate = level, slope, rate
        if from_previous and ip > 0:
            # (no heater: a turn with one restarts nothing; the reference over ip taken as now)
            self._first(cp, rc, uc)
            self.settle.seeded(True)  # (a turn: the probe has met the liquid)
            b.add(c, rc, uc, ip, 0, self.noise.clip)
            self._close_block()
        else:
            self._first(c, rc, uc)
            if disturbed:
                self.settle.jumped()  # (the probe travels to the new liquid again)
        if (not disturbed and self._profile_on and not self.heater and turned_to != 0
                and self._profile.toward_e(self, turned_to)):
            self.blocks.dir = turned_to  # the passive profile's direction: known from the turn on

    def _turned(self, yb):
        """Track the extreme of the block means; True on a retreat beyond TURN_C (with a
        heater, never: the retreat is a new direction of the same fit, the duty explains it)."""
        cut = 4.0 * self.noise.sd
        if self.settle.ref == NO_REF and not self.heater:
            # a probe travelling to the liquid after a jump moves one way until it meets
            # it: back from its extreme by a move beyond the noise is the liquid's turn
            cut = answer.move_c(self.noise.sd)
        elif cut < TURN_C and not (self.blocks.readings == 3 and self.blocks.dir != 0) and not (
                self._profile_on and not self.heater and self.blocks.dir != 0
                and self._profile.toward_e(self, -self.blocks.dir)):
            # at least TURN_C, but for the retreat right after the jump that set the direction
            # (a reading before a pour, then the drink cooling) and a passive profile's liquid,
            # which only moves towards its E (a retreat that way, the probe caught up: 4 sd)
            cut = TURN_C
        ext = self._extreme_c()
        if self.blocks.dir == 0:
            if yb - ext > cut:
                self.blocks.dir = 1
                self.blocks.ext_n, self.blocks.ext_sy = self.blocks.np, self.blocks.sp
            elif ext - yb > cut:
                self.blocks.dir = -1
                self.blocks.ext_n, self.blocks.ext_sy = self.blocks.np, self.blocks.sp
            return False
        if (yb > ext) if self.blocks.dir > 0 else (yb < ext):
            self.blocks.ext_n, self.blocks.ext_sy = self.blocks.np, self.blocks.sp
            return False
        if (ext - yb) * self.blocks.dir <= cut:
            return False
        if self.heater:
            # the heater turned it: a new direction, the same fit, once the fitted slope
            # (duty included) agrees and the reading before the latest retreated too (else
            # a spike or noise: readings a minute apart, one reading is the whole block)
            if self._slope * self.blocks.dir < 0.0 and (
                    ext - self.blocks.cq * _INV) * self.blocks.dir > cut:
                self.blocks.dir = -self.blocks.dir
                self.blocks.ext_n, self.blocks.ext_sy = self.blocks.np, self.blocks.sp
            return False
        return True

    def _extreme_c(self):
        """The extreme block mean, deg C (worked out as when its block closed: exact)."""
        return self.blocks.ext_sy / (self.blocks.ext_n * SCALE)

    def _solve(self):
        """Priors for this block, then the regression's solve; the hint follows whether an
        ambient was known at the block close (``inputs.ahead``, saved with the state)."""
        reg = self.reg
        reg.clear()
        if reg.nb < 1.5 or not reg.w > 0.0:
            return
        s2 = self.noise.var
        prof = self._profile if self._profile_on else None
        # the equilibrium hint E ~ N(e, sd^2) as a distance from the latest gap G0
        if self.inputs.ahead is not None:
            dist = -self.blocks.g0 * _INV
            sd = KNOWN_AMBIENT_SD_C
        else:
            r, sd = self.inputs.prior
            dist = r - self.blocks.g0 * _INV
        if prof is None:
            kp = RATE_PRIOR_MEAN_PER_S
            gp = 0.0
            lk = s2 / (RATE_PRIOR_PER_S * RATE_PRIOR_PER_S)
            lg = s2  # heater gain ~ N(0, 1 K/s) without a profile
        else:
            # (with a heater: where the liquid levels off with the heat at the latest duty)
            dist, sd, kp, lk, gp, lg = prof.priors(
                dist, s2, self.blocks.u0 / 1024 if self.heater else 0.0)
        if reg.heater == fit.AIR_COLUMN:
            gp, lg = 0.0, s2 / (AIR_VIEW_SD * AIR_VIEW_SD)  # the air's weight ~ N(0, sd^2)
        # the slope towards the hint, from the fit with the loose prior alone
        solved = False
        if self.heater:
            if not reg.solve(s2, lk, kp, 0.0, 0.0, lg, gp):
                return
            solved = True
            # without a profile the hint is the ambient: the slope without heat input
            slope = reg.s if prof is not None else reg.s - reg.g * (self.blocks.u0 / 1024)
        else:
            slope = reg.slope_loose(lk, kp)
            if slope is None:
                return
        # the hint, only when the liquid moves towards it: 0 = s - k dist, sd k sd
        den = slope * slope * sd * sd
        if (dist > 2.0 * sd or dist < -2.0 * sd) and slope * dist > 0.0 and den > 0.0:
            lh = s2 * dist * dist / den
            if lh < 1e300 and reg.solve(s2, 0.0 if prof is None else lk, kp, lh, dist, lg, gp):
                solved = True  # (without a profile the hint replaces the loose prior)
        if not solved and not reg.solve(s2, lk, kp, 0.0, 0.0, lg, gp):
            return
        if reg.k < 0.0:
            reg.solve(s2, -1.0, 0.0, 0.0, 0.0, lg, gp)  # accelerating: the exact line

    def _audit(self):
        age = (self.blocks.age_ms - self.blocks.it) * 0.001  # at the block close
        need = 4.0 * math.sqrt(self.reg.var_level()) + 0.5 * self.guard.quantum_c
        slope = self._slope_ahead()
        if self._profile_on and slope != 0.0 and self._profile.rate_fails(self, slope):
            # another vessel's profile (the fit is established here: the audits run
            # from DETECT_MIN_BLOCKS readings on): dropped, solved again without it
            self._profile_on = False
            self.profile_reason = PROFILE_REJECTED
            self._solve()
            if self.reg.ok:
                self._level_and_slope()  # (as a restore derives them from the new solution)
            return
        for a in self.audits.a:
            a.check(self, age, self.blocks.level, slope, self.reg.k, need)

    def _slope_ahead(self):
        """Slope at the fitted level under the air ahead, deg C/s: the air at its mean over
        the last whole cycle ``M`` as known at the latest block close, ``A0`` the air then::

            s_ahead = s_now + k (M - A0)     (equilibrium E_ahead = E_now + M - A0)

        Without a measured air it is the slope now."""
        if not self.inputs.measured or self.inputs.ahead is None:
            return self._slope
        b = self.blocks
        # the reference at the block close: G0 = cb - rc
        return self._slope + self.reg.k * self.inputs.ahead_shift_c(b.cb - b.g0)

    # ``predict(target_c, approach=0)``: the answer part's rules, as a method
    predict = answer.predict

    def forecast_s(self, moved_c, level_c, slope_c_per_s, rate_per_s):
        """Seconds the answer's law takes to move ``moved_c`` from ``level_c`` (the audits)."""
        if self._profile_on:
            t = self._profile.law_for(self, moved_c, level_c, slope_c_per_s)
            if t is not None:
                return t
        return time_to_target_from_slope_s(moved_c, slope_c_per_s, rate_per_s)

    def _ambient_ahead_c(self):
        """The ambient the answer uses, deg C, fixed at the latest block close (measured
        air: its mean ahead, as in :meth:`_slope_ahead`), or None when none was known then:
        the answer, the equilibrium slack and the profile read it, so an answer worked out
        after a restore is the one counted down since the block close."""
        return None if self.inputs.ahead is None else self.inputs.ahead * _FINE_INV

    # ------------------------------------------------------------ save/restore
    def save(self):
        """The whole state as a blob of ``tinytherm.blob.BLOB_SIZE`` (512) bytes.

        Returns the estimator's own ``bytearray``, rewritten by the next ``save()``:
        write it to RTC memory or flash, or copy it with ``bytes(...)``. Every value
        is stored exactly; the guard's per-reason counts and ``rejected`` count since
        the last restore. Layout: :mod:`tinytherm.state`, loaded at the first save or
        restore (a product that never sleeps does not load it).
        """
        from tinytherm import state
        return state.save(self)

    def restore(self, blob):
        """Load a blob written by :meth:`save`; returns a ``tinytherm.blob`` code:
        ``blob.RESTORED`` (0) when the state is back and every value is valid, else a
        fresh estimator as after :meth:`reset`. Never raises (but a MemoryError). Then
        feed the next reading with :meth:`update` and the time slept, or
        :meth:`update_ticks` with ``slept_s``."""
        from tinytherm import state  # (as in save)
        return state.restore(self, blob)

    def __repr__(self):
        from tinytherm import texts  # (its text costs heap: loaded only when printed)
        return texts.estimator(self)
