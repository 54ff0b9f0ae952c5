"""Judge each sensor reading before it may touch the fit.

:class:`ReadingGuard` gives every reading a verdict code from
:mod:`tinytherm.status` (``ACCEPTED`` or the reason it was rejected), counts
each reason, tracks the time since the last accepted reading and reports long
gaps. It never raises for a bad reading; only bad constructor arguments raise
``ValueError``.

State is fixed: a handful of attributes, no lists. The spike window (3 or 5
samples) is held in separate attributes. The rejection paths that need no
arithmetic (not finite, error code, out of range, time backwards, duplicate
time, bad input) compare only, so on MicroPython they allocate nothing when
time is given as integer ticks; a reading that reaches the spike gate costs a
few float operations.

Checks, in order:

1. ``BAD_INPUT``: the temperature is not a number, ``dt_s`` is not finite, or
   the caller flagged another argument (ambient, duty) as unusable.
2. ``TIME_BACKWARDS`` (step < 0) and ``DUPLICATE_TIME`` (step == 0).
3. ``NOT_FINITE``: NaN or infinity.
4. ``ERROR_CODE``: the codes 12-bit 1-Wire digital sensors report instead of a
   temperature, -127.0 C (disconnected) and 85.0 C (power-up value before the
   first conversion). These values are common practice, no source. 85.0 C is a
   real temperature in a kettle, so it is accepted when the previous accepted
   reading was within ``error_margin_c`` of it.
5. ``OUT_OF_RANGE``: outside ``[min_c, max_c]``.
6. ``SPIKE``: a median/Hampel gate over the last 3 or 5 readings that passed
   checks 1-5 (the current one included). With ``m`` the window median and
   ``s`` the median absolute deviation x 1.4826, the reading is a spike when ``|x - m| > spike_k * max(s, floor)``,
   the floor being at least one quantisation step. A real step (a top-up) is
   accepted as soon as it holds for more than half the window.
7. ``STUCK``: the sensor has repeated the exact same value for at least
   ``stuck_min_s`` seconds while the model says it should have moved by more
   than ``stuck_change_c`` (the caller passes the model's expected rate of
   change; the rate at the first repeat is held for the whole run). A liquid at rest legitimately reads a constant value for hours, so
   without a model rate nothing is ever called stuck.
"""
import math

from tinytherm import status

_INF = math.inf
_NEG_INF = -math.inf  # a constant: negating at run time would allocate
_TICKS_PERIOD = 1 << 30          # ticks wrap at 2**30 (MicroPython ticks_ms)
_TICKS_MASK = _TICKS_PERIOD - 1
_TICKS_HALF = _TICKS_PERIOD >> 1  # a difference beyond half a period is negative

# Gap codes: what the caller should do about the time since the last accepted reading.
GAP_NONE = 0      # normal spacing
GAP_WIDEN = 1     # longer than max_gap_s: widen the uncertainty
GAP_RESTART = 2   # longer than restart_gap_s: start the fit afresh

# Error codes of 12-bit 1-Wire digital sensors (common practice, no source).
POWER_UP_CODE_C = 85.0
DISCONNECTED_CODE_C = -127.0

_MAD_TO_SIGMA = 1.4826  # MAD of a normal sample x 1.4826 = its standard deviation


def _median3(a, b, c):
    """Median of three numbers, by comparisons only (no allocation)."""
    if a > b:
        a, b = b, a
    if b > c:
        b = c
    return a if a > b else b


