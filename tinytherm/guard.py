"""Judge each sensor reading before it may touch the fit.

:class:`ReadingGuard` gives every reading a verdict code from
:mod:`tinytherm.status` (``ACCEPTED`` or why it was rejected), counts each
reason, tracks the time since the last accepted reading and reports long gaps.
It never raises for a bad reading (only bad constructor arguments raise
``ValueError``) and gives the same verdict for every input on CPython and
MicroPython. Time inside is whole milliseconds (ints): ``dt_s`` is rounded to
the nearest ms (a half up), so a step that rounds to 0 ms is a duplicate.

Checks, in order:

1. ``BAD_INPUT``: the temperature is no number (:func:`tinytherm.num.as_float`
   gives None: str, bytes, bool, None, an int beyond the float range), the
   time is not finite, or the caller flagged another argument as unusable.
2. ``TIME_BACKWARDS`` (step < 0) and ``DUPLICATE_TIME`` (step of 0 ms).
3. ``NOT_FINITE``: NaN or infinity.
4. ``ERROR_CODE``, only with ``probe_codes=True`` (a 12-bit 1-Wire digital
   probe): -127.0 C (drivers' value for a disconnected probe) and 85.0 C (its
   register before the first conversion); common practice, no source. 85.0 C
   is real in a kettle: accepted when the previous accepted reading was within
   ``error_margin_c`` of it. Other sensors send no such codes: off by default.
5. ``OUT_OF_RANGE``: outside ``[min_c, max_c]``.
6. ``SPIKE``: a Hampel gate over the last 3 or 5 readings that passed 1-5
   (the current one included): with ``m`` the window median and ``s`` = 1.4826
   x the median absolute deviation, a spike is ``|x - m| > spike_k * max(s,
   spike_floor_c)``. A real step (a top-up) passes once it holds for more
   than half the window.
7. ``STUCK``: the exact same value for at least ``stuck_min_s`` while the
   model (its rate when the repeats began, passed by the caller) says it
   should have moved by more than ``stuck_change_c``. A liquid at rest reads
   one value for hours, so without a model rate nothing is stuck.

On MicroPython the rejections before the spike gate only compare (nothing is
allocated for a float reading); an accepted one costs at most a few float
operations (32 bytes each on the 64-bit unix port, measured); a repeated ``dt_s``
or ``elapsed_ms`` is not converted again (benchmarks/guard_alloc.py).
:meth:`ReadingGuard.pack_into` / :meth:`ReadingGuard.unpack_from` save and
check the dynamic state (``STATE_SIZE`` bytes; the code is :mod:`tinytherm.state`'s,
loaded only then); the counts are not saved.
"""
try:
    from micropython import const
except ImportError:  # CPython
    def const(x):
        return x

from tinytherm import status
from tinytherm.num import INF as _INF, as_float, finite, refused

_NEG_INF = -_INF  # a constant: negating at run time would allocate
_TICKS_PERIOD = const(1 << 30)          # ticks wrap at 2**30 (MicroPython ticks_ms)
_TICKS_MASK = const(_TICKS_PERIOD - 1)
_TICKS_HALF = const(_TICKS_PERIOD >> 1)  # a difference beyond half a period is negative
_STEP_CAP_MS = const(_TICKS_HALF)        # a longer step is counted as this (a small int)
_STEP_CAP_S = const(_STEP_CAP_MS / 1000.0)

# Gap codes: what the caller should do about the time since the last accepted reading.
GAP_NONE = 0      # normal spacing
GAP_WIDEN = 1     # longer than max_gap_s: widen the uncertainty
GAP_RESTART = 2   # longer than restart_gap_s: start the fit afresh

# Error codes of 12-bit 1-Wire digital probes (common practice, no source).
POWER_UP_CODE_C = 85.0
DISCONNECTED_CODE_C = -127.0

_MAD_TO_SIGMA = const(1.4826)  # MAD of a normal sample x 1.4826 = its standard deviation
_N_VERDICTS = len(status.VERDICT_NAMES)


