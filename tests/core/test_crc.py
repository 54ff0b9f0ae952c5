"""CRC-32 checks that run on CPython and MicroPython alike."""
from support import XorShift

from tinytherm.crc import crc32


def test_standard_check_value():
    # CRC-32 (IEEE 802.3, reflected 0xEDB88320) of the ASCII digits "123456789"
    # is 0xCBF43926: the check value of the CRC catalogue (Greg Cook's
    # "Catalogue of parametrised CRC algorithms", CRC-32/ISO-HDLC).
    assert crc32(b"123456789") == 0xCBF43926


def test_empty_input_is_zero():
    # Init 0xFFFFFFFF and final XOR 0xFFFFFFFF cancel on no data
    # (same as binascii.crc32(b"") == 0).
    assert crc32(b"") == 0


def test_continuation_equals_whole():
    data = b"The quick brown fox jumps over the lazy dog"
    # Well-known CRC-32 of this pangram, 0x414FA339 (from memory; also checked
    # against zlib.crc32 in tests/test_crc_reference.py).
    assert crc32(data) == 0x414FA339
    first = crc32(data[:10])
    assert crc32(data[10:], first) == crc32(data)


def test_slice_arguments_match_copy():
    rng = XorShift(7)
    buf = bytearray(64)
    for i in range(64):
        buf[i] = rng.next_u32() & 0xFF
    assert crc32(buf, 0, 5, 40) == crc32(bytes(buf[5:40]))
    assert crc32(memoryview(buf)) == crc32(bytes(buf))


def test_single_bit_flip_changes_crc():
    rng = XorShift(11)
    buf = bytearray(32)
    for i in range(32):
        buf[i] = rng.next_u32() & 0xFF
    ref = crc32(buf)
    for i in range(32):
        for bit in range(8):
            buf[i] ^= 1 << bit
            assert crc32(buf) != ref
            buf[i] ^= 1 << bit
    assert crc32(buf) == ref
