"""Sensor front-ends: thermistor, 1-Wire-style digital sensor, lag compensation.

Runs under CPython (pytest) and under the unix micropython binary
(tests/core/mp_run.py). Each outside value names its source.
"""
import math

from support import XorShift, close
from tinytherm import sensors, status
from tinytherm.sensors import (
    LagCompensator,
    SteinhartHart,
    beta_resistance_ohm,
    beta_temperature_c,
    crc8_maxim,
    digital_celsius_verdict,
    digital_raw_to_c,
    digital_raw_verdict,
    divider_counts,
    divider_resistance_ohm,
    steinhart_hart_resistance_ohm,
    steinhart_hart_temperature_c,
)

# A common 10 kOhm (at 25 C), B = 3950 K NTC.
R25 = 10000.0
B3950 = 3950.0

# Published 10 kOhm coefficient set, widely reproduced in thermistor
# calculators and application notes (from memory).
SH10K = (1.129148e-3, 2.34125e-4, 8.76741e-8)
# Wikipedia "Steinhart-Hart equation": typical values for a thermistor of
# about 3 kOhm at room temperature (from memory).
SH3K = (1.40e-3, 2.37e-4, 9.90e-8)


# ---------------- Beta equation ----------------

def test_beta_resistance_of_10k_3950_at_0_50_100_c():
    # Beta (B-parameter) equation R = R0 exp(B (1/T - 1/T0)), as given in NTC
    # manufacturers' application notes and the Wikipedia "Thermistor" article
    # (from memory). Expected values are the ones tabulated from that formula
    # for a 10k/3950 part: about 33.62 k, 3.588 k and 697.5 ohm (from memory;
    # re-derived by hand: exp(3950*(1/273.15 - 1/298.15)) = 3.3621).
    assert close(beta_resistance_ohm(0.0, R25, B3950), 33620.6, rel=2e-4)
    assert close(beta_resistance_ohm(50.0, R25, B3950), 3588.2, rel=2e-4)
    assert close(beta_resistance_ohm(100.0, R25, B3950), 697.52, rel=2e-4)
    assert beta_resistance_ohm(25.0, R25, B3950) == R25


def test_beta_two_point_definition_recovers_b():
    # B is defined from two points: B = ln(R1/R2) / (1/T1 - 1/T2) (datasheet
    # definition of B25/85, common practice, no source).
    r25 = beta_resistance_ohm(25.0, R25, B3950)
    r85 = beta_resistance_ohm(85.0, R25, B3950)
    b = math.log(r25 / r85) / (1.0 / 298.15 - 1.0 / 358.15)
    assert close(b, B3950, rel=1e-9)


def test_beta_temperature_inverts_resistance():
    t = -20.0
    while t <= 120.0:
        r = beta_resistance_ohm(t, R25, B3950)
        assert abs(beta_temperature_c(r, R25, B3950) - t) < 1e-9
        t += 7.5


def test_beta_temperature_rejects_non_physical():
    assert beta_temperature_c(0.0, R25, B3950) is None
    assert beta_temperature_c(-5.0, R25, B3950) is None
    assert beta_temperature_c(None, R25, B3950) is None


# ---------------- Steinhart-Hart ----------------

def test_published_10k_set_gives_25_c_at_10k():
    # The set above is the usual 10 kOhm-at-25 C one: 10 kOhm -> 25.00 C.
    t = steinhart_hart_temperature_c(10000.0, SH10K[0], SH10K[1], SH10K[2])
    assert abs(t - 25.0) < 0.01


def test_published_3k_set_is_about_3k_at_25_c():
    r = steinhart_hart_resistance_ohm(25.0, SH3K[0], SH3K[1], SH3K[2])
    assert 2850.0 < r < 3150.0  # "about 3 kOhm" (within 5 %)


def test_fit_recovers_published_coefficients_and_input_points():
    # A datasheet-style table of three points generated from the published
    # 10k set; the fit must give back that set and reproduce the points.
    pts = []
    for t in (0.0, 25.0, 70.0):
        pts.append((t, steinhart_hart_resistance_ohm(t, SH10K[0], SH10K[1], SH10K[2])))
    sh = SteinhartHart(pts[0][0], pts[0][1], pts[1][0], pts[1][1], pts[2][0], pts[2][1])
    assert close(sh.a, SH10K[0], rel=1e-6)
    assert close(sh.b, SH10K[1], rel=1e-6)
    assert close(sh.c, SH10K[2], rel=1e-5)
    for t, r in pts:
        assert abs(sh.temperature_c(r) - t) < 0.01
        assert abs(sh.temperature_c(r) - t) < 1e-6


