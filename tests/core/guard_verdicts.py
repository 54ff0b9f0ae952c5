"""Print the guard's verdict for a fixed list of edge inputs, one line each.

Run by tests/test_guard_runtimes.py under CPython and under the unix
``micropython`` binary; the two outputs must be identical (same verdict for
every input on both runtimes). Inputs are edge values of the number types,
not measurements.
"""
import sys

sys.path.insert(0, ".")
from tinytherm.guard import ReadingGuard  # noqa: E402

BIG = 2 ** 1024
TEMPS = (20.0, -0.0, 85.0, -127.0, 150.0, 150.00000000000003, -40.0, 5e-324, 1e308,
         -1e308, 1e308 * 10, 20, 0, -41, 151, 10 ** 20, 10 ** 300, 10 ** 308, 10 ** 309,
         10 ** 400, -10 ** 400, BIG, BIG - 2 ** 970, BIG - 2 ** 971, -(BIG - 2 ** 971),
         2 ** 53 + 1, True, False, None, "20", b"20", bytearray(b"20"), [20.0], (20.0,))
STEPS = (0.0, -0.0, 1e-268, -1e-268, 0.0004999, 0.0005, 0.0015, 2.0, 2.0004, 2.0006,
         1e300, 1e308 * 10, -1e308 * 10, 536870.911, 536870.912, 536871.0, 2, 0, -1,
         10 ** 20, 10 ** 400, -10 ** 400, True, None, "2")
TICKS = (0, 1, -1, 2000, 1 << 29, (1 << 29) + 1, 1 << 30, (1 << 30) + 5, -(1 << 30),
         2 ** 64 + 2001, -(2 ** 64), 10 ** 400, 2.0, True, None)


def main():
    # (inputs are named by their index: repr of a float differs between runtimes)
    for i, t in enumerate(TEMPS):
        for probe in (False, True):
            g = ReadingGuard(probe_codes=probe, spike_window=0)
            first = g.check(t, 0.0)
            g = ReadingGuard(probe_codes=probe, spike_window=0)
            g.check(20.0, 0.0)
            later = g.check(t, 1.0)
            g = ReadingGuard(probe_codes=probe, spike_window=0)
            g.check_ticks(20.0, 1000)
            ticked = g.check_ticks(t, 3000)
            print("temp", i, probe, first, later, ticked)
    for i, dt in enumerate(STEPS):
        g = ReadingGuard()
        g.check(20.0, 0.0)
        v = g.check(20.0, dt)
        print("dt", i, v, g.elapsed_ms, g.gap)
        g = ReadingGuard()
        g.check_ticks(20.0, 1000)
        g.unpack_from(_packed(g), 0)
        v = g.check_ticks(20.0, 5, 0.0, True, dt)
        print("slept", i, v, g.elapsed_ms, g.gap)
    for i, ticks in enumerate(TICKS):
        g = ReadingGuard()
        g.check_ticks(20.0, 7)
        v = g.check_ticks(20.0, ticks)
        w = g.check_ticks(20.0625, 4007 if type(ticks) is not int else ticks + 4000)
        print("ticks", i, v, w, g.elapsed_ms)


def _packed(g):
    buf = bytearray(ReadingGuard.STATE_SIZE)
    g.pack_into(buf, 0)
    return buf


main()
