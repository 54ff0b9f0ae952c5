"""A profile blob written by one runtime reads back the same in the other.

MicroPython writes a blob, CPython reads it; CPython writes one, the unix
``micropython`` binary reads it and prints every field, which must equal what
CPython reads from the same bytes. The CRC is also checked against zlib's
CRC-32 (the IEEE 802.3 checksum).
"""
import os
import subprocess
import sys
import zlib

import pytest

from tinytherm.profile import VesselProfile

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
FIELDS = ("heater", "rate_per_s", "rate_log_sd", "eq_offset_c", "eq_offset_sd_c", "gain_k_per_s",
          "gain_rel_sd", "probe_lag_s", "rate_exponent", "log_q_low", "log_q_high")


def run_mp(code):
    exe = os.path.join(os.path.dirname(sys.executable), "micropython")
    if not os.path.exists(exe):
        pytest.fail("micropython not found: install the dev extra")
    proc = subprocess.run([exe, "-c", "import sys; sys.path.insert(0, '.')\n" + code], cwd=ROOT,
                          capture_output=True, text=True, timeout=60)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    return proc.stdout


def test_micropython_blob_reads_in_cpython():
    out = run_mp(
        "from tinytherm.profile import VesselProfile\n"
        "p = VesselProfile(heater=True, rate_per_s=1/5400, rate_log_sd=0.35, eq_offset_c=0.8,\n"
        "    eq_offset_sd_c=1.2, gain_k_per_s=0.0021, gain_rel_sd=0.3, probe_lag_s=11.5,\n"
        "    rate_exponent=1.1, log_q_low=(-0.9, -0.5, -0.3, -0.2), log_q_high=(1.1, 0.6, 0.3, 0.25))\n"
        "print(p.to_blob().hex())\n")
    blob = bytes.fromhex(out.strip())
    prof, reason = VesselProfile.from_blob(blob)
    assert reason == 0
    assert prof.heater and abs(prof.rate_per_s * 5400 - 1.0) < 1e-6
    assert abs(prof.gain_k_per_s - 0.0021) < 1e-9 and abs(prof.probe_lag_s - 11.5) < 1e-6
    assert prof.log_q_low == (-0.9, -0.5, -0.3, -0.2)
    assert prof.log_q_high == (1.1, 0.6, 0.3, 0.25)
    assert int.from_bytes(blob[-4:], "little") == zlib.crc32(blob[:-4])
    # CPython writes the same bytes for the same values
    assert prof.to_blob() == blob


def test_cpython_blob_reads_in_micropython():
    src = VesselProfile(rate_per_s=1 / 1700, rate_log_sd=0.18, eq_offset_c=-2.6, eq_offset_sd_c=0.9,
                        probe_lag_s=14.0, rate_exponent=1.27,
                        log_q_low=(-0.31, -0.22, -0.17, -0.12), log_q_high=(0.4, 0.2, 0.15, 0.1))
    blob = src.to_blob()
    out = run_mp(
        "from tinytherm.profile import VesselProfile\n"
        "p, r = VesselProfile.from_blob(bytes.fromhex(%r))\n"
        "print(r)\n"
        "for name in %r:\n"
        "    print(repr(getattr(p, name)))\n"
        "print(p.interval_log_bounds(450.0))\n"
        "print(p.time_to_target_s(70.0, 45.0, 21.0))\n"
        "b, r2 = VesselProfile.from_blob(bytes.fromhex(%r))\n"
        "print(r2)\n" % (blob.hex(), FIELDS, blob[:-1].hex() + "00"))
    lines = out.split("\n")
    assert lines[0] == "0"
    here, _ = VesselProfile.from_blob(blob)
    for name, text in zip(FIELDS, lines[1:]):
        got = eval(text)  # a repr of bool, float or tuple of floats
        assert got == getattr(here, name), (name, got, getattr(here, name))
    lo, hi = eval(lines[1 + len(FIELDS)])
    want = here.interval_log_bounds(450.0)
    assert abs(lo - want[0]) < 1e-12 and abs(hi - want[1]) < 1e-12
    assert abs(float(lines[2 + len(FIELDS)]) - here.time_to_target_s(70.0, 45.0, 21.0)) < 1e-6
    assert lines[3 + len(FIELDS)] == "3"  # REASON_CRC: a damaged last byte
