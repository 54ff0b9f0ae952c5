"""Online fit of the lumped thermal model and the time-to-target answer.

Model (see :mod:`tinytherm.model`)::

    dT/dt = -k (T - R) + g u

How the fit works (the reasons and the measurements are in DEVELOPERS.md):

1. *State-variable pre-filter.* Each reading ``y`` drives a first-order filter
   ``tau y_f' = y - y_f`` (``tau = filter_s``). Filtering both sides of the
   model gives an equation that holds exactly for the filtered signals::

       y_f' = -k (y_f - R_f) + g u_f,     with  y_f' = (y - y_f) / tau

   so the derivative comes from a difference of a reading and a smooth signal
   (not of two noisy readings), and irregular time steps are handled by the
   exact (first-order-hold) discretisation of the filter.
2. *Exponentially weighted regression in centred form.* ``d = y_f'`` is
   regressed on ``x = -(y_f - R_f)`` (ambient known or measured) or on
   ``x = -y_f`` with an intercept ``k R`` (ambient unknown), plus ``u_f`` when
   a heater is fitted. Weighted means and co-moments are updated with West's
   incremental (Welford-style) formulas, which keep float32 accurate; old
   data are forgotten with time constant ``memory_s``.
3. *Forgetting in proportion to excitation.* A sample that carries no new
   information (the filtered temperature sits at its recent mean: a long hold
   at equilibrium) neither adds weight nor forgets: no covariance windup, and
   sensor noise at a standstill cannot drag the estimate.
4. *Answer on demand.* :meth:`ThermalEstimator.predict` solves the 1x1 or 2x2
   system, fuses the ambient prior, and propagates the parameter uncertainty to
   the time-to-target (delta method in log-time).

Readings are averaged over short blocks (``block_s``) before entering the
regression, so most readings cost only the pre-filter step.

Fixed state, no per-update containers; the update path is a few dozen float
operations. Runs unchanged on CPython and MicroPython.
"""
import math

from tinytherm import model
from tinytherm import status as st

_INF = math.inf
_TICKS_PERIOD = 0x40000000  # MicroPython time.ticks_ms() wraps at 2**30
_TICKS_HALF = 0x20000000
_TICKS_MASK = 0x3FFFFFFF


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


