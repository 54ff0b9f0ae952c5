"""A battery mug that tells you when your drink is cool enough.

Every WAKE_EVERY_S seconds the board wakes from deep sleep, restores what it
knows from RTC memory, reads the NTC under the mug's floor, updates the
estimator, shows "drinkable in about 3 min" (or "levelling off at 31 C" when
the drink will never get there), saves, and goes back to sleep.

CAUTION: hot drinks scald. DRINKABLE_C is a comfort setting, not a safety
limit; the estimate can be wrong (a top-up, a lid, a sensor that is not in
contact). Children and some adults need lower temperatures; follow local
guidance.

Copy board.py and this file to the board, install tinytherm (see README,
"On the device"), and call ``mug.main()`` from main.py.

State across deep sleep: ``restore_estimator()`` and ``save_estimator()`` are
the only two places that know how the estimator survives a sleep. Until the
core ships a fixed-size state blob they keep the last HISTORY readings in RTC
memory and replay them into a fresh estimator on each wake (a few ms of work
for 60 readings); switch those two functions to the blob when it lands.
"""
import struct

import board
from tinytherm import sensors
from tinytherm import status
from tinytherm.estimator import ThermalEstimator

WAKE_EVERY_S = 20      # deep-sleep period, seconds
DRINKABLE_C = 60.0     # "cool enough to drink" (comfort setting, see CAUTION)
HISTORY = 60           # readings kept in RTC memory (60 x 20 s = 20 min, 369 bytes)
OVERSAMPLE = 8         # ADC reads averaged per reading
MAGIC = b"TTmg"
_HEAD = "<4sIB"        # magic, wall clock of the last reading (s), count
_ROW = "<Hf"           # seconds since the previous reading, reading (deg C)


def new_estimator():
    """The estimator with this product's settings (unknown ambient)."""
    return ThermalEstimator(ambient_prior_c=21.0, memory_s=600.0)


def read_mug_c(adc):
    """NTC reading in deg C (averaged), or None when the sensor is open or shorted."""
    total = 0
    for _ in range(OVERSAMPLE):
        total += adc.read_u16()
    counts = total / OVERSAMPLE
    r = sensors.divider_resistance_ohm(counts, board.ADC_FULL_SCALE, board.FIXED_OHM)
    return sensors.beta_temperature_c(r, board.NTC_R25_OHM, board.NTC_BETA_K)


# ---- the two functions that know how state survives deep sleep ----

def restore_estimator(blob):
    """``(estimator, last_wall_s, rows)`` rebuilt from RTC memory (fresh if invalid)."""
    est = new_estimator()
    rows = []  # type: list
    head = struct.calcsize(_HEAD)
    row = struct.calcsize(_ROW)
    if len(blob) < head or blob[:4] != MAGIC:
        return est, None, rows
    _, last_wall_s, n = struct.unpack_from(_HEAD, blob, 0)
    if len(blob) < head + n * row:
        return est, None, rows
    for i in range(n):
        dt_s, temp_c = struct.unpack_from(_ROW, blob, head + i * row)
        est.update(temp_c, float(dt_s))
        rows.append((dt_s, temp_c))
    return est, last_wall_s, rows


def save_estimator(rows, wall_s):
    """Bytes for RTC memory: the last HISTORY readings and the time of the newest."""
    rows = rows[-HISTORY:]
    if rows:
        rows[0] = (0, rows[0][1])  # the oldest kept reading starts a fresh replay
    out = bytearray(struct.calcsize(_HEAD) + len(rows) * struct.calcsize(_ROW))
    struct.pack_into(_HEAD, out, 0, MAGIC, wall_s, len(rows))
    off = struct.calcsize(_HEAD)
    for dt_s, temp_c in rows:
        struct.pack_into(_ROW, out, off, dt_s, temp_c)
        off += struct.calcsize(_ROW)
    return bytes(out)


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


def log_line(wall_s, temp_c, est):
    """One machine-readable serial line per wake (the tests parse it)."""
    def num(x):
        return -1 if x is None else int(x + 0.5) if x < 1e9 else 999999999
    eq = est.equilibrium_c
    return "log t=%d temp=%.2f status=%s eta=%d low=%d high=%d eq=%.2f" % (
        wall_s, temp_c, status.status_name(est.status), num(est.eta_s), num(est.eta_low_s),
        num(est.eta_high_s), -999.0 if eq is None else eq)


def main():
    blob = board.rtc_load() if board.woke_from_deep_sleep() else b""
    est, last_wall_s, rows = restore_estimator(blob)
    now_s = board.wall_clock_s()
    temp_c = read_mug_c(board.ntc_adc())
    if temp_c is None:
        board.show("check the sensor")
    else:
        # integer seconds from the RTC: no large float timestamps are subtracted
        dt_s = 0 if last_wall_s is None else now_s - last_wall_s
        if last_wall_s is not None and not 0 < dt_s < 65536:
            est, rows, dt_s = new_estimator(), [], 0  # clock jumped: start over
        est.update(temp_c, float(dt_s))
        rows.append((dt_s, temp_c))
        est.predict(DRINKABLE_C)
        board.show(message(est, temp_c))
        print(log_line(now_s, temp_c, est))
        board.rtc_save(save_estimator(rows, now_s))
    board.deep_sleep_ms(WAKE_EVERY_S * 1000)
