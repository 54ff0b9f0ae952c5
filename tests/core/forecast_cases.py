"""Hostile-input cases for the forecast, the planner and the model (both runtimes).

One *scenario* builds a Forecast (or a ReadyByPlanner) from seeded hostile
numbers (zero, denormals, 1e-320..1e308 either sign, the largest float, now and
then a non-number such as None, "20", [1.0], 10**400, NaN, inf), sets an
ambient schedule and a heater plan, and makes several *calls* of the
never-raise methods, checking every promise each one makes:

* no exception from a never-raise method (a setter may refuse an argument
  with ValueError, its documented answer; any other exception is a failure);
* ``temperature_at_c``: a finite number when ``reason`` is REASON_NONE, NaN
  otherwise, never an infinity;
* ``time_to_target_s``: None or a finite time >= 0 that agrees with
  ``status``/``eta_s``; ``searched_s`` finite; ``work`` an int in
  [0, MAX_PIECES];
* planner methods: a status code, and every answer either None or finite
  (``duty`` in [0, 1], times >= 0, the start inside the deadline);
* work truly reported: breakpoint schedules are counting sequences, and the
  element reads of one call divided by ``work + 1`` is recorded (it must stay
  bounded by a constant, whatever the number of breakpoints; a planner call
  is checked against its own ``work``, the sum over its forecast runs, capped
  at ``2 * MAX_PIECES``).

Model functions (``tinytherm.model``) get finite hostile numbers inside their
documented domain (duty in [0, 1], ``k >= 0``, ``t >= 0``; any other
argument anything finite): no exception except the documented ValueError,
no NaN; infinities (an answer beyond the largest float, or ``1/k`` for
``k <= 0``) are counted apart (see ``model_check``).

Used by tests/core/test_forecast_hostile.py (a few hundred cases, both
runtimes) and benchmarks/fuzz_forecast.py (the million-case run).
Only ``math`` is imported: this runs under MicroPython too.
"""
import math

from tinytherm import model, status
from tinytherm.forecast import (
    MAX_PIECES,
    REASON_NONE,
    Forecast,
    AmbientTracker,
)
from tinytherm.planner import ReadyByPlanner

INF = math.inf
BIG = 1.7976931348623157e308
SPECIALS = (0.0, -0.0, 5e-324, 1e-320, 2.2250738585072014e-308, 1e-200, 1e-13, 1e12,
            1e154, 1e300, 1e308, BIG)
JUNK = (None, "20", [1.0], 10 ** 400, True, math.nan, INF, -INF, b"1", (2.0,))


class CountingSeq:
    """Read-only sequence that counts element reads (a schedule 'read in place')."""

    def __init__(self, items):
        self.items = items
        self.reads = 0

    def __len__(self):
        return len(self.items)

    def __getitem__(self, i):
        self.reads += 1
        return self.items[i]


class Repeat:
    """``n`` copies of one value without storing them (n coincident breakpoints)."""

    def __init__(self, n, value):
        self.n = n
        self.value = value
        self.reads = 0

    def __len__(self):
        return self.n

    def __getitem__(self, i):
        if i < 0:
            i += self.n
        if not 0 <= i < self.n:
            raise IndexError("Repeat index out of range")
        self.reads += 1
        return self.value


def hostile(rng, signed=True):
    """A finite float from a spread meant to break arithmetic (see module doc)."""
    r = rng.next_u32() % 10
    if r == 0:
        x = SPECIALS[rng.next_u32() % len(SPECIALS)]
    elif r == 1:
        x = 5e-324 * (1 + rng.next_u32() % 1000)  # denormal
    elif r <= 3:
        x = math.pow(10.0, rng.uniform(-320.0, -3.0))
    elif r <= 6:
        x = rng.uniform(-200.0, 200.0)
    else:
        x = math.pow(10.0, rng.uniform(3.0, 308.25))
    if signed and rng.next_u32() & 1:
        x = -x
    if not signed:
        x = abs(x)
    return x


def moderate(rng, signed=True):
    """A float of everyday size (|x| <= 200, or 1e-6..1e6): swap in for ``hostile``."""
    if rng.next_u32() & 1:
        x = rng.uniform(-200.0, 200.0)
    else:
        x = math.pow(10.0, rng.uniform(-6.0, 6.0))
        if signed and rng.next_u32() & 1:
            x = -x
    return x if signed else abs(x)