class ReadingGuard:
    """Verdict on each reading; counts per reason; gap tracking.

    Arguments (all temperatures in deg C, times in seconds):

    ``min_c``, ``max_c``
        physical range of the liquid; readings outside are ``OUT_OF_RANGE``.
    ``quantum_c``
        sensor resolution (0.0625 C for a 12-bit 1-Wire sensor); the spike
        scale never falls below it.
    ``spike_window``
        3 or 5 samples, or 0 to switch the spike gate off.
    ``spike_k``
        gate width in robust standard deviations.
    ``spike_floor_c``
        floor of the spike scale, >= ``quantum_c``; ``None`` means ``quantum_c``.
        Raise it to about the sensor's noise standard deviation.
    ``error_codes``
        reject the 1-Wire error codes -127.0 and 85.0 (see module doc).
    ``error_margin_c``
        85.0 is accepted when the previous accepted reading was this close.
    ``max_gap_s``
        a longer time since the last accepted reading is reported as ``GAP_WIDEN``.
    ``restart_gap_s``
        a longer one is ``GAP_RESTART`` (must be >= ``max_gap_s``).
    ``stuck_change_c``
        model-expected movement that an unchanged value must contradict before
        it is ``STUCK``; ``None`` switches the stuck test off.
    ``stuck_min_s``
        and the value must have been repeated for at least this long.
    """

    def __init__(self, min_c=-40.0, max_c=150.0, quantum_c=0.0625, spike_window=3,
                 spike_k=4.0, spike_floor_c=None, error_codes=True, error_margin_c=2.0,
                 max_gap_s=300.0, restart_gap_s=3600.0, stuck_change_c=1.0,
                 stuck_min_s=30.0, probe_codes=None):
        if probe_codes is not None:  # (temporary shim: the guard helper's API)
            error_codes = probe_codes
        if not (_finite(min_c) and _finite(max_c)) or not min_c < max_c:
            raise ValueError("need finite min_c < max_c (deg C), got %r, %r" % (min_c, max_c))
        if not _finite(quantum_c) or quantum_c <= 0.0:
            raise ValueError("quantum_c must be a finite step > 0 deg C, got %r" % (quantum_c,))
        if spike_window not in (0, 3, 5):
            raise ValueError("spike_window must be 0 (off), 3 or 5, got %r" % (spike_window,))
        if not _finite(spike_k) or spike_k <= 0.0:
            raise ValueError("spike_k must be > 0 (standard deviations), got %r" % (spike_k,))
        if spike_floor_c is None:
            spike_floor_c = quantum_c
        if not _finite(spike_floor_c) or spike_floor_c < quantum_c:
            raise ValueError("spike_floor_c must be >= quantum_c (%r deg C), got %r"
                             % (quantum_c, spike_floor_c))
        if not _finite(error_margin_c) or error_margin_c < 0.0:
            raise ValueError("error_margin_c must be >= 0 deg C, got %r" % (error_margin_c,))
        if not _finite(max_gap_s) or max_gap_s <= 0.0:
            raise ValueError("max_gap_s must be > 0 s, got %r" % (max_gap_s,))
        if not _finite(restart_gap_s) or restart_gap_s < max_gap_s:
            raise ValueError("restart_gap_s must be >= max_gap_s (%r s), got %r"
                             % (max_gap_s, restart_gap_s))
        if restart_gap_s * 1000.0 >= _TICKS_HALF:
            raise ValueError("restart_gap_s must be < %d s (half the tick period), got %r"
                             % (_TICKS_HALF // 1000, restart_gap_s))
        if stuck_change_c is not None and (not _finite(stuck_change_c) or stuck_change_c <= 0.0):
            raise ValueError("stuck_change_c must be > 0 deg C or None, got %r" % (stuck_change_c,))
        if not _finite(stuck_min_s) or stuck_min_s < 0.0:
            raise ValueError("stuck_min_s must be >= 0 s, got %r" % (stuck_min_s,))
        self.min_c = float(min_c)
        self.max_c = float(max_c)
        self.quantum_c = float(quantum_c)
        self.spike_window = spike_window
        self.spike_k = float(spike_k)
        self.spike_floor_c = float(spike_floor_c)
        self.error_codes = bool(error_codes)
        self.error_margin_c = float(error_margin_c)
        self.max_gap_s = float(max_gap_s)
        self.restart_gap_s = float(restart_gap_s)
        self.stuck_change_c = None if stuck_change_c is None else float(stuck_change_c)
        self.stuck_min_s = float(stuck_min_s)
        # Precomputed so the per-reading gate does one multiplication.
        self._gate_mad = self.spike_k * _MAD_TO_SIGMA
        self._gate_floor_c = self.spike_k * self.spike_floor_c
        self._max_gap_ms = int(self.max_gap_s * 1000.0)
        self._restart_gap_ms = int(self.restart_gap_s * 1000.0)
        self._pending_cap_s = 2.0 * self.restart_gap_s
        self._pending_cap_ms = self._restart_gap_ms + 1000
        self._error_low_c = POWER_UP_CODE_C - self.error_margin_c
        self._error_high_c = POWER_UP_CODE_C + self.error_margin_c
        self.reset()

    # ------------------------------------------------------------------ state
    def reset(self, counts=True):
        """Forget the window and the time reference; also zero the counts if ``counts``."""
        self._win_n = 0            # readings held in the window (0..spike_window-1)
        self._w1 = 0.0             # newest previous reading that passed checks 1-5
        self._w2 = 0.0
        self._w3 = 0.0
        self._w4 = 0.0             # oldest (window 5 only)
        self._has_accepted = False
        self._last_c = 0.0         # last accepted temperature, deg C
        self._has_time = False     # a tick reference exists (check_ticks)
        self._pending_s = 0.0      # seconds since the last accepted reading (dt_s path)
        self._ticks_ref = 0        # ticks of the previous reading with a valid time
        self._pending_ms = 0       # ms since the last accepted reading (ticks path)
        self._run_s = 0.0          # how long the last accepted value has repeated, s
        self._run_expected_c = 0.0  # movement the model expected meanwhile, deg C
        self._run_rate = 0.0       # |model rate| when the repeats began, deg C/s
        self.elapsed_s = 0.0       # after ACCEPTED: seconds since the previous accepted reading
        self.gap = GAP_NONE        # after ACCEPTED: GAP_NONE, GAP_WIDEN or GAP_RESTART
        self.last_verdict = status.ACCEPTED
        self.consecutive_rejections = 0
        if counts:
            self.clear_counts()

    def clear_counts(self):
        """Zero every per-reason count."""
        self.accepted = 0
        self.rejected = 0
        self.count_not_finite = 0
        self.count_out_of_range = 0
        self.count_error_code = 0
        self.count_time_backwards = 0
        self.count_duplicate_time = 0
        self.count_spike = 0
        self.count_stuck = 0
        self.count_bad_input = 0
        self.count_long_gaps = 0
        self.count_restart_gaps = 0

    def count(self, verdict):
        """How many readings got ``verdict`` (a code from :mod:`tinytherm.status`)."""
        if verdict == status.ACCEPTED:
            return self.accepted
        if verdict == status.NOT_FINITE:
            return self.count_not_finite
        if verdict == status.OUT_OF_RANGE:
            return self.count_out_of_range
        if verdict == status.ERROR_CODE:
            return self.count_error_code
        if verdict == status.TIME_BACKWARDS:
            return self.count_time_backwards
        if verdict == status.DUPLICATE_TIME:
            return self.count_duplicate_time
        if verdict == status.SPIKE:
            return self.count_spike
        if verdict == status.STUCK:
            return self.count_stuck
        if verdict == status.BAD_INPUT:
            return self.count_bad_input
        return 0

    def _reject(self, verdict):
        self.rejected += 1
        self.consecutive_rejections += 1
        self.last_verdict = verdict
        if verdict == status.NOT_FINITE:
            self.count_not_finite += 1
        elif verdict == status.OUT_OF_RANGE:
            self.count_out_of_range += 1
        elif verdict == status.ERROR_CODE:
            self.count_error_code += 1
        elif verdict == status.TIME_BACKWARDS:
            self.count_time_backwards += 1
        elif verdict == status.DUPLICATE_TIME:
            self.count_duplicate_time += 1
        elif verdict == status.SPIKE:
            self.count_spike += 1
        elif verdict == status.STUCK:
            self.count_stuck += 1
        else:
            self.count_bad_input += 1
        return verdict

    # --------------------------------------------------------------- judging
    def check(self, temp_c, dt_s, expected_rate_c_per_s=0.0, inputs_ok=True):
        """Verdict on one reading taken ``dt_s`` seconds after the previous call.

        ``expected_rate_c_per_s`` is the model's current dT/dt (deg C per
        second; 0.0 when unknown), used only by the stuck test. Pass
        ``inputs_ok=False`` when the caller found another argument unusable:
        the reading is then ``BAD_INPUT`` but its time still counts. On the
        first call ``dt_s`` may be 0. After ``ACCEPTED``, :attr:`elapsed_s` is
        the time since the previous accepted reading and :attr:`gap` says
        whether that was a long gap. Never raises.
        """
        if not _is_number(dt_s) or dt_s != dt_s or dt_s == _INF or dt_s == _NEG_INF:
            return self._reject(status.BAD_INPUT)
        if dt_s < 0.0:
            return self._reject(status.TIME_BACKWARDS)
        if dt_s == 0.0 and self._has_accepted:
            return self._reject(status.DUPLICATE_TIME)
        if self._has_accepted:
            # (the common case, nothing carried over, allocates no float)
            pending = dt_s if self._pending_s == 0.0 else self._pending_s + dt_s
            if pending > self._pending_cap_s:
                pending = self._pending_cap_s
        else:
            pending = 0.0  # nothing accepted yet: no time to carry
        self._pending_s = pending
        if not inputs_ok:
            return self._reject(status.BAD_INPUT)
        if pending > self.restart_gap_s:
            gap = GAP_RESTART
        elif pending > self.max_gap_s:
            gap = GAP_WIDEN
        else:
            gap = GAP_NONE
        verdict = self._judge(temp_c, expected_rate_c_per_s, gap, dt_s, -1)
        if verdict == status.ACCEPTED:
            self.elapsed_s = pending
            self.elapsed_ms = int(pending * 1000.0 + 0.5)
            self._pending_s = 0.0
        return verdict

    def settings_key(self):
        return (self.spike_window, self.error_codes)

    STATE_SIZE = 8 * 9 + 3

    def pack_into(self, buf, offset):
        import struct
        struct.pack_into("<9dBBB", buf, offset, self._w1, self._w2, self._w3, self._w4,
                         self._run_s, self._run_rate, self._pending_s + self._pending_ms * 0.001,
                         self._last_c, self._run_expected_c, self._win_n,
                         min(self.consecutive_rejections, 255), 1 if self._has_accepted else 0)

    def unpack_from(self, buf, offset):
        import struct
        v = struct.unpack_from("<9dBBB", buf, offset)
        for x in v[:9]:
            if not -1e12 < x < 1e12:
                return False
        (self._w1, self._w2, self._w3, self._w4, self._run_s, self._run_rate, pending,
         self._last_c, self._run_expected_c, self._win_n, self.consecutive_rejections, h) = v
        self._has_accepted = h == 1
        self._pending_s = pending
        self._pending_ms = 0
        self._has_time = False
        return self._win_n <= 4 and h <= 1 and pending >= 0.0

    def check_ticks(self, temp_c, ticks_ms, expected_rate_c_per_s=0.0, inputs_ok=True,
                    slept_s=None):
        """Like :meth:`check` with time as integer millisecond ticks wrapping at 2**30.

        The difference is wrap-safe; a step of more than half the tick period
        (about 6.2 days) reads as time going backwards. After a backwards step
        the new ticks become the reference, so a clock that was set back does
        not block readings for ever. Rejections before the spike gate allocate
        nothing on MicroPython.
        """
        if type(ticks_ms) is not int:
            return self._reject(status.BAD_INPUT)
        if self._has_time:
            step_ms = (ticks_ms - self._ticks_ref) & _TICKS_MASK
            if step_ms >= _TICKS_HALF:
                self._ticks_ref = ticks_ms & _TICKS_MASK
                return self._reject(status.TIME_BACKWARDS)
            if step_ms == 0 and self._has_accepted:
                return self._reject(status.DUPLICATE_TIME)
            pending = self._pending_ms + step_ms if self._has_accepted else 0
            if pending > self._pending_cap_ms:
                pending = self._pending_cap_ms
        else:
            self._has_time = True
            self._ticks_ref = ticks_ms & _TICKS_MASK
            if self._has_accepted:
                # restored state without a tick reference: the step is unknown
                return self._reject(status.BAD_INPUT)
            step_ms = 0
            pending = 0
        self._ticks_ref = ticks_ms & _TICKS_MASK
        self._pending_ms = pending
        if not inputs_ok:
            return self._reject(status.BAD_INPUT)
        if pending > self._restart_gap_ms:
            gap = GAP_RESTART
        elif pending > self._max_gap_ms:
            gap = GAP_WIDEN
        else:
            gap = GAP_NONE
        verdict = self._judge(temp_c, expected_rate_c_per_s, gap, 0.0, step_ms)
        if verdict == status.ACCEPTED:
            self.elapsed_s = pending * 0.001
            self.elapsed_ms = pending
            self._pending_ms = 0
        return verdict

    def _judge(self, temp_c, rate, gap, step_s, step_ms):
        """Value checks 1 and 3-7; ``step_ms`` < 0 means ``step_s`` holds the step."""
        if not _is_number(temp_c):
            return self._reject(status.BAD_INPUT)
        if temp_c != temp_c or temp_c == _INF or temp_c == _NEG_INF:
            return self._reject(status.NOT_FINITE)
        if self.error_codes:
            if temp_c == DISCONNECTED_CODE_C:
                return self._reject(status.ERROR_CODE)
            if temp_c == POWER_UP_CODE_C and not (
                    self._has_accepted and self._error_low_c <= self._last_c <= self._error_high_c):
                return self._reject(status.ERROR_CODE)
        if temp_c < self.min_c or temp_c > self.max_c:
            return self._reject(status.OUT_OF_RANGE)
        if gap != GAP_NONE:
            self._win_n = 0  # the window is stale after a long gap
        if self.spike_window and self._spike(temp_c):
            return self._reject(status.SPIKE)
        if self._has_accepted and temp_c == self._last_c and self.stuck_change_c is not None:
            # The same exact value again: how long, and how far should it have moved?
            step = step_s if step_ms < 0 else step_ms * 0.001
            if self._run_s == 0.0:
                # the model's rate when the repeats began: held for the whole
                # run, because a fit fed the repeats would soon agree with them
                if not _is_number(rate) or rate != rate or rate == _INF or rate == _NEG_INF:
                    rate = 0.0
                elif rate < 0.0:
                    rate = -rate
                self._run_rate = rate
            self._run_s += step
            if self._run_s > self._pending_cap_s:
                self._run_s = self._pending_cap_s  # (bounded: a huge step must not grow it)
            self._run_expected_c = self._run_rate * self._run_s
            if self._run_s >= self.stuck_min_s and self._run_expected_c > self.stuck_change_c \
                    and gap != GAP_RESTART:
                # (after restart_gap_s of rejections the value is taken as real:
                # the caller restarts its fit, so a wrong model cannot block for ever)
                return self._reject(status.STUCK)
        else:
            self._run_s = 0.0
            self._run_expected_c = 0.0
        self._has_accepted = True
        self._last_c = temp_c
        self.accepted += 1
        self.consecutive_rejections = 0
        self.last_verdict = status.ACCEPTED
        if gap == GAP_WIDEN:
            self.count_long_gaps += 1
        elif gap == GAP_RESTART:
            self.count_restart_gaps += 1
        self.gap = gap
        return status.ACCEPTED

    def _spike(self, x):
        """Push ``x`` into the window; True when it is a spike against the window."""
        n = self._win_n
        if self.spike_window == 3:
            a = self._w1
            b = self._w2
            self._w2 = a
            self._w1 = x
            if n < 2:
                self._win_n = n + 1
                return False
            m = _median3(a, b, x)
            if x == m:
                return False
            if x > m:
                # sorted: min(a, b), m = max(a, b), x
                dev = x - m
                other = m - (a if a < b else b)
            else:
                # sorted: x, m = min(a, b), max(a, b)
                dev = m - x
                other = (b if a < b else a) - m
            # MAD of three = min of the two non-zero deviations from the median
            mad = other if other < dev else dev
            if dev <= self._gate_floor_c:
                return False
            return dev > self._gate_mad * mad
        # window of five: previous four plus x
        a = self._w1
        b = self._w2
        c = self._w3
        d = self._w4
        self._w4 = c
        self._w3 = b
        self._w2 = a
        self._w1 = x
        if n < 4:
            self._win_n = n + 1
            return False
        # sorting network on five values (comparisons and swaps only)
        v0, v1, v2, v3, v4 = a, b, c, d, x
        if v0 > v1:
            v0, v1 = v1, v0
        if v3 > v4:
            v3, v4 = v4, v3
        if v2 > v4:
            v2, v4 = v4, v2
        if v2 > v3:
            v2, v3 = v3, v2
        if v1 > v4:
            v1, v4 = v4, v1
        if v0 > v3:
            v0, v3 = v3, v0
        if v0 > v2:
            v0, v2 = v2, v0
        if v1 > v3:
            v1, v3 = v3, v1
        if v1 > v2:
            v1, v2 = v2, v1
        if x == v2:
            return False
        dev = x - v2 if x > v2 else v2 - x
        if dev <= self._gate_floor_c:
            return False
        # MAD of five: deviations from the median v2 are 0 and two sorted
        # pairs (m - v1 <= m - v0) and (v3 - m <= v4 - m); the MAD is the
        # smaller of the pairs' second-smallest candidates.
        d1 = v2 - v1
        d3 = v3 - v2
        if d1 <= d3:
            d0 = v2 - v0
            mad = d0 if d0 < d3 else d3
        else:
            d4 = v4 - v2
            mad = d4 if d4 < d1 else d1
        return dev > self._gate_mad * mad

    def __repr__(self):
        return ("ReadingGuard(min_c=%r, max_c=%r, quantum_c=%r, spike_window=%r, spike_k=%r, "
                "accepted=%d, rejected=%d)" % (self.min_c, self.max_c, self.quantum_c,
                                               self.spike_window, self.spike_k,
                                               self.accepted, self.rejected))


def _is_number(x):
    """True for int and float values (bool excluded); comparisons only."""
    t = type(x)
    return t is float or t is int


def _finite(x):
    """True for a finite int or float."""
    return _is_number(x) and x == x and x != _INF and x != _NEG_INF
