"""The first-order lumped thermal model, as pure functions.

The contents of a mug, kettle or bath are treated as one well-mixed mass::

    dT/dt = -k * (T - R) + g * u

``T`` liquid temperature (deg C), ``R`` ambient (deg C), ``k`` rate constant
(1/s), ``u`` heater duty in [0, 1] (dimensionless), ``g`` heater gain (K/s at
full duty). With ``u`` held constant the solution is an exponential approach to
the equilibrium ``E = R + g*u/k`` with time constant ``1/k``.

Every function takes and returns plain floats; none allocates beyond the
floats it returns. Runs unchanged on CPython and MicroPython.
"""
import math

# exp saturates instead of raising (MicroPython raises ValueError); the closed form, kept once
from tinytherm.num import exp, time_to_target_from_slope_s  # noqa: F401


def _phi1(x):
    """``(1 - exp(-x)) / x`` without cancellation near 0 (dimensionless)."""
    if -0.5 < x < 0.5:
        # Taylor series sum (-x)**n / (n+1)!, n = 0..15, by Horner's rule;
        # truncation error < 0.5**16 / 17! here.
        r = 1.0
        n = 15
        while n >= 1:
            r = 1.0 - x * r / (n + 1)
            n -= 1
        return r
    return (1.0 - exp(-x)) / x


def equilibrium_c(ambient_c, rate_per_s, gain_k_per_s=0.0, duty=0.0):
    """Temperature the liquid levels off at, in deg C: ``R + g*u/k``.

    ``rate_per_s`` must be > 0; returns ``inf``/``-inf`` when it is not and the
    heater term is nonzero (no finite equilibrium), and ``ambient_c`` when the
    heater term is zero.
    """
    drive = gain_k_per_s * duty
    if drive == 0.0:
        return ambient_c
    if rate_per_s <= 0.0:
        return math.inf if drive > 0.0 else -math.inf
    return ambient_c + drive / rate_per_s


def time_constant_s(rate_per_s):
    """Time constant ``1/k`` in seconds (``inf`` for ``k <= 0``)."""
    if rate_per_s <= 0.0:
        return math.inf
    return 1.0 / rate_per_s


def temperature_at(t_s, start_c, rate_per_s, ambient_c, gain_k_per_s=0.0, duty=0.0):
    """Closed-form temperature in deg C after ``t_s`` seconds at constant duty.

    ``T(t) = E + (T0 - E) * exp(-k t)`` with ``E`` the equilibrium; for
    ``k == 0`` the heater ramps linearly, ``T0 + g*u*t``.
    """
    if rate_per_s == 0.0:
        return start_c + gain_k_per_s * duty * t_s
    eq = ambient_c + gain_k_per_s * duty / rate_per_s
    e = exp(-rate_per_s * t_s)
    temp = eq + (start_c - eq) * e
    if temp - temp == 0.0:
        return temp
    # E or T0 - E overflowed (tiny k, huge heater term or temperatures): the
    # same solution as finite parts T0 e + R (1 - e) + g u (1 - e)/k, which
    # is +-inf only when the answer itself is beyond the float range.
    if t_s == 0.0:
        return start_c
    x = rate_per_s * t_s
    # (1 - e^-x)/k, by the series of _phi1 near x = 0
    om_k = t_s * _phi1(x) if -0.5 < x < 0.5 else (1.0 - e) / rate_per_s
    return start_c * e + ambient_c * (1.0 - e) + gain_k_per_s * duty * om_k


def time_to_target_s(start_c, target_c, rate_per_s, ambient_c, gain_k_per_s=0.0, duty=0.0):
    """Seconds until the liquid reaches ``target_c`` at constant duty.

    Works for cooling and heating. Returns ``0.0`` when ``start_c`` already
    equals the target, and ``None`` when the target is never reached: it lies
    on the far side of (or exactly at) the equilibrium, or on the wrong side of
    the start. Call :func:`equilibrium_c` to tell the user where it levels off.
    ``rate_per_s`` is ``k`` in 1/s; ``k == 0`` (no losses) means a linear ramp
    and ``k < 0`` (a runaway, e.g. a fitted rate below zero) an accelerating
    curve: every regime has its exact answer (see
    :func:`time_to_target_from_slope_s`).
    """
    slope = gain_k_per_s * duty - rate_per_s * (start_c - ambient_c)
    return time_to_target_from_slope_s(target_c - start_c, slope, rate_per_s)