def maybe_junk(rng, x, p_in_256=6):
    """``x``, or now and then a non-number / non-finite value."""
    if rng.next_u32() % 256 < p_in_256:
        return JUNK[rng.next_u32() % len(JUNK)]
    return x


def duty_value(rng):
    r = rng.next_u32() % 6
    if r == 0:
        return 0.0
    if r == 1:
        return 1.0
    if r == 2:
        return 5e-324 * (1 + rng.next_u32() % 7)
    if r == 3:
        return math.pow(10.0, rng.uniform(-320.0, 0.0))
    return rng.uniform(0.0, 1.0)


def times_list(rng, n):
    """Non-decreasing breakpoint times, often with coincident ones."""
    t = hostile(rng)
    out = [0.0] * n
    i = 0
    while i < n:
        out[i] = t
        r = rng.next_u32() % 4
        if r == 1:
            step = abs(hostile(rng))
            if math.isfinite(t + step):
                t = t + step
        elif r >= 2:
            t = t + rng.uniform(0.0, 2000.0)
        i += 1
    return out


class Stats:
    """Counters of a fuzz run (plain attributes: both runtimes)."""

    def __init__(self):
        self.scenarios = 0
        self.calls = 0
        self.refused = 0        # setter refused an argument with ValueError
        self.exceptions = 0
        self.nonfinite = 0      # a non-finite output where finite is promised
        self.broken = 0         # another broken promise (status/answer mismatch)
        self.max_work = 0           # largest Forecast.work seen (cap MAX_PIECES)
        self.max_planner_work = 0   # largest ReadyByPlanner.work (cap 2 * MAX_PIECES)
        self.max_reads_per_work = 0.0
        self.tracked = 0        # time_to_target_s answers (TRACKING) re-checked
        self.unconfirmed = 0    # ... that temperature_at_c(eta) does not put at the target
        self.unconfirmed_examples = []
        self.model_calls = 0
        self.model_inf = 0      # model outputs that were +-inf (documented for k <= 0, or overflow)
        self.messages = []
        self.max_messages = 20
        self.hook = None        # called inside the except block (a traceback printer)

    def fail(self, kind, what):
        if kind == "exception":
            self.exceptions += 1
            if self.hook is not None:
                self.hook(what)
        elif kind == "nonfinite":
            self.nonfinite += 1
        else:
            self.broken += 1
        if len(self.messages) < self.max_messages:
            self.messages.append(kind + ": " + what)

    def failures(self):
        return self.exceptions + self.nonfinite + self.broken


def _fin(x):
    return isinstance(x, float) and x == x and x != INF and x != -INF


def _opt_fin(x):
    return x is None or _fin(x)


def _describe(label, args):
    return label + repr(args)


def _set_ambient(rng, fc, st, seqs):
    kind = rng.next_u32() % 5
    try:
        if kind == 1:
            ramp = INF if rng.next_u32() & 1 else abs(hostile(rng))
            fc.set_ambient_ramp(maybe_junk(rng, hostile(rng)), maybe_junk(rng, hostile(rng)),
                                maybe_junk(rng, ramp))
        elif kind == 2:
            n = 1 + rng.next_u32() % 8
            tt = CountingSeq(times_list(rng, n))
            vv = CountingSeq([hostile(rng) for _ in range(n)])
            if rng.next_u32() % 16 == 0:
                vv.items[rng.next_u32() % n] = maybe_junk(rng, 0.0, 256)
            fc.set_ambient_piecewise(tt, vv, maybe_junk(rng, hostile(rng)))
            seqs.append(tt)
            seqs.append(vv)
        elif kind == 3:
            fc.set_ambient_periodic(maybe_junk(rng, hostile(rng)), maybe_junk(rng, hostile(rng)),
                                    maybe_junk(rng, abs(hostile(rng))),
                                    maybe_junk(rng, hostile(rng)))
        elif kind == 4:
            fc.set_ambient_constant(maybe_junk(rng, hostile(rng)))
    except ValueError:
        st.refused += 1


