"""The exact piecewise solver behind the forecast: one piece at a time.

Model (the lumped model of :mod:`tinytherm.model` with time-varying inputs)::

    dT/dt = -k * (T - R(t)) + g * u

On a piece the duty ``u`` is constant and the ambient ``R`` is linear
(``R(s) = r + b*s``) or sinusoidal (``R(s) = r + A*sin(a + w*s)``), ``s`` in
seconds into the piece, so the temperature has an exact closed form (no step
size, no stability limit)::

    linear:  T(s) = r + (T0 - r) e^(-ks) + q (1 - e^(-ks))/k + b (s - (1 - e^(-ks))/k)
    sine:    T(s) = r + (T0 - r) e^(-ks) + q (1 - e^(-ks))/k
                    + Ar (sin(a - psi + w s) - sin(a - psi) e^(-ks)),
             Ar = A k / sqrt(k^2 + w^2),  psi = atan2(w, k)

with ``q = g*u`` (K/s). A crossing of a level is bracketed on each piece (the
linear-ambient solution is convex or concave, so checking the ends and the
single possible turning point is exact; sinusoidal pieces are cut into
sub-steps of ``period / PERIODIC_SUBSTEPS`` after a rigorous bound has ruled
out the stretches where no crossing can be) and then solved by Newton's
method with a bisection fallback.

Work is counted in units (:meth:`PieceSolver.tick`): a piece, a sinusoid
sub-step, a doubling of an endless ramp's search span, or one look at a
breakpoint beyond the first per piece. At most ``MAX_PIECES`` units per
forecast call, ``MAX_ROOT_ITERATIONS`` iterations per root solve. The
``REASON_*`` codes are the forecast's answers (re-exported by
:mod:`tinytherm.forecast`); the solver itself sets only WORK_CAP and HORIZON.
"""
import math

try:
    from micropython import const
except ImportError:  # CPython
    def const(x):
        return x

from tinytherm.ambient import AMBIENT_CONSTANT as _CONSTANT
from tinytherm.ambient import AMBIENT_PIECEWISE as _PIECEWISE
from tinytherm.ambient import AMBIENT_RAMP as _RAMP
from tinytherm.ambient import _cos, _sin
from tinytherm.model import _phi1
from tinytherm.num import exp, finite

# --- work caps (per call) ---
MAX_PIECES = const(600)          # pieces plus sinusoid sub-steps per call
MAX_ROOT_ITERATIONS = const(64)  # Newton/bisection iterations per root solve
PERIODIC_SUBSTEPS = const(16)    # sub-steps per period when a crossing may be near

# --- reason beside a status code (why there is no answer, or a caveat) ---
REASON_NONE = const(0)            # an answer was found
REASON_NEVER = const(1)           # proved never reached under this ambient and plan
REASON_HORIZON = const(2)         # not reached within horizon_s or float time (may be later)
REASON_WORK_CAP = const(3)        # stopped at the work cap; searched_s says how far
REASON_BAD_INPUT = const(4)       # an argument is not usable (NaN, negative k, overflow...)
REASON_HELD = const(5)            # the plan holds the liquid short of the target
REASON_TOO_SLOW = const(6)        # full power cannot get there by the deadline
REASON_NO_DRIVE_NEEDED = const(7)  # at the deadline it is at/past target with the heater off
REASON_LATE = const(8)            # reaches the target, but after the deadline
REASON_BEYOND_EQUILIBRIUM = const(9)  # target at/past where full power levels off

_TWO_PI = 2.0 * math.pi
_INF = math.inf
_NAN = math.nan

# Kinds of piece.
PIECE_LINEAR = const(0)
PIECE_SINE = const(1)


def _machine_epsilon():
    eps = 1.0
    while 1.0 + eps * 0.5 != 1.0:
        eps *= 0.5
    return eps


_EPS = _machine_epsilon()  # 2.2e-16 with doubles, 1.2e-7 on float32 ports


def _smallest_float():
    x = 1.0
    while x * 0.5 != 0.0:
        x *= 0.5
    return x


_TINY = _smallest_float()  # 5e-324 with doubles (denormal), about 1e-45 on float32


