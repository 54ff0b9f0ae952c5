"""The answer: status, time to the target and its interval, from a solved fit.

Worked out once per block close (and target), then counted down between blocks
(:meth:`Answer.count_down`): asking every reading costs a few float operations. The time is the
closed form :func:`tinytherm.num.time_to_target_from_slope_s` (:mod:`tinytherm.model` has it too).

The interval is ``eta * exp(+-z sd)``, ``sd`` the sd of ln(eta): what the fit's own forecasts
measured (:class:`Audits`), the fit's delta-method variance (times :data:`DELTA_VAR_FACTOR`, at
least :data:`AUDIT_PRIOR_VAR`) the prior worth one check; plus the model error the audits' short
horizons cannot see, the rate k off by :data:`RATE_MODEL_SD` of itself (most near E, q near 1)::

    prior = max(F var_delta(ln eta), AUDIT_PRIOR_VAR)
            [at least LINE_PRIOR_VAR: k pinned, the noise its prior, no audit checked
             or the readings a block apart; YOUNG_PRIOR_VAR: free k, no residual dof, apart]
    var = (prior + n var_audits) / (1 + n) + (RATE_MODEL_SD d ln eta / d ln k)^2
          [the model term 0 for eta within the fit's age, its residual no misfit, noise measured]
          [+ (sw / (s_T eta))^2 for eta beyond WIGGLE_AGE x the fit's age: its misfit]

The interval's evidence (:class:`Audits`): three audits watch horizons of 1/8, 1/4 and 1/2 of
the fit's age; each compares the time the fit's law predicted for an observed change with the
time it took, ``e = ln(took / predicted)``, into a forgetting mean of ``e^2`` (interpolated in
log horizon by :meth:`Audits.var_at`), when the move the law predicted stands out of the noise.

The equilibrium's drift (a passive fit: a coolant warming, a tub and its wort cooling together)
is measured from the longest audit's waiting forecast, ``b = dE/dt``, and the time is that of
``dT/dt = -k (T - E(t))``, ``E(t) = E + b t`` (:func:`tinytherm.num.time_to_target_drift_s`). A
turned fit answers at its drift, a target beyond E at the drift kept from the longest audit's
last span until its new one measures; an unmeasured bend, a fit past its ambient hint and a
target just beyond E get their own upper ends. The equations and the reasons for each rule are
in docs/design.md ("Estimator"). Runs on CPython and MicroPython.
"""
import math

from tinytherm import status as st
from tinytherm.fit import NOISE_PRIOR_N, SCALE, to_counts
from tinytherm.num import as_float, spread, time_to_target_drift_s, time_to_target_from_slope_s

ARRIVE_TOL_C = 0.3        # deg C: most a reading may be short of the target at arrival
ARRIVE_MIN_S = 30.0       # s: no arrival in a fit younger than this
ARRIVE_Z = 2.0            # sd by which a block mean or the level must pass the target
HOLD_OPEN_N = 4           # readings in the open block before its mean moves the hold line
#   (a noise guard, not chosen: four readings average to half a reading's sd)
EQUILIBRIUM_SLACK = 0.1  # share of the distance to the fitted equilibrium it may be off
#   (the families, all reachable, chose 0.4; 0.2 already answers a mug below a warm room)
WIGGLE_AGE = 0.2   # share of the fit's age beyond which a time meets another swing of its misfit
#   (the fit's memory: MEMORY_FRACTION 0.35 of its age)
#   (leave-one-family-out, 32 tune per family dense and sparse: 0.2, 0.35, 0.5, off)
MAX_REL_SD = 5.0          # an answer whose ln-time forecast sd (var_at) over this stays SETTLING
FAULT_AFTER = 5           # consecutive rejected readings that make SENSOR_FAULT
PROFILE_LAG_TIMES = 1.5   # a heated fit younger than this many profile lags shows no time
_INV = 1.0 / SCALE
_IX_TO_CS = 1.0 / (2000 * SCALE)  # doubled count ms -> deg C s
_IV_TO_S = 1.0 / 1024000  # duty-count ms -> s at full duty (fit.DUTY_SCALE 1024 counts)
_ARRIVE_MIN_MS = int(ARRIVE_MIN_S * 1000)
_BLOCK_MS = 40000  # ms: estimator._BLOCK_MS (BLOCK_S): readings this far apart are a block each


