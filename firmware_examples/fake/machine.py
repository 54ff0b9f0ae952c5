"""Fake ``machine`` for the unix port: the parts the examples use, driven by _world."""
import _world

DEEPSLEEP_RESET = 4
PWRON_RESET = 1


class DeepSleep(Exception):
    """Raised by deepsleep(): the runner 'reboots' the program."""


def reset_cause():
    return DEEPSLEEP_RESET if _world.world.wakes else PWRON_RESET


def deepsleep(ms=0):
    _world.world.deep_sleep(ms)
    raise DeepSleep()


def lightsleep(ms=0):
    _world.world.advance_ms(ms)


class Pin:
    IN = 0
    OUT = 1
    PULL_UP = 2

    def __init__(self, pin_id, mode=-1, pull=-1, value=None):
        self.pin_id = pin_id
        self.mode = mode
        if value is not None:
            self.value(value)

    def value(self, v=None):
        w = _world.world
        if v is None:
            return w.relay if self.pin_id == w.cfg.get("relay_pin") else 0
        if self.pin_id == w.cfg.get("relay_pin"):
            w.relay = 1 if v else 0
        return None

    def on(self):
        self.value(1)

    def off(self):
        self.value(0)


class ADC:
    def __init__(self, pin):
        self.pin = pin

    def read_u16(self):
        return _world.world.ntc_counts_u16()


class RTC:
    def memory(self, data=None):
        w = _world.world
        if data is None:
            return bytes(w.rtc_memory)
        if len(data) > 2048:
            raise ValueError("RTC memory holds 2048 bytes")
        w.rtc_write(data)
        return None
