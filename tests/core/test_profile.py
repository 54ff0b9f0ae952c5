"""VesselProfile: device blob, reasons for rejecting one, interval table, passive closed form.

Runs under CPython (pytest) and the unix micropython (tests/core/mp_run.py).
The golden blob below was written by CPython; the same bytes must come out of
``to_blob`` and be read back by ``from_blob`` on both runtimes, so a profile
frozen on the PC reads the same on the device (and the reverse: a blob written
under MicroPython is read by CPython in tests/test_profile_runtimes.py).
The closed form is checked here against its defining equation by a
fine-step RK4 integration, and against scipy's solve_ivp in
tests/test_host_calibrate.py.
Hostile input, on both runtimes: ``from_blob`` never raises on a seeded loop
of odd objects (memoryviews of every item size, random bytes with and without
a valid CRC), and the constructor refuses junk arguments with a ValueError
naming the argument. The hypothesis properties and the fuzz target for the
same promises are tests/test_profile_properties.py and tests/fuzz_profile.py.
"""
import array
import math
import struct

from support import XorShift, close
from tinytherm import crc
from tinytherm import profile as pr
from tinytherm.profile import VesselProfile

GOLDEN_HEX = ("0101b4a2913acdcc4c3e0000c0bf3333333f9a99993e9a99193e000000410000a03f"
              "70fe06ff6aff9cfff4012c01c80078005840e629")


def kettle_like():
    return VesselProfile(heater=True, rate_per_s=1.0 / 900.0, rate_log_sd=0.2, eq_offset_c=-1.5,
                         eq_offset_sd_c=0.7, gain_k_per_s=0.3, gain_rel_sd=0.15,
                         probe_lag_s=8.0, rate_exponent=1.25,
                         log_q_low=(-0.4, -0.25, -0.15, -0.1),
                         log_q_high=(0.5, 0.3, 0.2, 0.12))


def f32(x):
    return struct.unpack("<f", struct.pack("<f", x))[0]


def test_blob_is_small_and_matches_the_golden_bytes():
    blob = kettle_like().to_blob()
    assert len(blob) == pr.PROFILE_SIZE <= 64
    assert blob.hex() == GOLDEN_HEX
    # the CRC field is the CRC-32 of everything before it
    stored = struct.unpack_from("<I", blob, len(blob) - 4)[0]
    assert stored == crc.crc32(blob, 0, 0, len(blob) - 4)


def test_golden_blob_reads_back_every_field():
    prof, reason = VesselProfile.from_blob(bytes.fromhex(GOLDEN_HEX))
    assert reason == pr.REASON_OK and pr.reason_name(reason) == "ok"
    src = kettle_like()
    assert prof.heater is True
    for name in ("rate_per_s", "rate_log_sd", "eq_offset_c", "eq_offset_sd_c", "gain_k_per_s",
                 "gain_rel_sd", "probe_lag_s", "rate_exponent"):
        assert getattr(prof, name) == f32(getattr(src, name)), name
    for i in range(4):
        assert abs(prof.log_q_low[i] - src.log_q_low[i]) <= 0.0005 + 1e-12
        assert abs(prof.log_q_high[i] - src.log_q_high[i]) <= 0.0005 + 1e-12
    # a second trip through the blob is exact
    assert prof.to_blob() == bytes.fromhex(GOLDEN_HEX)


def test_round_trip_without_heater_and_default_table():
    src = VesselProfile(rate_per_s=1.0 / 2500.0, rate_log_sd=0.3, eq_offset_c=-2.25,
                        probe_lag_s=15.0, rate_exponent=1.3)
    # default table: +-z(0.9) * rate_log_sd in every bin (ln T_remaining ~ -ln k)
    assert close(src.log_q_high[2], 1.2815515655446004 * 0.3, 1e-12)
    assert src.log_q_low[0] == -src.log_q_high[0]
    prof, reason = VesselProfile.from_blob(bytearray(src.to_blob()))
    assert reason == pr.REASON_OK
    assert prof.heater is False and prof.gain_k_per_s == 0.0
    assert close(prof.rate_per_s, 1.0 / 2500.0, 1e-7)
    assert close(prof.eq_offset_c, -2.25, 0.0)
    assert abs(prof.log_q_high[1] - 0.384) < 0.0006


def _resealed(blob, offset, fmt, value):
    buf = bytearray(blob)
    struct.pack_into(fmt, buf, offset, value)
    struct.pack_into("<I", buf, 50, crc.crc32(buf, 0, 0, 50))
    return bytes(buf)


