"""Property tests (hypothesis, CPython) of VesselProfile's reader and constructor under any input.

The promises are written once in tests/profile_checks.py: ``from_blob`` never
raises and answers only with ``REASON_*`` codes (a blob read OK writes back
byte for byte); the constructor raises only ``ValueError`` naming an argument,
and what it builds is valid and survives the device format. Hypothesis draws
bytes, bytearrays and memoryviews of every item format, near-valid blobs (a
good blob with bytes changed, CRC resealed or not) and arbitrary argument
values, with a fixed seed (``derandomize``) so every run draws the same cases.
The same loop of odd inputs runs under MicroPython in tests/core/test_profile.py;
the coverage-guided fuzz target is tests/fuzz_profile.py (a short run below).
"""
import array
import os
import re
import struct
import subprocess
import sys

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as hs

from profile_checks import ARG_NAMES, FAIL_CODES, check_args, check_blob
from tinytherm import crc
from tinytherm import profile as pr
from tinytherm.profile import VesselProfile

HERE = os.path.dirname(os.path.abspath(__file__))
SETTINGS = settings(max_examples=400, deadline=None, derandomize=True,
                    suppress_health_check=[HealthCheck.too_slow])

# --------------------------------------------------------------- valid profiles
QUANT_PAIR = hs.lists(hs.floats(-30.0, 30.0), min_size=2, max_size=2).map(sorted)


@hs.composite
def valid_kwargs(draw):
    heater = draw(hs.booleans())
    low_high = [draw(QUANT_PAIR) for _ in range(4)]
    return dict(heater=heater if draw(hs.booleans()) else int(heater),
                rate_per_s=draw(hs.floats(1e-7, 1.0)), rate_log_sd=draw(hs.floats(0.0, 5.0)),
                eq_offset_c=draw(hs.floats(-50.0, 50.0)),
                eq_offset_sd_c=draw(hs.floats(0.0, 50.0)),
                gain_k_per_s=draw(hs.floats(-10.0, 10.0)) if heater else 0.0,
                gain_rel_sd=draw(hs.floats(0.0, 10.0)), probe_lag_s=draw(hs.floats(0.0, 3600.0)),
                rate_exponent=draw(hs.floats(0.25, 4.0)),
                log_q_low=[p[0] for p in low_high], log_q_high=tuple(p[1] for p in low_high))


# ------------------------------------------------------------------ blobs
def _wrap(data, how):
    if how == 0:
        return bytes(data)
    if how == 1:
        return bytearray(data)
    return memoryview(bytes(data))


@hs.composite
def near_valid_blob(draw):
    """A good blob with up to 3 bytes changed, the CRC resealed or not, in any wrapper."""
    buf = bytearray(VesselProfile(**draw(valid_kwargs())).to_blob())
    for _ in range(draw(hs.integers(0, 3))):
        buf[draw(hs.integers(0, pr.PROFILE_SIZE - 1))] = draw(hs.integers(0, 255))
    if draw(hs.booleans()):
        struct.pack_into("<I", buf, 50, crc.crc32(buf, 0, 0, 50))
    return _wrap(buf, draw(hs.integers(0, 2)))


