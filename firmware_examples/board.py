"""Everything the examples touch on the board, in one small file.

Edit the pin numbers and the divider here for your hardware; the examples call
only these functions. Written for an ESP32-class MicroPython port (ADC with
``read_u16()``, ``machine.RTC().memory()``, ``machine.deepsleep()``); other
ports need small changes here and nowhere else.

In the test suite the same file runs under the unix port, where the fake
``machine``, ``time``, ``onewire`` and ``ds18x20`` modules in ``fake/`` replay
a simulated world.
"""
import machine
import time

# --- pins (change for your board) ---
NTC_ADC_PIN = 34       # ADC input at the divider mid-point
RELAY_PIN = 26         # heater relay driver (active high)
ONEWIRE_PIN = 4        # 1-Wire data line (4.7 kOhm pull-up to 3.3 V)

# --- NTC divider: 3.3 V -- FIXED_OHM -- ADC pin -- NTC -- GND ---
FIXED_OHM = 10000.0
NTC_R25_OHM = 10000.0
NTC_BETA_K = 3950.0
ADC_FULL_SCALE = 65535  # read_u16() range


def ticks_ms():
    """Millisecond tick counter (wraps at 2**30 on MicroPython; use ticks_diff)."""
    return time.ticks_ms()


def ticks_diff(end, start):
    """Wrap-safe ``end - start`` of two tick values, in ms."""
    return time.ticks_diff(end, start)


def sleep_ms(ms):
    """Busy or idle wait of ``ms`` milliseconds (the board stays awake)."""
    time.sleep_ms(ms)


def wall_clock_s():
    """Integer seconds from the RTC; keeps counting through deep sleep."""
    return int(time.time())


def woke_from_deep_sleep():
    """True when this boot is a wake-up from deep sleep (RTC memory is valid)."""
    return machine.reset_cause() == machine.DEEPSLEEP_RESET


def deep_sleep_ms(ms):
    """Power down for ``ms`` ms; the program restarts from the top afterwards."""
    machine.deepsleep(ms)


def rtc_load():
    """Bytes kept in RTC memory across deep sleep (empty after power-on)."""
    return machine.RTC().memory()


def rtc_save(blob):
    """Store ``blob`` (bytes, at most 2 KB on ESP32) in RTC memory."""
    machine.RTC().memory(blob)


def ntc_adc():
    """The ADC object that reads the NTC divider."""
    return machine.ADC(machine.Pin(NTC_ADC_PIN))


def relay():
    """The heater relay output pin, switched off."""
    return machine.Pin(RELAY_PIN, machine.Pin.OUT, value=0)


def onewire_sensor():
    """``(driver, rom)`` of the first 1-Wire temperature sensor on the bus, or ``(driver, None)``."""
    import onewire
    import ds18x20
    drv = ds18x20.DS18X20(onewire.OneWire(machine.Pin(ONEWIRE_PIN)))
    roms = drv.scan()
    return drv, (roms[0] if roms else None)


def show(text):
    """Put a line on the display. Here it goes to the serial console; swap in
    your display driver (an SSD1306 ``fill(0); text(...); show()`` and so on)."""
    print("[display] " + text)
