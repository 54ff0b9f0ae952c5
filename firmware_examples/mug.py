"""A battery mug that tells you when your drink is cool enough.

Every WAKE_EVERY_S seconds the board wakes from deep sleep, restores the
estimator from its 512-byte state blob in RTC memory, reads the NTC under the
mug's floor, updates the estimator with the time slept, saves the blob back
into RTC memory, shows "drinkable in about 3 min" (or "levelling off at 31 C"
when the drink will never get there), and goes back to sleep.

CAUTION: hot drinks scald. DRINKABLE_C is a comfort setting, not a safety
limit; the estimate can be wrong (a top-up, a lid, a sensor that is not in
contact). Children and some adults need lower temperatures; follow local
guidance.

Copy board.py and this file to the board, install tinytherm (see README,
"On the device"), and call ``mug.main()`` from main.py.

State across deep sleep: RTC memory holds exactly what ``est.save()`` returns
(``tinytherm.blob.BLOB_SIZE`` = 512 bytes, CRC-checked). After a power-on, or
when the blob is truncated, corrupted or from other settings, ``restore()``
leaves a fresh estimator and the mug starts learning again; it never crashes
on what it finds in RTC memory.

Time between readings: the blob holds no clock (tick counters restart at
boot), so each wake feeds ``update(temp, slept_s)`` with the sleep it asked
for plus WAKE_OVERHEAD_S, the boot and awake time of one cycle on your board
(measure it once; 0.3 s left at 0 on a 20 s sleep makes the drink look 1.5 %
faster). A wake from another source (a button) before the timer would make
that interval wrong: give such wakes their own path.
"""
import board
from tinytherm import blob
from tinytherm import sensors
from tinytherm import status
from tinytherm.estimator import ThermalEstimator

WAKE_EVERY_S = 20      # deep-sleep period, seconds
WAKE_OVERHEAD_S = 0.0  # boot + awake time per cycle on your board, seconds (see above)
DRINKABLE_C = 60.0     # "cool enough to drink" (comfort setting, see CAUTION)
OVERSAMPLE = 8         # ADC reads averaged per reading
NO_READING_C = float("nan")  # fed for a failed reading: rejected, its time carried on


def new_estimator():
    """The estimator with this product's settings (unknown ambient).

    A saved blob restores only into an estimator with the same settings:
    after changing them here the first wake starts afresh.
    """
    return ThermalEstimator(ambient_prior_c=21.0)


def read_mug_c(adc):
    """NTC reading in deg C (averaged), or None when the sensor is open or shorted."""
    total = 0
    for _ in range(OVERSAMPLE):
        total += adc.read_u16()
    counts = total / OVERSAMPLE
    r = sensors.divider_resistance_ohm(counts, board.ADC_FULL_SCALE, board.FIXED_OHM)
    return sensors.beta_temperature_c(r, board.NTC_R25_OHM, board.NTC_BETA_K)


# ---- what the user sees ----

def message(est, temp_c):
    """The display line for the estimator's latest answer."""
    code = est.status
    if code == status.TRACKING:
        minutes = int(est.eta_s / 60.0 + 0.5)
        if minutes < 1:
            return "drinkable in under a minute"
        return "drinkable in about %d min" % minutes
    if code == status.ARRIVED:
        return "drinkable now (%d C)" % int(temp_c + 0.5)
    if code == status.OUT_OF_REACH and est.equilibrium_c is not None:
        return "levelling off at %d C" % int(est.equilibrium_c + 0.5)
    if code == status.SENSOR_FAULT:
        return "check the sensor"
    if code == status.DISTURBED:
        return "%d C, re-learning" % int(temp_c + 0.5)
    return "%d C, learning" % int(temp_c + 0.5)


def log_line(wall_s, temp_c, est, restore_code):
    """One machine-readable serial line per wake (the tests parse it)."""
    def num(x):
        return -1 if x is None else int(x + 0.5) if x < 1e9 else 999999999
    eq = est.equilibrium_c
    return ("log t=%d temp=%.2f status=%s eta=%d low=%d high=%d eq=%.2f readings=%d"
            " restore=%s") % (
        wall_s, -999.0 if temp_c is None else temp_c, status.status_name(est.status),
        num(est.eta_s), num(est.eta_low_s), num(est.eta_high_s), -999.0 if eq is None else eq,
        est.readings, blob.restore_name(restore_code))


def main():
    est = new_estimator()
    if board.woke_from_deep_sleep():
        # anything but RESTORED (truncated, corrupted, other settings) leaves a fresh estimator
        restore_code = est.restore(board.rtc_load())
    else:
        restore_code = blob.BLOB_LENGTH  # power-on: RTC memory holds nothing of ours
    temp_c = read_mug_c(board.ntc_adc())
    # The first reading after a fresh start ignores the time step; after a
    # restore it is the time since the reading saved before the sleep.
    slept_s = float(WAKE_EVERY_S) + WAKE_OVERHEAD_S
    est.update(NO_READING_C if temp_c is None else temp_c, slept_s)
    # save right after the reading (a reset while showing loses nothing); the
    # answer below is then exactly what a restore of this blob would answer
    board.rtc_save(est.save())
    est.predict(DRINKABLE_C, -1)  # a drink cools to its drinking temperature
    if temp_c is None:
        board.show("check the sensor")
    else:
        board.show(message(est, temp_c))
    print(log_line(board.wall_clock_s(), temp_c, est, restore_code))
    board.deep_sleep_ms(WAKE_EVERY_S * 1000)