def _finite(x):
    return x == x and x != _INF and x != -_INF


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
    - ``filter_s``: pre-filter time constant, seconds (a few sample periods to
      a few tens of seconds).
    - ``interval``: two-sided probability of the reported time interval.
    - ``settle_s``: seconds of data before an answer may be ``TRACKING``.
    - ``max_relative_sd``: an answer whose log-time standard deviation exceeds
      this stays ``SETTLING``.
    - ``rate_prior_per_s``: weak prior on ``k`` (1/s), used only while the data
      hold little information.
    - ``excitation_c``: temperature movement (deg C) from the recent mean that
      counts as a fully informative sample.
    - ``min_temp_c``, ``max_temp_c``: plausible range of readings, deg C.
    - ``block_s``: readings are averaged over blocks of this many seconds
      before they enter the regression (default ``filter_s / 2``; 0 feeds
      every reading).

    Raises ValueError for arguments out of range.
    """

    def __init__(self, ambient_c=None, ambient_prior_c=21.0, ambient_prior_sd_c=8.0,
                 heater=False, memory_s=600.0, filter_s=15.0, interval=0.8, settle_s=60.0,
                 max_relative_sd=0.25, rate_prior_per_s=1.0 / 1800.0, excitation_c=0.5,
                 min_temp_c=-55.0, max_temp_c=150.0, block_s=None):
        if ambient_c is not None and not _finite(ambient_c):
            raise ValueError("ambient_c must be a finite temperature or None")
        if not _finite(ambient_prior_c):
            raise ValueError("ambient_prior_c must be finite")
        if not ambient_prior_sd_c > 0.0:
            raise ValueError("ambient_prior_sd_c must be > 0")
        if not memory_s > 0.0:
            raise ValueError("memory_s must be > 0 seconds")
        if not filter_s > 0.0:
            raise ValueError("filter_s must be > 0 seconds")
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
        if block_s is not None and not block_s >= 0.0:
            raise ValueError("block_s must be >= 0 seconds (0: every reading is a block)")
        if not min_temp_c < max_temp_c:
            raise ValueError("min_temp_c must be below max_temp_c")
        self._ambient_fixed = ambient_c
        self._prior_r = float(ambient_prior_c)
        self._prior_r_var = float(ambient_prior_sd_c) ** 2
        self.heater = bool(heater)
        self.memory_s = float(memory_s)
        self.filter_s = float(filter_s)
        self._inv_tau = 1.0 / self.filter_s
        self._inv_mem = 1.0 / self.memory_s
        self.interval = float(interval)
        self._z = normal_quantile(0.5 + 0.5 * self.interval)
        self.settle_s = float(settle_s)
        self.max_relative_sd = float(max_relative_sd)
        self._k0 = float(rate_prior_per_s)
        self._inv_exc2 = 1.0 / (float(excitation_c) ** 2)
        self.min_temp_c = float(min_temp_c)
        self.max_temp_c = float(max_temp_c)
        # The pre-filter's start-up transient decays as exp(-t/tau): wait 5 tau.
        self._startup_s = 5.0 * self.filter_s
        self._block_s = float(block_s) if block_s is not None else 0.5 * self.filter_s
        # age only matters until both the start-up and the settle time have passed
        self._age_needed_s = max(self._startup_s, self.settle_s)
        self.reset()

    def reset(self):
        """Forget all readings; settings are kept."""
        self.readings = 0
        self.rejected = 0
        self.last_verdict = st.ACCEPTED
        self._age_s = 0.0
        self._pending_dt_s = 0.0
        self._last_ticks = -1
        self._dt_cached = -1.0
        self._a = 0.0           # exp(-dt/tau) for the cached dt
        self._hold_new = 0.0     # first-order-hold coefficients for the cached dt
        self._hold_prev = 0.0
        # Sums over the current regression block.
        self._block_n = 0
        self._block_t = 0.0
        self._sum_y = 0.0
        self._sum_yf = 0.0
        self._sum_rf = 0.0
        self._sum_uf = 0.0
        # Pre-filter state: last reading, filtered reading, ambient, duty.
        self._y_prev = 0.0
        self._yf = 0.0
        self._r_prev = 0.0
        self._rf = 0.0
        self._uf = 0.0
        self._u_prev = 0.0
        self._ambient_measured = False
        # Weighted regression moments (means and centred co-moments).
        self._w = 0.0
        self._w_blocks = 0.0
        self._w_sq = 0.0
        self._mx = 0.0
        self._mu = 0.0
        self._md = 0.0
        self._cxx = 0.0
        self._cxu = 0.0
        self._cuu = 0.0
        self._cxd = 0.0
        self._cud = 0.0
        self._cdd = 0.0
        # solver outputs (scratch, kept so the answer path stores no containers)
        self._k = 0.0
        self._g = 0.0
        self._ikk = 0.0
        self._ikg = 0.0
        self._igg = 0.0
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

    # ------------------------------------------------------------------ update
    def update_ticks(self, temp_c, ticks_ms, ambient_c=None, duty=0.0):
        """Add a reading stamped with MicroPython-style millisecond ticks.

        ``ticks_ms`` is an int from a counter that wraps at 2**30 (as
        ``time.ticks_ms()``); the difference to the previous call is taken
        wrap-safe. Returns the reading's verdict code (see :meth:`update`).
        """
        if self._last_ticks < 0:
            self._last_ticks = ticks_ms & _TICKS_MASK
            return self.update(temp_c, 0.0, ambient_c, duty)
        diff = ((ticks_ms & _TICKS_MASK) - self._last_ticks) & _TICKS_MASK
        if diff >= _TICKS_HALF:
            diff -= _TICKS_PERIOD
        if diff > 0:
            self._last_ticks = ticks_ms & _TICKS_MASK
        return self.update(temp_c, diff * 0.001, ambient_c, duty)

    def update(self, temp_c, dt_s, ambient_c=None, duty=0.0):
        """Add one reading; return its verdict (``status.ACCEPTED`` == 0 if used).

        ``temp_c``: the liquid reading, deg C. ``dt_s``: seconds since the
        previous call (ignored on the first reading). ``ambient_c``: a
        measured ambient for this reading, deg C, or ``None``. ``duty``: heater
        duty in [0, 1] applied since the previous reading. Never raises for a
        bad reading: it is rejected, counted, and leaves the fit untouched.
        """
        verdict = st.ACCEPTED
        if not (dt_s == dt_s) or dt_s == _INF:
            verdict = st.BAD_INPUT
        elif dt_s < 0.0:
            verdict = st.TIME_BACKWARDS
        elif dt_s == 0.0 and self.readings > 0:
            verdict = st.DUPLICATE_TIME
        elif not _finite(temp_c):
            verdict = st.NOT_FINITE
        elif temp_c < self.min_temp_c or temp_c > self.max_temp_c:
            verdict = st.OUT_OF_RANGE
        elif not (0.0 <= duty <= 1.0):
            verdict = st.BAD_INPUT
        elif ambient_c is not None and not (self.min_temp_c <= ambient_c <= self.max_temp_c):
            verdict = st.BAD_INPUT
        if verdict:
            self.rejected += 1
            self.last_verdict = verdict
            if verdict == st.BAD_INPUT or verdict == st.NOT_FINITE or verdict == st.OUT_OF_RANGE:
                if dt_s > 0.0 and dt_s != _INF:
                    # time still passed: the next accepted reading spans it
                    self._pending_dt_s += dt_s
            return verdict
        self.last_verdict = st.ACCEPTED
        if self.readings == 0:
            self._start(temp_c, ambient_c, duty)
            return st.ACCEPTED
        if self._pending_dt_s:
            dt_s += self._pending_dt_s
            self._pending_dt_s = 0.0
        self._step(temp_c, dt_s, ambient_c, duty)
        return st.ACCEPTED

    def _start(self, temp_c, ambient_c, duty):
        self.readings = 1
        self._y_prev = temp_c
        self._yf = temp_c
        self._u_prev = duty
        self._uf = duty
        if ambient_c is not None:
            self._ambient_measured = True
            self._r_prev = ambient_c
            self._rf = ambient_c
        elif self._ambient_fixed is not None:
            self._r_prev = self._ambient_fixed
            self._rf = self._ambient_fixed

    def _step(self, temp_c, dt_s, ambient_c, duty):
        """One accepted reading after the first: pre-filter and block sums.

        Every reading advances the pre-filter; the regression is fed block
        means over ``block_s`` seconds (the model equation is linear, so it
        holds exactly for the means too, and the mean derivative carries the
        same information as its parts). This keeps the per-reading work to a
        handful of float operations.
        """
        self.readings += 1
        if dt_s != self._dt_cached:
            self._dt_cached = dt_s
            try:
                a = math.exp(-dt_s * self._inv_tau)
            except (ValueError, OverflowError):
                a = 0.0
            c = self.filter_s * (1.0 - a) / dt_s
            self._a = a
            self._hold_new = 1.0 - c
            self._hold_prev = c - a
        a = self._a
        # Pre-filter tau y_f' = y - y_f, exact for a reading that moves linearly
        # between samples (first-order hold); with a = exp(-dt/tau) and
        # c = tau (1 - a) / dt:  y_f <- y_n (1 - c) + y_(n-1) (c - a) + y_f a
        yf = temp_c * self._hold_new + self._y_prev * self._hold_prev + self._yf * a
        self._yf = yf
        self._y_prev = temp_c
        self._sum_y += temp_c
        self._sum_yf += yf
        if self._ambient_measured:
            rn = self._r_prev if ambient_c is None else ambient_c
            rf = rn * self._hold_new + self._r_prev * self._hold_prev + self._rf * a
            self._rf = rf
            self._r_prev = rn
            self._sum_rf += rf
        if self.heater:
            # duty is held over the interval (zero-order hold): exact
            uf = duty + (self._uf - duty) * a
            self._uf = uf
            self._u_prev = duty
            self._sum_uf += uf
        self._block_n += 1
        bt = self._block_t + dt_s
        self._block_t = bt
        if bt >= self._block_s:
            self._close_block()

    def _close_block(self):
        n = self._block_n
        bt = self._block_t
        inv_n = 1.0 / n
        yfm = self._sum_yf * inv_n
        # block mean of the filtered derivative y_f' = (y - y_f) / tau
        d = (self._sum_y * inv_n - yfm) * self._inv_tau
        if self._ambient_measured:
            x = self._sum_rf * inv_n - yfm
            centred = False
        elif self._ambient_fixed is not None:
            x = self._ambient_fixed - yfm
            centred = False
        else:
            x = -yfm
            centred = True
        u = self._sum_uf * inv_n
        self._sum_y = 0.0
        self._sum_yf = 0.0
        self._sum_rf = 0.0
        self._sum_uf = 0.0
        self._block_n = 0
        self._block_t = 0.0
        age = self._age_s
        if age < self._age_needed_s:
            self._age_s = age + bt
        if age < self._startup_s:
            return  # the pre-filter's start-up transient is still in the signal
        self._moments(n, bt, x, u, d, centred)

    def _moments(self, n, bt, x, u, d, centred):
        # West's weighted incremental update, weight q = rho * n, where rho in
        # [0, 1] says how much new excitation the block brings:
        #   W <- lam W + q;  a = q / W;  m <- m + a (x - m)
        #   C <- lam C + q (1 - a) (x - m_old)(d - m_old)
        # and lam = exp(-rho * block_t / memory): no new information, no forgetting.
        w = self._w
        heater = self.heater
        if centred:
            dx = x - self._mx
            du = u - self._mu
            dd = d - self._md
        else:
            dx = x
            du = u
            dd = d
        if w < 2.0 * n:
            rho = 1.0
        else:
            rho = dx * dx * self._inv_exc2
            if heater:
                # a duty change of 0.1 counts like the full temperature excitation
                rho += 100.0 * du * du
            if rho > 1.0:
                rho = 1.0
        try:
            lam = math.exp(-rho * bt * self._inv_mem)
        except (ValueError, OverflowError):
            lam = 0.0
        q = rho * n
        w = lam * w + q
        if w <= 0.0:
            return
        self._w = w
        self._w_blocks = lam * self._w_blocks + rho  # for the degrees of freedom
        # sum of squared per-reading weights: with forgetting the estimate's
        # variance is s^2 * (sum w^2 x^2) / (sum w x^2)^2, about (W2/W) s^2 / Cxx
        self._w_sq = lam * lam * self._w_sq + rho * q
        if centred:
            a = q / w
            self._mx += a * dx
            self._md += a * dd
            if heater:
                self._mu += a * du
            q = q - q * a
        qdx = q * dx
        self._cxx = lam * self._cxx + qdx * dx
        self._cxd = lam * self._cxd + qdx * dd
        self._cdd = lam * self._cdd + q * dd * dd
        if heater:
            qdu = q * du
            self._cxu = lam * self._cxu + qdx * du
            self._cuu = lam * self._cuu + qdu * du
            self._cud = lam * self._cud + qdu * dd

    # ----------------------------------------------------------------- answer
    def _solve(self, w, mx, mu, md, cxx, cxu, cuu, cxd, cud):
        """Ridge-regularised normal equations; sets ``_k, _g, _ikk, _ikg, _igg``.

        The prior on ``k`` has the weight of ``excitation_c**2`` (deg C^2): it
        matters only while the data have moved less than that.
        """
        w0 = 1.0 / self._inv_exc2
        a11 = cxx + w0
        b1 = cxd + w0 * self._k0
        if self.heater:
            a12 = cxu
            a22 = cuu + 0.01  # a very weak pull of g towards 0
            det = a11 * a22 - a12 * a12
            if not det > 0.0:
                return False
            self._k = (a22 * b1 - a12 * cud) / det
            self._g = (a11 * cud - a12 * b1) / det
            self._ikk = a22 / det
            self._igg = a11 / det
            self._ikg = -a12 / det
        else:
            self._k = b1 / a11
            self._g = 0.0
            self._ikk = 1.0 / a11
            self._igg = 0.0
            self._ikg = 0.0
        return True

    def _eta_at(self, k, g, c, target_c, temp, duty):
        """Time to target (s) for intercept ``c`` (= k R); 1e12 for "never"."""
        eq = (c + g * duty) / k if self._centred() else self._ambient_now() + g * duty / k
        t = model.time_to_target_s(temp, target_c, k, eq)
        if t is None:
            return 1e12
        return t

    def _centred(self):
        return not (self._ambient_measured or self._ambient_fixed is not None)

    def _ambient_now(self):
        return self._r_prev if self._ambient_measured else self._ambient_fixed

    def predict(self, target_c):
        """Compute the time until ``target_c`` (deg C); return the status code.

        Fills ``status``, ``eta_s``, ``eta_low_s``, ``eta_high_s`` (seconds
        from the latest reading; ``None`` when there is no estimate;
        ``eta_high_s`` may be ``inf`` when the data cannot rule out "never"),
        ``rate_per_s`` (1/s), ``equilibrium_c`` and ``ambient_est_c`` (deg C),
        ``gain_k_per_s`` (K/s at full duty) and ``temp_est_c`` (deg C).
        Never raises.
        """
        try:
            return self._predict(target_c)
        except (ValueError, OverflowError, ZeroDivisionError):
            self._clear_answer(st.SETTLING)
            return self.status

    def _predict(self, target_c):
        w = self._w
        if self.readings < 2 or w < 3.0 or not _finite(target_c):
            self._clear_answer(st.GATHERING)
            if self.readings:
                self.temp_est_c = self._y_prev
            return self.status
        self._clear_answer(st.SETTLING)
        centred = self._centred()
        heater = self.heater
        duty = self._u_prev if heater else 0.0
        mx = self._mx
        mu = self._mu
        md = self._md
        cxx = self._cxx
        cxu = self._cxu
        cuu = self._cuu
        cxd = self._cxd
        cud = self._cud
        if not self._solve(w, mx, mu, md, cxx, cxu, cuu, cxd, cud):
            return self.status
        k = self._k
        g = self._g
        n_par = 2.0 if heater else 1.0
        if centred:
            n_par += 1.0
        # block means weighted by their reading counts: the weighted residual sum
        # estimates (blocks - parameters) times the per-reading variance
        dof = self._w_blocks - n_par
        if dof < 1.0:
            dof = 1.0
        rss = self._cdd - k * cxd - g * cud
        if rss < 0.0:
            rss = 0.0
        s2 = rss / dof + 1e-20  # per-reading variance of the filtered derivative, (K/s)^2
        # variance of the parameters per unit of the inverse information:
        # s^2 times the forgetting factor W2/W (1 without forgetting, ~1/2 at
        # steady state), see _moments
        s2p = s2 * self._w_sq / w
        if centred:
            # The ambient prior enters as one pseudo-reading: at y_f = R0 with
            # the heater off the liquid does not move (d = 0), with derivative
            # uncertainty k * sd(R0), i.e. weight s^2 / (k sd)^2. Its weight
            # depends on k, so iterate twice from the data-only fit.
            xp = -self._prior_r
            for _ in (0, 1):
                kk = k if k > self._k0 * 0.01 else self._k0 * 0.01
                wp = s2 / (kk * kk * self._prior_r_var)
                wt = w + wp
                f = w * wp / wt
                ex = mx - xp
                eu = mu
                ed = md
                if not self._solve(wt, 0.0, 0.0, 0.0, cxx + f * ex * ex, cxu + f * ex * eu,
                                   cuu + f * eu * eu, cxd + f * ex * ed, cud + f * eu * ed):
                    return self.status
                k = self._k
                g = self._g
            mx = (w * mx + wp * xp) / wt
            mu = w * mu / wt
            md = w * md / wt
            w = wt
        self.rate_per_s = k
        self.gain_k_per_s = g
        if not k > 0.0:
            return self.status
        ikk = self._ikk
        if centred:
            c = md - k * mx - g * mu  # intercept = k R
            r = c / k
        else:
            c = 0.0
            r = self._ambient_now()
        eq = r + g * duty / k
        yf = self._yf
        rf = self._rf if self._ambient_measured else r
        # Current temperature from the smooth filter and the fitted slope:
        # T = y_f + tau * y_f',  y_f' = k (R_f - y_f) + g u_f
        temp = yf + self.filter_s * (k * (rf - yf) + g * self._uf)
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
        # Delta method, var(eta) = grad' Cov grad, with forward differences.
        # In centred form the mean derivative md is independent of (k, g), so
        # the intercept moves with k as c = md - k mx - g mu.
        hk = 1e-4 * k
        ck = c - hk * mx if centred else 0.0
        dk = (self._eta_at(k + hk, g, ck, target_c, temp, duty) - eta) / hk
        var_eta = dk * dk * s2p * ikk
        if heater:
            hg = 1e-4 * abs(g) + 1e-9
            cg = c - hg * mu if centred else 0.0
            dg = (self._eta_at(k, g + hg, cg, target_c, temp, duty) - eta) / hg
            var_eta += dg * dg * s2p * self._igg + 2.0 * dk * dg * s2p * self._ikg
        if centred:
            hm = 1e-4 * abs(md) + 1e-9
            dm = (self._eta_at(k, g, c + hm, target_c, temp, duty) - eta) / hm
            var_eta += dm * dm * s2p / w
        # The current level: y_f carries about s^2 tau^2 * dt / (2 tau) of noise.
        dtemp = 1.0 / (k * (temp - eq))
        var_eta += dtemp * dtemp * s2 * self.filter_s * self._dt_cached * 0.5
        rel_sd = math.sqrt(var_eta) / eta if eta > 0.0 else 0.0
        spread = math.exp(self._z * rel_sd) if self._z * rel_sd < 50.0 else _INF
        self.eta_s = eta
        self.eta_low_s = eta / spread
        self.eta_high_s = eta * spread
        sd_k = math.sqrt(s2p * ikk)
        if self._age_s >= self.settle_s and rel_sd <= self.max_relative_sd and sd_k < 0.5 * k:
            self.status = st.TRACKING
        return self.status

    def __repr__(self):
        return "ThermalEstimator(readings=%d, status=%s, k=%s, equilibrium_c=%s, eta_s=%s)" % (
            self.readings, st.status_name(self.status), self.rate_per_s, self.equilibrium_c,
            self.eta_s)
