"""A fermenter monitor: how long until the wort is at pitching temperature.

A 12-bit 1-Wire digital sensor in a thermowell reads the wort once every
SAMPLE_S seconds; the monitor reports over the serial port how long until the
wort reaches PITCH_C (cooling in a cellar, or warming in a brew room), and says
so when it will level off short of it.

The thermowell makes the sensor lag the wort; LagCompensator removes most of
that lag (PROBE_LAG_S measured by moving the probe between two water baths:
the time to 63 % of the step). Readings with a bad CRC, the power-up value or
an open bus are skipped and counted.

Copy board.py and this file to the board, install tinytherm, and call
``wort_monitor.main()`` from main.py.
"""
import board
from tinytherm import sensors
from tinytherm import status
from tinytherm.estimator import ThermalEstimator

PITCH_C = 20.0          # pitching temperature, deg C (your yeast's range)
CELLAR_C = 15.0         # rough room temperature around the fermenter, deg C
SAMPLE_S = 60           # seconds between readings
REPORT_EVERY = 10       # print a report every this many readings
PROBE_LAG_S = 90.0      # thermowell time constant, seconds (0 = no compensation)
SETTLE_PROBE_MS = int(max(3.0 * PROBE_LAG_S, 60.0) * 1000)  # readings ignored after start
CONVERSION_MS = 750     # 12-bit conversion time of the common parts (datasheet, from memory)


def fmt_duration(seconds):
    """"1 h 35 min" / "25 min" / "under a minute"."""
    minutes = int(seconds / 60.0 + 0.5)
    if minutes < 1:
        return "under a minute"
    if minutes < 60:
        return "%d min" % minutes
    return "%d h %02d min" % (minutes // 60, minutes % 60)


def read_raw(drv, rom, scratch_ok):
    """Raw register value, or -1 when the scratchpad fails its CRC."""
    buf = drv.read_scratch(rom)
    if sensors.crc8_maxim(buf, 8) != buf[8]:
        scratch_ok[0] += 1
        return -1
    return buf[0] | (buf[1] << 8)


def report(est, temp_c, skipped):
    code = est.status
    if code == status.TRACKING:
        return "wort %.1f C: pitching temperature %.0f C in %s (%s to %s)" % (
            temp_c, PITCH_C, fmt_duration(est.eta_s), fmt_duration(est.eta_low_s),
            "?" if est.eta_high_s == float("inf") else fmt_duration(est.eta_high_s))
    if code == status.ARRIVED:
        return "wort %.1f C: at pitching temperature" % temp_c
    if code == status.OUT_OF_REACH and est.equilibrium_c is not None:
        return "wort %.1f C: levelling off at %.1f C, short of %.0f C" % (
            temp_c, est.equilibrium_c, PITCH_C)
    return "wort %.1f C: learning (%s, %d readings skipped)" % (
        temp_c, status.status_name(code), skipped)


def main():
    drv, rom = board.onewire_sensor()
    if rom is None:
        print("no 1-Wire sensor found on pin %d" % board.ONEWIRE_PIN)
        return
    # The cellar or brew room is the usual ambient, known to within a few
    # degrees; the probe is a 1-Wire one (its -127.0 and 85.0 codes are
    # rejected). The estimator's memory follows the fit's age, so the hours a
    # fermenter takes need no setting.
    est = ThermalEstimator(ambient_prior_c=CELLAR_C, ambient_prior_sd_c=4.0, probe_codes=True)
    comp = sensors.LagCompensator(PROBE_LAG_S) if PROBE_LAG_S > 0.0 else None
    crc_errors = [0]
    skipped = 0
    n = 0
    last_ticks = None
    power_up_seen = False
    # A probe just pushed into its thermowell is still catching up with the
    # wort: keep its first few time constants out of the fit.
    t_start = board.ticks_ms()
    print("wort monitor: pitching temperature %.1f C" % PITCH_C)
    while True:
        drv.convert_temp()
        board.sleep_ms(CONVERSION_MS)
        now = board.ticks_ms()
        raw = read_raw(drv, rom, crc_errors)
        # The power-up value is a real 85 C only in a boiling kettle, never in a fermenter.
        ok = raw >= 0 and sensors.digital_raw_verdict(raw, True) == status.ACCEPTED
        if raw == sensors.DIGITAL_POWER_UP_RAW:
            power_up_seen = True
        if not ok:
            skipped += 1
        else:
            sensor_c = sensors.digital_raw_to_c(raw)
            dt_s = 0.0 if last_ticks is None else board.ticks_diff(now, last_ticks) / 1000.0
            last_ticks = now
            wort_c = comp.update(sensor_c, dt_s) if comp is not None else sensor_c
            if board.ticks_diff(now, t_start) >= SETTLE_PROBE_MS:
                est.update_ticks(wort_c, now)
            n += 1
            if n % REPORT_EVERY == 0:
                est.predict(PITCH_C, -1)  # wort is chilled down to its pitching temperature
                print(report(est, sensor_c, skipped))
                eta = est.eta_s
                print("log t=%d temp=%.3f status=%s eta=%d skipped=%d crc=%d power_up=%d" % (
                    board.wall_clock_s(), sensor_c, status.status_name(est.status),
                    -1 if eta is None else int(eta + 0.5), skipped, crc_errors[0],
                    1 if power_up_seen else 0))
        board.sleep_ms(SAMPLE_S * 1000 - CONVERSION_MS)