def test_bad_blobs_are_rejected_with_a_reason():
    good = bytes.fromhex(GOLDEN_HEX)
    cases = [
        (None, pr.REASON_LENGTH),
        ("0101", pr.REASON_LENGTH),
        ([1] * 54, pr.REASON_LENGTH),
        (good[:53], pr.REASON_LENGTH),
        (good + b"\x00", pr.REASON_LENGTH),
        (b"\x02" + good[1:], pr.REASON_VERSION),
        (good[:10] + bytes([good[10] ^ 0x04]) + good[11:], pr.REASON_CRC),
        (good[:52] + bytes([good[52] ^ 0x80]) + good[53:], pr.REASON_CRC),
        (_resealed(good, 1, "<B", 4), pr.REASON_FLAGS),
        (_resealed(good, 2, "<f", float("nan")), pr.REASON_RANGE),        # rate NaN
        (_resealed(good, 2, "<f", -0.001), pr.REASON_RANGE),              # negative rate
        (_resealed(good, 26, "<f", -1.0), pr.REASON_RANGE),               # negative probe lag
        (_resealed(good, 30, "<f", float("inf")), pr.REASON_RANGE),       # exponent inf
        (_resealed(good, 34, "<h", 900), pr.REASON_RANGE),                # low > high in bin 0
        (_resealed(_resealed(good, 1, "<B", 0), 18, "<f", 0.3), pr.REASON_RANGE),  # gain, no heater
        (bytes(54), pr.REASON_VERSION),
    ]
    for blob, want in cases:
        prof, reason = VesselProfile.from_blob(blob)
        assert prof is None and reason == want, (blob, reason, want)
        assert pr.reason_name(reason).startswith("profile_")
    assert pr.reason_name(99) == "unknown"
    # memoryview is accepted like bytes
    prof, reason = VesselProfile.from_blob(memoryview(good))
    assert reason == pr.REASON_OK and prof is not None


def test_constructor_raises_value_error_naming_the_value():
    bad = [dict(rate_per_s=0.0), dict(rate_per_s=float("nan")), dict(rate_log_sd=-0.1),
           dict(eq_offset_c=80.0), dict(gain_k_per_s=0.2), dict(heater=True, gain_k_per_s=20.0),
           dict(probe_lag_s=-1.0), dict(rate_exponent=0.1),
           dict(log_q_low=(0.1, 0.0, 0.0, 0.0), log_q_high=(0.0, 0.1, 0.1, 0.1)),
           dict(log_q_low=(0.0, 0.0, 0.0))]
    for kw in bad:
        try:
            VesselProfile(**kw)
        except ValueError as exc:
            assert "profile" in str(exc) or "values" in str(exc), exc
        else:
            raise AssertionError("accepted %r" % (kw,))


def test_interval_bounds_are_the_bin_that_holds_the_time():
    # the table is calibrated per bin of the predicted time (split-conformal): the
    # device applies each bin's values over the whole bin, an edge opening the next
    p = kettle_like()
    e = pr.BIN_EDGES_S
    assert e == (60.0, 300.0, 1200.0)  # the edges of the bins stay where the module says
    cases = ((0.0, 0), (1.0, 0), (59.999, 0), (60.0, 1), (299.0, 1), (300.0, 2),
             (1199.9, 2), (1200.0, 3), (1e7, 3), (float("inf"), 3), (-5.0, 0),
             (float("nan"), 0))
    for eta, i in cases:
        assert p.interval_log_bounds(eta) == (p.log_q_low[i], p.log_q_high[i]), (eta, i)


def test_rate_at_follows_the_power_law():
    p = VesselProfile(rate_per_s=0.001, rate_exponent=1.25)
    assert close(p.rate_at(10.0), 0.001, 1e-12)
    assert close(p.rate_at(-10.0), 0.001, 1e-12)
    assert close(p.rate_at(40.0), 0.001 * 4.0 ** 0.25, 1e-12)
    assert p.rate_at(0.0) == 0.0
    assert VesselProfile(rate_per_s=0.002).rate_at(3.0) == 0.002


def _rk4_time(a, n, e, t0, target, h=0.05):
    """Seconds until T reaches target under dT/dt = -a|T-E|^n sign(T-E), by RK4."""
    def f(t):
        d = t - e
        return -a * abs(d) ** n * (1.0 if d > 0 else -1.0)
    t = t0
    s = 0.0
    while (t - target) * (t0 - target) > 0.0:
        prev = t
        k1 = f(t)
        k2 = f(t + 0.5 * h * k1)
        k3 = f(t + 0.5 * h * k2)
        k4 = f(t + h * k3)
        t = t + h * (k1 + 2 * k2 + 2 * k3 + k4) / 6.0
        s += h
    # linear interpolation inside the last step
    return s - h + h * (prev - target) / (prev - t)


