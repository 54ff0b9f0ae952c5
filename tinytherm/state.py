"""The estimator's saved state: one frame (:mod:`tinytherm.blob`) holding each part's bytes.

Payload (little-endian), after the frame's 8-byte header::

    offset  size  field
    0       4     accepted readings (uint32)
    4       2     sudden changes (uint16)
    6       2     turns (uint16)
    8       1     flags: fresh (1), disturbed (2), profile on (4), direction + 1
                  (bits 3-4), an ambient known at the last solve (32), a fit seeded
                  with two readings at a turn (64), the regression's air column (128:
                  no heater, a measured air; its four sums saved as a heater's)
    9       1     profile_reason
    10      8     anchor, deg C (float64)
    18      4     extreme of the block means: its block's sum of readings,
                  1/256 deg C (int32; the mean is that over the next field x 256)
    22      1     readings in the block of that extreme (uint8)
    23      4     the air ahead at the last block close, 1/65536 deg C (int32)
    27      ...   the parts in turn, each ``STATE_SIZE`` bytes: guard,
                  change detector, inputs, noise, block sums, regression, audits, settle;
                  then, with no third column in the regression (no heater, no measured
                  air), the longest audit's kept drift, deg C/s (float64; zeros in a
                  blob written before it: none kept)

The fit's solution is derived: ``restore`` solves again as at the last block
close, so an uninterrupted run and one saved and restored on every reading
give the same answers to the last bit. The air packs its own bytes; every
other part's are packed here (:func:`_pack_parts`, :func:`_unpack_parts`), so a
product that never saves does not load that code. Runs unchanged on CPython and MicroPython.
"""
import struct

try:
    from micropython import const
except ImportError:  # CPython
    def const(x):
        return x

from tinytherm import blob as bl
from tinytherm import fit
from tinytherm.answer import AUDIT_MEMORY
from tinytherm.crc import crc32
from tinytherm.settle import LIMIT_COUNTS

# (few globals, const() where it can: the module is loaded at the first save, into a heap
# in use, where a globals table of 29 slots did not fit: tests/test_long_run.py at 86K; 23
# entries, a table of 23 slots)
# readings, changes, turns, flags, profile reason, anchor, extreme's sum, its n, air ahead
_HEAD = const("<IHHBBdiBi")
HEAD_SIZE = 27
# the block sums: block and noise counts, the 64-bit sums, the 32-bit ones (the duties,
# at most fit.DUTY_SCALE, in 16 bits: with a heater the payload needs the room)
_BLOCKS = const("<HHB6q5iHiH2i")
# the guard's: 4 window values, last accepted value, held rate (float64); pending and
# repeat-run time (uint32 ms); window fill | accepted (8); rejections in a row (capped)
_GUARD = const("<ddddddIIBB")
# the change detector's: up, down, mean_abs_z
_DETECTOR = const("<ddd")
# the regression's sums in turn (the heater's four, the last, only with a heater)
_REG_NAMES = const(("w", "w2", "nb", "my", "ctt", "ctx", "cty", "cxx", "cxy", "cyy", "t", "x",
                    "v", "ctu", "cxu", "cuu", "cuy"))


def save(est):
    """The whole state as a blob of ``tinytherm.blob.BLOB_SIZE`` bytes.

    Returns the estimator's own ``bytearray``, rewritten by the next
    ``save()``: write it to RTC memory or flash, or copy it with
    ``bytes(...)``. Every value is stored exactly; the guard's per-reason
    counts and ``rejected`` count since the last restore.
    """
    while est.blocks.pending:
        est._next_step()  # (as the next readings would: the blob holds no half-done block)
    buf = frame(est)
    o = bl.PAYLOAD_OFFSET
    flags = ((0 if est.blocks.readings else 1) | (2 if est.detector.disturbed else 0)
             | (4 if est._profile_on else 0) | ((est.blocks.dir + 1) << 3)
             | (0 if est.inputs.ahead is None else 32) | (64 if est.settle.turn else 0)
             | (128 if est.reg.heater == fit.AIR_COLUMN else 0))
    struct.pack_into(_HEAD, buf, o, est.readings & 0xFFFFFFFF, est.changes & 0xFFFF,
                     est.turns & 0xFFFF, flags, est.profile_reason, est.reg.anchor,
                     est.blocks.ext_sy, est.blocks.ext_n, est.inputs.ahead or 0)
    _pack_parts(est, buf, o + HEAD_SIZE)
    return bl.seal(buf)