def test_fit_to_beta_points_reproduces_them_and_has_c_near_zero():
    # The Beta equation is Steinhart-Hart with c = 0, a = 1/T0 - ln(R0)/B,
    # b = 1/B (algebra on the two equations, common practice, no source).
    pts = []
    for t in (0.0, 50.0, 100.0):
        pts.append((t, beta_resistance_ohm(t, R25, B3950)))
    sh = SteinhartHart(pts[0][0], pts[0][1], pts[1][0], pts[1][1], pts[2][0], pts[2][1])
    for t, r in pts:
        assert abs(sh.temperature_c(r) - t) < 0.01
    assert close(sh.b, 1.0 / B3950, rel=1e-7)
    assert abs(sh.c) < 1e-12
    assert close(sh.a, 1.0 / 298.15 - math.log(R25) / B3950, rel=1e-7)


def test_fit_with_table_rounded_to_ohms_still_within_hundredth():
    # Datasheet tables print whole ohms; the fit still passes within 0.01 C.
    pts = []
    for t in (5.0, 40.0, 90.0):
        pts.append((t, float(round(steinhart_hart_resistance_ohm(t, SH10K[0], SH10K[1], SH10K[2])))))
    sh = SteinhartHart(pts[0][0], pts[0][1], pts[1][0], pts[1][1], pts[2][0], pts[2][1])
    for t, r in pts:
        assert abs(sh.temperature_c(r) - t) < 0.01
    # and between the points it stays close to the generating curve
    t = 10.0
    while t < 90.0:
        r = steinhart_hart_resistance_ohm(t, SH10K[0], SH10K[1], SH10K[2])
        assert abs(sh.temperature_c(r) - t) < 0.02
        t += 10.0


def test_fit_rejects_repeated_points():
    raised = False
    try:
        SteinhartHart(0.0, 30000.0, 25.0, 30000.0, 50.0, 3000.0)
    except ValueError:
        raised = True
    assert raised


def test_steinhart_hart_resistance_inverts_temperature():
    t = -30.0
    while t <= 150.0:
        r = steinhart_hart_resistance_ohm(t, SH10K[0], SH10K[1], SH10K[2])
        assert abs(steinhart_hart_temperature_c(r, SH10K[0], SH10K[1], SH10K[2]) - t) < 1e-8
        t += 11.0


# ---------------- divider ----------------

def test_divider_midpoint_equals_fixed_resistor():
    # Equal resistors put the pin at half scale (voltage divider rule).
    assert close(divider_resistance_ohm(2048, 4096, 10000.0), 10000.0)
    assert close(divider_resistance_ohm(2048, 4096, 10000.0, False), 10000.0)


def test_divider_round_trip_and_sides():
    for r in (700.0, 3588.0, 10000.0, 33620.0):
        c_low = divider_counts(r, 65535, 10000.0)
        c_high = divider_counts(r, 65535, 10000.0, False)
        assert close(divider_resistance_ohm(c_low, 65535, 10000.0), r, rel=1e-9)
        assert close(divider_resistance_ohm(c_high, 65535, 10000.0, False), r, rel=1e-9)
    # NTC on the low side: hotter -> lower R -> fewer counts
    assert divider_counts(697.5, 4095, 10000.0) < divider_counts(33620.0, 4095, 10000.0)


def test_divider_rails_are_faults():
    assert divider_resistance_ohm(0, 4095, 10000.0) is None
    assert divider_resistance_ohm(4095, 4095, 10000.0) is None
    assert beta_temperature_c(divider_resistance_ohm(0, 4095, 10000.0), R25, B3950) is None


def test_adc_to_temperature_with_12_bit_quantisation():
    # 12-bit ADC quantisation near room temperature costs < 0.05 C with a
    # matched 10k divider (a 1-count step is ~0.025 C there).
    for t in (10.0, 25.0, 37.0, 55.0, 65.0):
        counts = int(divider_counts(beta_resistance_ohm(t, R25, B3950), 4095, 10000.0) + 0.5)
        r = divider_resistance_ohm(counts, 4095, 10000.0)
        assert abs(beta_temperature_c(r, R25, B3950) - t) < 0.05


# ---------------- digital sensor ----------------

def test_digital_register_table():
    # Temperature/data relationship table of the common 12-bit 1-Wire sensor
    # datasheet (DS18B20 data sheet, Table 1, from memory).
    table = (
        (0x07D0, 125.0), (0x0550, 85.0), (0x0191, 25.0625), (0x00A2, 10.125),
        (0x0008, 0.5), (0x0000, 0.0), (0xFFF8, -0.5), (0xFF5E, -10.125),
        (0xFE6F, -25.0625), (0xFC90, -55.0),
    )
    for raw, t in table:
        assert digital_raw_to_c(raw) == t


def test_digital_lower_resolution_masks_undefined_bits():
    # At 9 bits the three lowest bits are undefined (same datasheet, from memory).
    assert digital_raw_to_c(0x0197, 9) == 25.0
    assert digital_raw_to_c(0x0197, 12) == 25.4375
    assert digital_raw_to_c(0xFF5F, 11) == -10.125