def test_time_to_target_closed_form_against_rk4():
    for n, t0, target, e in ((1.25, 85.0, 60.0, 21.0), (1.0, 85.0, 60.0, 21.0),
                             (0.8, 30.0, 50.0, 55.0), (1.6, 4.0, 9.0, 12.0)):
        p = VesselProfile(rate_per_s=1.0 / 300.0, rate_exponent=n)
        a = p.rate_per_s / pr.DIFF_REF_C ** (n - 1.0)
        got = p.time_to_target_s(t0, target, e)
        want = _rk4_time(a, n, e, t0, target)
        assert close(got, want, 2e-4), (n, got, want)
    p = VesselProfile(rate_per_s=0.001)
    assert close(p.time_to_target_s(80.0, 50.0, 20.0), math.log(2.0) / 0.001, 1e-12)
    assert p.time_to_target_s(50.0, 50.0, 20.0) == 0.0
    assert p.time_to_target_s(50.0, 60.0, 20.0) is None      # away from the equilibrium
    assert p.time_to_target_s(50.0, 10.0, 20.0) is None      # beyond it
    assert p.time_to_target_s(50.0, 20.0, 20.0) is None      # only in infinite time (n = 1)
    # n < 1 reaches the equilibrium itself in finite time: d0^(1-n) / (a (1-n))
    q = VesselProfile(rate_per_s=0.01, rate_exponent=0.5)
    a = 0.01 * 10.0 ** 0.5
    assert close(q.time_to_target_s(36.0, 20.0, 20.0), 4.0 / (a * 0.5), 1e-12)


def test_local_first_order_is_the_tangent_of_the_power_law():
    p = VesselProfile(rate_per_s=0.001, rate_exponent=1.5, eq_offset_c=-2.0)
    k, e = p.local_first_order(62.0, 22.0)        # d = 62 - 20 = 42 K
    a = 0.001 / 10.0 ** 0.5

    def f(t):
        return -a * (t - 20.0) ** 1.5
    # same rate of change and same slope (central difference) at 62 C
    assert close(-k * (62.0 - e), f(62.0), 1e-12)
    h = 1e-3
    assert close(-k, (f(62.0 + h) - f(62.0 - h)) / (2 * h), 1e-6)
    assert close(e, 62.0 - 42.0 / 1.5, 1e-12)
    # first order: the profile's own rate and equilibrium
    q = VesselProfile(rate_per_s=0.002, eq_offset_c=1.5)
    assert q.local_first_order(80.0, 20.0) == (0.002, 21.5)


# ------------------------------------------------------------ hostile input
ARG_NAMES = ("heater", "rate_per_s", "rate_log_sd", "eq_offset_c", "eq_offset_sd_c",
             "gain_k_per_s", "gain_rel_sd", "probe_lag_s", "rate_exponent", "log_q_low",
             "log_q_high")


def _odd_blobs():
    """Inputs to from_blob that are not a valid profile: (description, value)."""
    good = bytes.fromhex(GOLDEN_HEX)
    out = [
        ("54 doubles", memoryview(array.array("d", [1] * 54))),
        ("54 int32", memoryview(array.array("i", [1] * 54))),
        ("54 uint16", memoryview(array.array("H", [1] * 54))),
        ("27 uint16 of zeros", memoryview(array.array("H", [0] * 27))),
        ("27 float32 ones", memoryview(array.array("f", [1.0] * 27))),
        ("the array itself", array.array("B", good)),
        ("view of 53 bytes", memoryview(good)[:53]),
        ("view of 55 bytes", memoryview(good + b"\x00")),
        ("empty view", memoryview(b"")),
        ("list of the bytes", list(good)),
        ("tuple of the bytes", tuple(good)),
        ("str of 54", "\x01" * 54),
        ("int", 54), ("float", 1.0), ("bool", True), ("None", None),
        ("dict", {0: 1}), ("type", bytes), ("huge int", 10 ** 400),
    ]
    rng = XorShift(7)
    for i in range(40):
        n = (0, 1, 53, 54, 54, 54, 55, 200)[i % 8]
        buf = bytearray(n)
        for j in range(n):
            buf[j] = rng.next_u32() & 0xFF
        if n:
            buf[0] = pr.PROFILE_FORMAT if i % 3 else buf[0]
        if n == 54 and i % 2:
            # a valid CRC over random fields; with known flags (all but #3 and #19) only
            # the range check is left
            if i % 16 != 3:
                buf[1] &= pr.FLAG_HEATER | pr.FLAG_OWN_FIT
            struct.pack_into("<I", buf, 50, crc.crc32(buf, 0, 0, 50))
        out.append(("random %d bytes #%d" % (n, i), buf if i % 4 else memoryview(buf)))
    if hasattr(memoryview, "cast"):          # CPython only: multi-dimensional and released views
        out.append(("2-D view", memoryview(bytearray(108)).cast("B", (2, 54))))
        out.append(("0-D view", memoryview(array.array("d", [1.0])).cast("B").cast("d", ())))
        gone = memoryview(bytearray(good))
        gone.release()
        out.append(("released view", gone))
    return out


