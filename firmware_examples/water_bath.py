"""A water-bath heater: delay start so it is ready by a chosen time, then hold.

A relay switches the heater of a pot or tank of water; an NTC probe in the
water is read every SAMPLE_S seconds. The program

1. waits (heater off) until the latest start that still reaches SETPOINT_C by
   READY_BY_S seconds after power-on, planned by tinytherm.planner from the
   bath's physical figures (WATER_KG, HEATER_W, LOSS_W_PER_K, ROOM_C);
2. heats at full power, learning the bath online and printing the time to
   the setpoint and whether it will be ready in time;
3. holds the setpoint with an on/off band of HOLD_BAND_C.

SAFETY -- read before wiring a heater:
* The estimate is not a safety interlock. The heater MUST have an independent
  thermal cut-out (a bimetal or thermal fuse in the heater circuit) and
  dry-boil protection that work with this board dead or wrong; use a relay
  and wiring rated for the heater, an RCD/GFCI, and follow local electrical
  codes. Mains wiring is work for a qualified person.
* The firmware checks below (OVERHEAT_C, sensor faults -> heater off) are a
  second line only: a relay can weld shut, a probe can fall out of the water.
* Food held in warm water can be unsafe; follow local food-safety guidance
  for times and temperatures.

Copy board.py and this file to the board, install tinytherm, and call
``water_bath.main()`` from main.py.
"""
import board
from tinytherm import model
from tinytherm import sensors
from tinytherm import status
from tinytherm.estimator import ThermalEstimator
from tinytherm.planner import ReadyByPlanner

SETPOINT_C = 60.0        # bath target, deg C
READY_BY_S = 3600        # ready this many seconds after power-on
SAMPLE_S = 5             # seconds between readings
HOLD_BAND_C = 0.3        # on/off hysteresis while holding, deg C
OVERHEAT_C = 65.0        # firmware heater-off limit (NOT a substitute for a cut-out)
WATER_KG = 5.0           # water in the bath, kg
HEATER_W = 1000.0        # heater power, W
LOSS_W_PER_K = 3.0       # your guess of the bath's losses, W per K above the room
ROOM_C = 20.0            # your guess of the room temperature, deg C
START_MARGIN = 1.15      # heat for this much longer than the plan says
WATER_J_PER_KG_K = 4186.0  # specific heat of water near 20-60 C (common handbook value)
OVERSAMPLE = 8
LEARN_HEATING_S = 180    # seconds of heating before a time-to-setpoint is shown

WAITING = 0
HEATING = 1
HOLDING = 2
FAULT = 3
PHASE_NAMES = ("waiting", "heating", "holding", "fault")


def read_bath_c(adc):
    """NTC reading in deg C (averaged), or None when the probe is open or shorted."""
    total = 0
    for _ in range(OVERSAMPLE):
        total += adc.read_u16()
    r = sensors.divider_resistance_ohm(total / OVERSAMPLE, board.ADC_FULL_SCALE, board.FIXED_OHM)
    return sensors.beta_temperature_c(r, board.NTC_R25_OHM, board.NTC_BETA_K)


def make_planner():
    """Ready-by planner from the bath's physical figures (before anything is learned).

    k = loss / (m c) (1/s) and g = P / (m c) (K/s at full power), the
    lumped-model parameters of tinytherm.model.
    """
    k = model.rate_from_physical_per_s(LOSS_W_PER_K, 1.0, WATER_KG, WATER_J_PER_KG_K)
    g = model.heater_gain_k_per_s(HEATER_W, WATER_KG, WATER_J_PER_KG_K)
    return ReadyByPlanner(k, ROOM_C, g)


def start_in_s(plan, temp_c, elapsed_s):
    """Seconds until the heater must start (<= 0: start now), with START_MARGIN.

    The one place that plans the delay start.
    """
    code = plan.latest_start(temp_c, SETPOINT_C, READY_BY_S - elapsed_s)
    if code == status.TRACKING:
        return plan.start_in_s - (START_MARGIN - 1.0) * plan.heat_for_s
    if code == status.ARRIVED:
        return READY_BY_S - elapsed_s  # warm enough already; nothing to do yet
    return 0.0  # too slow or out of reach by the plan: start now


