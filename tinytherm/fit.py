"""The regression of the estimator: block sums per reading, a weighted fit per block.

Model, with ``G = T - R`` the gap to a reference ``R`` and ``u`` the duty::

    dT/dt = s - k (G - G0) + g (u - u0)

Integrated from any earlier moment it is linear in the parameters and free
of derivatives::

    y(t) = c + s t - k x(t) + g v(t),   x = int (G - G0) dt,  v = int (u - u0) dt

(no heater, a measured air ``A``: ``v = A - A0`` instead, the probe's direct view of the
air with weight ``g``, :data:`AIR_COLUMN`.)

Two parts, each owning its state (:mod:`tinytherm.state` packs their bytes of the
saved state, loaded only by a product that saves):

- :class:`BlockSums`, per reading and in integers only: readings in counts of
  1/:data:`SCALE` deg C, time in ms, duty in 1/:data:`DUTY_SCALE`. It advances
  the trapezoid integrals and sums them over the open block, and keeps the
  successive differences that measure the reading noise. On MicroPython small
  integers are not heap objects, so a reading costs no float boxes here.
- :class:`Regression`, once per block (a few per minute): the block means are
  one observation of the equation above; exponentially weighted means and
  co-moments (West's incremental formulas, coordinates kept relative to the
  weighted means and to the latest block, so the numbers stay small and
  float32-safe), and the ridge-regularised solve with its covariance.

Runs unchanged on CPython and MicroPython.
"""
import math

SCALE = 256            # counts per deg C in the block sums (1/256 C: far below any probe's noise)
DUTY_SCALE = 1024      # counts of full heater duty
MAX_BLOCK_READINGS = 255
NOISE_MAX_DT_MS = 120000  # successive differences further apart than this measure drift, not noise
NOISE_PRIOR_C = 0.05      # deg C: reading noise sd assumed before it is measured
NOISE_PRIOR_N = 4         # readings that prior is worth
AIR_COLUMN = 2            # Regression's third column is the measured air's (no heater)
_INV_SCALE = 1.0 / SCALE