def frame(est):
    """The estimator's own frame (:func:`tinytherm.blob.new_frame`), its header written at
    the first save or restore: until then the estimator keeps the buffer beside the text
    of its settings, whose CRC-32 the header keeps (restore refuses other settings)."""
    buf = est._blob_buf
    if type(buf) is tuple:
        buf = est._blob_buf = bl.new_frame(crc32(buf[1].encode()), buf[0])
    return buf

def restore(est, blob):
    """Load a blob written by :meth:`save`; returns a ``tinytherm.blob`` code.

    ``blob.RESTORED`` (0) when the state is back and every value is valid.
    Anything else leaves a fresh estimator, as after :meth:`reset`. Never
    raises. Then feed the next reading with :meth:`update` and the time
    slept, or :meth:`update_ticks` with ``slept_s``.
    """
    try:
        # (the settings key, as the estimator's own frame holds it)
        code = bl.check(blob, struct.unpack_from("<I", frame(est), 4)[0])
        if code == bl.RESTORED:
            code = _unpack(est, blob)
    except MemoryError:
        raise  # not the blob's fault: a wrongly "damaged" blob would wipe the state
    except Exception:  # noqa: BLE001 - a blob must never crash the device
        code = bl.BLOB_VALUES
    if code != bl.RESTORED:
        est.reset()
    return code

def _unpack(est, blob):
    o = bl.PAYLOAD_OFFSET
    readings, changes, turns, flags, reason, anchor, ext_sy, ext_n, ahead = struct.unpack_from(
        _HEAD, blob, o)
    o += HEAD_SIZE
    direction = ((flags >> 3) & 3) - 1
    if direction > 1 or (flags & 4 and est._profile is None) or (flags & 128 and est.heater) \
            or not (-1e6 < anchor < 1e6 and 1 <= ext_n <= 255) \
            or not -LIMIT_COUNTS < ext_sy // ext_n < LIMIT_COUNTS:
        return bl.BLOB_VALUES
    est.reset()
    fit.use_air_column(est, bool(flags & 128))  # (the regression's layout as saved)
    if not _unpack_parts(est, blob, o) or (flags & 128 and not est.inputs.measured):
        return bl.BLOB_VALUES
    b = est.blocks
    # (fresh: no reading in the fit yet, the next starts one)
    if not (b.readings <= readings and bool(flags & 1) == (b.readings == 0)
            and est.guard.min_c <= b.c / fit.SCALE <= est.guard.max_c):
        return bl.BLOB_VALUES
    est.readings = readings
    est.changes = changes
    est.turns = turns
    est.profile_reason = reason
    est.detector.disturbed = bool(flags & 2)
    est._profile_on = bool(flags & 4)
    est.blocks.dir = direction
    est.reg.anchor = anchor
    est.blocks.ext_sy = ext_sy
    est.blocks.ext_n = ext_n
    est.inputs.ahead = ahead if flags & 32 else None
    est.settle.turn = bool(flags & 64)
    est.audits.done = 1
    # the solution and what follows from it are derived: as at the last block close
    est._solve()
    reg = est.reg
    if reg.ok:
        est._level_and_slope()
    elif reg.nb >= 1.5:
        return bl.BLOB_VALUES
    return bl.RESTORED


