"""Seeded fuzz run of the estimator's never-raise promises (CPython and MicroPython).

    python tests/fuzz_estimator.py [cases] [seed]
    micropython tests/fuzz_estimator.py [cases] [seed]

Each case is one call on one of a few estimators (every mode): ``update``
and ``update_ticks`` with readings, times, ambients and duties drawn from a
mixture of plausible values and junk (NaN, infinities, huge ints, strings,
None, lists, bools), ``predict`` with junk targets and approaches, and
``save`` -> ``restore`` into a fresh estimator, whose next answer must equal
the original's (status and ETA, exactly), or ``restore`` of a resealed blob
with random bytes changed. Counts exceptions, non-finite public outputs and
restores that report success yet change the next answer; prints one closing
line. ``tests/test_estimator_fuzz.py`` runs a short budget on both runtimes.
"""
import sys

sys.path.insert(0, ".")
sys.path.insert(0, "tests/core")

from support import XorShift  # noqa: E402

from tinytherm import blob as bl  # noqa: E402
from tinytherm.estimator import ThermalEstimator  # noqa: E402

INF = float("inf")
NAN = float("nan")
MODES = ({}, {"ambient_c": 21.0}, {"heater": True}, {"heater": True, "ambient_c": 18.0},
         {"spike_window": 5, "quantum_c": 0.5}, {"spike_window": 0, "probe_codes": True})
JUNK = (NAN, INF, -INF, None, "20", [1.0], True, 10 ** 40, 10 ** 400, -10 ** 400, 1e308,
        -1e308, 5e-324, -0.0)
FIELDS = ("eta_s", "eta_low_s", "eta_high_s", "rate_per_s", "equilibrium_c", "ambient_est_c",
          "gain_k_per_s", "temp_est_c", "eta_rel_sd")


def _finite(x):
    return x == x and x != INF and x != -INF


def pick(rng, plausible, junk_share=8):
    """A plausible value most of the time, junk one time in ``junk_share``."""
    if rng.next_u32() % junk_share == 0:
        return JUNK[rng.next_u32() % len(JUNK)]
    return plausible


def answer_ok(est):
    """Public outputs finite (eta_high_s may be inf: "never" not ruled out)."""
    for name in FIELDS:
        v = getattr(est, name)
        if v is None:
            continue
        if name == "eta_high_s" and v == INF:
            continue
        if type(v) is not float and type(v) is not int:
            return False
        if not _finite(v):
            return False
    if est.eta_s is not None and not (est.eta_low_s <= est.eta_s <= est.eta_high_s):
        return False
    return True


def run(cases, seed):
    rng = XorShift(seed)
    ests = [ThermalEstimator(**kw) for kw in MODES]
    temps = [60.0] * len(MODES)
    ticks = [0] * len(MODES)
    errors = 0
    nonfinite = 0
    changed = 0
    restores = 0
    first_error = None
    for case in range(cases):
        i = rng.next_u32() % len(MODES)
        est = ests[i]
        op = rng.next_u32() % 16
        try:
            if op < 9:
                # a random walk of readings with occasional jumps and junk
                temps[i] += (rng.uniform() - 0.52) * 0.3
                if rng.next_u32() % 200 == 0:
                    temps[i] = 5.0 + 90.0 * rng.uniform()
                dt = 0.5 + 10.0 * rng.uniform() if rng.next_u32() % 50 else 600.0 * rng.uniform()
                est.update(pick(rng, temps[i]), pick(rng, dt),
                           pick(rng, 20.0 + rng.uniform(), 3) if rng.next_u32() % 4 == 0 else None,
                           pick(rng, rng.uniform()))
            elif op < 11:
                ticks[i] = (ticks[i] + 500 + rng.next_u32() % 5000) & 0x3FFFFFFF
                est.update_ticks(pick(rng, temps[i]), pick(rng, ticks[i]), None,
                                 pick(rng, 0.5))
            elif op < 14:
                est.predict(pick(rng, 20.0 + 70.0 * rng.uniform()),
                            pick(rng, (rng.next_u32() % 3) - 1, 4))
                if not answer_ok(est):
                    nonfinite += 1
                    if first_error is None:
                        first_error = "case %d mode %d non-finite answer: %r" % (
                            case, i, [(n, getattr(est, n)) for n in FIELDS])
            elif op == 14:
                # save -> restore into a fresh one: the next answer must not change
                target = 20.0 + 70.0 * rng.uniform()
                blob = bytes(est.save())
                other = ThermalEstimator(**MODES[i])
                restores += 1
                if other.restore(blob) == bl.RESTORED:
                    est.predict(target)
                    other.predict(target)
                    if other.status != est.status or other.eta_s != est.eta_s:
                        changed += 1
            else:
                # junk into a sealed frame: restore must judge it, never raise
                blob = bytearray(est.save())
                for _ in range(1 + rng.next_u32() % 4):
                    blob[bl.PAYLOAD_OFFSET + rng.next_u32() % bl.PAYLOAD_SIZE] = rng.next_u32() & 255
                other = ThermalEstimator(**MODES[i])
                other.restore(bl.seal(blob))
                other.update(temps[i], 1.0)
                other.predict(40.0)
                if not answer_ok(other):
                    nonfinite += 1
                    if first_error is None:
                        first_error = "case %d mode %d non-finite after a junk restore: %r" % (
                            case, i, [(n, getattr(other, n)) for n in FIELDS])
        except Exception as exc:  # noqa: BLE001 - counting is the point
            errors += 1
            if first_error is None:
                first_error = "case %d op %d mode %d: %r" % (case, op, i, exc)
    return errors, nonfinite, changed, restores, first_error


def main():
    cases = int(sys.argv[1]) if len(sys.argv) > 1 else 1000000
    seed = int(sys.argv[2]) if len(sys.argv) > 2 else 1
    errors, nonfinite, changed, restores, first = run(cases, seed)
    print("FUZZ cases=%d exceptions=%d nonfinite=%d restores=%d changed_by_restore=%d"
          % (cases, errors, nonfinite, restores, changed))
    if first:
        print("first:", first)
    return 1 if (errors or nonfinite or changed) else 0


if __name__ == "__main__":
    sys.exit(main())