def ambient_from_three_c(t0_c, t1_c, t2_c):
    """Ambient (equilibrium) in deg C from three equally spaced readings.

    For an exponential approach, ``R = (T0*T2 - T1**2) / (T0 + T2 - 2*T1)``.
    Returns ``None`` when the readings are not strictly monotone and convex
    towards a level (denominator zero, or not an exponential approach).
    """
    den = t0_c + t2_c - 2.0 * t1_c
    d1 = t1_c - t0_c
    d2 = t2_c - t1_c
    if den == 0.0 or d1 == 0.0 or (d1 > 0.0) != (d2 > 0.0) or abs(d2) >= abs(d1):
        return None
    r = (t0_c * t2_c - t1_c * t1_c) / den
    if r - r != 0.0:
        # the products overflowed: the same value as T2 - d2**2 / (d2 - d1)
        r = t2_c - d2 * (d2 / (d2 - d1))
    return r


def rate_from_three_per_s(t0_c, t1_c, t2_c, spacing_s):
    """Rate constant ``k`` in 1/s from three readings ``spacing_s`` seconds apart.

    ``k = ln((T1-T0)/(T2-T1)) / spacing``; ``None`` when not an exponential
    approach (see :func:`ambient_from_three_c`).
    """
    d1 = t1_c - t0_c
    d2 = t2_c - t1_c
    if (spacing_s <= 0.0 or d1 == 0.0 or d2 == 0.0 or (d1 > 0.0) != (d2 > 0.0)
            or abs(d2) >= abs(d1)):
        return None
    try:
        return math.log(d1 / d2) / spacing_s
    except (ValueError, OverflowError):
        return None


def rate_from_physical_per_s(h_w_per_m2k, area_m2, mass_kg, specific_heat_j_per_kgk):
    """Rate constant ``k = h*A / (m*c)`` in 1/s from physical parameters.

    ``h`` surface heat-transfer coefficient (W/(m^2 K)), ``A`` wetted or
    exposed area (m^2), ``m`` mass (kg), ``c`` specific heat (J/(kg K)).
    Raises ValueError for non-positive mass or specific heat.
    """
    heat_capacity = mass_kg * specific_heat_j_per_kgk
    if not heat_capacity > 0.0:
        raise ValueError("mass_kg and specific_heat_j_per_kgk must be > 0")
    k = h_w_per_m2k * area_m2 / heat_capacity
    if k - k != 0.0:
        k = (h_w_per_m2k / mass_kg) * (area_m2 / specific_heat_j_per_kgk)  # products overflowed
    return k


def heater_gain_k_per_s(power_w, mass_kg, specific_heat_j_per_kgk):
    """Heater gain ``g = P / (m*c)`` in K/s at full duty."""
    heat_capacity = mass_kg * specific_heat_j_per_kgk
    if not heat_capacity > 0.0:
        raise ValueError("mass_kg and specific_heat_j_per_kgk must be > 0")
    return power_w / heat_capacity


def heating_time_s(mass_kg, specific_heat_j_per_kgk, start_c, target_c, power_w,
                   loss_w_per_k=0.0, ambient_c=20.0):
    """Seconds to heat ``mass_kg`` from ``start_c`` to ``target_c`` with ``power_w``.

    Energy balance ``m c dT/dt = P - L (T - R)``; with ``loss_w_per_k == 0``
    this is ``m c (T1 - T0) / P``. ``loss_w_per_k`` is the loss conductance in
    W/K, ``ambient_c`` the surroundings. Returns ``None`` when the losses at the
    target exceed the power (never gets there).
    """
    heat_capacity = mass_kg * specific_heat_j_per_kgk
    if not heat_capacity > 0.0:
        raise ValueError("mass_kg and specific_heat_j_per_kgk must be > 0")
    if loss_w_per_k < 0.0:
        raise ValueError("loss_w_per_k must be >= 0")
    return time_to_target_s(start_c, target_c, loss_w_per_k / heat_capacity, ambient_c,
                            power_w / heat_capacity, 1.0)
