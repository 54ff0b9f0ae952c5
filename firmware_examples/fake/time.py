"""Fake ``time`` for the unix port: the simulated clock of _world."""
import _world

_MASK = 0x3FFFFFFF
_HALF = 0x20000000


def ticks_ms():
    w = _world.world
    return (w.now_ms + w.tick_offset) & _MASK


def ticks_add(ticks, delta):
    return (ticks + delta) & _MASK


def ticks_diff(end, start):
    d = (end - start) & _MASK
    if d >= _HALF:
        d -= _MASK + 1
    return d


def sleep_ms(ms):
    _world.world.advance_ms(int(ms))


def sleep(s):
    _world.world.advance_ms(int(s * 1000))


def time():
    w = _world.world
    return w.epoch_s + w.now_ms // 1000
