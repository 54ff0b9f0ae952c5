"""Coverage-guided fuzzing of VesselProfile.from_blob and the constructor (atheris / libFuzzer).

Run as a script (not collected by pytest; tests/test_profile_properties.py runs
a short bounded run)::

    .venv/bin/python tests/fuzz_profile.py -atheris_runs=200000 [CORPUS_DIR ...]

Each case is raw bytes. Bit 0 of the first byte picks the half:

- 0, the reader: bits 1-4 pick the carrier of the remaining bytes (bytes,
  bytearray, memoryview, a strided view, or a memoryview of an array of one
  of 12 item formats); bit 5 reseals the CRC of a 54-byte body so that the
  fuzzer gets past the checksum to the flags and range checks; bit 6 makes
  the array carriers hold one item per byte of the body (54 bytes become a
  view of 54 doubles, 432 bytes) instead of the raw bytes;
- 1, the constructor: the remaining bytes drive a FuzzedDataProvider that
  picks, per argument, to leave it out or pass a number in its range, any
  float (NaN, infinities), an int (huge ones too), a bool, None, a string,
  or a list/tuple of 0-6 such items.

The promises (tests/profile_checks.py): from_blob never raises and answers
only with REASON_* codes, a blob read OK writes back byte for byte; the
constructor raises only ValueError naming an argument, and a profile it
builds is valid and survives its own blob. A *finding* is a broken promise;
findings are counted (not fatal) and the figures printed at the end: cases
run, findings, distinct findings, and how the cases were answered.
Without a corpus directory the script seeds a scratch one with good blobs in
each carrier and a constructor case; libFuzzer writes new inputs into the
first directory given.
"""
import array
import os
import struct
import tempfile

import atheris
from fuzz_launch import fuzz, record_finding

with atheris.instrument_imports():
    from profile_checks import ARG_NAMES, check_args, check_blob
    from tinytherm import crc
    from tinytherm import profile as pr

STATS = {"cases": 0, "findings": 0, "blob_ok": 0, "blob_rejected": 0, "built": 0,
         "refused": 0}
DISTINCT = {}
BY_KIND = {}
WORK = tempfile.mkdtemp(prefix="tinytherm-fuzz-profile-")
ITEM_CODES = "bBhHiIlLqQfd"
RANGES = ((1e-7, 1.0), (0.0, 5.0), (-50.0, 50.0), (0.0, 50.0), (-10.0, 10.0), (0.0, 10.0),
          (0.0, 3600.0), (0.25, 4.0), (-30.0, 30.0), (-30.0, 30.0))


def _finding(kind, text, data):
    BY_KIND[kind] = BY_KIND.get(kind, 0) + 1
    record_finding(STATS, DISTINCT, (kind, text[:80]), data, 120)


def _carrier(kind, body, per_byte):
    """The body in one of 16 carriers (see the module docstring)."""
    if kind == 0:
        return bytes(body)
    if kind == 1:
        return bytearray(body)
    if kind == 2:
        return memoryview(body)
    if kind == 3:
        return memoryview(bytes(body))[::2]
    code = ITEM_CODES[(kind - 4) % len(ITEM_CODES)]
    if per_byte:            # one item per byte: 54 doubles holding the bytes' values
        signed = code == "b"           # a signed char holds -128..127
        return memoryview(array.array(code, [v - 256 if signed and v > 127 else v
                                             for v in body]))
    size = array.array(code).itemsize
    return memoryview(array.array(code, bytes(body[:len(body) - len(body) % size])))


def _value(fdp, lo, hi):
    """One argument value: in range, any float, int, huge int, bool, None, str or junk."""
    pick = fdp.ConsumeIntInRange(0, 9)
    if pick <= 2:
        return fdp.ConsumeFloatInRange(lo, hi)
    if pick == 3:
        return fdp.ConsumeFloat()
    if pick == 4:
        return fdp.ConsumeInt(fdp.ConsumeIntInRange(1, 8))
    if pick == 5:
        return 10 ** 400 if fdp.ConsumeBool() else -10 ** 400
    if pick == 6:
        return fdp.ConsumeBool()
    if pick == 7:
        return None
    if pick == 8:
        return fdp.ConsumeUnicodeNoSurrogates(4)
    return (object(), [], {}, b"1", 1j)[fdp.ConsumeIntInRange(0, 4)]