def test_digital_codes_recognised():
    assert digital_raw_verdict(0x0550) == status.ERROR_CODE
    assert digital_raw_verdict(0x0550, False) == status.ACCEPTED
    assert digital_raw_verdict(0xFFFF) == status.ERROR_CODE
    assert digital_raw_verdict(0x0191) == status.ACCEPTED
    assert digital_raw_verdict(0x07E0) == status.OUT_OF_RANGE  # 126 C
    assert digital_celsius_verdict(-127.0) == status.ERROR_CODE
    assert digital_celsius_verdict(85.0) == status.ERROR_CODE
    assert digital_celsius_verdict(85.0, False) == status.ACCEPTED
    assert digital_celsius_verdict(21.5) == status.ACCEPTED
    assert digital_celsius_verdict(float("nan")) == status.NOT_FINITE
    assert digital_celsius_verdict(-60.0) == status.OUT_OF_RANGE


def test_crc8_maxim_check_values():
    # CRC-8/MAXIM check value for "123456789" is 0xA1 (CRC catalogue of
    # parametrised CRC algorithms, from memory); the 1-Wire application note's
    # worked ROM code 02 1C B8 01 00 00 00 has CRC 0xA2 (Maxim AN27, from memory).
    assert crc8_maxim(b"123456789") == 0xA1
    rom = bytes((0x02, 0x1C, 0xB8, 0x01, 0x00, 0x00, 0x00))
    assert crc8_maxim(rom) == 0xA2
    assert crc8_maxim(rom + bytes((0xA2,))) == 0
    assert crc8_maxim(rom + bytes((0xA2,)), 7) == 0xA2


# ---------------- lag compensation ----------------

def _lagged_sensor_c(t_s, ambient_c, start_c, k_per_s, tau_s):
    """Exact first-order-lag response of a probe starting at the liquid temperature.

    Liquid ``T = R + D exp(-k t)``; probe ``tau dS/dt = T - S`` with
    ``S(0) = T(0)`` gives ``S = R + D/(1 - k tau) exp(-k t) + (D - D/(1 - k tau)) exp(-t/tau)``.
    """
    d = start_c - ambient_c
    a = d / (1.0 - k_per_s * tau_s)
    return ambient_c + a * math.exp(-k_per_s * t_s) + (d - a) * math.exp(-t_s / tau_s)


def test_lag_compensation_shrinks_lag_error():
    ambient, start, k, tau = 21.0, 80.0, 1.0 / 600.0, 40.0
    comp = LagCompensator(tau, 8.0)
    worst_raw = 0.0
    worst_comp = 0.0
    t = 0.0
    dt = 2.0
    while t <= 1200.0:
        s = _lagged_sensor_c(t, ambient, start, k, tau)
        out = comp.update(s, dt if t > 0.0 else 0.0)
        truth = ambient + (start - ambient) * math.exp(-k * t)
        if t > 300.0:  # after the start-up transient of both filters
            worst_raw = max(worst_raw, abs(s - truth))
            worst_comp = max(worst_comp, abs(out - truth))
        t += dt
    assert worst_raw > 1.0
    # lag reduced from tau to ~f: error shrinks roughly by f/tau = 0.2
    assert worst_comp < 0.3 * worst_raw


def test_lag_compensation_irregular_steps_and_noise_bounded():
    rng = XorShift(6)
    comp = LagCompensator(30.0)  # default smoothing tau/4
    assert comp.smoothing_s == 7.5
    t = 0.0
    worst = 0.0
    n = 0
    while t < 900.0:
        dt = rng.uniform(0.5, 6.0)
        t += dt
        out = comp.update(50.0 + rng.gauss(0.05), dt)
        n += 1
        if n > 50:
            worst = max(worst, abs(out - 50.0))
    # constant liquid: output stays near it; noise gain is at most tau/f = 4
    assert worst < 0.05 * 4.0 * 5.0
    assert comp.temp_c == out


def test_lag_compensation_zero_tau_is_pass_through_and_reset():
    comp = LagCompensator(0.0)
    assert comp.update(33.0, 1.0) == 33.0
    assert comp.update(34.5, 1.0) == 34.5
    comp.reset()
    assert comp.temp_c is None
    assert comp.update(40.0, 5.0) == 40.0


def test_lag_compensation_rejects_bad_time_constants():
    for args in ((-1.0,), (10.0, 0.0), (10.0, -2.0)):
        raised = False
        try:
            LagCompensator(*args)
        except ValueError:
            raised = True
        assert raised


def test_module_constants():
    assert sensors.POWER_UP_C == digital_raw_to_c(sensors.DIGITAL_POWER_UP_RAW)
    assert digital_raw_to_c(sensors.DIGITAL_OPEN_BUS_RAW) == -0.0625
