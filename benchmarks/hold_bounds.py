"""Long noisy hold: the estimator's weights and co-moments stay bounded.

A liquid held at 50.0 C (invented), readings every 2 s with 0.05 C Gaussian
noise quantised to 0.0625 C, 10**3 .. 10**6 updates; prints the largest
magnitude of every stored co-moment and weight at each decade. Figures only
(no pass/fail): run with ``.venv/bin/python benchmarks/hold_bounds.py``.
"""
import argparse
import random

from tinytherm.estimator import ThermalEstimator

NAMES = ("_w", "_w2", "_nb", "_ctt", "_ctx", "_cty", "_cxx", "_cxy", "_cyy", "_t", "_x")


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--updates", type=int, default=1000000, help="readings to feed (default 1e6)")
    args = ap.parse_args()
    rng = random.Random(7)
    est = ThermalEstimator()
    worst = dict((n, 0.0) for n in NAMES)
    mark = 1000
    print("| updates | " + " | ".join(NAMES) + " |")
    print("|---:|" + "---:|" * len(NAMES))
    for i in range(1, args.updates + 1):
        y = round((50.0 + rng.gauss(0.0, 0.05)) / 0.0625) * 0.0625
        est.update(y, 0.0 if i == 1 else 2.0)
        for n in NAMES:
            v = abs(getattr(est, n))
            if v > worst[n]:
                worst[n] = v
        if i == mark:
            est.predict(40.0)
            print("| %d | " % i + " | ".join("%.3g" % worst[n] for n in NAMES) + " |")
            mark *= 10
    print("status at the end: %s, changes %d, turns %d" % (est.status, est.changes, est.turns))


if __name__ == "__main__":
    main()
