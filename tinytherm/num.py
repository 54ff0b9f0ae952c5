"""Number checks shared by the core: one meaning each, never raising.

- :func:`finite`: an ``int`` or ``float`` (``bool`` excluded) that is not
  NaN or infinite. Comparisons only: allocates nothing.
- :func:`number`: :func:`finite` and within ``[lo, hi]``.
- :func:`as_float`: the value a caller meant as a number, as a ``float``, or
  ``None``: ``int``, ``float`` and, on CPython, anything ``float()`` converts
  (a numpy scalar) except ``str``, ``bytes``, ``bytearray`` and ``bool``.
- :func:`refused`: the ``ValueError`` refusing an argument, its text from
  :mod:`tinytherm.texts` (loaded only then).
- :func:`exp`: ``math.exp`` that saturates to 0 or ``inf`` instead of raising
  (MicroPython raises ValueError where CPython raises OverflowError).
- :func:`normal_quantile`: the standard normal quantile (an interval's half-width in sd);
  :func:`spread`: ``exp`` of that many sd, ``inf`` beyond ``exp(50)``.
- :func:`time_to_target_from_slope_s` and :func:`time_to_target_drift_s`: the law's
  two closed forms for the time to a target (the one copy in the core; None when never
  reached or for bad input, never raising), used by :mod:`tinytherm.answer` and
  re-exported by :mod:`tinytherm.model`.

Runs unchanged on CPython and MicroPython.
"""
import math

INF = math.inf


def finite(x):
    """True for a finite int or float (bool excluded); comparisons only."""
    t = type(x)
    if t is float:
        return x == x and x != INF and x != -INF
    if t is int:
        # a huge int is finite on both runtimes (MicroPython compares it as a float)
        return True
    return False


def number(x, lo, hi):
    """True for an int or float in ``[lo, hi]`` (comparisons only; never raises)."""
    t = type(x)
    if t is not float and t is not int:
        return False
    try:
        return lo <= x <= hi
    except (OverflowError, ValueError):  # MicroPython compares huge ints as floats
        return False


def refused(name, args=()):
    """The ``ValueError`` refusing argument ``name``: its text in :mod:`tinytherm.texts`
    (loaded here, not with the module that raises it: a text costs heap) ``% args``."""
    from tinytherm import texts
    return ValueError(getattr(texts, name) % args)


def as_float(x):
    """``x`` as a float, or None when it is no number (see the module docstring).

    A float or an int within the float range is returned as a float; an int
    beyond it, a string, bytes, a bool, None or any object ``float()``
    refuses gives None. NaN and infinities pass through (the caller judges them).
    """
    t = type(x)
    if t is float:
        return x
    if t is str or t is bytes or t is bytearray or t is bool or x is None:
        return None
    try:
        v = float(x)
    except (TypeError, ValueError, OverflowError):
        return None
    if t is int and (v == INF or v == -INF):
        return None  # MicroPython turns 10**400 into inf; CPython raises: both None
    return v


def exp(x):
    """``exp(x)`` that saturates (0.0 or inf) instead of raising; ``x`` dimensionless."""
    try:
        return math.exp(x)
    except (ValueError, OverflowError):
        return 0.0 if x < 0.0 else INF


def normal_quantile(p):
    """Standard normal quantile ``z`` with ``P(Z <= z) = p``, for 0 < p < 1.

    Rational approximation of Abramowitz & Stegun, Handbook of Mathematical
    Functions, formula 26.2.23 (absolute error < 4.5e-4); exactly 0 at 0.5.
    Raises ValueError outside (0, 1).
    """
    if not 0.0 < p < 1.0:
        raise refused("p")
    if p == 0.5:
        return 0.0
    q = p if p < 0.5 else 1.0 - p
    t = math.sqrt(-2.0 * math.log(q))
    z = t - (2.515517 + 0.802853 * t + 0.010328 * t * t) / (
        1.0 + 1.432788 * t + 0.189269 * t * t + 0.001308 * t * t * t)
    return -z if p < 0.5 else z


def spread(z_sd):
    """exp(z_sd), inf beyond exp(50) (dimensionless)."""
    return math.exp(z_sd) if z_sd < 50.0 else INF


def time_to_target_from_slope_s(gap_c, slope_c_per_s, rate_per_s):
    """Seconds until the liquid has moved ``gap_c`` deg C (target minus now).

    The liquid starts with slope ``slope_c_per_s`` (deg C/s) and follows
    ``dT/dt = slope - k (T - T_now)`` with ``k = rate_per_s`` (1/s), so that
    its equilibrium is ``T_now + slope / k``. One closed form serves every
    regime::

        eta = -log1p(-k D / s) / k      (D = gap_c, s = slope)

    which is ``D / s`` for ``k = 0`` (a straight line), the familiar
    exponential approach for ``k > 0`` and an accelerating curve for
    ``k < 0``. Returns ``0.0`` for a zero gap and ``None`` when the target is
    never reached: behind the direction of travel, no movement, or at or past
    the equilibrium (``k D / s >= 1``), or for non-finite input.
    """
    if gap_c == 0.0:
        return 0.0
    if not (slope_c_per_s == slope_c_per_s and gap_c == gap_c and rate_per_s == rate_per_s):
        return None
    if slope_c_per_s == 0.0 or (gap_c > 0.0) != (slope_c_per_s > 0.0):
        return None
    ratio = gap_c / slope_c_per_s          # seconds at the starting slope, > 0
    if ratio == math.inf:
        return None
    q = rate_per_s * ratio
    if not q < 1.0:
        return None  # (also NaN and inf)
    if -1e-4 < q < 1e-4:
        # series of -log(1 - q) / q: exact to ~1e-16 here, no cancellation
        return ratio * (1.0 + q * (0.5 + q / 3.0))
    try:
        return -math.log(1.0 - q) / rate_per_s
    except (ValueError, OverflowError, ZeroDivisionError):
        return None


def time_to_target_drift_s(gap_c, slope_c_per_s, rate_per_s, drift_c_per_s):
    """Seconds until the liquid has moved ``gap_c`` deg C, its equilibrium drifting.

    As :func:`time_to_target_from_slope_s` (the answer's law) with ``E(t) = E0 + b t``,
    ``b = drift_c_per_s`` (deg C/s), ``k = rate_per_s`` > 0 (1/s). With ``d = sign(gap)``,
    ``g(t) = d (b t - A (1 - exp(-k t))) - |gap|``, ``A = (b - slope) / k``, rises from
    ``-|gap|`` at ``|slope|``; ``g'`` moves monotonically to ``d b``, so ``g`` is convex
    or concave and Newton's method from 0 converges. None when never reached (``g``
    peaks below 0, or the slope is away from the target) or for bad input.
    """
    k = rate_per_s
    d = 1.0 if gap_c > 0.0 else -1.0
    s = slope_c_per_s * d   # towards the target when > 0
    bd = drift_c_per_s * d
    if not (k > 0.0 and s > 0.0 and -1e300 < bd < 1e300):
        return None
    t = 0.0
    for _ in range(40):
        e = math.exp(-k * t)  # (t >= 0: no overflow)
        dg = bd - (bd - s) * e
        if not dg > 0.0:
            return None     # past the peak short of the target: never reached
        step = (bd * t - (bd - s) * (1.0 - e) / k - gap_c * d) / dg
        t -= step
        if t < 0.0 or t > 1e12:
            return None
        if -1e-9 * (t + 1.0) < step < 1e-9 * (t + 1.0):
            return t
    return None