def predict(self, target_c, approach=0):
    """Work out the time until ``target_c`` (deg C); return the status code.

    ``ThermalEstimator.predict`` (this function is that method). ``approach``: -1 the product cools
    to its target (a drink), +1 heats to it (a kettle, a bath), 0 not given (the direction of
    travel decides, with the rules of :mod:`tinytherm.settle`). With -1 or +1 a liquid moving the
    other way is never ``ARRIVED`` and gets no time; a probe still travelling the other way after
    a pour gets the liquid's time, its law from before carried on (``Settle.carried``).

    Fills ``status``, ``eta_s``, ``eta_low_s``, ``eta_high_s`` (seconds after the latest reading;
    ``None`` without an estimate), ``eta_rel_sd``, ``rate_per_s`` (1/s), ``equilibrium_c``,
    ``ambient_est_c``, ``temp_est_c`` (deg C) and ``gain_k_per_s`` (K/s). Worked out once per
    finished block and question (target, approach), counted down between blocks; the latest
    reading is checked against the arrival line at every call. Asking changes no later answer
    (it may finish a closed block's work early: its result does not depend on when it runs).
    Never raises.
    """
    while self.blocks.pending:
        self._next_step()  # a closed block's work not done yet: the answer needs all of it
    target = target_c if type(target_c) is float else as_float(target_c)
    if approach != 1 and approach != -1:
        approach = 0  # (a bad value: as if not given, never an exception)
    if self.guard.consecutive_rejections >= FAULT_AFTER:
        self.audits.forget()
        self.clear(st.SENSOR_FAULT)
        return self.status
    b = self.blocks
    age = b.age_ms
    c = self.audits
    if c.gen == c.done and c.target == target and c.approach == approach:
        # the same block and question: count the answer down, unless the
        # latest reading has reached the arrival line
        m = c.arrive_dir
        a = c.arrive_c
        reached = m != 0 and ((b.c >= a and b.cq >= a) if m > 0 else (b.c <= a and b.cq <= a))
        if reached and self.settle.backed_off(self, m):
            reached = False  # back beyond the turn threshold: a top-up, not an arrival
        if self.status == st.ARRIVED:
            if reached:
                return self.status
        elif reached and _arrived(self, target, m, approach, age):
            self.arrive()
            return self.status
        elif self.count_down(c, age):
            return self.status
    c.gen = -1
    try:
        _work_out(self, target, approach)
        if self._profile is not None and self.status < st.TRACKING and target is not None:
            self._profile.first_answer(self, target, approach)  # (a passive profile's: none shown)
    except (ValueError, OverflowError, ZeroDivisionError, TypeError):
        self.clear(st.SETTLING)
        c.arrive_dir = 0
    if self.detector.disturbed and (self.status == st.SETTLING or self.status == st.GATHERING):
        self.status = st.DISTURBED  # re-learning after a jump
    if c.gen != -2:
        c.gen = c.done
    c.target = target
    c.approach = approach
    self.count_down(c, age, True)
    return self.status

