"""The estimator's saved state: one frame (:mod:`tinytherm.blob`), each part packing its own bytes.

Payload (little-endian), after the frame's 8-byte header::

    offset  size  field
    0       4     accepted readings (uint32)
    4       2     sudden changes (uint16)
    6       2     turns (uint16)
    8       1     flags: fresh (1), disturbed (2), profile on (4), direction + 1
                  (bits 3-4), an ambient known at the last solve (32), a fit seeded
                  with two readings at a turn (64)
    9       1     profile_reason
    10      8     anchor, deg C (float64)
    18      4     extreme of the block means: its block's sum of readings,
                  1/256 deg C (int32; the mean is that over the next field x 256)
    22      1     readings in the block of that extreme (uint8)
    23      4     the air ahead at the last block close, 1/65536 deg C (int32)
    27      ...   the parts in turn, each ``STATE_SIZE`` bytes: guard,
                  change detector, inputs, noise, block sums, regression, audits, settle

The fit's solution is derived: ``restore`` solves again as at the last block
close, so an uninterrupted run and one saved and restored on every reading
give the same answers to the last bit. Runs unchanged on CPython and MicroPython.
"""
import struct

from tinytherm import blob as bl
from tinytherm.crc import crc32
from tinytherm.fit import SCALE
from tinytherm.settle import LIMIT_COUNTS

# readings, changes, turns, flags, profile reason, anchor, extreme's sum, its n, air ahead
_HEAD = "<IHHBBdiBi"
HEAD_SIZE = 27
_INV = 1.0 / SCALE


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
             | (0 if est.inputs.ahead is None else 32) | (64 if est.settle.turn else 0))
    struct.pack_into(_HEAD, buf, o, est.readings & 0xFFFFFFFF, est.changes & 0xFFFF,
                     est.turns & 0xFFFF, flags, est.profile_reason, est.reg.anchor,
                     est.blocks.ext_sy, est.blocks.ext_n, est.inputs.ahead or 0)
    o += HEAD_SIZE
    for part in parts(est):
        part.pack_into(buf, o)
        o += part.STATE_SIZE
    return bl.seal(buf)

def frame(est):
    """The estimator's own frame (:func:`tinytherm.blob.new_frame`), its header written at
    the first save or restore: until then the estimator keeps the buffer beside the text
    of its settings, whose CRC-32 the header keeps (restore refuses other settings)."""
    buf = est._blob_buf
    if type(buf) is tuple:
        buf = est._blob_buf = bl.new_frame(crc32(buf[1].encode()), buf[0])
    return buf

def parts(est):
    return (est.guard, est.detector, est.inputs, est.noise, est.blocks, est.reg,
            est.audits, est.settle)

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
    if flags & 0x80 or direction > 1 or (flags & 4 and est._profile is None) \
            or not (-1e6 < anchor < 1e6 and 1 <= ext_n <= 255) \
            or not -LIMIT_COUNTS < ext_sy // ext_n < LIMIT_COUNTS:
        return bl.BLOB_VALUES
    est.reset()
    for part in parts(est):
        if part is est.audits:
            ok = part.unpack_from(blob, o, est.blocks.age_ms * 0.001)
        else:
            ok = part.unpack_from(blob, o)
        if not ok:
            return bl.BLOB_VALUES
        o += part.STATE_SIZE
    b = est.blocks
    # (fresh: no reading in the fit yet, the next starts one)
    if not (b.readings <= readings and bool(flags & 1) == (b.readings == 0)
            and est.guard.min_c <= b.c * _INV <= est.guard.max_c):
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
