"""Change detection: delay for a 10 C top-up, false alarms on clean traces, ETA after the event.

Prints three tables (all figures measured in this run; scenarios are our own
inventions, seeded):

1. Detection delay of a top-up that raises the liquid by 10 C, sampled every
   2 s: seconds from the event to the estimator's change alarm.
2. False alarms per 10 hours on clean traces without any event: hot drinks
   cooling for 10 hours with a richer loss law than the estimator assumes
   (convective loss ~ dT^(5/4)), a slow ambient drift, sensor lag, noise and
   0.0625 C quantisation.
3. ETA error after the top-up: the adapted estimator against a fresh estimator
   started at the event, at several times after it (absolute error of the
   time to a target 12 C below the topped-up temperature, seconds; truth from
   the noise-free liquid temperature).

Usage: python benchmarks/change_detection.py [--seeds N] [--hours H]
"""
import argparse
import math
import os
import random
import sys

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.abspath(__file__))))

from tinytherm.estimator import ThermalEstimator  # noqa: E402

QUANTUM_C = 0.0625
DT_S = 2.0


class Mug:
    """Hot drink cooling with dT/dt = -k1 (T-R) - k2 |T-R|^(5/4) (T-R)/|T-R|; our own numbers."""

    def __init__(self, rng, start_c, ambient_c, drift_c=0.0):
        self.rng = rng
        self.temp_c = start_c
        self.sensor_c = start_c
        self.ambient0_c = ambient_c
        self.drift_c = drift_c
        self.k1 = rng.uniform(1.0 / 4000.0, 1.0 / 2500.0)
        self.k2 = rng.uniform(0.2, 0.5) * self.k1
        self.t_s = 0.0

    def ambient(self, t):
        return self.ambient0_c + self.drift_c * math.sin(2.0 * math.pi * t / 86400.0)

    def advance(self, dt):
        # fine sub-steps (RK2) of the liquid and the sensor's 3 s lag
        sub = 10
        h = dt / sub
        for _ in range(sub):
            r = self.ambient(self.t_s)
            d1 = self._rate(self.temp_c, r)
            mid = self.temp_c + 0.5 * h * d1
            self.temp_c += h * self._rate(mid, r)
            self.sensor_c += (self.temp_c - self.sensor_c) * (1.0 - math.exp(-h / 3.0))
            self.t_s += h

    def _rate(self, temp, r):
        d = temp - r
        return -self.k1 * d - self.k2 * (abs(d) ** 1.25) * (1.0 if d >= 0 else -1.0)

    def reading(self):
        v = self.sensor_c + self.rng.gauss(0.0, 0.03)
        return math.floor(v / QUANTUM_C + 0.5) * QUANTUM_C

    def time_to(self, target_c, horizon_s=40000.0):
        """Exact-enough time until the liquid reaches target_c (fine Euler, no sensor)."""
        temp = self.temp_c
        t = self.t_s
        h = 0.5
        elapsed = 0.0
        while elapsed < horizon_s:
            if temp <= target_c:
                return elapsed
            temp += h * self._rate(temp, self.ambient(t + elapsed))
            elapsed += h
        return None


def top_up_runs(seeds, below_c=12.0, checkpoints=(60, 120, 300, 600)):
    delays = []
    missed = 0
    errs_adapted = {c: [] for c in checkpoints}
    errs_fresh = {c: [] for c in checkpoints}
    truths = {c: [] for c in checkpoints}
    for seed in range(seeds):
        rng = random.Random(1000 + seed)
        mug = Mug(rng, rng.uniform(75.0, 85.0), 21.0)
        est = ThermalEstimator()
        fresh = None
        event_s = 900.0 + rng.uniform(0.0, 600.0)
        target_c = None
        done_event = False
        t = 0.0
        alarm_at = None
        changes_before = 0
        first = True
        while t < event_s + max(checkpoints) + 1.0:
            if not done_event and t >= event_s:
                mug.temp_c += 10.0   # hot liquid added: +10 C at once
                target_c = mug.temp_c - below_c
                done_event = True
                changes_before = est.changes
                fresh = ThermalEstimator()
                t_event = t
            mug.advance(DT_S)
            t += DT_S
            y = mug.reading()
            est.update(y, 0.0 if first else DT_S)
            first = False
            if fresh is not None:
                fresh.update(y, 0.0 if fresh.readings == 0 else DT_S)
            if done_event and alarm_at is None and est.changes > changes_before:
                alarm_at = t - t_event
            if done_event:
                since = int(round(t - t_event))
                if since in errs_adapted:
                    truth = mug.time_to(target_c)
                    truths[since].append(truth)
                    for e, store in ((est, errs_adapted), (fresh, errs_fresh)):
                        e.predict(target_c)
                        if truth is not None and e.eta_s is not None:
                            store[since].append(abs(e.eta_s - truth))
                        else:
                            store[since].append(None)
        if alarm_at is None or alarm_at > 120.0:
            missed += 1
        else:
            delays.append(alarm_at)
    return delays, missed, errs_adapted, errs_fresh, truths


def clean_runs(seeds, hours):
    alarms = 0
    total_h = 0.0
    for seed in range(seeds):
        rng = random.Random(5000 + seed)
        mug = Mug(rng, rng.uniform(60.0, 90.0), rng.uniform(18.0, 25.0), drift_c=1.5)
        est = ThermalEstimator()
        t = 0.0
        first = True
        while t < hours * 3600.0:
            mug.advance(DT_S)
            t += DT_S
            est.update(mug.reading(), 0.0 if first else DT_S)
            first = False
        alarms += est.changes
        total_h += hours
    return alarms, total_h


def median(values):
    v = sorted(values)
    if not v:
        return float("nan")
    m = len(v) // 2
    return v[m] if len(v) % 2 else 0.5 * (v[m - 1] + v[m])


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--seeds", type=int, default=20, help="runs per table (default 20)")
    ap.add_argument("--hours", type=float, default=10.0, help="length of each clean trace")
    args = ap.parse_args(argv)

    print("1) 10 C top-up at 2 s sampling (%d runs)" % args.seeds, flush=True)
    delays, missed, ea, ef, truths = top_up_runs(args.seeds)
    if delays:
        print("   detection delay s: median %.1f  max %.1f  min %.1f   missed (>120 s): %d"
              % (median(delays), max(delays), min(delays), missed))
    else:
        print("   no detections; missed: %d" % missed)

    print("2) false alarms on clean traces (%d x %.0f h)" % (args.seeds, args.hours), flush=True)
    alarms, hours = clean_runs(args.seeds, args.hours)
    print("   alarms: %d in %.0f h = %.2f per 10 h" % (alarms, hours, 10.0 * alarms / hours))

    print("3) |ETA error| to (topped-up temperature - 12 C), seconds (median over runs; "
          "n = runs with an answer)")
    print("   %8s  %12s  %18s  %18s" % ("after s", "true ETA s", "adapted estimator",
                                         "fresh at event"))
    for c in sorted(ea):
        a = [x for x in ea[c] if x is not None]
        f = [x for x in ef[c] if x is not None]
        tv = [x for x in truths[c] if x is not None]
        print("   %8d  %12.0f  %10.1f (n=%2d)  %10.1f (n=%2d)"
              % (c, median(tv), median(a), len(a), median(f), len(f)))


if __name__ == "__main__":
    main()