class BlockSums:
    """Integer sums of the open block and the latest reading (see the module docstring)."""

    STATE_SIZE = 89   # saved bytes (tinytherm.state packs them)

    def __init__(self):
        # the estimator's, kept here so that its attribute table stays small (it sets them;
        # saved in its header, not below): the direction of the block means (+1, -1, 0);
        # the first block mean while dir == 0, then the extreme, as its block's sum (counts)
        # and readings; the fitted, anchored level at the latest block close (deg C,
        # derived); 1: a block closed and its second half not done, 2: its audits due
        self.dir = 0
        self.ext_sy = 0
        self.ext_n = 1
        self.level = 0.0
        self.pending = 0
        self.air_col = False  # the regression has the air's column: ``iv`` holds the air's move
        self.reset()

    def reset(self):
        """Forget the block and the latest reading (a new fit starts)."""
        self.n = 0          # readings in the open block
        self.it = 0         # ms since the block's start (its duration)
        self.ix = 0         # 2 x int (G - G0) dt since the block's start, count ms
        self.iv = 0         # int (u - u0) dt since the block's start, duty-count ms
        self.st = 0         # sums over the block's readings of it, ix, iv and the count
        self.sx = 0
        self.sv = 0
        self.sy = 0
        self.c = 0          # latest reading, counts
        self.rc = 0         # reference R at it, counts
        self.uc = 0         # duty over the latest interval, counts
        self.g0 = 0         # reference gap G0, counts (the latest block's)
        self.u0 = 0         # reference duty, counts
        self.cb = 0         # the reading that closed the latest block, counts
        self.cq = 0         # the reading before the latest, counts
        # (not saved: used only by the block close's second half, which save() finishes)
        self.cp = 0         # the reading that closed the block before the latest, counts
        self.ip = 0         # the latest block's duration: ms from cp to cb
        self.np = 1         # readings in the latest block
        self.sp = 0         # and their sum, counts (not saved: used by the block's second half)
        self.age_ms = 0     # time since the fit's first reading, ms
        self.readings = 0   # readings in this fit (counted to 255)
        # noise: successive differences less the fitted slope, clipped
        self.e2 = 0         # sum of their squares, counts^2
        self.en = 0         # how many

    def first(self, c, rc, uc):
        """The fit's first reading: counts of the reading, reference and duty."""
        self.reset()
        self.c = c
        self.rc = rc
        self.uc = uc
        self.g0 = c - rc
        self.u0 = uc
        self.n = 1
        self.sy = c
        self.readings = 1
        self.cb = c
        self.cp = c
        self.cq = c

    def add(self, c, rc, uc, dt_ms, expect, clip):
        """One reading ``dt_ms`` after the previous: integers only.

        ``expect``: the difference from the previous reading the fit expects
        (counts); ``clip``: the largest deviation from it that counts as noise.
        """
        # trapezoid, doubled: ix += (G_n + G_(n-1) - 2 G0) dt
        self.ix += (c - rc + self.c - self.rc - 2 * self.g0) * dt_ms
        if self.air_col:
            # (no heater, a measured air: the air's move since the block began, counts; its
            # sum over the block gives the air column's block mean, Regression(AIR_COLUMN))
            self.iv = rc - self.cb + self.g0
        elif uc != self.u0 or self.iv:
            self.iv += (uc - self.u0) * dt_ms
        self.it += dt_ms
        self.age_ms += dt_ms
        self.n += 1
        if self.readings < 255:
            self.readings += 1
        self.st += self.it
        self.sx += self.ix
        self.sv += self.iv
        self.sy += c
        self.cq = self.c
        if dt_ms <= NOISE_MAX_DT_MS and -clip <= expect <= clip:
            # (a step the fit expects beyond the clip tells noise from the fit's own
            # misfit only if forecast to a few per cent: readings a minute apart on a
            # bending curve taught a noise of two to three times the probe's)
            e = c - self.c - expect
            if e > clip:
                e = clip
            elif e < -clip:
                e = -clip
            self.e2 += e * e
            self.en += 1
        self.c = c
        self.rc = rc
        self.uc = uc

    def noise_var(self):
        """Variance of one reading from the block's differences, deg C^2, or -1.0 if none."""
        n = self.en
        if n < 1:
            return -1.0
        # var(difference less the fitted change) = 2 sigma^2: one difference is
        # enough (sparse readings give a block per reading)
        return self.e2 / (2 * n) * (_INV_SCALE * _INV_SCALE)

    def next_block(self):
        """Zero the block sums; the latest reading becomes the new reference (exact)."""
        self.cp = self.cb
        self.ip = self.it
        self.np = self.n
        self.sp = self.sy
        self.n = 0
        self.it = self.ix = self.iv = 0
        self.st = self.sx = self.sv = self.sy = 0
        self.e2 = self.en = 0
        self.g0 = self.c - self.rc
        self.u0 = self.uc
        self.cb = self.c


class Noise:
    """The reading noise: its variance, learnt from the blocks' successive differences.

    ``var`` (deg C^2) starts at :data:`NOISE_PRIOR_C` squared worth
    :data:`NOISE_PRIOR_N` readings, never below the rounding error of the
    sensor step (``q^2 / 12``), and moves towards each block's estimate with
    weight ``en / n`` (``n`` <= 100 readings). A difference counts at most
    sqrt(8) sd from what the fit expects (2 sd of the halved square), so a
    misfit cannot pass for noise, and a difference counts only when the step
    the fit expects is within that clip. ``expect``/``clip`` (counts) are what
    :meth:`BlockSums.add` needs, refreshed when the step length changes.
    """

    STATE_SIZE = 9

    def __init__(self, quantum_c):
        self.floor = max(1e-6, quantum_c * quantum_c / 12.0)
        self.reset()

    def reset(self):
        self.var = max(self.floor, NOISE_PRIOR_C * NOISE_PRIOR_C)
        self.n = NOISE_PRIOR_N
        self.refresh()

    def refresh(self):
        """Derived values after ``var`` changed (never saved)."""
        self.sd = math.sqrt(self.var)
        self.clip = int(2.8284 * self.sd * SCALE) + 1   # counts: sqrt(8) sd
        self.expect = 0
        self.expect_ms = -1

    def expectation(self, rate_c_per_s, dt_ms):
        """Counts the fit expects between two readings ``dt_ms`` apart (cached per step)."""
        if dt_ms != self.expect_ms:
            self.expect = int(math.floor(rate_c_per_s * dt_ms * (SCALE * 0.001) + 0.5))
            self.expect_ms = dt_ms
        return self.expect

    def learn(self, blocks):
        """Move towards the block's own estimate (call before ``blocks.next_block``)."""
        v = blocks.noise_var()
        if v < 0.0:
            return
        m = blocks.en
        n = self.n + m
        if n > 100:
            n = 100
        self.n = n
        v = self.var + (v - self.var) * m / n
        self.var = v if v > self.floor else self.floor
        self.refresh()