def _median3(a, b, c):
    """Median of three values, by comparisons only (the default window's fast path)."""
    if a > b:
        a, b = b, a
    if b > c:
        b = c
    return a if a > b else b


def _median(v, start, n):
    """Median of ``v[start:start + n]`` (``n`` odd), by comparisons only (no allocation)."""
    half = n >> 1
    for i in range(start, start + n):
        x = v[i]
        below = 0
        same = 0
        for j in range(start, start + n):
            if v[j] < x:
                below += 1
            elif v[j] == x:
                same += 1
        if below <= half < below + same:
            return x
    return v[start]  # (not reached for numbers)


def _setting(name, value, lo, hi, unit):
    """``value`` as a float in ``[lo, hi]``, else ValueError naming the argument."""
    v = as_float(value)
    if v is None or not finite(v) or not lo <= v <= hi:
        raise refused("setting", (name, lo, hi, unit, value))
    return v


def _step_ms(x):
    """Seconds ``x`` as whole ms (a half up), capped first so a huge value makes
    no big int; -1 when negative, -2 when no finite number."""
    v = x if type(x) is float else as_float(x)
    if v is None or v != v or v == _INF or v == _NEG_INF:
        return -2
    if v < 0.0:
        return -1
    return _STEP_CAP_MS if v >= _STEP_CAP_S else int(v * 1000.0 + 0.5)