def _pack_parts(est, buf, o):
    """Each part's ``STATE_SIZE`` bytes in turn, from ``buf[o]`` (the layout's order)."""
    pack_guard(est.guard, buf, o)
    o += est.guard.STATE_SIZE
    pack_detector(est.detector, buf, o)
    o += est.detector.STATE_SIZE
    inputs = est.inputs
    if inputs.measured:
        inputs.air.pack_into(buf, o)
    else:
        for i in range(inputs.STATE_SIZE):  # (no air measured: zeros)
            buf[o + i] = 0
    o += inputs.STATE_SIZE
    struct.pack_into("<dB", buf, o, est.noise.var, est.noise.n)
    o += est.noise.STATE_SIZE
    b = est.blocks
    struct.pack_into(_BLOCKS, buf, o, b.n, b.en, b.readings, b.ix, b.iv, b.sx, b.sv, b.e2,
                     b.age_ms, b.it, b.st, b.sy, b.c, b.rc, b.uc, b.g0, b.u0, b.cb, b.cq)
    o += b.STATE_SIZE
    reg = est.reg
    for i in range(reg.STATE_SIZE // 8):
        struct.pack_into("<d", buf, o, getattr(reg, _REG_NAMES[i]))
        o += 8
    for a in est.audits.a:
        struct.pack_into("<5dB", buf, o, a.age, a.level, a.slope, a.rate, a.var, a.n)
        o += 41
    settle = est.settle
    struct.pack_into("<i", buf, o, settle.ref * 2 + (0 if settle.settled else 1))
    if not reg.heater:  # (the drift only a passive fit uses: no third column, room for it)
        struct.pack_into("<d", buf, o + 4, est.audits.a[2].drift)

def _unpack_parts(est, blob, o):
    """Load what :func:`_pack_parts` wrote into the fresh parts; False when a value is
    impossible (the caller resets)."""
    if not unpack_guard(est.guard, blob, o):
        return False
    o += est.guard.STATE_SIZE
    if not unpack_detector(est.detector, blob, o):
        return False
    o += est.detector.STATE_SIZE
    inputs = est.inputs
    if blob[o + inputs.STATE_SIZE - 1] & 1:  # (else no air was measured: its bytes are zeros)
        from tinytherm.air import Air
        air = Air()
        if not air.unpack_from(blob, o):
            return False
        inputs.air = air
        inputs.measured = True
    o += inputs.STATE_SIZE
    noise = est.noise
    var, n = struct.unpack_from("<dB", blob, o)
    if not (noise.floor <= var <= 1e6 and n <= 100):
        return False
    noise.var = var
    noise.n = n
    noise.refresh()
    o += noise.STATE_SIZE
    if not _unpack_blocks(est.blocks, blob, o):
        return False
    o += est.blocks.STATE_SIZE
    if not _unpack_reg(est.reg, blob, o):
        return False
    o += est.reg.STATE_SIZE
    if not _unpack_audits(est.audits, blob, o, est.blocks.age_ms * 0.001):
        return False
    o += est.audits.STATE_SIZE
    v = struct.unpack_from("<i", blob, o)[0]
    if not -2 * LIMIT_COUNTS < v < 2 * LIMIT_COUNTS:
        return False
    est.settle.ref = v >> 1
    est.settle.settled = not v & 1
    if not est.reg.heater:
        v = struct.unpack_from("<d", blob, o + 4)[0]
        if not -1e6 < v < 1e6:  # (NaN fails too)
            return False
        est.audits.a[2].drift = v
    return True

def pack_guard(g, buf, o):
    """A :class:`tinytherm.guard.ReadingGuard`'s dynamic state into ``buf[o:o + 58]``
    (``ReadingGuard.pack_into``)."""
    w = g._win
    n = g._win_n
    last = g._last_c
    rej = g.consecutive_rejections
    struct.pack_into(_GUARD, buf, o, w[0] if n > 0 else 0.0,
                     w[1] if n > 1 else 0.0, w[2] if n > 2 else 0.0,
                     w[3] if n > 3 else 0.0, 0.0 if last is None else last,
                     g._run_rate, g._pending_ms, g._run_ms,
                     n | (0 if last is None else 8), rej if rej < 255 else 255)

def unpack_guard(g, blob, o):
    """Load what :func:`pack_guard` wrote; True when every value is valid (temperatures within
    ``[min_c, max_c]``, the window fill within the window, unused slots 0, a finite rate
    >= 0, times within their cap); on False the guard is unchanged (the caller resets). On
    True the counts restart from 0 and there is no tick reference (``slept_s`` of
    ``check_ticks``)."""
    vals = struct.unpack_from(_GUARD, blob, o)
    last, rate, pending, run, flags, rej = vals[4:]
    n = flags & 7
    accepted = flags & 8
    lo = g.min_c
    hi = g.max_c
    cap = g.restart_gap_ms + 1000
    if flags > 15 or n > (g.spike_window - 1 if g.spike_window else 0):
        return False
    for i in range(4):
        if not (lo <= vals[i] <= hi if i < n else vals[i] == 0.0):
            return False
    # (x - x == 0.0: finite, as num.finite for a float; an import fewer keeps this module's
    # table at 23 slots: it is loaded at the first save, into a heap in use)
    if not (rate - rate == 0.0 and rate >= 0.0 and pending <= cap and run <= cap):
        return False
    if not (lo <= last <= hi if accepted else last == 0.0 and pending == 0 and run == 0):
        return False
    g.reset()
    for i in range(4):
        g._win[i] = vals[i]
    g._win_n = n
    g._last_c = last if accepted else None
    g._run_rate = rate
    g._pending_ms = pending
    g._run_ms = run
    g.consecutive_rejections = rej
    return True

def pack_detector(d, buf, o):
    """A :class:`tinytherm.change.ChangeDetector`'s two sums and scale into ``buf[o:o + 24]``
    (``ChangeDetector.pack_into``)."""
    struct.pack_into(_DETECTOR, buf, o, d.up, d.down, d.mean_abs_z)

def unpack_detector(d, blob, o):
    """Load what :func:`pack_detector` wrote; True when every value is valid: both sums
    finite in ``[0, threshold]`` (an alarm empties them), the scale finite and >= 0. On
    False nothing changes (the caller resets). The counts (``readings``, ``alarms``) are
    not saved and ``last_direction`` starts at 0."""
    up, down, scale = struct.unpack_from(_DETECTOR, blob, o)
    if not (0.0 <= up <= d.threshold and 0.0 <= down <= d.threshold
            and scale - scale == 0.0 and scale >= 0.0):  # (finite: as above)
        return False
    d.reset()
    d.up = up
    d.down = down
    d.mean_abs_z = scale
    return True

def _unpack_blocks(b, blob, o):
    (n, en, readings, ix, iv, sx, sv, e2, age, it, st, sy, c, rc, uc, g0, u0,
     cb, cq) = struct.unpack_from(_BLOCKS, blob, o)
    if not (0 <= n <= fit.MAX_BLOCK_READINGS and 0 <= it <= age and 0 <= uc <= fit.DUTY_SCALE
            and 0 <= u0 <= fit.DUTY_SCALE and 0 <= en <= n and e2 >= 0 and st >= 0
            and n <= readings):
        return False
    b.n, b.en, b.readings, b.it, b.ix, b.iv = n, en, readings, it, ix, iv
    b.st, b.sx, b.sv, b.sy, b.e2, b.age_ms = st, sx, sv, sy, e2, age
    b.c, b.rc, b.uc, b.g0, b.u0 = c, rc, uc, g0, u0
    b.cb = cb
    b.cq = cq
    return True

def _unpack_reg(reg, blob, o):
    saved = reg.STATE_SIZE // 8
    for i in range(saved):
        v = struct.unpack_from("<d", blob, o + 8 * i)[0]
        if not -1e15 <= v <= 1e15:  # (NaN fails too)
            return False
    for i in range(saved):
        setattr(reg, _REG_NAMES[i], struct.unpack_from("<d", blob, o)[0])
        o += 8
    return (reg.w >= 0.0 and reg.w2 >= 0.0 and reg.nb >= 0.0 and reg.ctt >= 0.0
            and reg.cxx >= 0.0 and reg.cyy >= 0.0 and (not reg.heater or reg.cuu >= 0.0))

def _unpack_audits(audits, blob, o, age_s):
    for a in audits.a:
        age, level, slope, rate, var, n = struct.unpack_from("<5dB", blob, o)
        o += 41
        # (a float32 device rounds the age: allow a few ulps beyond the fit's)
        if not (-1.0 <= age <= age_s * 1.000001 + 0.001 and 0.0 <= var <= 100.0
                and n <= AUDIT_MEMORY and -1e6 < level < 1e6 and -1e6 < slope < 1e6
                and -1e6 < rate < 1e6):
            return False
        a.age, a.level, a.slope, a.rate, a.var, a.n = age, level, slope, rate, var, n
    return True