@hs.composite
def typed_view(draw):
    """A memoryview of an array of any item format over drawn raw bytes."""
    code = draw(hs.sampled_from("bBhHiIlLqQfd"))
    size = array.array(code).itemsize
    items = draw(hs.integers(0, 2 * pr.PROFILE_SIZE // size + 2))
    return memoryview(array.array(code, draw(hs.binary(min_size=items * size,
                                                       max_size=items * size))))


@hs.composite
def odd_view(draw):
    """CPython-only views: strided, 2-D, 0-D, released."""
    data = bytearray(draw(hs.binary(max_size=3 * pr.PROFILE_SIZE)))
    kind = draw(hs.integers(0, 3))
    if kind == 0:
        return memoryview(data)[::draw(hs.integers(1, 3))]
    if kind == 1:
        rows = draw(hs.integers(1, 3))
        if not data:
            return memoryview(data)
        return memoryview(data * rows).cast("B", (rows, len(data)))
    if kind == 2:
        return memoryview(array.array("d", [1.0])).cast("B").cast("d", ())
    view = memoryview(data)
    view.release()
    return view


ANY_BLOB = hs.one_of(
    hs.tuples(hs.binary(max_size=2 * pr.PROFILE_SIZE), hs.integers(0, 2)).map(
        lambda t: _wrap(t[0], t[1])),
    hs.binary(min_size=pr.PROFILE_SIZE, max_size=pr.PROFILE_SIZE).map(bytearray),
    near_valid_blob(), near_valid_blob(), typed_view(), odd_view(),
    hs.none(), hs.integers(), hs.floats(), hs.text(max_size=60), hs.booleans(),
    hs.lists(hs.integers(0, 255), max_size=60),
    hs.lists(hs.integers(0, 255), max_size=60).map(tuple),
)


@SETTINGS
@given(ANY_BLOB)
def test_from_blob_never_raises_and_answers_only_with_reason_codes(blob):
    finding, code = check_blob(blob)
    assert finding is None, finding
    assert code == pr.REASON_OK or code in FAIL_CODES


@SETTINGS
@given(valid_kwargs())
def test_every_valid_profile_survives_its_blob(kw):
    assert check_args(kw) == (None, True)
    # the blob is the same whichever bytes-like wrapper carries it
    blob = VesselProfile(**kw).to_blob()
    for carrier in (bytearray(blob), memoryview(blob), memoryview(array.array("H", blob))):
        assert VesselProfile.from_blob(carrier)[0].to_blob() == blob


# -------------------------------------------------------------- constructor
NUMBERISH = hs.one_of(hs.floats(), hs.floats(-100.0, 100.0), hs.floats(0.0, 1.0),
                      hs.integers(-10, 10), hs.integers(), hs.just(10 ** 400),
                      hs.just(-10 ** 400), hs.booleans())
JUNK = hs.one_of(hs.none(), hs.text(max_size=8), hs.binary(max_size=8), hs.just(object()),
                 hs.just({}), hs.just(set()), hs.just(complex(1.0, 0.0)))
ITEM = hs.one_of(NUMBERISH, NUMBERISH, JUNK)
TABLE = hs.one_of(hs.lists(ITEM, min_size=4, max_size=4), hs.lists(ITEM, max_size=6).map(tuple),
                  hs.lists(hs.floats(-1.0, 1.0), min_size=4, max_size=4).map(sorted))
ANY_VALUE = hs.one_of(NUMBERISH, NUMBERISH, JUNK, TABLE)


@SETTINGS
@given(valid_kwargs(), hs.dictionaries(hs.sampled_from(ARG_NAMES), ANY_VALUE, max_size=4))
def test_constructor_raises_only_value_error_naming_an_argument(base, changes):
    base.update(changes)
    finding, _ = check_args(base)
    assert finding is None, finding


@SETTINGS
@given(hs.sampled_from(ARG_NAMES), hs.one_of(JUNK, hs.just(float("nan")), hs.just(float("inf")),
                                             hs.just(10 ** 400), hs.just(True), hs.just("0")))
def test_one_bad_argument_is_the_one_named(name, bad):
    if (name == "heater" and bad is True) or (name.startswith("log_q_") and bad is None):
        return                                  # valid: a heater, or the default table
    try:
        VesselProfile(**{name: bad})
    except ValueError as exc:
        assert name in str(exc), (name, bad, str(exc))
    else:
        raise AssertionError("accepted %s=%r" % (name, bad))


# ------------------------------------------------------------ the fuzz target
def test_short_fuzz_run_finds_nothing():
    proc = subprocess.run([sys.executable, os.path.join(HERE, "fuzz_profile.py"),
                           "-atheris_runs=3000", "-seed=2718"], cwd=os.path.dirname(HERE),
                          capture_output=True, text=True, timeout=300)
    out = proc.stdout + proc.stderr
    m = re.search(r"fuzz_profile: cases run (\d+), findings (\d+) \(distinct (\d+)\); "
                  r"blobs read OK (\d+), rejected (\d+); profiles built (\d+), refused (\d+)", out)
    assert m, out[-2000:]
    cases, findings, _, blob_ok, blob_bad, built, refused = map(int, m.groups())
    assert proc.returncode == 0, out[-2000:]
    assert cases == 3000 and findings == 0, out[-2000:]
    assert blob_ok + blob_bad + built + refused == cases
    # both halves ran, and each reached both of its answers
    assert min(blob_ok, blob_bad, built, refused) > 0, m.group(0)
