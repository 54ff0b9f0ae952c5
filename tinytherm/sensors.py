"""Sensor front-ends: turn what the hardware gives you into deg C.

Three small pieces, each usable on its own, none allocating per reading:

* NTC thermistor in a voltage divider: ADC counts -> resistance (ohm) ->
  temperature (deg C) by the Beta equation or by the Steinhart-Hart equation,
  plus a fit of the three Steinhart-Hart coefficients from three
  (temperature, resistance) points of a datasheet table.
* A 12-bit 1-Wire-style digital sensor: raw 16-bit scratchpad register ->
  deg C, with the power-up value and an open bus recognised, and the
  scratchpad CRC-8.
* :class:`LagCompensator`: optional first-order probe-lag compensation that
  sits between the sensor and the estimator.

Runs unchanged on CPython and MicroPython (``math`` only).
"""
import math

from tinytherm import status
from tinytherm.num import exp  # saturates instead of raising (MicroPython raises ValueError)

try:
    from micropython import const
except ImportError:  # CPython
    def const(x):
        return x

KELVIN_OFFSET = 273.15  # deg C -> K

# 1-Wire-style digital sensor (0.0625 deg C per LSB at 12 bits, two's complement).
# The codes below are common practice, no source.
DIGITAL_POWER_UP_RAW = const(0x0550)  # register content before the first conversion: +85.0 C
DIGITAL_OPEN_BUS_RAW = const(0xFFFF)  # a bus with no device answering reads all ones
DISCONNECTED_C = -127.0               # what many drivers hand back for "no device"
POWER_UP_C = 85.0
DIGITAL_MIN_C = -55.0                 # rated range of the common parts (datasheet range,
DIGITAL_MAX_C = 125.0                 # from memory)


def _ln(x):
    """``log(x)`` or ``None`` for x <= 0 / non-finite (MicroPython raises ValueError)."""
    try:
        return math.log(x)
    except (ValueError, OverflowError):
        return None


# --------------------------------------------------------------------------
# NTC thermistor in a divider
# --------------------------------------------------------------------------

def divider_resistance_ohm(counts, full_scale_counts, fixed_ohm, ntc_on_low_side=True):
    """Thermistor resistance in ohm from an ADC reading of a voltage divider.

    The divider runs from the ADC reference voltage to ground, so the ratio
    ``x = counts / full_scale_counts`` is independent of the supply (a
    ratiometric reading). With the NTC on the low side (between the ADC pin
    and ground, ``fixed_ohm`` from the reference to the pin)
    ``R = fixed_ohm * x / (1 - x)``; with the NTC on the high side
    ``R = fixed_ohm * (1 - x) / x``.

    ``counts``: raw ADC value (e.g. 0..4095, or 0..65535 from ``read_u16()``);
    ``full_scale_counts``: the value read at the reference voltage (4095 or
    65535). Returns ``None`` when the reading sits on a rail (0 or full scale:
    an open or shorted thermistor), so the caller can report a sensor fault.
    """
    if full_scale_counts <= 0:
        raise ValueError("full_scale_counts must be > 0")
    if not fixed_ohm > 0.0:
        raise ValueError("fixed_ohm must be > 0")
    if counts <= 0 or counts >= full_scale_counts:
        return None
    x = counts / full_scale_counts
    if ntc_on_low_side:
        return fixed_ohm * x / (1.0 - x)
    return fixed_ohm * (1.0 - x) / x


def divider_counts(resistance_ohm, full_scale_counts, fixed_ohm, ntc_on_low_side=True):
    """ADC reading (float counts, not rounded) for a thermistor resistance in ohm.

    The inverse of :func:`divider_resistance_ohm`; used to build test traces
    and to check a divider design's resolution.
    """
    if not resistance_ohm > 0.0 or not fixed_ohm > 0.0:
        raise ValueError("resistances must be > 0")
    if ntc_on_low_side:
        return full_scale_counts * resistance_ohm / (resistance_ohm + fixed_ohm)
    return full_scale_counts * fixed_ohm / (resistance_ohm + fixed_ohm)