def _work_out(est, target, approach):
    """The full answer for the latest block close (cached by ``predict``)."""
    reg = est.reg
    b = est.blocks
    c = est.audits
    c.age_ms = b.age_ms - b.it  # the answer is for the block close
    c.arrive_dir = 0
    # three readings, or two that began the fit at a turn (the first reading of the
    # approach was taken before it: the probe in the air before a pour)
    if (b.readings < (2 if est.settle.turn else 3) or not reg.ok or target is None
            or not -1e4 <= target <= 1e4):
        est.clear(st.GATHERING)
        if est.readings and b.readings:  # (none in this fit: it starts at the next)
            est.temp_est_c = b.c * _INV
        return
    est.clear(st.SETTLING)
    level = est.blocks.level
    slope = est._slope_ahead()  # the slope now, unless a measured air cycles: then its mean's
    k = reg.k
    est.temp_est_c = level
    est.rate_per_s = k
    est.gain_k_per_s = reg.g
    if k > 0.0:
        e = level + slope / k
        if -1e300 < e < 1e300:  # (a vanishing k levels off nowhere in range)
            est.equilibrium_c = e
    ahead = est._ambient_ahead_c()  # the ambient as at the block close, or None
    if ahead is not None:
        est.ambient_est_c = ahead
    elif est.equilibrium_c is not None:
        # unknown ambient: where the liquid would level off without heat input
        r = est.equilibrium_c - reg.g * (b.uc / 1024) / k
        if -1e300 < r < 1e300:
            est.ambient_est_c = r
    y = b.c * _INV
    gk = -(level - b.cb * _INV)  # d slope / d k at the level (reference: the closing reading)
    var_slope = reg.pss + gk * gk * reg.pkk + 2.0 * gk * reg.psk
    # direction of travel: the slope when it stands out of its noise, else the block means
    if slope * slope > 4.0 * var_slope:
        d = 1 if slope > 0.0 else -1
    else:
        d = est.blocks.dir
    m = est.blocks.dir
    if reg.heater and not est.heater and ahead is not None:  # (the air's column, fit.AIR_COLUMN)
        # the probe's direct view of the air, w (A - A0) in the level now: ahead the air is
        # at its mean M (as the law's, est._slope_ahead), so the probe is w (M - A0) further
        level += reg.g * est.inputs.ahead_shift_c(b.cb - b.g0)
    gap = target - level
    age_s = c.age_ms * 0.001  # (the fit's age at the block close, as the answer)
    # the arrival line: at most min(0.3 C, 3 noise sd) short of the target
    tol = 3.0 * est.noise.sd
    if tol > ARRIVE_TOL_C:
        tol = ARRIVE_TOL_C
    if m != 0 and d == m and (approach == 0 or m == approach):
        # (an arrival needs the fitted slope to agree with the block means: a spike or
        # a wrong turn of the means is no arrival while the fit says the other way)
        c.arrive_dir = m
        c.arrive_c = to_counts(target - m * tol)
        # a reading back beyond the extreme by move_c ends an arrival before the fit
        # sees a turn: the lagging probe rising after a top-up
        c.hold_c = to_counts(est._extreme_c() - m * move_c(est.noise.sd))
        if (b.c - c.arrive_c) * m >= 0 and _arrived(est, target, m, approach, b.age_ms):
            if (b.cq - c.arrive_c) * m >= 0:
                est.arrive()
                return
            # one reading on the line may be a spike: arriving now, confirmed by the next
            est.status = st.TRACKING
            est.eta_s = est.eta_low_s = 0.0
            est.eta_high_s = tol / (slope if slope > 0.0 else -slope) if slope != 0.0 else math.inf
            c.gen = -2  # (from the latest reading: not counted down)
            return
    slow = d == 0 and slope * gap > 0.0  # no direction yet (the slope within 2 sd of 0, the block
    if slow:  # means not moved): the time at the fitted slope, no upper bound (it may not move)
        d = 1 if slope > 0.0 else -1
    if approach != 0 and ((m if m != 0 else d) != approach or d == -approach):
        if d == -approach and gap * d <= 0.0 and slope * d > 0.0 and k > 0.0:
            # (the probe travelling away after a pour: the liquid comes back as this
            # product reaches its target)
            est.settle.carried(est, target, level, slope, k)
        return  # moving away from how this product reaches its target
    if gap * d <= 0.0:
        gap = target - y  # the level crossed, the readings not yet
        c.gen = -2  # (an answer from the latest reading: not counted down)
        r = est.settle.ref * _INV  # (beyond 1e4 C: none, a fit restarted at a jump)
        if (gap * d <= 0.0 and d == m and slope * d > 0.0 and r < 1e4 and (target - r) * m > 0.0
                and (b.cq * _INV - target) * m >= 0.0
                and (approach or est.settle.allows(est, target, m, b.age_ms))):
            # the level and the latest two readings past the target, still going, the fit's
            # reference reading short of it (the crossing seen, not a probe that began past
            # it; no direction given: nor a probe still meeting the liquid), the arrival's
            # tests not passed yet (readings minutes apart: many rows): arriving now, never
            # ARRIVED. At most the line's tolerance to go at the fitted slope ARRIVE_Z sd
            # slower (none: no upper bound), widened by what the audits measured
            est.status = st.TRACKING
            est.eta_s = est.eta_low_s = 0.0
            est.eta_high_s = math.inf
            slower = slope * d - ARRIVE_Z * math.sqrt(var_slope)  # deg C/s
            if slower > 0.0:
                go = tol / slower  # s: the line's tolerance to go at it
                est.eta_high_s = go * spread(c.z * math.sqrt(c.var_at(go, age_s, AUDIT_PRIOR_VAR)))
            return
    # the equilibrium's drift since the longest audit started (its waiting forecast holds the
    # fit then); not with a heater, profile or ambient (the duty, law or known air move it)
    a = est.audits.a[2]
    passive = not (est.heater or est._profile_on or est.inputs.known())
    bd = a.drift_to(age_s - a.age, level, slope, k) if passive else None
    kept = passive and bd is None  # (none measured since it began: the one kept answers)
    if bd is None:
        bd = 0.0
    if (d == 0 or slope * d <= 0.0 or gap * d <= 0.0) and not (
            bd * m > 0.0 and gap * m > 0.0 and (approach == 0 or approach == m)
            and c.stands_out(bd * (age_s - a.age), est.reg, slope, k, var_slope, gk)):
        if approach == 0 and slope * d > 0.0 and k > 0.0:
            est.settle.carried(est, target, level, slope, k)  # (the probe rising after a pour)
        return  # not moving, or turning (unless on an equilibrium drifting on): no honest time
    if est._profile_on and est.heater and age_s < PROFILE_LAG_TIMES * est._profile.probe_lag_s:
        return  # the element's and the probe's lag still hide the heat-up's slope
    eta = eta0 = time_to_target_from_slope_s(gap, slope, k)
    eta_shape = None  # the time under the profile's law (passive liquids)
    if est._profile_on:
        eta_shape = est._profile.law_for(est, gap, level, slope, var_slope / (slope * slope))
    open_end = slow
    if bd != 0.0:
        # (turned: resting on its E, the liquid moves at the drift; shown within the fit's age)
        eta = time_to_target_drift_s(gap, slope if slope * gap > 0.0 else bd, k, bd)
        if slope * gap <= 0.0 and not (eta is not None and eta <= age_s):
            return
        if eta is None:
            bd = 0.0
            if eta0 is not None:
                eta = eta0  # never at the drift measured, at a slower one in time: no upper bound
                open_end = True
    dof = reg.nb - 2.0  # the residual per reading over the noise by REACH_SD of its chi-square sd,
    told = 0 if dof <= 1.0 else (  # sqrt(2 / dof): -1 a misfit shows, 1 none, 0 too few blocks
        -1 if reg.s2r > est.noise.var * (1.0 + REACH_SD * math.sqrt(2.0 / dof)) else 1)
    if eta is None and eta_shape is None:
        # beyond the fitted equilibrium E = level + slope / k, by ``over``. E is an
        # extrapolation: a bending rate (a coolant warming, a slow second mode) moves
        # it by a share of the distance still to go, and k REACH_SD sd lower moves it
        # too (no end at k <= 0). Within that slack: the time under the law levelling off
        # the rest of the slack past the target, no upper bound; beyond it, out of reach
        # when even that k cannot, or past a known ambient (a passive liquid never passes it)
        to_e = slope / k if k > 0.0 else 0.0  # E - level, the sign of gap
        slack = EQUILIBRIUM_SLACK * (to_e if to_e > 0.0 else -to_e)
        v = reg.pkk + ((RATE_MODEL_SD * k) ** 2 if told < 0 else 0.0)  # (+ model error: a misfit)
        k2 = k - REACH_SD * math.sqrt(v)
        reach = math.inf if k2 <= 0.0 else (slope / k2 - to_e) * (1.0 if gap > 0.0 else -1.0)
        room = math.inf  # R - E the way the target lies (R as at the block close)
        if ahead is not None and not est.heater:
            room = (ahead - level - to_e) * (1.0 if gap > 0.0 else -1.0)
        slack = min(reach if reach > slack else slack, room)
        over = gap - to_e if gap > 0.0 else to_e - gap
        if k > 0.0 and over < slack:
            k = slope / (gap + (slack - over) * (1.0 if gap > 0.0 else -1.0))
            eta = time_to_target_from_slope_s(gap, slope, k)
        if eta is None and kept and a.drift * gap > 0.0:
            # no drift measured since the longest audit began again: not out of reach on
            # that alone, the drift its last whole span measured answers (as one measured)
            eta = time_to_target_drift_s(gap, slope, k, a.drift)
            bd = a.drift
        if eta is None:
            if k2 * gap / slope >= 1.0 or over >= room:
                est.status = st.OUT_OF_REACH
            return
        if bd == 0.0:
            open_end = True
    # the fit's own variance of ln(eta) (times DELTA_VAR_FACTOR): the audits' prior
    law = eta if bd == 0.0 else eta0  # the time under the fitted law (a fixed equilibrium)
    own2 = 0.0 if law is None else reg.eta_rel_var(gap, slope, k, law, gk)
    rel2 = DELTA_VAR_FACTOR * own2
    if rel2 < AUDIT_PRIOR_VAR:
        rel2 = AUDIT_PRIOR_VAR
    if rel2 < LINE_PRIOR_VAR and est.noise.n <= NOISE_PRIOR_N:
        # nothing has measured the misfit: the exact line (k pinned) before an audit checks,
        # read a block apart until the checks at the answer's horizon replace it (var_at; the
        # shortest's first check left 2 % on a pot's fits of 5-8 readings); a free fit read a
        # block apart whose residual has no degree of freedom yet (its variance the noise's)
        if reg.k == 0.0 and (not est.audits.a[0].n or est.guard.elapsed_ms >= _BLOCK_MS):
            rel2 = LINE_PRIOR_VAR
        elif est.guard.elapsed_ms >= _BLOCK_MS and reg.nb - (3.0 if est.heater else 2.0) <= 1.0:
            rel2 = rel2 if rel2 > YOUNG_PRIOR_VAR else YOUNG_PRIOR_VAR
    # model error: k off by RATE_MODEL_SD of itself moves ln(eta) by that times
    # d ln(eta) / d ln(k) at the measured slope, q / ((1 - q) k eta) - 1 (q = k gap / slope)
    q = k * gap / slope
    b = 0.0 if law is None else RATE_MODEL_SD * (
        q * 0.5 if -1e-4 < q < 1e-4 else q / ((1.0 - q) * k * law) - 1.0)
    if told > 0 and est.noise.n > NOISE_PRIOR_N and eta <= age_s:
        b = 0.0  # a law explaining its readings: within its age, its audits measure a bend
    if bd != 0.0:
        # the drift DRIFT_SD of itself smaller: one sd more of ln(eta) (never so: no upper end)
        bs = bd * (1.0 - DRIFT_SD)  # (a turned fit: the liquid at the slower drift too)
        other = time_to_target_drift_s(gap, slope if slope * gap > 0.0 else bs, k, bs)
        if other is None:
            open_end = True
        elif other > 0.0:
            b = math.sqrt(b * b + math.log(other / eta) ** 2)
    up = 0.0
    if ((passive or est.heater and not est._profile_on) and bd == 0.0 and eta0 is not None
            and (eta0 > age_s or est.heater) and k * age_s >= UNSEEN_FROM):
        # no drift measured: a bend slower than the fit's age is unseen (heated: the losses grow
        # faster than the excess; no drift measured, so within its age too, by the share eta/age)
        up = eta0 / age_s if eta0 < age_s else 1.0
        up = time_to_target_from_slope_s(gap, slope, k + UNSEEN_BEND / age_s * up)
        open_end = open_end or up is None
    elif passive and bd == 0.0 and k * age_s < UNSEEN_FROM:
        # not bent yet, the ambient hint in the fit (over 2 of its sd away, moving towards
        # it) and the equilibrium beyond it all the same: the readings' bend is not the
        # liquid's law yet (a lagging probe's start, a stir), the law levelling off at the
        # hint is as likely: its time is the upper end (open-ended past it)
        dist, sd = est.inputs.prior
        dist -= level  # the hint's E - level, deg C (as the estimator's hint: R = 0)
        if (dist * slope > 0.0 and (dist > 2.0 * sd or dist < -2.0 * sd)
                and (k <= 0.0 or (slope / k - dist) * slope > 0.0)):
            up = time_to_target_from_slope_s(gap, slope, slope / dist)
            open_end = open_end or up is None
    if eta_shape is not None:
        eta = eta_shape  # the profile's law gives the shape, the fitted slope the scale
    est.eta_s = eta
    v = est.audits.var_at(eta, age_s, rel2)
    p = est._profile  # its calibrated interval, on or own fit (not once dropped)
    if p is not None and (est._profile_on or p.own_fit):
        p.interval_into(est, eta)
    else:
        if eta > WIGGLE_AGE * age_s and not est.heater:
            # the fit's misfit beyond the noise, per block mean (a probe swinging with the
            # air that drives a passive liquid: the law has no such term). The anchor carries
            # today's; further ahead the crossing meets another, off by its sd
            w2 = (reg.s2r - est.noise.var) * reg.nb / reg.w
            at = (slope - k * gap) * eta  # (deg C: the law's slope at the target, times eta)
            if w2 > 0.0 and at * slope > 0.0:
                b = math.sqrt(b * b + w2 / (at * at))
        rel = math.sqrt(v + b * b)
        f = spread(c.z * rel)
        est.eta_low_s = eta / f
        est.eta_high_s = math.inf if open_end else (eta * f if eta * f > up else up)
        est.eta_rel_sd = rel
    if v <= MAX_REL_SD * MAX_REL_SD:  # (the forecast-error variance at this horizon decides
        est.status = st.TRACKING      # whether to show it; the model error only widens it)

