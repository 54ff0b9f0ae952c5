"""Number checks shared by the core: one meaning each, never raising.

- :func:`finite`: an ``int`` or ``float`` (``bool`` excluded) that is not
  NaN or infinite. Comparisons only: allocates nothing.
- :func:`number`: :func:`finite` and within ``[lo, hi]``.
- :func:`as_float`: the value a caller meant as a number, as a ``float``, or
  ``None``: ``int``, ``float`` and, on CPython, anything ``float()`` converts
  (a numpy scalar) except ``str``, ``bytes``, ``bytearray`` and ``bool``.
- :func:`exp`: ``math.exp`` that saturates to 0 or ``inf`` instead of raising
  (MicroPython raises ValueError where CPython raises OverflowError).
- :func:`normal_quantile`: the standard normal quantile (an interval's half-width in sd);
  :func:`spread`: ``exp`` of that many sd, ``inf`` beyond ``exp(50)``.

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
        raise ValueError("p must be in (0, 1)")
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
