"""Fake ``onewire`` for the unix port."""


class OneWireError(Exception):
    pass


class OneWire:
    def __init__(self, pin):
        self.pin = pin