def _arrived(est, target, m, approach, age_ms):
    """Arrival, the reading being on the line: the liquid has passed the target in the direction
    ``m`` beyond the noise, in a fit old enough; with no direction given, not a probe still
    meeting the liquid (:meth:`tinytherm.settle.Settle.allows`).

    Passed: the extreme block mean beyond the target by :data:`ARRIVE_Z` sd of its mean, or the
    fitted level at the latest reading by as many of its sd; that level not back short by more
    than the line's tolerance (a drink hovering at its target while the fridge cycles); with the
    measured air's column, the liquid too, the level less the probe's view of the air's swing
    ``w (A - M)``, by as many of its sd (``w``'s own in it)::

        (ext - target) m >= Z sd / sqrt(n_ext)   or   (level - target) m >= Z sd_level
        and (target - level) m <= tol   [and (level - w (A - M) - target) m >= Z sd_liquid]

    ``sd``: the noise's, the prior's share of its variance replaced by the fit's residual
    variance per reading when that is larger (docs/design.md, "Honest arrival").
    """
    if age_ms < _ARRIVE_MIN_MS or est.settle.backed_off(est, m):
        return False  # (young, or back beyond the turn threshold: a top-up's probe rising)
    if approach == 0 and not est.settle.allows(est, target, m, age_ms):
        return False  # (no direction given: a probe still meeting the liquid, tinytherm.settle)
    reg = est.reg
    b = est.blocks
    air = reg.heater and not est.heater  # (the measured air's column, fit.AIR_COLUMN)
    if air and est.inputs.ahead is None:
        return False  # (no mean air known at the block close: nor the liquid, below)
    level = (reg.my + reg.s * (reg.t + b.it * 0.001) - reg.k * (reg.x + b.ix * _IX_TO_CS)
             + reg.anchor)  # (the fitted level at the latest reading)
    dv = b.iv * (_INV if air else _IV_TO_S)  # (the air's move since the block, or the duty's)
    if reg.heater:
        level += reg.g * (reg.v + dv)
    tol = 3.0 * est.noise.sd
    if tol > ARRIVE_TOL_C:
        tol = ARRIVE_TOL_C
    if (target - level) * m > tol:
        return False  # the level is back short: a retreat, no arrival
    # the extreme block's scatter: the noise, but the share of it that is still the prior
    # (readings minutes apart never measure it) the fit's residual variance per reading
    # instead, as in the level's below (there the misfit of a probe on an air cycle)
    nz = est.noise
    s2 = nz.var
    if reg.s2r > s2:
        s2 += (reg.s2r - s2) * (1.0 if nz.n <= NOISE_PRIOR_N else NOISE_PRIOR_N / nz.n)
    if (est._extreme_c() - target) * m < ARRIVE_Z * math.sqrt(s2 / b.ext_n):
        if not (est.heater or reg.pkk > 0.0):
            return False  # (no heater, k pinned at 0: the level is a line run on, no crossing)
        var = reg.var_level(b.it * 0.001, b.ix * _IX_TO_CS, dv)  # (at that reading)
        if (level - target) * m < ARRIVE_Z * math.sqrt(var if var > 0.0 else 0.0):
            return False
    if not air:
        return True
    # the liquid: the fit with the air at its mean ahead M (as the answer's level), not the
    # air now (a probe pulled by cold air is no arrival)
    a = est.inputs.ahead_shift_c(b.cb - b.g0)  # M - A0, deg C
    var = reg.var_level(b.it * 0.001, b.ix * _IX_TO_CS, a)
    level += reg.g * (a - dv)
    return (level - target) * m >= ARRIVE_Z * math.sqrt(var if var > 0.0 else 0.0)


