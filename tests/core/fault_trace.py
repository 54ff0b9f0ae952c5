"""Seeded day-in-the-life trace with sensor faults, for robustness tests.

Runs on CPython and MicroPython alike (``math`` and ``support`` only) and
produces one reading per :meth:`FaultTrace.step` without building lists, so a
24-hour trace at 1 Hz can be generated inside a small MicroPython heap.

The scenario is our own invention for tests and demos, not measured data: a
mug on a desk, filled with a hot drink every couple of hours, topped up with
hot liquid once per fill, the lid taken off for a while; ambient drifts by
+-1.5 C over the day. The liquid follows ``dT/dt = -k (T - R)``; the sensor
lags it (time constant 3 s), adds Gaussian noise and rounds to 0.0625 C.
Faults injected: NaN readings, single-sample spikes, disconnect bursts
(-127.0 C, then one 85.0 C power-up reading), a stuck sensor stretch,
duplicate and backwards time stamps, sampling jitter and one 20-minute gap.
"""
import math

from prng import XorShift

TICKS_MASK = (1 << 30) - 1
QUANTUM_C = 0.0625

# fault kinds reported in FaultTrace.kind
CLEAN = 0
NAN_READING = 1
SPIKE_READING = 2
DISCONNECTED = 3
POWER_UP = 4
STUCK_READING = 5
DUPLICATE_TICKS = 6
BACKWARDS_TICKS = 7
AFTER_GAP = 8


class FaultTrace:
    """Step through a faulty trace; read ``temp_c``, ``ticks_ms``, ``dt_s`` after each step.

    ``dt_s`` is the time since the previous emitted reading in seconds (may be
    0 or negative on time glitches), ``ticks_ms`` the wrapping millisecond
    counter, ``truth_c`` the liquid's true temperature, ``kind`` the fault
    kind of this reading. ``faults=False`` gives the clean trace.
    """

    def __init__(self, seed=1, hours=24.0, period_s=1.0, faults=True, start_ticks=None):
        self.rng = XorShift(seed)
        self.faults = faults
        self.period_s = period_s
        self.end_s = hours * 3600.0
        self.t_s = 0.0
        self.ticks_ms = (TICKS_MASK - 90000) if start_ticks is None else start_ticks
        self._true_ticks = self.ticks_ms
        self.ambient_c = 21.0
        self.truth_c = 21.0
        self.sensor_c = 21.0
        self.rate_per_s = 1.0 / 1500.0
        self.temp_c = 21.0
        self.dt_s = 0.0
        self.kind = CLEAN
        self.count = 0
        self._next_fill_s = 60.0
        self._topup_s = -1.0
        self._lid_off_s = -1.0
        self._lid_on_s = -1.0
        self._burst_left = 0
        self._power_up_due = False
        self._stuck_left = 0
        self._stuck_value = 0.0
        self._gap_start_s = 10.0 * 3600.0 if faults else -1.0
        self._stuck_start_s = 2700.0 if faults else -1.0
        self._last_emit_s = 0.0

    def step(self):
        """Advance to the next reading; False when the trace has ended."""
        rng = self.rng
        dt = self.period_s * (1.0 + rng.uniform(-0.02, 0.02))
        if self._gap_start_s >= 0.0 and self.t_s >= self._gap_start_s:
            dt += 1200.0  # the logger was off for 20 minutes
            self._gap_start_s = -1.0
            gap = True
        else:
            gap = False
        if self.t_s + dt > self.end_s:
            return False
        self._advance(dt)
        self.count += 1
        # time stamps
        self._true_ticks = (self._true_ticks + int(dt * 1000.0 + 0.5)) & TICKS_MASK
        ticks = self._true_ticks
        self.kind = AFTER_GAP if gap else CLEAN
        if self.faults:
            u = rng.next_u32() % 10000
            if u < 5:
                ticks = self.ticks_ms  # duplicate stamp
                self.kind = DUPLICATE_TICKS
            elif u < 10:
                ticks = (self.ticks_ms - 500) & TICKS_MASK
                self.kind = BACKWARDS_TICKS
        step_ms = (ticks - self.ticks_ms) & TICKS_MASK
        if step_ms >= (1 << 29):
            step_ms -= 1 << 30
        self.dt_s = step_ms * 0.001
        self.ticks_ms = ticks
        # the reading
        value = math.floor((self.sensor_c + rng.gauss(0.03)) / QUANTUM_C + 0.5) * QUANTUM_C
        if self.faults:
            value = self._inject(value)
        self.temp_c = value
        return True

    def _advance(self, dt):
        rng = self.rng
        t = self.t_s + dt
        self.t_s = t
        self.ambient_c = 21.0 + 1.5 * math.sin(2.0 * math.pi * t / 86400.0)
        if t >= self._next_fill_s:
            # a fresh hot drink, a top-up later, the lid off for a while
            self.truth_c = rng.uniform(70.0, 85.0)
            self.rate_per_s = rng.uniform(1.0 / 2400.0, 1.0 / 1200.0)
            self._topup_s = t + rng.uniform(900.0, 2400.0)
            self._lid_off_s = t + rng.uniform(300.0, 600.0)
            self._lid_on_s = self._lid_off_s + 600.0
            self._next_fill_s = t + rng.uniform(5400.0, 9000.0)
        if self._topup_s >= 0.0 and t >= self._topup_s:
            self.truth_c += 0.5 * (95.0 - self.truth_c)  # half a mug of 95 C liquid
            self._topup_s = -1.0
        k = self.rate_per_s
        if self._lid_off_s <= t < self._lid_on_s:
            k *= 1.6
        r = self.ambient_c
        self.truth_c = r + (self.truth_c - r) * math.exp(-k * dt)
        self.sensor_c += (self.truth_c - self.sensor_c) * (1.0 - math.exp(-dt / 3.0))

    def _inject(self, value):
        rng = self.rng
        if self._burst_left > 0:
            self._burst_left -= 1
            if self._burst_left == 0:
                self._power_up_due = True
            self.kind = DISCONNECTED
            return -127.0
        if self._power_up_due:
            self._power_up_due = False
            self.kind = POWER_UP
            return 85.0
        if self._stuck_left > 0:
            self._stuck_left -= 1
            self.kind = STUCK_READING
            return self._stuck_value
        u = rng.next_u32() % 100000
        if u < 200:
            self.kind = NAN_READING
            return float("nan")
        if u < 400:
            self.kind = SPIKE_READING
            size = rng.uniform(3.0, 30.0)
            return value + size if u & 1 else value - size
        if u < 405:
            self._burst_left = 20 + rng.next_u32() % 40
            self.kind = DISCONNECTED
            return -127.0
        if self._stuck_start_s >= 0.0 and self.t_s >= self._stuck_start_s:
            # the sensor freezes for three minutes while the drink cools
            self._stuck_start_s = -1.0
            self._stuck_left = 180
            self._stuck_value = value
        return value
