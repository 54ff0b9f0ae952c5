"""The simulated world behind the fake ``machine``, ``time``, ``onewire`` and ``ds18x20``.

Loaded once per run by ``fake/run.py`` from a JSON scenario file. It owns the
clock (milliseconds since the run began), the RTC memory that survives a fake
deep sleep, the heater relay, the liquid and the probe:

* ``"trace"``: path of a CSV file ``t_s,liquid_c`` (open loop: a mug, a
  fermenter). The liquid temperature is interpolated linearly.
* ``"plant"``: ``{"start_c", "ambient_c", "rate_per_s", "gain_k_per_s"}``
  (closed loop: a heated bath). The liquid follows
  ``dT/dt = -k (T - R) + g u`` with ``u`` the relay state, solved exactly over
  each 1 s sub-step.

The probe lags the liquid with ``"probe_lag_s"`` (first order). The NTC is a
Beta-equation part in a divider read by a 12-bit ADC with Gaussian noise of
``"adc_noise_counts"``; the digital sensor reports 1/16 C steps with
``"digital_noise_c"``; ``"faults"`` lists ``[t_s, kind]`` events (``"power_up"``,
``"crc"``, ``"open"``) for the digital sensor; ``"ntc_open_from_s"`` cuts
the NTC lead at that time. ``"truth_csv"`` (optional) gets
``t_s,liquid_c,relay`` once a simulated second.

RTC memory: ``"rtc_faults"`` lists ``[wake, kind]`` events that damage it
during the deep sleep before wake number ``wake`` (1 = the first wake):
``"flip"`` flips one bit in the middle, ``"truncate"`` keeps the first 100
bytes, ``"zero"`` clears it to zero bytes of the same length. ``"rtc_log"``
(optional) gets one hex line per write to RTC memory.

This is test scaffolding for the unix port; it never runs on a device.
"""
import json
import math

TICKS_MASK = 0x3FFFFFFF


class TraceEnd(Exception):
    """The scenario is over: the runner stops the program here."""


class _Rng:
    def __init__(self, seed):
        self.s = (seed * 2654435761 + 0x9E3779B97F4A7C15) & 0xFFFFFFFFFFFFFFFF or 1

    def uniform(self):
        x = self.s
        x ^= x >> 12
        x ^= (x << 25) & 0xFFFFFFFFFFFFFFFF
        x ^= x >> 27
        self.s = x
        return (((x * 0x2545F4914F6CDD1D) & 0xFFFFFFFFFFFFFFFF) >> 32) / 4294967296.0

    def gauss(self, sigma):
        u1 = self.uniform()
        u2 = self.uniform()
        if u1 < 1e-12:
            u1 = 1e-12
        return sigma * math.sqrt(-2.0 * math.log(u1)) * math.cos(2.0 * math.pi * u2)


