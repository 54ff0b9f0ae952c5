"""Pure-Python CRC-32 (IEEE 802.3), the same checksum as ``binascii.crc32``.

``binascii.crc32`` is missing on some MicroPython ports, so the saved-state
blob carries this one. Parameters: polynomial 0x04C11DB7 processed reflected
(0xEDB88320), initial value 0xFFFFFFFF, final XOR 0xFFFFFFFF; the check value
for ``b"123456789"`` is 0xCBF43926 (the standard CRC-32 catalogue value).

The running register is kept as two 16-bit halves and the table is indexed by
nibble (16 entries), so every intermediate value is a small integer even on
ports whose small integers are only 31 bits wide; only the 32-bit value passed
in and the one returned may need a long integer there.
"""

# CRC of each nibble 0..15 through four reflected shifts, split in halves:
# entry i is (_HIGH[i] << 16) | _LOW[i].
_HIGH = (0x0000, 0x1DB7, 0x3B6E, 0x26D9, 0x76DC, 0x6B6B, 0x4DB2, 0x5005,
         0xEDB8, 0xF00F, 0xD6D6, 0xCB61, 0x9B64, 0x86D3, 0xA00A, 0xBDBD)
_LOW = (0x0000, 0x1064, 0x20C8, 0x30AC, 0x4190, 0x51F4, 0x6158, 0x713C,
        0x8320, 0x9344, 0xA3E8, 0xB38C, 0xC2B0, 0xD2D4, 0xE278, 0xF21C)


def crc32(data, value=0, start=0, end=None):
    """CRC-32 of ``data[start:end]`` (bytes, bytearray or memoryview), as an int.

    ``value`` continues a previous result, as in ``binascii.crc32(data, value)``.
    ``start``/``end`` select a slice without copying it.
    """
    if end is None:
        end = len(data)
    value = value ^ 0xFFFFFFFF
    hi = value >> 16
    lo = value & 0xFFFF
    high = _HIGH
    low = _LOW
    for i in range(start, end):
        byte = data[i]
        # low nibble, then high nibble: crc = T[(crc ^ nib) & 15] ^ (crc >> 4)
        n = (lo ^ byte) & 0x0F
        lo = ((lo >> 4) | ((hi & 0x0F) << 12)) ^ low[n]
        hi = (hi >> 4) ^ high[n]
        n = (lo ^ (byte >> 4)) & 0x0F
        lo = ((lo >> 4) | ((hi & 0x0F) << 12)) ^ low[n]
        hi = (hi >> 4) ^ high[n]
    return ((hi << 16) | lo) ^ 0xFFFFFFFF