def move_c(noise_sd_c):
    """deg C a reading must move to be no noise: 4 noise sd, at least ``ARRIVE_TOL_C``."""
    on = 4.0 * noise_sd_c
    return on if on > ARRIVE_TOL_C else ARRIVE_TOL_C


# the audits' horizons: fractions of the fit's age, of at least 80 s (10, 20 and 40 s at least;
# derived, not stored: an Audit's eight attributes fill its table)
AUDIT_HORIZONS = (0.125, 0.25, 0.5)
AUDIT_PRIOR_VAR = 0.0004  # (log time)^2: least forecast-error variance before any audit (2 % sd)
DELTA_VAR_FACTOR = 1.0    # the fit's delta-method variance of ln(eta) times this: the audits' prior
LINE_PRIOR_VAR = 0.15     # (log time)^2: least prior of the pinned line (before any audit checks;
#   read a block apart, at every age: the audits' checks at a horizon replace it by their count)
YOUNG_PRIOR_VAR = 0.04    # ... of a free fit with no residual degree of freedom, the noise its
#   prior, read a block apart (leave-one-family-out, 32 tune dense and sparse: 7 of 8 folds)
RATE_MODEL_SD = 0.2       # relative sd of the fitted rate k from model error (a bend it cannot see)
REACH_SD = 2.0            # sd of k by which a target beyond the fitted equilibrium may be reached
#   (leave-one-family-out on dense and sparse, 32 tune traces per family and grid)
AUDIT_YOUNG = 4.0         # an audit learns only when its horizon was at most this times the fit's age
#   (the three: leave-one-family-out choices, benchmarks/lofo_coverage.py)
DRIFT_SD = 0.5      # relative sd of the equilibrium's drift (one sd more at it this much smaller)
DRIFT_MIN_S = 120.0  # s: least time the drift is measured over
DRIFT_BEND = 1.0    # time constants (k x age) the fit had bent through at the drift's start
#   (before, its E is an extrapolation still converging; the three: leave-one-family-out;
#   DRIFT_BEND 1 of 2, 1.5, 1 in 7 of 8 folds, 32 tune traces per family dense and sparse)
UNSEEN_BEND = 1.0   # 1/age by which k may be larger at the upper end, no drift measured yet
UNSEEN_FROM = 0.3   # time constants (k x age) a fit has bent through before it applies
#   (both leave-one-family-out, 32 tune traces per family dense and sparse; 0 = off)
AUDIT_MEMORY = 8        # audits in the running mean of squared log errors
AUDIT_FORGET = 2.0      # an older check's weight falls as (its age / the age now)^this
#   (leave-one-family-out, 16 tune traces per family dense and sparse: 0, 1, 2, 3, 4)
AUDIT_STRETCH = 4.0     # most the longest audit's variance is stretched beyond it
AUDIT_LOG_CAP = 2.0794  # ln 8: one audit counts at most a factor 8


