"""Fixed-size saved-state blob: header, payload and CRC-32, for deep sleep.

Layout (little-endian, :data:`BLOB_SIZE` = 512 bytes in total: the RTC user
memory of the smallest common boards)::

    offset  size  field
    0       2     magic b"tT"
    2       1     layout version (:data:`LAYOUT_VERSION`)
    3       1     zero
    4       4     settings key: a CRC-32 of every setting of the owner (a blob
                  of an estimator configured otherwise is refused)
    8       500   payload (each part of the owner packs its own bytes; unused
                  bytes are zero)
    508     4     CRC-32 (IEEE, :mod:`tinytherm.crc`) of bytes 0..507

The estimator packs its payload with ``struct.pack_into`` at
:data:`PAYLOAD_OFFSET`; this module writes and checks the frame. Checking
never raises: it returns one of the ``RESTORE_*`` codes below.
"""
import struct

from tinytherm.crc import crc32

BLOB_SIZE = 512
MAGIC = b"tT"
LAYOUT_VERSION = 7  # 7: no heater, a measured air: the regression's air column (flag 128)
#   (6: the extreme as its block's integer sum and the settle reading; 5: the reading before
#   the latest, the extreme's readings, the air ahead)
PAYLOAD_OFFSET = 8
PAYLOAD_SIZE = 500
CRC_OFFSET = 508

# Results of a restore attempt; anything but RESTORED means a fresh start.
RESTORED = 0         # the blob was valid and the state is back
BLOB_LENGTH = 1      # not bytes-like, or not exactly BLOB_SIZE bytes (truncated)
BLOB_MAGIC = 2       # not a tinytherm state blob
BLOB_VERSION = 3     # written by another layout version
BLOB_CRC = 4         # the checksum does not match: corrupted
BLOB_SETTINGS = 5    # written by an estimator configured differently
BLOB_VALUES = 6      # the checksum matched but a value is impossible (NaN, negative count)

RESTORE_NAMES = (
    "restored",
    "blob_length",
    "blob_magic",
    "blob_version",
    "blob_crc",
    "blob_settings",
    "blob_values",
)


def restore_name(code):
    """Lower-case name of a restore result code; ``"unknown"`` for anything else."""
    if 0 <= code < len(RESTORE_NAMES):
        return RESTORE_NAMES[code]
    return "unknown"


def new_frame(settings, buf=None):
    """A zeroed ``bytearray`` of BLOB_SIZE with magic, version and the 32-bit settings key.

    ``buf``: a zeroed ``bytearray`` of BLOB_SIZE to write the header into (made
    earlier, while the heap was fresh); None: a new one.
    """
    if buf is None:
        buf = bytearray(BLOB_SIZE)
    buf[0] = MAGIC[0]
    buf[1] = MAGIC[1]
    buf[2] = LAYOUT_VERSION
    struct.pack_into("<I", buf, 4, settings & 0xFFFFFFFF)
    return buf


def seal(buf):
    """Write the CRC-32 of bytes 0..507 into bytes 508..511 of ``buf``; returns ``buf``."""
    struct.pack_into("<I", buf, CRC_OFFSET, crc32(buf, 0, 0, CRC_OFFSET))
    return buf


def check(blob, settings):
    """Frame check of a saved blob; a ``RESTORE_*`` code (``RESTORED`` if usable).

    Never raises, whatever ``blob`` is.
    """
    t = type(blob)
    if not (t is bytes or t is bytearray or t is memoryview):
        return BLOB_LENGTH
    if len(blob) != BLOB_SIZE:
        return BLOB_LENGTH
    if blob[0] != MAGIC[0] or blob[1] != MAGIC[1]:
        return BLOB_MAGIC
    if blob[2] != LAYOUT_VERSION:
        return BLOB_VERSION
    stored = struct.unpack_from("<I", blob, CRC_OFFSET)[0]
    if stored != crc32(blob, 0, 0, CRC_OFFSET):
        return BLOB_CRC
    if struct.unpack_from("<I", blob, 4)[0] != (settings & 0xFFFFFFFF):
        return BLOB_SETTINGS
    return RESTORED
