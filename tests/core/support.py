"""Helpers shared by the core tests; runs on CPython and MicroPython alike.

Nothing here may import beyond ``math`` and ``struct``: these tests run under
the unix ``micropython`` binary too.
"""
import math
import struct

from prng import XorShift  # noqa: F401 - re-exported for the tests


def to_float32(x):
    """Round a float to the nearest IEEE-754 single-precision value."""
    return struct.unpack("f", struct.pack("f", x))[0]


def to_float30(x):
    """Round to a 30-bit float (8-bit exponent, 21 explicit mantissa bits).

    Emulates the "30-bit float" object representation some MicroPython ports
    use; the exponent range is the same as float32's, so only the mantissa is
    shortened here.
    """
    if x == 0.0 or x != x or x in (float("inf"), float("-inf")):
        return x
    m, e = math.frexp(x)
    scale = 4194304.0  # 2**22: the leading bit plus 21 explicit bits
    return math.ldexp(math.floor(m * scale + 0.5) / scale, e)


def round_instance_floats(obj, rounder, skip=()):
    """Round every float attribute stored on ``obj`` and its parts with ``rounder``.

    Used after each update to emulate a device whose floats are narrower than
    the host's. Parts are the objects held in attributes (the estimator's
    guard, fit, audits...) and in fixed tuples of them.
    """
    d = obj.__dict__
    for name in list(d.keys()):
        v = d[name]
        if name in skip:
            continue
        if isinstance(v, float):
            setattr(obj, name, rounder(v))
        elif isinstance(v, tuple):
            for item in v:
                if hasattr(item, "__dict__"):
                    round_instance_floats(item, rounder, skip)
        elif hasattr(v, "__dict__") and not isinstance(v, type):
            round_instance_floats(v, rounder, skip)


def close(a, b, rel=1e-9, abs_tol=0.0):
    """True when ``a`` and ``b`` agree to ``rel`` relative or ``abs_tol`` absolute."""
    return abs(a - b) <= max(rel * max(abs(a), abs(b)), abs_tol)