def _kwargs(data):
    fdp = atheris.FuzzedDataProvider(data)
    kw = {}
    for i, name in enumerate(ARG_NAMES):
        how = fdp.ConsumeIntInRange(0, 3)
        if how == 0:
            continue                     # left out: its default
        if name == "heater":
            kw[name] = (True, False, 0, 1, 2, "no", None, 1.0)[fdp.ConsumeIntInRange(0, 7)] \
                if how < 3 else _value(fdp, 0.0, 1.0)
        elif name.startswith("log_q_"):
            lo, hi = RANGES[i - 1]
            n = 4 if how < 3 else fdp.ConsumeIntInRange(0, 6)
            items = [fdp.ConsumeFloatInRange(lo, hi) if how == 1 else _value(fdp, lo, hi)
                     for _ in range(n)]
            if name == "log_q_low" and how == 1:
                items = [-abs(v) for v in items]         # below any high table drawn alike
            elif how == 1:
                items = [abs(v) for v in items]
            kw[name] = tuple(items) if fdp.ConsumeBool() else items
        else:
            lo, hi = RANGES[i - 1]
            kw[name] = fdp.ConsumeFloatInRange(lo, hi) if how == 1 else _value(fdp, lo, hi)
    return kw


def one_case(data):
    """Run one fuzz case (bytes); record findings, never raise."""
    STATS["cases"] += 1
    mode = data[0] if data else 0
    body = bytearray(data[1:])
    if mode & 1 == 0:
        if mode & 32 and len(body) == pr.PROFILE_SIZE:
            struct.pack_into("<I", body, 50, crc.crc32(body, 0, 0, 50))
        finding, code = check_blob(_carrier((mode >> 1) & 15, body, mode & 64))
        STATS["blob_ok" if code == pr.REASON_OK else "blob_rejected"] += 1
        if finding is not None:
            _finding("blob", finding, data)
        return
    finding, built = check_args(_kwargs(bytes(body)))
    STATS["built" if built else "refused"] += 1
    if finding is not None:
        _finding("args", finding, data)


def report():
    print("fuzz_profile: cases run %d, findings %d (distinct %d); blobs read OK %d, "
          "rejected %d; profiles built %d, refused %d"
          % (STATS["cases"], STATS["findings"], len(DISTINCT), STATS["blob_ok"],
             STATS["blob_rejected"], STATS["built"], STATS["refused"]), flush=True)
    if BY_KIND:
        print("  findings by half: %s" % ", ".join("%s %d" % kv for kv in sorted(BY_KIND.items())),
              flush=True)
    for (kind, text), sample in list(DISTINCT.items())[:10]:
        print("  %s: %s  input %r" % (kind, text, sample), flush=True)


def seed_corpus(folder):
    """Good blobs in every carrier (CRC as written and resealed) and two constructor cases."""
    good = pr.VesselProfile(heater=True, rate_per_s=1.0 / 700.0, rate_log_sd=0.3,
                            eq_offset_c=-1.0, gain_k_per_s=0.05, probe_lag_s=6.0,
                            rate_exponent=1.2).to_blob()
    for kind in range(16):
        for extra in (0, 32, 64):
            with open(os.path.join(folder, "blob_%d_%d" % (kind, extra)), "wb") as handle:
                handle.write(bytes([(kind << 1) | extra]) + good)
    with open(os.path.join(folder, "defaults"), "wb") as handle:
        handle.write(b"\x01")
    with open(os.path.join(folder, "all_in_range"), "wb") as handle:
        handle.write(b"\x01" + bytes(range(256)))


def main():
    # a blob is 54 bytes; 11 arguments need a few hundred
    fuzz(one_case, WORK, report, seed_corpus, 512)


if __name__ == "__main__":
    main()