def _phi2(x):
    """``(x - 1 + exp(-x)) / x**2`` without cancellation near 0 (dimensionless)."""
    if -0.5 < x < 0.5:
        # sum (-x)**n / (n+2)!, n = 0..15, by Horner's rule.
        r = 1.0
        n = 15
        while n >= 1:
            r = 1.0 - x * r / (n + 2)
            n -= 1
        return 0.5 * r
    return (x - 1.0 + exp(-x)) / (x * x)


def _log_ratio(z):
    """``-ln(1 - z) / z`` for ``z < 1`` without cancellation near 0 (dimensionless)."""
    if -0.25 < z < 0.25:
        # sum z**n / (n+1), n = 0..30; error < 0.25**31 / 32.
        r = 0.0
        n = 30
        while n >= 0:
            r = 1.0 / (n + 1) + z * r
            n -= 1
        return r
    try:
        return -math.log(1.0 - z) / z
    except (ValueError, OverflowError):
        return _INF


class PieceSolver:
    """Closed-form temperature and first crossings on one piece; counts the work.

    ``k`` rate constant (1/s, >= 0) and ``g`` heater gain (K/s at full duty)
    are set by the forecast (validated there). :meth:`setup` stores the
    piece's coefficients; :meth:`temp` and :meth:`first_root` answer on it.
    """

    def __init__(self):
        self.k = 0.0
        self.g = 0.0
        self.kind = PIECE_LINEAR
        self.t0_s = 0.0    # piece start time, s from now
        self.T0_c = 0.0    # temperature at piece start, deg C
        self.q = 0.0       # heater drive g*u, K/s
        self.r_c = 0.0     # ambient at piece start (linear) or mean (sine), deg C
        self.b = 0.0       # ambient slope (linear), K/s
        self.w = 0.0       # angular frequency (sine), rad/s
        self.a_rad = 0.0   # ambient angle at piece start (sine), rad
        self.amp_c = 0.0   # ambient amplitude (sine), K
        self.period_s = 1.0  # ambient period (sine), s
        self.resp_c = 0.0  # steady-state response amplitude Ar (sine), K
        self.psi = 0.0     # steady-state lag angle (sine), rad
        self.work = 0      # units of work this call
        self.stop = REASON_NONE  # why a search stopped early (WORK_CAP or HORIZON)
        self.reached_s = 0.0     # how far a stopped piece search got, s into the piece
        self._f = 0.0      # root solver scratch: function value
        self._df = 0.0     # root solver scratch: derivative

    # ----------------------------------------------------------- work, cursors
    def tick(self):
        """Count one unit of work; False (and nothing counted) once MAX_PIECES are used."""
        if self.work >= MAX_PIECES:
            self.stop = REASON_WORK_CAP
            return False
        self.work += 1
        return True

    def advance(self, tt, i, now, t):
        """Last index j >= i with tt[j] - now <= t (breakpoints at or before t), or -2.

        The usual case (the next breakpoint is after t) is one look and part
        of the piece's work. Skipping breakpoints (many at the same time, or a
        start far into the schedule) gallops then bisects, and every look
        beyond the first counts as work; -2 when the work cap stops it.
        """
        n = len(tt)
        if i + 1 >= n or tt[i + 1] - now > t:
            return i
        lo = i + 1  # tt[lo] - now <= t
        step = 1
        while True:
            if not self.tick():
                return -2
            hi = lo + step
            if hi >= n:
                hi = n
                break
            if tt[hi] - now > t:
                break
            lo = hi
            step += step
        while hi - lo > 1:  # tt[lo] - now <= t < tt[hi] - now (hi == n: past the end)
            if not self.tick():
                return -2
            mid = (lo + hi) >> 1
            if tt[mid] - now <= t:
                lo = mid
            else:
                hi = mid
        return lo

    # ---------------------------------------------------------------- a piece
    def setup(self, t, temp_c, duty, amb):
        """Store the closed-form coefficients of the piece starting at t (s from now).

        ``temp_c`` the temperature there (deg C), ``duty`` 0..1, ``amb`` the
        :class:`tinytherm.ambient.AmbientSchedule` (its cursor already at t).
        """
        k = self.k
        self.t0_s = t
        self.T0_c = temp_c
        self.q = self.g * duty
        kind = amb.kind
        if k == 0.0 or kind == _CONSTANT:
            self.kind = PIECE_LINEAR
            self.r_c = amb.level_c
            self.b = 0.0
        elif kind == _RAMP:
            self.kind = PIECE_LINEAR
            if t < amb.ramp_s:
                self.r_c = amb.level_c + amb.slope_c_per_s * t
                self.b = amb.slope_c_per_s
            else:
                self.r_c = amb.level_c + amb.slope_c_per_s * amb.ramp_s
                self.b = 0.0
        elif kind == _PIECEWISE:
            self.kind = PIECE_LINEAR
            self.r_c = amb.piecewise_c(t)
            i = amb.cursor
            tt = amb.times_s
            if 0 <= i < len(tt) - 1:
                v = amb.values_c
                self.b = (v[i + 1] - v[i]) / (tt[i + 1] - tt[i])
            else:
                self.b = 0.0
        else:
            self.kind = PIECE_SINE
            w = _TWO_PI / amb.period_s
            self.w = w
            self.r_c = amb.level_c
            self.amp_c = amb.amplitude_c
            self.period_s = amb.period_s
            self.a_rad = amb.angle_at(t)
            # Periodic steady state: amplitude ratio k/sqrt(k^2+w^2), lag atan(w/k).
            # Scaled by the larger of k, w so that neither square under- or
            # overflows (k = 1e-200 with w = 6e-300 has k*k + w*w == 0).
            self.psi = math.atan2(w, k)
            m = k if k > w else w
            kr = k / m
            wr = w / m
            self.resp_c = amb.amplitude_c * kr / math.sqrt(kr * kr + wr * wr)

    def temp(self, s):
        """Exact temperature (deg C) at s seconds into the current piece."""
        k = self.k
        x = k * s
        T0 = self.T0_c
        if x >= 0.5:  # settles exactly onto the ambient term for large k s
            e = exp(-x)
            om = 1.0 - e
            sp = om / k  # k > 0 here; finite also when k*s overflows
            T = self.r_c + (T0 - self.r_c) * e
        else:  # also k = 0, and a NaN x (the result is NaN then)
            p1 = _phi1(x)
            om = x * p1  # 1 - exp(-k s)
            sp = s * p1  # (1 - exp(-k s)) / k, also for k = 0
            T = T0 + om * (self.r_c - T0)
        T += self.q * sp
        if self.kind == PIECE_LINEAR:
            # ambient slope b: particular term b*s - b*(1-exp(-ks))/k, written stably
            if self.b != 0.0:
                if x >= 0.5:
                    T += self.b * (s - sp)
                else:  # b * (k s^2 phi2), small factors first (b may be near 1e308)
                    T += self.b * (x * s * _phi2(x))
        elif self.resp_c != 0.0:
            th0 = self.a_rad - self.psi
            T += self.resp_c * (_sin(th0 + self.w * s) - _sin(th0) * (1.0 - om))
        return T

    def _ambient(self, s):
        if self.kind == PIECE_LINEAR:
            return self.r_c + self.b * s
        return self.r_c + self.amp_c * _sin(self.a_rad + self.w * s)

    def _ambient_slope(self, s):
        if self.kind == PIECE_LINEAR:
            return self.b
        return self.amp_c * self.w * _cos(self.a_rad + self.w * s)

    def slope(self, s, temp_c):
        """dT/dt (K/s) at s into the piece, from the ODE itself."""
        return -self.k * (temp_c - self._ambient(s)) + self.q

    # ------------------------------------------------------------ root solving
    def _eval(self, which, level, s):
        """Function and derivative for the root solver at s.

        which 0: f = T - level, f' = dT/dt; which 1: f = dT/dt, f' = d2T/dt2.
        Result in self._f, self._df (no tuple).
        """
        T = self.temp(s)
        d = self.slope(s, T)
        if which == 0:
            self._f = T - level
            self._df = d
        else:
            self._f = d
            self._df = -self.k * (d - self._ambient_slope(s))

    def _split(self, lo, hi):
        """Bisection point of [lo, hi] (s into the piece).

        The middle; but when the bracket is more than 2**20 time constants
        long (a far horizon, a long sine sub-step, a fast liquid) the geometric
        mean of lo + 1/k and hi, so that the log of the bracket halves each
        step and MAX_ROOT_ITERATIONS reach a crossing anywhere in it (halving
        a [0, 1e30 s] bracket 64 times leaves 5e10 s, far from a crossing at
        500 s with k = 1/900).
        """
        k = self.k
        if k > 0.0 and (hi - lo) * k > 1048576.0:
            return math.sqrt(lo + 1.0 / k) * math.sqrt(hi)  # in (lo, hi)
        return lo + 0.5 * (hi - lo)

    def _solve(self, which, level, lo, hi, flo):
        """Root of f in [lo, hi] (s into the piece), f(lo)=flo and f(hi) of the other sign.

        Safeguarded Newton: a Newton step is taken when it stays inside the
        bracket and either shrinks fast enough or follows a bisection step (so
        a root near one end of a long bracket is reached by Newton, not by
        hundreds of halvings), a bisection step otherwise, so the bracket
        always shrinks. At most MAX_ROOT_ITERATIONS iterations; stops
        when the step is below a few ulps of the time. Bisection points are
        those of _split, so a bracket many time constants long is cut in its
        logarithm first. The first point is the Newton step from lo (its
        tangent), when that lies inside: a root far nearer lo than the
        bracket's rounding (1e-203 s in a 1e292 s bracket) is found at once.
        """
        base = abs(self.t0_s)
        dxold = hi - lo
        dx = dxold
        self._eval(which, level, lo)
        s = lo
        d = self._df
        if d != 0.0 and d - d == 0.0:
            s = lo - flo / d
        if not lo < s < hi:  # also NaN
            s = self._split(lo, hi)
        self._eval(which, level, s)
        f = self._f
        df = self._df
        bisected = True
        it = 0
        while it < MAX_ROOT_ITERATIONS:
            it += 1
            if f == 0.0:
                return s
            if f != f:
                return _NAN  # the temperature overflowed here: no root to trust
            if (f > 0.0) == (flo > 0.0):
                lo = s
            else:
                hi = s
            # Newton when its point lies inside the bracket (also
            # false for an infinite f or f', or f' = 0) and the step follows a
            # bisection or shrinks fast enough; bisection otherwise.
            newton = False
            if df != 0.0 and df - df == 0.0 and (bisected or abs(2.0 * f) <= abs(dxold * df)):
                s_new = s - f / df
                newton = lo <= s_new <= hi  # an end itself: the root is within its rounding
            dxold = dx
            if newton:
                dx = s - s_new
                s = s_new
                bisected = False
            else:
                s = self._split(lo, hi)
                dx = s - lo
                bisected = True
            # at the new point (a log step shrinks s a lot); never below a few
            # of the smallest floats, or a root at a denormal time never ends
            tol = 4.0 * _EPS * (base + abs(s)) + 4.0 * _TINY
            if hi - lo <= tol:
                return s
            if abs(dx) <= tol:
                # A step this small is convergence only beside a sign change:
                # in a flat tail (far horizon) Newton creeps by ulps far from
                # the root. Look 2 tol either side; if no sign change, shrink
                # the bracket by what was seen and bisect on.
                a = s - 2.0 * tol
                if a < lo:
                    a = lo
                b = s + 2.0 * tol
                if b > hi:
                    b = hi
                self._eval(which, level, a)
                fa = self._f
                self._eval(which, level, b)
                fb = self._f
                if fa != fa or fb != fb:
                    return _NAN
                if fa == 0.0 or fb == 0.0 or (fa > 0.0) != (fb > 0.0):
                    return s
                if (fa > 0.0) == (flo > 0.0):
                    lo = b
                else:
                    hi = a
                s = self._split(lo, hi)
                dx = s - lo
                bisected = True
            self._eval(which, level, s)
            f = self._f
            df = self._df
        return s

    def _root_between(self, level, s0, T0, s1, T1):
        """First crossing of level in [s0, s1] (s into the piece), or -1.0.

        Checks the ends, then the one turning point the piece can have
        (exact for linear ambient, where T is convex or concave).
        """
        f0 = T0 - level
        if f0 == 0.0:
            return s0
        f1 = T1 - level
        if f0 != f0 or f1 != f1:
            return _NAN  # overflowed: the caller reports it
        if f1 == 0.0 or (f1 > 0.0) != (f0 > 0.0):
            return self._solve(0, level, s0, s1, f0)
        d0 = self.slope(s0, T0)
        d1 = self.slope(s1, T1)
        # A crossing inside needs the curve to head towards the level first and
        # turn back before s1: the slope changes sign in between.
        if d0 == 0.0 or (d0 < 0.0) != (f0 > 0.0) or (d1 < 0.0) == (d0 < 0.0):
            return -1.0
        s_turn = self._solve(1, level, s0, s1, d0)
        f_turn = self.temp(s_turn) - level
        if f_turn == 0.0:
            return s_turn
        if (f_turn > 0.0) != (f0 > 0.0):
            return self._solve(0, level, s0, s_turn, f0)
        return -1.0

    def first_root(self, level, length):
        """First crossing of level (deg C) within [0, length] (s) of the current piece.

        Returns s >= 0, -1.0 when there is none, -2.0 when the search stopped
        early: ``stop`` says why (REASON_WORK_CAP, or REASON_HORIZON when it
        would run past the largest float time) and ``reached_s`` how far it
        got. NaN when the arithmetic overflowed (inputs beyond float range).
        """
        T0 = self.T0_c
        self.reached_s = 0.0
        if T0 == level:
            return 0.0
        if self.kind == PIECE_LINEAR:
            k = self.k
            if length == _INF:
                if self.b == 0.0:
                    return self._root_constant_tail(level)
                # Ramp without end: T -> +-inf along the ramp; find a finite
                # end beyond the turning point and the crossing. Each doubling
                # of the span counts as work.
                span = 1.0 / k if k > 0.0 else 1.0
                f0 = T0 - level
                while True:
                    if not self.tick():
                        return -2.0
                    T1 = self.temp(span)
                    if T1 != T1:
                        return _NAN
                    f1 = T1 - level
                    if (f1 > 0.0) != (f0 > 0.0) or f1 == 0.0:
                        break
                    d1 = self.slope(span, T1)
                    # beyond the turning point and moving away: never
                    if d1 != 0.0 and (d1 > 0.0) == (f1 > 0.0) and (self.b > 0.0) == (f1 > 0.0):
                        break
                    span *= 2.0
                    if not finite(span):
                        self.stop = REASON_HORIZON
                        return -2.0
                length = span
            return self._root_between(level, 0.0, T0, length, self.temp(length))
        return self._root_sine(level, length)

    def _root_constant_tail(self, level):
        """Crossing on an endless piece with constant ambient and duty (closed form).

        With ``d = dT/dt`` at the start, ``1 - exp(-k s) = z = k*gap/d``, so
        ``s = (gap/d) * (-ln(1 - z)/z)``: no equilibrium ``R + g*u/k`` to
        overflow for a tiny ``k``, and exact for ``k = 0`` (``s = gap/d``).
        May return ``inf`` (later than the largest float time).
        """
        k = self.k
        T0 = self.T0_c
        gap = level - T0
        d = self.q - k * (T0 - self.r_c)
        if d == 0.0 or (gap > 0.0) != (d > 0.0):
            return -1.0
        z = k * gap / d  # share of the way to the equilibrium the level needs
        if z != z:
            return _NAN
        if z >= 1.0:
            return -1.0
        return (gap / d) * _log_ratio(z)

    def _root_sine(self, level, length):
        """First crossing on a sinusoidal-ambient piece (see module doc)."""
        k = self.k
        period = self.period_s
        sub = period / PERIODIC_SUBSTEPS
        skip = period
        eq = self.r_c + self.q / k
        amp = abs(self.resp_c)
        gap = eq - level
        s = 0.0
        Ts = self.T0_c
        th0 = self.a_rad - self.psi
        while s < length:
            if not self.tick():
                self.reached_s = s
                return -2.0
            # Transient part C*exp(-k(t-s)) on top of the periodic steady state.
            c = Ts - eq - self.resp_c * _sin(th0 + self.w * s)
            if abs(gap) > amp + abs(c):
                return -1.0  # the transient only shrinks: never within this piece
            h = skip
            if h > length - s:
                h = length - s
            if not finite(s + h):
                self.stop = REASON_HORIZON  # past the largest float time
                self.reached_s = s
                return -2.0
            c1 = c * exp(-k * h)
            lo = gap - amp + min(c, c1)
            hi = gap + amp + max(c, c1)
            if lo > 0.0 or hi < 0.0:
                s += h
                Ts = self.temp(s)
                skip *= 2.0
                continue
            skip = period
            h = sub
            if h > length - s:
                h = length - s
            s1 = s + h
            T1 = self.temp(s1)
            r = self._root_between(level, s, Ts, s1, T1)
            if r >= 0.0 or r != r:
                return r
            s = s1
            Ts = T1
        return -1.0
