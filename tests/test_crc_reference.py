"""tinytherm.crc against the reference implementation zlib.crc32 (CPython only)."""
import random
import zlib

from tinytherm.crc import crc32


def test_matches_zlib_on_random_data():
    rng = random.Random(1234)
    for n in list(range(0, 70)) + [127, 128, 255, 1000]:
        data = bytes(rng.getrandbits(8) for _ in range(n))
        assert crc32(data) == zlib.crc32(data), n


def test_matches_zlib_with_running_value():
    rng = random.Random(99)
    value = 0
    ref = 0
    for _ in range(50):
        chunk = bytes(rng.getrandbits(8) for _ in range(rng.randrange(0, 20)))
        value = crc32(chunk, value)
        ref = zlib.crc32(chunk, ref)
        assert value == ref