class ReadingGuard:
    """Verdict on each reading; counts per reason; gap tracking.

    Arguments (temperatures in deg C, times in seconds, kept in whole ms):
    ``min_c``, ``max_c``: range of the liquid. ``quantum_c``: sensor step
    (0.0625 C for a 12-bit 1-Wire probe). ``spike_window``: 3 or 5 readings,
    0 switches the spike gate off. ``spike_k``: gate width, robust standard
    deviations. ``spike_floor_c``: floor of the spike scale, >= ``quantum_c``
    (``None``: ``quantum_c``; raise it to about the noise sd). ``probe_codes``:
    a 12-bit 1-Wire digital probe, whose codes -127.0 and 85.0 are rejected;
    ``error_margin_c``: 85.0 is accepted this close to the previous accepted
    reading. ``max_gap_s`` (>= 0.001 s): a longer time since the last accepted
    reading is ``GAP_WIDEN``; beyond ``restart_gap_s`` ``GAP_RESTART``.
    ``stuck_change_c``: expected movement an unchanged value must contradict
    before it is ``STUCK`` (``None``: off); ``stuck_min_s``: and for how long.

    After ``ACCEPTED``: :attr:`elapsed_ms` (int) is the time since the previous
    accepted reading (0 on the first), :attr:`elapsed_s` the same in seconds,
    and :attr:`gap` a ``GAP_*`` code. (No properties: on MicroPython a class
    with one makes every attribute store slower, measured 4.8 -> 1.7 us per
    accepted reading without.)
    """

    STATE_SIZE = 58  # bytes written by pack_into

    def __init__(self, min_c=-40.0, max_c=150.0, quantum_c=0.0625, spike_window=3,
                 spike_k=4.0, spike_floor_c=None, probe_codes=False, error_margin_c=2.0,
                 max_gap_s=300.0, restart_gap_s=3600.0, stuck_change_c=1.0,
                 stuck_min_s=30.0):
        self.min_c = _setting("min_c", min_c, -1e300, 1e300, "deg C")
        self.max_c = _setting("max_c", max_c, -1e300, 1e300, "deg C")
        if not self.min_c < self.max_c:
            raise refused("min_c", (min_c, max_c))
        self.quantum_c = _setting("quantum_c", quantum_c, 1e-9, 1e3, "deg C")
        if spike_window not in (0, 3, 5) or type(spike_window) is bool:
            raise refused("spike_window", (spike_window,))
        self.spike_window = int(spike_window)
        self.spike_k = _setting("spike_k", spike_k, 1e-3, 1e3, "standard deviations")
        self.spike_floor_c = _setting("spike_floor_c", quantum_c if spike_floor_c is None
                                      else spike_floor_c, self.quantum_c, 1e6, "deg C")
        self.probe_codes = bool(probe_codes)
        margin = _setting("error_margin_c", error_margin_c, 0.0, 1e3, "deg C")
        max_gap = _setting("max_gap_s", max_gap_s, 0.001, 1e6, "s")
        # restart_gap_s below half the tick period: a tick difference can say it
        restart_gap = _setting("restart_gap_s", restart_gap_s, max_gap,
                               (_TICKS_HALF - 1001) / 1000.0, "s")
        self.stuck_change_c = None if stuck_change_c is None else _setting(
            "stuck_change_c", stuck_change_c, 1e-9, 1e6, "deg C")
        self.max_gap_ms = _step_ms(max_gap)
        self.restart_gap_ms = _step_ms(restart_gap)
        self.stuck_min_ms = _step_ms(_setting("stuck_min_s", stuck_min_s, 0.0, 1e6, "s"))
        # precomputed so the common paths compare only
        self._gate_floor_c = self.spike_k * self.spike_floor_c
        # (the margin is kept only as this band: one attribute fewer keeps the guard's table
        # at 29 slots, a smaller piece for a fragmented heap to find)
        self._power_up_band = (POWER_UP_CODE_C - margin, POWER_UP_CODE_C + margin)
        # the window, newest first (slots 0..4), and scratch for the deviations (5..9)
        self._win = [0.0] * 10
        # per-verdict counts, then accepted readings per gap code (fixed size)
        self._counts = [0] * (_N_VERDICTS + 3)
        # conversions kept so a steady interval costs none (int <-> float allocates):
        # the last dt_s converted and its whole ms (-1.0 s is backwards, -1);
        # the last elapsed_ms converted to seconds, and those seconds
        self._time_cache = [-1.0, -1, 0, 0.0]
        self.reset()

    # ------------------------------------------------------------------ state
    def reset(self, counts=True):
        """Forget the window and the time reference; also zero the counts if ``counts``."""
        self._win_n = 0            # readings held in the window (0..spike_window-1)
        self._last_c = None        # last accepted temperature, deg C (None: none yet)
        self._ticks_ref = -1       # ticks of the previous reading (-1: no reference)
        self._pending_ms = 0       # time since the last accepted reading, ms
        self._run_ms = 0           # how long the last accepted value has repeated, ms
        self._run_rate = 0.0       # |model rate| when the repeats began, deg C/s
        self.elapsed_ms = 0        # after ACCEPTED: ms since the previous accepted reading
        self.elapsed_s = 0.0       # the same in seconds (elapsed_ms / 1000)
        self.gap = GAP_NONE        # after ACCEPTED: GAP_NONE, GAP_WIDEN or GAP_RESTART
        self.last_verdict = status.ACCEPTED
        self.consecutive_rejections = 0
        if counts:
            self.clear_counts()

    def clear_counts(self):
        """Zero every per-reason and per-gap count."""
        self.accepted = 0
        self.rejected = 0
        c = self._counts
        for i in range(len(c)):
            c[i] = 0

    def count(self, verdict):
        """How many readings got ``verdict`` (a code from :mod:`tinytherm.status`)."""
        if verdict == status.ACCEPTED:
            return self.accepted
        if type(verdict) is int and 0 < verdict < _N_VERDICTS:
            return self._counts[verdict]
        return 0

    def gap_count(self, gap):
        """How many accepted readings came after a gap of kind ``gap`` (a ``GAP_*`` code)."""
        if type(gap) is int and 0 <= gap <= GAP_RESTART:
            return self._counts[_N_VERDICTS + gap]
        return 0

    def settings_key(self):
        """A small int (0..6) that differs for every spike window and probe-code setting.

        A saved state is only valid for a guard with the same key: fold it into
        the saved blob's settings check.
        """
        w = self.spike_window
        return (0 if w == 0 else 1 if w == 3 else 2) | (4 if self.probe_codes else 0)

    def pack_into(self, buf, offset):
        """Write the dynamic state into ``buf[offset:offset + STATE_SIZE]`` (little-endian;
        :func:`tinytherm.state.pack_guard`, loaded only here: a product that never saves
        keeps that code off its heap)."""
        from tinytherm import state
        state.pack_guard(self, buf, offset)

    def unpack_from(self, buf, offset):
        """Load a state written by :meth:`pack_into`; True when every value is valid
        (:func:`tinytherm.state.unpack_guard`); on False the guard is unchanged."""
        from tinytherm import state
        return state.unpack_guard(self, buf, offset)

    def held_c(self):
        """The latest reading when it was held back as a possible spike (a jump not yet
        confirmed), deg C; else None."""
        return self._win[0] if self.consecutive_rejections and self._win_n else None

    def _reject(self, verdict):
        self.rejected += 1
        self.consecutive_rejections += 1
        self.last_verdict = verdict
        self._counts[verdict] += 1
        return verdict

    # --------------------------------------------------------------- judging
    def check(self, temp_c, dt_s, expected_rate_c_per_s=0.0, inputs_ok=True):
        """Verdict on one reading taken ``dt_s`` seconds after the previous call.

        ``dt_s`` is rounded to whole ms (ignored on the first reading).
        ``expected_rate_c_per_s`` is the model's current dT/dt (deg C per
        second; 0.0 when unknown), used only by the stuck test. Pass
        ``inputs_ok=False`` when the caller found another argument unusable:
        the reading is then ``BAD_INPUT`` but its time still counts. Never raises.
        """
        c = self._time_cache
        t = type(dt_s)
        if (t is float or t is int) and dt_s == c[0]:
            step = c[1]  # the same interval as last time: no conversion
        else:
            step = _step_ms(dt_s)
            if step >= 0:
                c[0] = dt_s
                c[1] = step
        return self._advance(temp_c, step, expected_rate_c_per_s, inputs_ok)

    def check_ticks(self, temp_c, ticks_ms, expected_rate_c_per_s=0.0, inputs_ok=True,
                    slept_s=None):
        """Like :meth:`check` with time as integer millisecond ticks wrapping at 2**30.

        The difference is wrap-safe; a step of more than half the tick period
        (about 6.2 days) is backwards and the new ticks become the reference
        (a clock set back does not block readings for ever). With no tick
        reference (after a restore) the step is ``slept_s`` seconds, the time
        since the previous reading; without it that reading is ``BAD_INPUT`` once
        a reading was accepted, and only sets the reference. ``slept_s`` is
        ignored when a reference exists.
        """
        if type(ticks_ms) is not int:
            return self._reject(status.BAD_INPUT)
        ticks = ticks_ms & _TICKS_MASK
        ref = self._ticks_ref
        self._ticks_ref = ticks
        if ref >= 0:
            step = (ticks - ref) & _TICKS_MASK
            if step >= _TICKS_HALF:
                step = -1  # backwards (the new ticks are the reference from now on)
        elif slept_s is not None:
            step = _step_ms(slept_s)
        else:
            step = 0 if self._last_c is None else -2  # (-2: unknown after an accepted one)
        return self._advance(temp_c, step, expected_rate_c_per_s, inputs_ok)

    def _advance(self, temp_c, step, rate, inputs_ok):
        """Carry ``step`` (whole ms; -1 backwards, -2 unknown) into the pending time, judge."""
        if step < 0:
            return self._reject(status.BAD_INPUT if step == -2 else status.TIME_BACKWARDS)
        if self._last_c is None:
            pending = 0  # nothing accepted yet: no time to carry
        else:
            if step == 0:
                return self._reject(status.DUPLICATE_TIME)
            pending = self._pending_ms + step
            cap = self.restart_gap_ms + 1000  # any longer gap restarts alike
            if pending > cap:
                pending = cap
        self._pending_ms = pending
        if not inputs_ok:
            return self._reject(status.BAD_INPUT)
        if pending > self.restart_gap_ms:
            gap = GAP_RESTART
        elif pending > self.max_gap_ms:
            gap = GAP_WIDEN
        else:
            gap = GAP_NONE
        verdict = self._judge(temp_c, rate, gap, step)
        if verdict == status.ACCEPTED:
            self.elapsed_ms = pending
            self._pending_ms = 0
            c = self._time_cache
            if pending != c[2]:  # (an int -> float conversion allocates: once per interval)
                c[2] = pending
                c[3] = pending / 1000.0
            self.elapsed_s = c[3]
        return verdict

    def _judge(self, temp_c, rate, gap, step):
        """Value checks 1 and 3-7 for a reading ``step`` ms after the previous one."""
        if type(temp_c) is not float:
            temp_c = as_float(temp_c)  # an int, a numpy scalar; None if no number
            if temp_c is None:
                return self._reject(status.BAD_INPUT)
        if temp_c != temp_c or temp_c == _INF or temp_c == _NEG_INF:
            return self._reject(status.NOT_FINITE)
        last = self._last_c
        if self.probe_codes:
            if temp_c == DISCONNECTED_CODE_C:
                return self._reject(status.ERROR_CODE)
            band = self._power_up_band
            if temp_c == POWER_UP_CODE_C and not (last is not None and band[0] <= last <= band[1]):
                return self._reject(status.ERROR_CODE)
        if temp_c < self.min_c or temp_c > self.max_c:
            return self._reject(status.OUT_OF_RANGE)
        if gap != GAP_NONE:
            self._win_n = 0  # the window is stale after a long gap
        if self.spike_window and self._spike(temp_c):
            return self._reject(status.SPIKE)
        if temp_c == last and self.stuck_change_c is not None:
            # The same exact value again: how long, and how far should it have moved?
            if self._run_ms == 0:
                # the model's rate when the repeats began: held for the whole
                # run, because a fit fed the repeats would soon agree with them
                r = as_float(rate)
                if r is None or r != r or r == _INF or r == _NEG_INF:
                    r = 0.0  # (compared here: num.finite negates INF, which allocates)
                self._run_rate = r if r >= 0.0 else -r
            run = self._run_ms + step
            cap = self.restart_gap_ms + 1000
            self._run_ms = run if run < cap else cap
            # (after restart_gap_s of rejections the value is taken as real:
            # the caller restarts its fit, so a wrong model cannot block for ever)
            if run >= self.stuck_min_ms and gap != GAP_RESTART \
                    and self._run_rate * run > 1000.0 * self.stuck_change_c:
                return self._reject(status.STUCK)
        else:
            self._run_ms = 0
        self._last_c = temp_c
        self.accepted += 1
        self._counts[_N_VERDICTS + gap] += 1
        self.consecutive_rejections = 0
        self.last_verdict = status.ACCEPTED
        self.gap = gap
        return status.ACCEPTED

    def _spike(self, x):
        """Push ``x`` into the window; True when it is a spike against the window."""
        w = self._win
        size = self.spike_window
        for i in range(size - 1, 0, -1):
            w[i] = w[i - 1]
        w[0] = x
        n = self._win_n
        if n < size - 1:
            self._win_n = n + 1  # still filling: nothing to judge against yet
            return False
        m = _median3(w[0], w[1], w[2]) if size == 3 else _median(w, 0, size)
        if x == m:
            return False
        dev = x - m if x > m else m - x
        if dev <= self._gate_floor_c:
            return False  # (the common case ends here: one float operation)
        for i in range(size):  # |v - m| into the scratch slots, for the MAD
            v = w[i]
            w[5 + i] = v - m if v > m else m - v
        return dev > self.spike_k * (_MAD_TO_SIGMA * _median(w, 5, size))

    def __repr__(self):
        from tinytherm import texts  # (loaded only when printed)
        return texts.guard(self)