class Audit:
    """One horizon: the forecast waiting to be checked and the running error variance."""

    def __init__(self, fraction):
        self.fraction = fraction   # horizon as a fraction of the fit's age (of at least 80 s)
        self.var = 0.0             # (log time)^2: mean squared log error of the checks
        self.n = 0                 # checks in the running mean (at most AUDIT_MEMORY)
        self.clear()

    def clear(self):
        """Drop the waiting forecast (the variance is kept)."""
        self.age = -1.0            # fit age at the start, s; < 0: nothing waiting
        self.level = 0.0           # fitted level then, deg C
        self.slope = 0.0           # fitted slope then, deg C/s
        self.rate = 0.0            # fitted k then, 1/s
        self.drift = 0.0           # deg C/s: E's drift over the last whole span (0: none)

    def horizon_s(self, age_s):
        """The horizon for a fit ``age_s`` seconds old, s."""
        return self.fraction * (age_s if age_s > 80.0 else 80.0)

    def drift_to(self, dt, level, slope, rate):
        """E's drift, deg C/s, from the waiting forecast to the fit ``dt`` s later (level deg C,
        slope deg C/s, rate 1/s); None: no bend yet at either end, or a span under DRIFT_MIN_S."""
        r = self.rate
        if not (rate > 0.0 and r > 0.0 and r * self.age >= DRIFT_BEND and dt >= DRIFT_MIN_S):
            return None
        return (level + slope / rate - self.level - self.slope / r) / dt

    def due(self, age_s):
        return self.age < 0.0 or age_s - self.age >= self.horizon_s(self.age)

    def check(self, law, age_s, level, slope, rate, need_c):
        """Learn from the waiting forecast if due (its predicted move over ``need_c`` deg C), then
        start a new one. ``law.forecast_s(moved_c, level_c, slope, rate)``: the seconds the
        answer's law takes for a change (the estimator's own law)."""
        if self.age >= 0.0:
            took = age_s - self.age
            if took < self.horizon_s(self.age):
                return
            moved = level - self.level
            r = self.rate * took  # the move the forecast predicted decides whether it learns
            try:  # (never the observed one: that kept the checks a swing pushed along, fast)
                fm = self.slope * took * (1.0 if r < 1e-6 else (1.0 - math.exp(-r)) / r)
            except (ValueError, OverflowError):
                fm = 0.0
            if (fm > need_c or fm < -need_c) and took <= AUDIT_YOUNG * self.age:
                pred = law.forecast_s(moved, self.level, self.slope, self.rate)
                err = AUDIT_LOG_CAP
                if pred is not None and pred > 0.0:
                    try:
                        err = math.log(took / pred)
                    except (ValueError, OverflowError, ZeroDivisionError):
                        pass
                    if err > AUDIT_LOG_CAP:
                        err = AUDIT_LOG_CAP
                    elif err < -AUDIT_LOG_CAP:
                        err = -AUDIT_LOG_CAP
                # the older checks weigh (age then / age now)^AUDIT_FORGET less: a mean over recent
                # errors, unbiased (n a whole count: no new byte; AUDIT_FORGET 0 the plain mean)
                old = self.n * (self.age / age_s) ** AUDIT_FORGET
                self.var = (old * self.var + err * err) / (old + 1.0)
                n = int(old + 1.5)
                self.n = n if n < AUDIT_MEMORY else AUDIT_MEMORY
            drift = self.drift_to(took, level, slope, rate)  # (kept for the answer)
            self.drift = 0.0 if drift is None else drift
        self.age = age_s
        self.level = level
        self.slope = slope
        self.rate = rate