def _set_plan(rng, fc, st, seqs):
    kind = rng.next_u32() % 5
    try:
        if kind == 0:
            fc.set_plan_duty(maybe_junk(rng, duty_value(rng)))
        elif kind == 1:
            n = 1 + rng.next_u32() % 8
            tt = CountingSeq(times_list(rng, n))
            dd = CountingSeq([duty_value(rng) for _ in range(n)])
            fc.set_plan_schedule(tt, dd, maybe_junk(rng, hostile(rng)))
            seqs.append(tt)
            seqs.append(dd)
        elif kind == 2:
            fc.set_plan_boost_hold(maybe_junk(rng, hostile(rng)))
        elif kind == 3:
            a = hostile(rng)
            b = a + abs(hostile(rng))
            fc.set_plan_thermostat(maybe_junk(rng, a), maybe_junk(rng, b), rng.next_u32() & 1)
    except ValueError:
        st.refused += 1


def _reads(seqs):
    n = 0
    for s in seqs:
        n += s.reads
    return n


def _reset_reads(seqs):
    for s in seqs:
        s.reads = 0


def _check_work(st, obj, seqs, label, args, cap=MAX_PIECES):
    """``obj.work`` within ``cap``; records the breakpoint reads per unit of work."""
    w = obj.work
    if not (isinstance(w, int) and 0 <= w <= cap):
        st.fail("broken", _describe(label + " work=%r " % (w,), args))
        return
    if cap == MAX_PIECES:
        if w > st.max_work:
            st.max_work = w
    elif w > st.max_planner_work:
        st.max_planner_work = w
    r = _reads(seqs) / (w + 1.0)
    if r > st.max_reads_per_work:
        st.max_reads_per_work = r


def _confirm(st, fc, eta, args):
    """Count a crossing that the forecast's own temperature_at_c does not confirm.

    Tolerance: 1e-6 of the largest magnitude in play (start, target, ambient,
    heater rise) plus the slope bound times 1e-9 of the time: an answer is
    only as good as the floats around it (a crossing 1e-200 s after the start
    at 1e280 K/s is not representable). Counted, not a failure: a figure of
    how often hostile magnitudes leave the answer unconfirmed.
    """
    start = float(args[0])
    target = float(args[1])
    k = fc.rate_per_s
    g = abs(fc.gain_k_per_s)
    am = fc.ambient
    amb = abs(am.level_c) + abs(am.amplitude_c) + abs(am.pw_lo_c) + abs(am.pw_hi_c)
    if am.kind == 1:
        amb += abs(am.slope_c_per_s) * min(eta, am.ramp_s)
    heat = g * eta
    if k > 0.0 and g / k < heat:
        heat = g / k
    scale = max(abs(start), abs(target), 1.0, amb, heat)
    slope = g
    if k > 0.0:
        slope += k * scale  # (not 0 * inf)
    st.tracked += 1
    t = fc.temperature_at_c(eta, start)
    if not (t == t and abs(t - target) <= 1e-6 * scale + slope * (1e-9 * eta + 1e-300)):
        st.unconfirmed += 1
        if len(st.unconfirmed_examples) < 5:
            st.unconfirmed_examples.append(
                _describe("eta=%r T(eta)=%r k=%r g=%r ambient kind %d plan %d " % (
                    eta, t, k, fc.gain_k_per_s, am.kind, fc.heater.kind), args))


def _call_forecast(rng, fc, st, seqs):
    """One checked call of a Forecast never-raise method."""
    which = rng.next_u32() % 4
    st.calls += 1
    _reset_reads(seqs)
    if which == 0:
        args = (maybe_junk(rng, abs(hostile(rng))), maybe_junk(rng, hostile(rng)))
        try:
            v = fc.temperature_at_c(args[0], args[1])
        except Exception as e:  # a never-raise method raised: record it
            st.fail("exception", _describe("temperature_at_c %s " % type(e).__name__, args))
            return
        if not isinstance(v, float):
            st.fail("broken", _describe("temperature_at_c type ", args))
        elif fc.reason == REASON_NONE:
            if not _fin(v):
                st.fail("nonfinite", _describe("temperature_at_c=%r " % v, args))
        elif v == v:
            st.fail("broken", _describe("temperature_at_c not NaN with a reason ", args))
        _check_work(st, fc, seqs, "temperature_at_c", args)
    elif which == 1:
        h = INF if rng.next_u32() & 1 else abs(hostile(rng))
        args = (maybe_junk(rng, hostile(rng)), maybe_junk(rng, hostile(rng)), maybe_junk(rng, h))
        try:
            v = fc.time_to_target_s(args[0], args[1], args[2])
        except Exception as e:
            st.fail("exception", _describe("time_to_target_s %s " % type(e).__name__, args))
            return
        if v is not None and not _fin(v):
            st.fail("nonfinite", _describe("time_to_target_s=%r " % v, args))
        elif not _fin(fc.searched_s):
            st.fail("nonfinite", _describe("searched_s=%r " % fc.searched_s, args))
        elif v is not None and (v < 0.0 or fc.eta_s != v
                                or fc.status not in (status.TRACKING, status.ARRIVED)):
            st.fail("broken", _describe("time_to_target_s status/eta ", args))
        elif v is None and (fc.status != status.OUT_OF_REACH or fc.reason == REASON_NONE):
            st.fail("broken", _describe("time_to_target_s None without a reason ", args))
        _check_work(st, fc, seqs, "time_to_target_s", args)
        if v is not None and fc.status == status.TRACKING:
            _confirm(st, fc, v, args)
    elif which == 2:
        try:
            v = fc.hold_is_sustainable()
        except Exception as e:
            st.fail("exception", "hold_is_sustainable " + type(e).__name__)
            return
        if v is not True and v is not False:
            st.fail("broken", "hold_is_sustainable not a bool")
    else:
        args = (maybe_junk(rng, hostile(rng)),)
        try:
            fc.ambient_at_c(args[0])
        except Exception as e:
            st.fail("exception", _describe("ambient_at_c %s " % type(e).__name__, args))