class Inputs:
    """The reference ``R`` of each reading (the air the law is driven by), its future mean, the duty.

    ``R`` is the fixed ambient, or the measured air (:class:`tinytherm.air.Air`,
    imported with the first measured air: a product without an air sensor
    does not load it), or 0 when nothing is known. A measured air, once
    given, overrides the fixed one; a reading without one holds the last.
    What the air *will* do on average is :meth:`ahead_fine`.
    """

    STATE_SIZE = 29   # the air's bytes (zeros while none was measured)

    def __init__(self, fixed_c, prior_c=21.0, prior_sd_c=8.0):
        self.fixed = None if fixed_c is None else to_counts(fixed_c)
        # the ambient prior (a hint when none is known): where the room usually is and
        # its sd, deg C
        self.prior = (float(prior_c), float(prior_sd_c))
        # the estimator's: the ambient ahead at the latest block close, counts * 2**8 (a
        # measured air's mean ahead, else the fixed ambient; None: none was known then)
        self.ahead = None
        self.reset()

    def reset(self):
        self.measured = False
        self.air = None        # the measured air's smoothing and cycle (tinytherm.air.Air)
        self.duty = 0.0        # the last duty and its counts (cache)
        self.duty_c = 0

    def known(self):
        """True when the reference is an ambient (fixed or measured), not 0."""
        return self.measured or self.fixed is not None

    def reference(self, ambient_c, dt_ms, restart):
        """``R`` for this reading in counts; ``dt_ms`` since the previous reading.

        ``restart``: the fit starts with this reading (the smoothing starts
        again at it; the air's cycle goes on).
        """
        if ambient_c is None:
            if not self.measured:
                return 0 if self.fixed is None else self.fixed
            return self.air.step(self.air.last, dt_ms, restart)
        if not self.measured:
            # imported only when used: the module costs RAM a product without one need not spend
            from tinytherm.air import Air
            self.air = Air()
            self.measured = True
            return self.air.start(to_counts(ambient_c))
        return self.air.step(to_counts(ambient_c), dt_ms, restart)

    def ahead_fine(self):
        """The air the future will see on average, counts * 2**8 (int): the measured
        air's (:meth:`tinytherm.air.Air.ahead_fine`), else the fixed ambient, else 0."""
        if self.measured:
            return self.air.ahead_fine()
        return (0 if self.fixed is None else self.fixed) << 8

    def ahead_shift_c(self, ref_counts):
        """``M - A0``, deg C: the air ahead at the latest block close less the reference
        ``ref_counts`` (counts) the fit's level was read against (exact: a power of 2)."""
        return (self.ahead - (ref_counts << 8)) * (_INV_SCALE / 256)

    def duty_counts(self, duty):
        """A duty in [0, 1] as counts of 1/DUTY_SCALE (cached: the duty rarely changes)."""
        if duty != self.duty:
            self.duty = duty
            self.duty_c = int(duty * DUTY_SCALE + 0.5)
        return self.duty_c