class Audits:
    """The three audits (saved: their 15 floats and 3 counts); beside them, never saved, the
    answer's cache (:meth:`forget`), the interval's half-width ``z`` in sd and ``done``."""

    STATE_SIZE = 3 * (5 * 8 + 1)

    def __init__(self, z):
        h = AUDIT_HORIZONS
        self.a = (Audit(h[0]), Audit(h[1]), Audit(h[2]))
        self.z = z
        self.done = 0  # blocks finished since the fit started (the estimator's): the key
        self.forget()  # (here, not in the estimator: its attribute table stays small)

    def forget(self):
        """Invalidate the answer's cache: the ``done`` (``gen``), target and approach it was
        for, the fit's age then (ms), the arrival and hold lines (counts; direction +-1, 0)."""
        self.gen = -1
        self.target = None
        self.approach = self.age_ms = self.arrive_dir = self.arrive_c = self.hold_c = 0

    def reset(self):
        for a in self.a:
            a.var = 0.0
            a.n = 0
            a.clear()

    def clear(self):
        """Drop the waiting forecasts (the duty changed, or the fit restarted)."""
        for a in self.a:
            a.clear()

    def any_due(self, age_s):
        """True when at least one audit would act at this age (most blocks: none)."""
        for a in self.a:
            if a.due(age_s):
                return True
        return False

    def stands_out(self, moved, reg, slope, k, var_slope, gk):
        """True when the fitted equilibrium's move ``moved`` (deg C) is over ``z`` of its sd:
        E's delta-method variance now (s the slope at the level), for both ends::

            var E = (var s - 2 e cov(s, k) + e^2 var k) / k^2,   e = s / k
        """
        e = slope / k
        v = var_slope - 2.0 * e * (reg.psk + gk * reg.pkk) + e * e * reg.pkk
        return moved * moved * k * k > 2.0 * v * self.z * self.z

    def var_at(self, eta_s, age_s, prior_var):
        """Forecast-error variance of ln(eta) at horizon ``eta_s`` s, fit ``age_s`` s old.

        The audits' mean squared log error and their count at that horizon
        (interpolated between the horizons), with ``prior_var`` worth one check::

            var = (prior_var + n var_audits) / (1 + n)
        """
        a0, a1, a2 = self.a
        h0 = a0.horizon_s(age_s)
        h2 = a2.horizon_s(age_s)
        if eta_s <= h0:
            v = a0.var
            n = a0.n
        elif eta_s >= h2:
            f = eta_s / h2
            v = a2.var * (f if f < AUDIT_STRETCH else AUDIT_STRETCH)
            n = a2.n
        else:
            # the horizons are a factor 2 apart: interpolate on log2(eta / h0)
            pos = math.log(eta_s / h0) / math.log(h2 / h0) * 2.0
            if pos <= 1.0:
                v = a0.var + pos * (a1.var - a0.var)
                n = a0.n + pos * (a1.n - a0.n)
            else:
                v = a1.var + (pos - 1.0) * (a2.var - a1.var)
                n = a1.n + (pos - 1.0) * (a2.n - a1.n)
        return (prior_var + n * v) / (1.0 + n)