def _call_planner(rng, pl, st, seqs):
    """One checked call of a ReadyByPlanner method."""
    which = rng.next_u32() % 3
    st.calls += 1
    _reset_reads(seqs)
    d = INF if rng.next_u32() % 16 == 0 else abs(hostile(rng))
    args = (maybe_junk(rng, hostile(rng)), maybe_junk(rng, hostile(rng)), maybe_junk(rng, d))
    name = ("latest_start", "constant_duty", "cooling")[which]
    try:
        if which == 0:
            code = pl.latest_start(args[0], args[1], args[2])
        elif which == 1:
            code = pl.constant_duty(args[0], args[1], args[2])
        else:
            code = pl.cooling(args[0], args[1], args[2])
    except Exception as e:
        st.fail("exception", _describe(name + " " + type(e).__name__ + " ", args))
        return
    if code != pl.status or not isinstance(code, int):
        st.fail("broken", _describe(name + " status ", args))
    for label, v in (("start_in_s", pl.start_in_s), ("heat_for_s", pl.heat_for_s),
                     ("duty", pl.duty), ("eta_s", pl.eta_s), ("earliest_s", pl.earliest_s),
                     ("off_at_deadline_c", pl.off_at_deadline_c)):
        if not _opt_fin(v):
            st.fail("nonfinite", _describe(name + " " + label + "=%r " % (v,), args))
            return
    if pl.duty is not None and not 0.0 <= pl.duty <= 1.0:
        st.fail("broken", _describe(name + " duty=%r " % pl.duty, args))
    for v in (pl.start_in_s, pl.heat_for_s, pl.eta_s, pl.earliest_s):
        if v is not None and v < 0.0:
            st.fail("broken", _describe(name + " negative time ", args))
            break
    if pl.start_in_s is not None and not pl.start_in_s <= args[2]:
        st.fail("broken", _describe(name + " start after the deadline ", args))
    if code == status.TRACKING:
        need = (pl.start_in_s, pl.duty, pl.eta_s)[which]
        if need is None:
            st.fail("broken", _describe(name + " TRACKING without its answer ", args))
    _check_work(st, pl, seqs, name, args, 2 * MAX_PIECES)  # two forecast runs at most


def forecast_scenario(rng, st, calls=6):
    """Build one hostile Forecast or ReadyByPlanner and make ``calls`` checked calls."""
    st.scenarios += 1
    seqs = []
    planner = rng.next_u32() % 3 == 0
    try:
        if planner:
            pl = ReadyByPlanner(maybe_junk(rng, abs(hostile(rng))), maybe_junk(rng, hostile(rng)),
                                maybe_junk(rng, hostile(rng)))
            fc = pl.forecast
        else:
            fc = Forecast(maybe_junk(rng, abs(hostile(rng))), maybe_junk(rng, hostile(rng)),
                          maybe_junk(rng, hostile(rng)))
    except ValueError:
        st.refused += 1
        return
    except Exception as e:
        st.fail("exception", "constructor " + type(e).__name__)
        return
    try:
        _set_ambient(rng, fc, st, seqs)
        if not planner:
            _set_plan(rng, fc, st, seqs)
    except Exception as e:
        st.fail("exception", "setter " + type(e).__name__)
        return
    i = 0
    while i < calls:
        if planner:
            _call_planner(rng, pl, st, seqs)
        else:
            _call_forecast(rng, fc, st, seqs)
        i += 1