def beta_resistance_ohm(temp_c, r_nominal_ohm, beta_k, t_nominal_c=25.0):
    """NTC resistance in ohm at ``temp_c`` by the Beta equation.

    ``R(T) = R0 * exp(B * (1/T - 1/T0))`` with temperatures in kelvin;
    ``r_nominal_ohm`` is ``R0`` at ``t_nominal_c`` (usually 25 C), ``beta_k``
    the datasheet B constant in kelvin.
    """
    t_k = temp_c + KELVIN_OFFSET
    t0_k = t_nominal_c + KELVIN_OFFSET
    if not t_k > 0.0:
        raise ValueError("temp_c must be above absolute zero")
    return r_nominal_ohm * exp(beta_k * (1.0 / t_k - 1.0 / t0_k))


def beta_temperature_c(resistance_ohm, r_nominal_ohm, beta_k, t_nominal_c=25.0):
    """Temperature in deg C of an NTC with resistance ``resistance_ohm`` (Beta equation).

    ``1/T = 1/T0 + ln(R/R0) / B`` (kelvin). Returns ``None`` for a resistance
    that is not a positive finite number (e.g. the ``None``-worthy rail
    readings, passed through as 0).
    """
    if resistance_ohm is None or not beta_k > 0.0 or not r_nominal_ohm > 0.0:
        return None
    ln_ratio = _ln(resistance_ohm / r_nominal_ohm)
    if ln_ratio is None:
        return None
    inv_t = 1.0 / (t_nominal_c + KELVIN_OFFSET) + ln_ratio / beta_k
    if not inv_t > 0.0:
        return None
    return 1.0 / inv_t - KELVIN_OFFSET


def steinhart_hart_temperature_c(resistance_ohm, a, b, c):
    """Temperature in deg C from resistance in ohm by Steinhart-Hart.

    ``1/T = a + b*ln(R) + c*ln(R)**3`` with ``T`` in kelvin and ``R`` in ohm.
    Returns ``None`` for a non-positive resistance or a non-physical result.
    """
    if resistance_ohm is None:
        return None
    ln_r = _ln(resistance_ohm)
    if ln_r is None:
        return None
    inv_t = a + ln_r * (b + c * ln_r * ln_r)
    if not inv_t > 0.0:
        return None
    return 1.0 / inv_t - KELVIN_OFFSET


def steinhart_hart_resistance_ohm(temp_c, a, b, c):
    """Resistance in ohm at ``temp_c`` by inverting Steinhart-Hart (``b > 0``, ``c >= 0``).

    Solves ``a + b*L + c*L**3 = 1/T`` for ``L = ln(R)`` by Newton's method,
    starting at the Beta-like ``L = (1/T - a) / b``; the left side is
    increasing in ``L`` for ``b > 0, c >= 0``, so the root is unique.
    """
    if not b > 0.0 or not c >= 0.0:
        raise ValueError("need b > 0 and c >= 0")
    t_k = temp_c + KELVIN_OFFSET
    if not t_k > 0.0:
        raise ValueError("temp_c must be above absolute zero")
    inv_t = 1.0 / t_k
    ln_r = (inv_t - a) / b
    for _ in range(20):
        f = a + ln_r * (b + c * ln_r * ln_r) - inv_t
        step = f / (b + 3.0 * c * ln_r * ln_r)
        ln_r -= step
        if abs(step) <= 1e-12 * (1.0 + abs(ln_r)):
            break
    return exp(ln_r)