class Regression:
    """Weighted co-moments of the block means and their ridge-regularised solve.

    State: total weight ``w``, sum of squared weights ``w2``, effective
    number of blocks ``nb``, weighted mean reading ``my``, the co-moments
    ``c..`` of (t, x, v, y) about their weighted means, and ``t, x, v``: the
    latest reading's coordinates relative to those means (s, deg C s, s).
    Solved (never saved: :meth:`solve` rebuilds it): slope ``s`` (deg C/s),
    rate ``k`` (1/s), heater gain ``g`` (K/s) and their covariance ``p..``;
    ``var_my``, the fitted mean level's variance; ``s2r``, the residual one per reading (C^2).
    The duty's co-moments (``ctu, cxu, cuu, cuy``) and ``g``'s covariances (``psg, pkg,
    pgg``) exist only with a heater.
    """

    def __init__(self, heater):
        # (True: the duty's column; AIR_COLUMN: the measured air's, no heater; False: none)
        self.heater = heater
        # saved bytes: the heater's four co-moments are saved only with a heater
        self.STATE_SIZE = 8 * (17 if heater else 13)
        self.reset()

    def reset(self):
        self.w = self.w2 = self.nb = self.my = 0.0
        self.ctt = self.ctx = self.cty = self.cxx = self.cxy = self.cyy = 0.0
        if self.heater:
            # the heater's co-moments (and covariances, clear()) exist only with a heater:
            # without, the attribute table is 29 slots, not 37 (made in a heap in use)
            self.ctu = self.cxu = self.cuu = self.cuy = 0.0
        self.t = self.x = self.v = 0.0
        self.rt = self.rx = self.rv = self.yb = 0.0  # the latest block, for its residual
        self.anchor = 0.0  # the estimator's: smoothed residual of the latest blocks, deg C
        self.clear()

    def clear(self):
        """Drop the solution."""
        self.ok = False
        self.s = self.k = self.g = 0.0
        self.pss = self.psk = self.pkk = 0.0
        if self.heater:
            self.psg = self.pkg = self.pgg = 0.0
        self.var_my = self.s2r = 0.0

    def add_block(self, n, tb, xb, vb, yb, lam, t_end, x_end, v_end, dg, du):
        """Add one block mean (``n`` readings at ``tb, xb, vb``, mean reading ``yb``).

        ``lam``: the weight the old blocks keep; ``t_end, x_end, v_end``: the
        latest reading's coordinates (same origin as ``tb``...); ``dg, du``:
        the change of the reference gap (deg C) and duty the new origin takes.
        The block's coordinates about the new means and reference and its
        mean reading are kept for its residual: ``rt, rx, rv, yb``.
        """
        # West's weighted update with the new point at (tb, xb, vb); the old means are 0
        self.yb = yb
        w = lam * self.w + n
        f = n / w
        h = n * (1.0 - f)
        dy = yb - self.my
        ht = h * tb
        hx = h * xb
        self.ctt = lam * self.ctt + ht * tb
        self.ctx = lam * self.ctx + ht * xb
        self.cty = lam * self.cty + ht * dy
        self.cxx = lam * self.cxx + hx * xb
        self.cxy = lam * self.cxy + hx * dy
        self.cyy = lam * self.cyy + h * dy * dy
        if self.heater:
            hv = h * vb
            self.ctu = lam * self.ctu + ht * vb
            self.cxu = lam * self.cxu + hx * vb
            self.cuu = lam * self.cuu + hv * vb
            self.cuy = lam * self.cuy + hv * dy
        self.my += f * dy
        self.w = w
        self.w2 = lam * lam * self.w2 + n
        self.nb = lam * self.nb + 1.0
        # new origin: the weighted means (block point and latest reading move with it)
        tm = f * tb
        xm = f * xb
        t = t_end - tm
        self.rt = tb - tm
        self.rx = xb - xm
        self.x = x_end - xm
        if dg != 0.0:
            # new reference gap G0 + dg: x' = x - dg t exactly (co-moments likewise)
            self.cxx += dg * (dg * self.ctt - 2.0 * self.ctx)
            self.ctx -= dg * self.ctt
            self.cxy -= dg * self.cty
            self.x -= dg * t
            self.rx -= dg * self.rt
            if self.heater:
                self.cxu -= dg * self.ctu
            if self.cxx < 0.0:
                self.cxx = 0.0  # (exact up to rounding, which may leave -1e-19)
        self.t = t
        if self.heater:
            vm = f * vb
            self.rv = vb - vm
            self.v = v_end - vm
            if du != 0.0:
                self.cuu += du * (du * self.ctt - 2.0 * self.ctu)
                self.ctu -= du * self.ctt
                self.cxu -= du * self.ctx
                self.cuy -= du * self.cty
                self.v -= du * t
                self.rv -= du * self.rt
                if self.cuu < 0.0:
                    self.cuu = 0.0
        else:
            self.rv = 0.0

    def rate_free(self):
        """k (1/s) from the readings alone: the solve with no prior on k and no heater;
        None if singular."""
        d = self.ctt * self.cxx - self.ctx * self.ctx
        if d > 1e-300:
            return (self.ctx * self.cty - self.ctt * self.cxy) / d
        return None

    def slope_loose(self, lk, kp):
        """Slope ``s`` (deg C/s) of the solve with only the prior k ~ N(kp, s2/lk), no heater; None if singular."""
        a22 = self.cxx + lk
        det = self.ctt * a22 - self.ctx * self.ctx
        if not det > 1e-300 * (1.0 + self.ctt * a22):
            return None
        return (a22 * self.cty - self.ctx * (self.cxy - kp * lk)) / det

    def solve(self, s2, lk, kp, lh, dist, lg, gp):
        """Solve for (s, -k, g) with priors; True when the solution is usable.

        Priors: ``k ~ N(kp, s2 / lk)`` (``lk < 0`` pins k = 0, the exact
        straight line), ``g ~ N(gp, s2 / lg)``, and weight ``lh`` on the
        pseudo-observation ``0 = s + dist m`` with ``m = -k`` (the equilibrium hint). ``s2``:
        the reading noise variance, deg C^2. The measured air's weight (:data:`AIR_COLUMN`)
        is a share, 0 <= g < 1: outside, the fit is solved as if it had no column, g = 0.
        """
        a11 = self.ctt + lh
        if lk < 0.0:
            a12 = 0.0
            a22 = 1.0
            b2 = 0.0
        else:
            a12 = self.ctx + lh * dist
            a22 = self.cxx + lk + lh * dist * dist
            b2 = self.cxy - kp * lk
        b1 = self.cty
        two = not self.heater  # (the two-column solve)
        if self.heater:
            a13 = self.ctu
            a23 = 0.0 if lk < 0.0 else self.cxu
            a33 = self.cuu + lg
            b3 = self.cuy + lg * gp
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
            g = (c13 * b1 + c23 * b2 + c33 * b3) * inv
            if self.heater == AIR_COLUMN and not 0.0 <= g < 1.0:
                # a share of the air no probe has (it reads a mixture of liquid and air: 0..1):
                # the fit as if it had no air column, g = 0 (the Gaussian's conditional there:
                # the two-column solve, its determinant c33)
                two = True
                det = c33
                c13 = c23 = c33 = 0.0
            else:
                s = (c11 * b1 + c12 * b2 + c13 * b3) * inv
                m = (c12 * b1 + c22 * b2 + c23 * b3) * inv
                # (the air's weight, held by its prior, counted as no degree of freedom: as a
                # third, every passive fit with a measured air widened, tune seeds,
                # docs/benchmarks.md)
                dof = self.nb - (2.0 if self.heater == AIR_COLUMN else 3.0)
                ssr = self.cyy - s * b1 - m * self.cxy - g * b3
        if two:
            if not self.heater:
                det = a11 * a22 - a12 * a12
            if not det > 1e-300 * (1.0 + a11 * a22):
                return False
            inv = 1.0 / det
            c11 = a22
            c12 = -a12
            c22 = a11
            s = (a22 * b1 - a12 * b2) * inv
            m = (a11 * b2 - a12 * b1) * inv
            g = 0.0
            dof = self.nb - 2.0
            ssr = self.cyy - s * b1 - m * self.cxy
        if lk < 0.0:
            m = 0.0
            ssr = self.cyy - s * b1 - (g * b3 if self.heater else 0.0)
        # residual variance per reading: weighted SSR over the effective blocks
        s2r = ssr / dof if dof > 1.0 else s2
        if s2r < s2:
            s2r = s2
        scale = s2r * self.w2 / self.w * inv
        if not (_ok(s) and _ok(m) and _ok(g) and _ok(scale)):
            return False
        # (a failed solve above leaves the previous solution in place)
        self.s = s
        self.k = -m
        self.g = g
        # covariance of (s, k, g): k = -m flips the sign of its cross terms
        self.pss = c11 * scale
        if lk >= 0.0:
            self.psk = -c12 * scale
            self.pkk = c22 * scale
        else:
            self.psk = self.pkk = 0.0  # pinned: no spread
        if self.heater:
            self.psg = c13 * scale
            self.pkg = -c23 * scale
            self.pgg = c33 * scale
        self.s2r, self.var_my = s2r, s2r * self.w2 / (self.w * self.w)
        self.ok = True
        return True

    def level(self):
        """Fitted temperature at the latest block's reading, deg C (before the anchor)."""
        lv = self.my + self.s * self.t - self.k * self.x
        if self.heater:
            lv += self.g * self.v
        return lv

    def var_level(self, dt=0.0, dx=0.0, dv=0.0):
        """Variance of :meth:`level`, deg C^2; moved on by ``dt`` (s), ``dx`` (deg C s) and
        ``dv`` (s) past the block close: the level at a later reading."""
        t = self.t + dt
        x = -(self.x + dx)   # d level / d k
        var = self.var_my + t * t * self.pss + x * x * self.pkk + 2.0 * t * x * self.psk
        if self.heater:
            v = self.v + dv
            var += v * v * self.pgg + 2.0 * (t * v * self.psg + x * v * self.pkg)
        return var

    def eta_rel_var(self, gap, slope, k, eta, gk):
        """Delta-method variance of ln(eta), first order; eta = the answer's time to move
        ``gap`` deg C from the fitted level at ``slope`` (deg C/s) and rate ``k`` (1/s).

        The level and the slope are linear in the fit's (mean, s, k, g): d level =
        (1, t, -x, v), d slope = (0, 1, gk, 0).
        """
        q = k * gap / slope
        if -1e-4 < q < 1e-4:
            de_dk = gap * gap / (slope * slope) * (0.5 + q / 1.5)
        else:
            de_dk = (math.log(1.0 - q) + q / (1.0 - q)) / (k * k)
        de_dl = -1.0 / (slope * (1.0 - q))      # d eta / d level
        de_ds = gap * de_dl / slope             # d eta / d slope
        a_s = de_dl * self.t + de_ds
        a_k = -de_dl * self.x + de_ds * gk + de_dk
        var = (de_dl * de_dl * self.var_my + a_s * a_s * self.pss + a_k * a_k * self.pkk
               + 2.0 * a_s * a_k * self.psk)
        if self.heater:
            a_g = de_dl * self.v
            var += a_g * (a_g * self.pgg + 2.0 * (a_s * self.psg + a_k * self.pkg))
        if not var > 0.0 or not eta > 0.0:
            return 0.0
        return var / (eta * eta)


def use_air_column(est, on):
    """Give the estimator ``est`` the regression with the measured air's column (``on``, no
    heater: the probe's direct view of the air) or without; the fit starts again.

    A strap-on probe reads the air in part, ``T_probe = T + w (A - A0)``; the law driven by
    the air has no such term, so the fitted slope carried the air's swing (docs/design.md)."""
    if on or est.reg.heater == AIR_COLUMN:  # (a heater's regression is kept)
        est.reg = Regression(AIR_COLUMN if on else False)
        est.blocks.air_col = on
        est.blocks.readings = 0  # (the next reading starts the fit)


def _ok(x):
    return x == x and -1e300 < x < 1e300


def to_counts(temp_c):
    """A temperature as counts of 1/SCALE deg C (int), rounded to nearest."""
    return int(math.floor(temp_c * SCALE + 0.5))