def tracker_scenario(rng, st, readings=8):
    """Feed an AmbientTracker hostile readings, then apply it to a Forecast."""
    st.scenarios += 1
    tr = AmbientTracker()
    fc = Forecast(1e-3, 0.0, 20.0)
    base = hostile(rng)
    i = 0
    while i < readings:
        st.calls += 1
        a = base + rng.uniform(-1.0, 1.0) * abs(hostile(rng))
        args = (maybe_junk(rng, a), maybe_junk(rng, abs(hostile(rng))))
        try:
            v = tr.update(args[0], args[1])
        except Exception as e:
            st.fail("exception", _describe("AmbientTracker.update %s " % type(e).__name__, args))
            return
        if v is not True and v is not False:
            st.fail("broken", "AmbientTracker.update not a bool")
        i += 1
    st.calls += 1
    try:
        tr.apply(fc)
    except Exception as e:
        st.fail("exception", "AmbientTracker.apply " + type(e).__name__)
        return
    st.calls += 1
    try:
        v = fc.time_to_target_s(20.0, 25.0)
    except Exception as e:
        st.fail("exception", "time_to_target_s after apply " + type(e).__name__)
        return
    if v is not None and not _fin(v):
        st.fail("nonfinite", "time_to_target_s after apply=%r" % (v,))


# model functions: (name, number of float arguments, raises ValueError by contract)
MODEL_FUNCS = (
    ("equilibrium_c", 4, False),
    ("time_constant_s", 1, False),
    ("temperature_at", 6, False),
    ("time_to_target_s", 6, False),
    ("ambient_from_three_c", 3, False),
    ("rate_from_three_per_s", 4, False),
    ("rate_from_physical_per_s", 4, True),
    ("heater_gain_k_per_s", 3, True),
    ("heating_time_s", 7, True),
    ("time_to_target_from_slope_s", 3, False),
)


def model_check(name, args, v, st):
    """Check one model result (see module doc); infinities are counted, NaN fails."""
    if v is None:
        if name in ("equilibrium_c", "time_constant_s", "temperature_at", "rate_from_physical_per_s",
                    "heater_gain_k_per_s"):
            st.fail("broken", _describe("model." + name + " returned None ", args))
        return
    if not isinstance(v, float):
        st.fail("broken", _describe("model." + name + " type ", args))
    elif v != v:
        st.fail("nonfinite", _describe("model." + name + "=nan ", args))
    elif v == INF or v == -INF:
        st.model_inf += 1


def model_call(rng, st):
    """One checked call of a model function with finite hostile numbers."""
    name, n, may_refuse = MODEL_FUNCS[rng.next_u32() % len(MODEL_FUNCS)]
    args = [hostile(rng) for _ in range(n)]
    if name in ("equilibrium_c", "temperature_at", "time_to_target_s"):
        # their documented domain: a duty in [0, 1], k >= 0 (and t >= 0)
        args[n - 1] = duty_value(rng)
        k_at = 1 if name == "equilibrium_c" else 2
        args[k_at] = abs(args[k_at])
        if name == "temperature_at":
            args[0] = abs(args[0])
    st.model_calls += 1
    st.calls += 1
    f = getattr(model, name)
    try:
        v = f(*args)
    except ValueError:
        if not may_refuse:
            st.fail("exception", _describe("model." + name + " ValueError ", tuple(args)))
        else:
            st.refused += 1
        return
    except Exception as e:
        st.fail("exception", _describe("model." + name + " " + type(e).__name__ + " ",
                                       tuple(args)))
        return
    model_check(name, tuple(args), v, st)


def run(rng, st, scenarios):
    """``scenarios`` mixed scenarios: forecasts/planners, trackers and model calls."""
    i = 0
    while i < scenarios:
        r = rng.next_u32() % 16
        if r < 11:
            forecast_scenario(rng, st)
        elif r < 12:
            tracker_scenario(rng, st)
        else:
            j = 0
            while j < 6:
                model_call(rng, st)
                j += 1
        i += 1
    return st
