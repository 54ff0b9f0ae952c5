"""The promises of VesselProfile's reader and constructor, as checks that return a finding.

Shared by the property tests (tests/test_profile_properties.py, hypothesis) and
the coverage-guided fuzz target (tests/fuzz_profile.py, atheris). Each check
returns a pair whose first item is None when the promise held, or a short
text naming what broke:

- ``from_blob(x)`` never raises, for any object; it returns ``(profile,
  REASON_OK)`` or ``(None, code)`` with one of the ``REASON_*`` failure codes;
  a blob read OK is written back byte for byte by ``to_blob`` (the device
  format is exact);
- ``VesselProfile(**kw)`` raises nothing but ``ValueError``, and its message
  names an argument; a profile it builds has a bool ``heater``, finite float
  fields, no :meth:`problem`, and a blob that reads back OK into the same blob.
"""
import math

from tinytherm import profile as pr
from tinytherm.profile import VesselProfile

ARG_NAMES = ("heater", "rate_per_s", "rate_log_sd", "eq_offset_c", "eq_offset_sd_c",
             "gain_k_per_s", "gain_rel_sd", "probe_lag_s", "rate_exponent", "log_q_low",
             "log_q_high")
FAIL_CODES = (pr.REASON_LENGTH, pr.REASON_VERSION, pr.REASON_CRC, pr.REASON_FLAGS,
              pr.REASON_RANGE)


def _as_bytes(blob):
    if type(blob) is memoryview:
        return blob.tobytes()
    return bytes(blob)


def check_blob(blob):
    """(finding or None, code): ``VesselProfile.from_blob(blob)`` judged, and its reason code."""
    try:
        prof, code = VesselProfile.from_blob(blob)
    except Exception as exc:  # noqa: BLE001 - the promise is: never
        return "from_blob raised %s: %s" % (type(exc).__name__, exc), None
    if prof is None:
        if code not in FAIL_CODES:
            return "from_blob gave None with code %r" % (code,), code
        return None, code
    if code != pr.REASON_OK or type(prof) is not VesselProfile:
        return "from_blob gave %r with code %r" % (type(prof).__name__, code), code
    if prof.to_blob() != _as_bytes(blob):
        return "a blob read OK does not write back byte for byte", code
    return None, code


def _profile_finding(prof):
    if type(prof.heater) is not bool:
        return "heater stored as %s" % type(prof.heater).__name__
    for name in ARG_NAMES[1:9]:
        v = getattr(prof, name)
        if type(v) is not float or not math.isfinite(v):
            return "%s stored as %r" % (name, v)
    for name in ARG_NAMES[9:]:
        t = getattr(prof, name)
        if type(t) is not tuple or len(t) != 4 or not all(type(v) is float for v in t):
            return "%s stored as %r" % (name, t)
    if prof.problem() is not None:
        return "built with a problem: %s" % prof.problem()
    blob = prof.to_blob()
    back, code = VesselProfile.from_blob(blob)
    if code != pr.REASON_OK:
        return "its own blob reads back as %s" % pr.reason_name(code)
    if back.to_blob() != blob:
        return "its blob changes on a second trip"
    return None


def check_args(kw):
    """(finding or None, built): ``VesselProfile(**kw)`` judged; built is True if it returned."""
    try:
        prof = VesselProfile(**kw)
    except ValueError as exc:
        text = str(exc)
        if not any(name in text for name in ARG_NAMES):
            return "ValueError names no argument: %r" % text[:80], False
        return None, False
    except Exception as exc:  # noqa: BLE001 - anything but ValueError is a finding
        return "constructor raised %s: %s" % (type(exc).__name__, str(exc)[:80]), False
    return _profile_finding(prof), True