def test_from_blob_never_raises_on_odd_inputs():
    codes = (pr.REASON_LENGTH, pr.REASON_VERSION, pr.REASON_CRC, pr.REASON_FLAGS,
             pr.REASON_RANGE)
    seen = set()
    for what, blob in _odd_blobs():
        try:
            prof, reason = VesselProfile.from_blob(blob)
        except Exception as exc:  # the promise is: never
            raise AssertionError("%s raised %s %s" % (what, type(exc).__name__, exc))
        if prof is not None:      # random bytes may, rarely, be a valid profile
            assert reason == pr.REASON_OK, what
            continue
        assert reason in codes, (what, reason)
        seen.add(reason)
    # the loop reached every stage of the reader, not only the length check
    assert seen == set(codes), seen


def test_from_blob_reads_the_bytes_of_a_view_of_any_item_size():
    # a view is read as the bytes it covers: 27 uint16 items holding a good blob is that blob
    good = bytes.fromhex(GOLDEN_HEX)
    halves = array.array("H", good)          # raw bytes in, on both runtimes
    assert len(halves) == 27
    prof, reason = VesselProfile.from_blob(memoryview(halves))
    assert reason == pr.REASON_OK and prof.to_blob() == good
    # a view of 54 bytes out of a longer buffer is accepted too
    prof, reason = VesselProfile.from_blob(memoryview(b"xx" + good)[2:])
    assert reason == pr.REASON_OK and prof.to_blob() == good


def _raises_naming(kw, name):
    try:
        VesselProfile(**kw)
    except ValueError as exc:
        assert name in str(exc), (kw, str(exc))
        return
    except Exception as exc:
        raise AssertionError("%r raised %s %s, not ValueError" % (kw, type(exc).__name__, exc))
    raise AssertionError("accepted %r" % (kw,))


def test_constructor_rejects_non_numbers_with_a_value_error_naming_the_argument():
    junk = (None, "0.001", b"1", float("nan"), float("inf"), -float("inf"), 10 ** 400,
            -10 ** 400, True, False, [0.001], (0.001,), {}, object())
    for name in ARG_NAMES[1:9]:
        for bad in junk:
            _raises_naming({name: bad}, name)


def test_constructor_checks_the_quantile_tables_item_by_item():
    tables = {"log_q_low": (-0.1, -0.1, -0.1, -0.1), "log_q_high": (0.5, 0.5, 0.5, 0.5)}
    for name in tables:
        for bad in ((0.0, 0.0, 0.0), (0.0,) * 5, (), 0.1, "abcd", {0: 0.0, 1: 0.0, 2: 0.0, 3: 0.0},
                    b"\x00\x00\x00\x00", True, object()):
            _raises_naming({name: bad}, name)
        for item in (None, "0.1", float("nan"), float("inf"), 10 ** 400, True, [0.1], 31.0):
            kw = dict(tables)
            kw[name] = [0.0, 0.0, 0.0, item]
            _raises_naming(kw, name)
    # lists and tuples both work, ints included
    p = VesselProfile(log_q_low=[-1, -0.5, 0, 0], log_q_high=(1, 0.5, 0, 0.25))
    assert p.log_q_low == (-1.0, -0.5, 0.0, 0.0) and type(p.log_q_low[0]) is float
    assert p.log_q_high == (1.0, 0.5, 0.0, 0.25)


def test_heater_must_be_a_bool_or_zero_or_one():
    for bad in ("no", "yes", "", None, 2, -1, 1.0, 0.0, 0.5, [], [1], b"\x01"):
        _raises_naming({"heater": bad}, "heater")
    assert VesselProfile(heater=1, gain_k_per_s=0.2).heater is True
    assert VesselProfile(heater=0).heater is False
    assert VesselProfile(heater=True, gain_k_per_s=0.2).heater is True


def test_own_fit_must_be_a_bool_or_zero_or_one_and_travels_in_the_flags():
    for bad in ("no", None, 2, -1, 1.0, [1]):
        _raises_naming({"own_fit": bad}, "own_fit")
    src = VesselProfile(rate_per_s=1.0 / 2500.0, own_fit=1)
    assert src.own_fit is True and VesselProfile().own_fit is False
    blob = src.to_blob()
    assert blob[1] == pr.FLAG_OWN_FIT
    prof, reason = VesselProfile.from_blob(blob)
    assert reason == pr.REASON_OK and prof.own_fit is True and prof.heater is False
    both = VesselProfile(heater=True, gain_k_per_s=0.2, own_fit=True).to_blob()
    assert both[1] == pr.FLAG_HEATER | pr.FLAG_OWN_FIT
    assert VesselProfile.from_blob(both)[0].own_fit is True