class World:
    def __init__(self, cfg):
        self.cfg = cfg
        self.now_ms = 0
        # Start the tick counter near its 2**30 wrap so the examples' wrap-safe
        # tick arithmetic is exercised within the first minute.
        self.tick_offset = int(cfg.get("tick_offset_ms", TICKS_MASK - 30000))
        self.epoch_s = int(cfg.get("epoch_s", 800000000))
        self.end_s = float(cfg["end_s"])
        self.rtc_memory = b""
        self.relay = 0
        self.rng = _Rng(int(cfg.get("seed", 1)))
        self.lag_s = float(cfg.get("probe_lag_s", 0.0))
        self.times = None
        self.temps = None
        self._i = 0
        if "trace" in cfg:
            self._load_trace(cfg["trace"])
            self.liquid = self.temps[0]
        else:
            p = cfg["plant"]
            self.liquid = float(p["start_c"])
        self.probe = float(cfg.get("probe_start_c", self.liquid))
        self.sim_s = 0.0
        self.faults = cfg.get("faults", [])
        self.wakes = 0
        self._truth = None
        self._rtc_log = open(cfg["rtc_log"], "w") if cfg.get("rtc_log") else None
        if cfg.get("truth_csv"):
            self._truth = open(cfg["truth_csv"], "w")
            self._truth.write("t_s,liquid_c,relay\n")
            self._truth.write("0,%.6f,0\n" % self.liquid)

    def _load_trace(self, path):
        ts = []
        vs = []
        with open(path) as fh:
            fh.readline()
            for line in fh:
                parts = line.strip().split(",")
                if len(parts) >= 2:
                    ts.append(float(parts[0]))
                    vs.append(float(parts[1]))
        self.times = ts
        self.temps = vs

    def _trace_at(self, t):
        ts = self.times
        while self._i + 1 < len(ts) and ts[self._i + 1] <= t:
            self._i += 1
        i = self._i
        if i + 1 >= len(ts):
            return self.temps[-1]
        f = (t - ts[i]) / (ts[i + 1] - ts[i])
        return self.temps[i] + f * (self.temps[i + 1] - self.temps[i])

    def _step_liquid(self, t0, dt):
        if self.times is not None:
            return self._trace_at(t0 + dt)
        p = self.cfg["plant"]
        k = float(p["rate_per_s"])
        eq = float(p["ambient_c"]) + float(p["gain_k_per_s"]) * self.relay / k
        return eq + (self.liquid - eq) * math.exp(-k * dt)

    def advance_ms(self, ms):
        """Let ``ms`` milliseconds of the world pass; raises TraceEnd past the end."""
        if ms < 0:
            ms = 0
        target_s = (self.now_ms + ms) / 1000.0
        while self.sim_s < target_s:
            dt = min(1.0, target_s - self.sim_s)
            before = self.liquid
            after = self._step_liquid(self.sim_s, dt)
            if self.lag_s > 0.0:
                mid = 0.5 * (before + after)
                self.probe = mid + (self.probe - mid) * math.exp(-dt / self.lag_s)
            else:
                self.probe = after
            self.liquid = after
            self.sim_s += dt
            if self._truth is not None and abs(self.sim_s - round(self.sim_s)) < 1e-9:
                self._truth.write("%d,%.6f,%d\n" % (round(self.sim_s), self.liquid, self.relay))
        self.now_ms += ms
        if self.now_ms > self.end_s * 1000.0:
            raise TraceEnd()

    def close(self):
        """Flush the truth and RTC log files (call when the run ends)."""
        if self._truth is not None:
            self._truth.close()
            self._truth = None
        if self._rtc_log is not None:
            self._rtc_log.close()
            self._rtc_log = None

    # ---- RTC memory ----
    def rtc_write(self, data):
        """Keep ``data`` across deep sleep (and log it when asked)."""
        self.rtc_memory = bytes(data)
        if self._rtc_log is not None:
            self._rtc_log.write("".join("%02x" % b for b in self.rtc_memory) + "\n")

    def deep_sleep(self, ms):
        """Sleep ``ms`` ms, then apply the RTC damage scheduled for the coming wake."""
        self.advance_ms(ms)
        self.wakes += 1
        for ev in self.cfg.get("rtc_faults", []):
            if ev[0] != self.wakes or not self.rtc_memory:
                continue
            mem = bytearray(self.rtc_memory)
            if ev[1] == "flip":
                mem[len(mem) // 2] ^= 0x10
            elif ev[1] == "truncate":
                mem = mem[:100]
            elif ev[1] == "zero":
                mem = bytearray(len(mem))
            self.rtc_memory = bytes(mem)

    # ---- sensors ----
    def ntc_counts_u16(self):
        """read_u16() of a 12-bit ADC on a 10k/B3950 NTC (low side) with a 10k top resistor."""
        if self.now_ms >= float(self.cfg.get("ntc_open_from_s", 1e12)) * 1000.0:
            return 65535  # the probe lead is cut: the divider reads the rail
        c = self.cfg.get("ntc", {})
        r25 = float(c.get("r25_ohm", 10000.0))
        beta = float(c.get("beta_k", 3950.0))
        fixed = float(c.get("fixed_ohm", 10000.0))
        t_k = self.probe + 273.15
        r = r25 * math.exp(beta * (1.0 / t_k - 1.0 / 298.15))
        counts = 4095.0 * r / (r + fixed)
        counts += self.rng.gauss(float(self.cfg.get("adc_noise_counts", 0.0)))
        n = int(counts + 0.5)
        n = max(0, min(4095, n))
        return (n << 4) | (n >> 8)  # 12-bit sample scaled to 16 bits, as ports do

    def digital_scratchpad(self):
        """Nine scratchpad bytes of a 12-bit 1-Wire sensor, with scheduled faults."""
        now_s = self.now_ms / 1000.0
        kind = None
        for ev in self.faults:
            if abs(ev[0] - now_s) < 0.5:
                kind = ev[1]
        if kind == "open":
            return bytearray(b"\xff" * 9)
        if kind == "power_up":
            raw = 0x0550
        else:
            t = self.probe + self.rng.gauss(float(self.cfg.get("digital_noise_c", 0.0)))
            raw = int(math.floor(t * 16.0 + 0.5)) & 0xFFFF
        buf = bytearray(9)
        buf[0] = raw & 0xFF
        buf[1] = (raw >> 8) & 0xFF
        buf[2] = 0x4B
        buf[3] = 0x46
        buf[4] = 0x7F  # configuration: 12 bits
        buf[5] = 0xFF
        buf[6] = 0x0C
        buf[7] = 0x10
        buf[8] = _crc8(buf, 8)
        if kind == "crc":
            buf[0] ^= 0x04  # a flipped bit on the bus
        return buf


def _crc8(data, n):
    # 1-Wire CRC-8, written out here independently of tinytherm.sensors.
    crc = 0
    for i in range(n):
        b = data[i]
        for _ in range(8):
            mix = (crc ^ b) & 1
            crc >>= 1
            if mix:
                crc ^= 0x8C
            b >>= 1
    return crc


world = None


def load(path):
    global world
    with open(path) as fh:
        world = World(json.load(fh))
    return world