class SteinhartHart:
    """Steinhart-Hart coefficients ``a``, ``b``, ``c`` fitted through three points.

    ``SteinhartHart(t1_c, r1_ohm, t2_c, r2_ohm, t3_c, r3_ohm)`` solves the
    3x3 linear system ``1/T_i = a + b*L_i + c*L_i**3`` (``L_i = ln R_i``, T in
    kelvin) exactly, so the curve passes through all three datasheet points.
    Pick points spread over the range you care about (e.g. 0, 25 and 85 C).
    Raises ValueError for repeated or non-positive points.

    Fit on the host or once at start-up: with 30-bit floats the system is
    poorly conditioned (``c`` is ~1e-7), so on such a port prefer storing
    coefficients fitted on a PC.
    """

    def __init__(self, t1_c, r1_ohm, t2_c, r2_ohm, t3_c, r3_ohm):
        l1 = _ln(r1_ohm)
        l2 = _ln(r2_ohm)
        l3 = _ln(r3_ohm)
        if l1 is None or l2 is None or l3 is None:
            raise ValueError("resistances must be > 0")
        if l1 == l2 or l1 == l3 or l2 == l3:
            raise ValueError("the three resistances must differ")
        y1 = 1.0 / (t1_c + KELVIN_OFFSET)
        y2 = 1.0 / (t2_c + KELVIN_OFFSET)
        y3 = 1.0 / (t3_c + KELVIN_OFFSET)
        # Divided differences eliminate a, then b (exact solution of the 3x3 system).
        g2 = (y2 - y1) / (l2 - l1)
        g3 = (y3 - y1) / (l3 - l1)
        c = (g3 - g2) / ((l3 - l2) * (l1 + l2 + l3))
        b = g2 - c * (l1 * l1 + l1 * l2 + l2 * l2)
        a = y1 - (b + c * l1 * l1) * l1
        self.a = a
        self.b = b
        self.c = c

    def temperature_c(self, resistance_ohm):
        """Temperature in deg C for ``resistance_ohm`` (``None`` if not physical)."""
        return steinhart_hart_temperature_c(resistance_ohm, self.a, self.b, self.c)

    def resistance_ohm(self, temp_c):
        """Resistance in ohm at ``temp_c``."""
        return steinhart_hart_resistance_ohm(temp_c, self.a, self.b, self.c)

    def __repr__(self):
        return "SteinhartHart(a=%.9e, b=%.9e, c=%.9e)" % (self.a, self.b, self.c)


# --------------------------------------------------------------------------
# 12-bit 1-Wire-style digital sensor
# --------------------------------------------------------------------------

def digital_raw_to_c(raw, resolution_bits=12):
    """Deg C from the 16-bit temperature register (two's complement, 1/16 C per LSB).

    ``raw`` is the unsigned 16-bit value (LSB byte + 256 * MSB byte of the
    scratchpad). At 9, 10 or 11 bits of resolution the lowest 3, 2 or 1 bits
    are undefined and are cleared here. Check :func:`digital_raw_verdict`
    first: this function converts any value, including the error codes.
    """
    if resolution_bits < 9 or resolution_bits > 12:
        raise ValueError("resolution_bits must be 9..12")
    raw &= 0xFFFF
    raw &= ~((1 << (12 - resolution_bits)) - 1) & 0xFFFF
    if raw & 0x8000:
        raw -= 0x10000
    return raw * 0.0625


def digital_raw_verdict(raw, power_up_is_error=True):
    """Verdict on a raw register value: a code from :mod:`tinytherm.status`.

    * ``status.ERROR_CODE`` for the power-up value 0x0550 (+85.0 C, read back
      before any conversion finished) when ``power_up_is_error``, and for an
      open bus (0xFFFF, no device pulled the line low);
    * ``status.OUT_OF_RANGE`` outside the rated -55..+125 C;
    * ``status.ACCEPTED`` otherwise.

    A real +85.0 C is possible (a water bath, a kettle): pass
    ``power_up_is_error=False`` once a conversion has been seen to complete,
    or read twice. Common practice, no source.
    """
    raw &= 0xFFFF
    if raw == DIGITAL_OPEN_BUS_RAW:
        return status.ERROR_CODE
    if raw == DIGITAL_POWER_UP_RAW and power_up_is_error:
        return status.ERROR_CODE
    t = digital_raw_to_c(raw)
    if t < DIGITAL_MIN_C or t > DIGITAL_MAX_C:
        return status.OUT_OF_RANGE
    return status.ACCEPTED