def fmt_min(seconds):
    minutes = int(seconds / 60.0 + 0.5)
    return "about %d min" % minutes if minutes >= 1 else "under a minute"


def main():
    print("water bath: setpoint %.1f C, ready by %s after power-on" % (SETPOINT_C,
                                                                     fmt_min(READY_BY_S)))
    print("CAUTION: this estimate is not a safety interlock; the heater needs an "
          "independent thermal cut-out.")
    adc = board.ntc_adc()
    relay = board.relay()
    est = ThermalEstimator(heater=True, ambient_prior_c=ROOM_C)
    plan = make_planner()
    phase = WAITING
    start_at_s = None
    t0 = board.ticks_ms()
    duty = 0.0
    while True:
        elapsed_s = board.ticks_diff(board.ticks_ms(), t0) / 1000.0
        temp_c = read_bath_c(adc)
        if temp_c is None or temp_c > OVERHEAT_C:
            relay.value(0)
            if phase != FAULT:
                print("FAULT: %s, heater off" % ("probe open/short" if temp_c is None
                                                 else "over %.0f C" % OVERHEAT_C))
            phase = FAULT
            board.sleep_ms(SAMPLE_S * 1000)
            continue
        # duty applied over the interval that ends with this reading
        est.update_ticks(temp_c, board.ticks_ms(), None, duty)
        est.predict(SETPOINT_C, 1)  # the bath heats to its setpoint: say so (no early "arrived")
        if phase == WAITING:
            wait_s = start_in_s(plan, temp_c, elapsed_s)
            if wait_s <= 0.0:
                phase = HEATING
                start_at_s = elapsed_s
                print("t=%d s: heating starts (plan: %s of full power)" % (
                    elapsed_s, "?" if plan.heat_for_s is None else fmt_min(plan.heat_for_s)))
            elif int(elapsed_s) % 300 < SAMPLE_S:
                print("t=%d s: %.1f C, heating starts in %s" % (elapsed_s, temp_c, fmt_min(wait_s)))
        if phase == HEATING and temp_c >= SETPOINT_C:
            phase = HOLDING
            print("t=%d s: at setpoint %.1f C (%s)" % (
                elapsed_s, SETPOINT_C, "on time" if elapsed_s <= READY_BY_S
                else "late by " + fmt_min(elapsed_s - READY_BY_S)))
        if phase == HEATING:
            duty = 1.0
            # The heater gain is unknown until the heater has run for a while
            # (and the probe lags): no time-to-setpoint in the first minutes.
            eta = est.eta_s
            if (est.status == status.TRACKING and eta is not None
                    and elapsed_s - start_at_s >= LEARN_HEATING_S):
                ready_s = elapsed_s + eta
                print("log t=%d temp=%.2f eta=%d ready_at=%d %s" % (
                    elapsed_s, temp_c, int(eta + 0.5), int(ready_s + 0.5),
                    "on time" if ready_s <= READY_BY_S else "LATE"))
                if int(elapsed_s) % 60 < SAMPLE_S:
                    print("t=%d s: %.1f C, setpoint in %s" % (elapsed_s, temp_c, fmt_min(eta)))
            elif (est.status == status.OUT_OF_REACH and est.equilibrium_c is not None
                  and elapsed_s - start_at_s > 600):
                print("t=%d s: %.1f C, levelling off near %.0f C: cannot reach setpoint" % (
                    elapsed_s, temp_c, est.equilibrium_c))
        elif phase == HOLDING:
            if temp_c < SETPOINT_C - HOLD_BAND_C:
                duty = 1.0
            elif temp_c > SETPOINT_C + HOLD_BAND_C:
                duty = 0.0
        else:
            duty = 0.0
        relay.value(1 if duty > 0.0 else 0)
        board.sleep_ms(SAMPLE_S * 1000)
