"""Fake ``ds18x20`` driver for the unix port: one sensor, scratchpad from _world."""
import _world
import time

ROM = bytearray(b"\x28\x11\x22\x33\x44\x55\x66\x00")


class DS18X20:
    def __init__(self, ow):
        self.ow = ow

    def scan(self):
        return [ROM]

    def convert_temp(self):
        pass

    def read_scratch(self, rom):
        return _world.world.digital_scratchpad()