def digital_celsius_verdict(temp_c, power_up_is_error=True):
    """Verdict on a value a driver already converted to deg C.

    Recognises the driver convention -127.0 C for a missing device and the
    power-up +85.0 C (when ``power_up_is_error``) as ``status.ERROR_CODE``;
    ``status.OUT_OF_RANGE`` outside -55..+125 C; ``status.NOT_FINITE`` for NaN
    or infinity. Common practice, no source.
    """
    if temp_c != temp_c or abs(temp_c) == math.inf:
        return status.NOT_FINITE
    if temp_c == DISCONNECTED_C:
        return status.ERROR_CODE
    if temp_c == POWER_UP_C and power_up_is_error:
        return status.ERROR_CODE
    if temp_c < DIGITAL_MIN_C or temp_c > DIGITAL_MAX_C:
        return status.OUT_OF_RANGE
    return status.ACCEPTED


def crc8_maxim(data, length=-1):
    """Dallas/Maxim 1-Wire CRC-8 (polynomial x^8 + x^5 + x^4 + 1, reflected) of bytes.

    ``data`` is a bytes-like object; ``length`` limits how many bytes are
    used (-1: all). A scratchpad read is valid when the CRC over its first 8
    bytes equals the 9th byte, or equivalently the CRC over all 9 is 0.
    """
    n = len(data) if length < 0 else length
    crc = 0
    for i in range(n):
        crc ^= data[i]
        for _ in range(8):
            if crc & 1:
                crc = (crc >> 1) ^ 0x8C
            else:
                crc >>= 1
    return crc


# --------------------------------------------------------------------------
# Probe-lag compensation
# --------------------------------------------------------------------------

class LagCompensator:
    """First-order probe-lag compensation (a lead-lag filter), fixed state.

    A probe in a sheath or a sensor taped to a mug wall follows the liquid
    with a first-order lag ``tau * dS/dt = T - S`` (``S`` sensor, ``T`` liquid),
    so its reading trails a cooling liquid by roughly ``tau`` seconds.
    Inverting that lag exactly needs ``dS/dt``, which amplifies noise, so the
    compensator applies ``(1 + tau*s) / (1 + f*s)``: it replaces the probe's lag
    ``tau`` by the shorter lag ``f`` of a smoothing filter. Implemented as

        x += (1 - exp(-dt/f)) * (S - x)        # low-pass of the reading
        T_est = x + (tau / f) * (S - x)        # add back the lost lead

    ``probe_time_constant_s``: the probe's ``tau`` in seconds (measure it by a
    plunge test: time to 63 % of a step). ``smoothing_s``: ``f`` in seconds,
    default ``tau / 4``; sensor noise is amplified by at most ``tau / f``.
    Feed it every reading with the step ``dt_s`` in seconds since the
    previous one; pass the output to the estimator.
    """

    def __init__(self, probe_time_constant_s, smoothing_s=None):
        if not probe_time_constant_s >= 0.0:
            raise ValueError("probe_time_constant_s must be >= 0")
        if smoothing_s is None:
            smoothing_s = probe_time_constant_s * 0.25
        if probe_time_constant_s == 0.0 and smoothing_s == 0.0:
            smoothing_s = 1.0  # no lag to compensate: lead 1, a pass-through
            lead = 1.0
        elif not smoothing_s > 0.0:
            raise ValueError("smoothing_s must be > 0")
        else:
            lead = probe_time_constant_s / smoothing_s
        self.probe_time_constant_s = probe_time_constant_s
        self.smoothing_s = smoothing_s
        self._lead = lead
        self._x = 0.0
        self._started = False
        self.temp_c = None

    def reset(self):
        """Forget the filter state; the next reading starts it afresh."""
        self._started = False
        self._x = 0.0
        self.temp_c = None

    def update(self, sensor_c, dt_s):
        """Compensated temperature in deg C for a reading ``sensor_c`` taken ``dt_s`` s later.

        The first reading after construction or :meth:`reset` is passed
        through (no history yet). A non-positive ``dt_s`` keeps the filter
        state and recomputes the output. Returns the value also stored in
        ``temp_c``.
        """
        if not self._started:
            self._x = sensor_c
            self._started = True
        elif dt_s > 0.0:
            self._x += (1.0 - exp(-dt_s / self.smoothing_s)) * (sensor_c - self._x)
        out = self._x + self._lead * (sensor_c - self._x)
        self.temp_c = out
        return out

    def __repr__(self):
        return "LagCompensator(probe_time_constant_s=%r, smoothing_s=%r)" % (
            self.probe_time_constant_s, self.smoothing_s)
