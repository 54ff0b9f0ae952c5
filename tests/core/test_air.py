"""A measured air that cycles drives the law; the answer uses its mean over whole cycles
(both runtimes).

The traces are a drink following the first-order law driven by a sinusoidal
air, ``dT/dt = -k (T - A(t))`` with ``A = m + a sin(w t + p)``, whose exact
solution is the textbook one for a linear first-order law with a sinusoidal
input (from memory; the forecast's sine piece uses the same form and is
checked against scipy's solve_ivp in tests/test_forecast_reference.py)::

    T(t) = m + ar sin(w t + p - psi) + (T0 - m - ar sin(p - psi)) e^(-k t)
    ar = a k / sqrt(k^2 + w^2),   psi = atan(w / k)

Parameters are invented (a drink in a cycling fridge). The checks are the
properties the design promises: no flip to ``out_of_reach`` with the air's
swing, the cycle's mean kept exactly, no arrival while the drink hovers short
of its target, a real arrival shown, the state saved and restored exactly.
"""
import math

from support import XorShift, round_instance_floats, to_float32

from tinytherm import blob as bl
from tinytherm import status as st
from tinytherm.estimator import ThermalEstimator
from tinytherm.fit import SCALE, Inputs

PERIOD_S = 1800.0


def drink_c(t, start_c, mean_c, amp_c, k, period_s=PERIOD_S, phase=0.0):
    """Exact drink temperature at ``t`` s under the sinusoidal air (see the module docstring)."""
    w = 2.0 * math.pi / period_s
    ar = amp_c * k / math.sqrt(k * k + w * w)
    psi = math.atan2(w, k)
    return (mean_c + ar * math.sin(w * t + phase - psi)
            + (start_c - mean_c - ar * math.sin(phase - psi)) * math.exp(-k * t))


def air_c(t, mean_c, amp_c, period_s=PERIOD_S, phase=0.0):
    return mean_c + amp_c * math.sin(2.0 * math.pi * t / period_s + phase)


def crossing_s(target_c, start_c, mean_c, amp_c, k, period_s=PERIOD_S, phase=0.0):
    """First time the exact drink temperature falls to ``target_c`` (scan, then bisection)."""
    t = 0.0
    while drink_c(t, start_c, mean_c, amp_c, k, period_s, phase) > target_c:
        t += 5.0
        if t > 1e6:
            return None
    lo, hi = t - 5.0, t
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        if drink_c(mid, start_c, mean_c, amp_c, k, period_s, phase) > target_c:
            lo = mid
        else:
            hi = mid
    return hi


def quantised(x, q=0.0625):
    return math.floor(x / q + 0.5) * q


def run_cycling(est, target_c, seconds, start_c=20.0, mean_c=4.0, amp_c=2.0, k=1.0 / 2500.0,
                dt=10.0, seed=11, on_row=None, air=True, approach=0):
    """Feed the drink and its air (noisy, quantised); ``on_row(t, clean, est)`` per row."""
    rng = XorShift(seed)
    t = 0.0
    first = True
    while t <= seconds:
        clean = drink_c(t, start_c, mean_c, amp_c, k)
        y = quantised(clean + rng.gauss(0.03))
        a = quantised(air_c(t, mean_c, amp_c) + rng.gauss(0.05)) if air else None
        est.update(y, 0.0 if first else dt, ambient_c=a)
        first = False
        if approach:
            est.predict(target_c, approach)
        else:
            est.predict(target_c)
        if on_row is not None:
            on_row(t, clean, est)
        t += dt


def test_cycling_air_answer_does_not_flip_to_out_of_reach():
    # target 5 C, air 4 +- 2 C: in the air's warm half the equilibrium *now* is
    # above the target, but the air's mean is below it and the drink gets there
    target = 5.0
    cross = crossing_s(target, 20.0, 4.0, 2.0, 1.0 / 2500.0)
    counts = [0, 0, 0]   # rows judged, out_of_reach rows, shown rows
    errors = []

    def on_row(t, clean, est):
        if t < 2.0 * PERIOD_S or t > cross - 300.0:
            return  # from the end of the first whole cycle to the last minutes
        counts[0] += 1
        if est.status == st.OUT_OF_REACH:
            counts[1] += 1
        if est.status == st.TRACKING:
            counts[2] += 1
            errors.append(abs(est.eta_s - (cross - t)) / (cross - t))

    run_cycling(ThermalEstimator(), target, cross - 200.0, on_row=on_row)
    assert counts[0] > 250, counts
    assert counts[1] == 0, counts
    assert counts[2] >= 0.95 * counts[0], counts
    # the mean-air forecast cannot see the phase of the drink's own 0.2 C swing,
    # which moves the first crossing by a few minutes (measured: 0.16; the
    # estimator without the air's cycle mean: 0.49 and 104 rows out of reach)
    errors.sort()
    median = errors[len(errors) // 2]
    assert median < 0.2, median


def test_cycle_mean_is_the_mean_over_the_last_whole_cycle():
    # a square-ish air (two levels, 1500 s period) read every 7 s: the cycle's
    # mean is the trapezoid mean of the readings between two upward crossings
    inp = Inputs(None)
    t_ms = 0
    readings = []     # (t_ms, counts) since the last upward crossing
    started = False
    means = 0
    for i in range(1200):
        a = 5.0 + (1.5 if (t_ms // 750000) % 2 == 0 else -1.5) + 0.0625 * (i % 3)
        c = int(math.floor(a * SCALE + 0.5))
        was_side = inp.air.side if inp.air is not None else 0
        inp.reference(a, 0 if i == 0 else 7000, False)
        readings.append((t_ms, c))
        if was_side <= 0 and inp.air.side == 1:
            if started:
                # trapezoid mean of the cycle's readings, in counts * 2**8, rounded
                area2 = 0
                for j in range(1, len(readings)):
                    area2 += ((readings[j][1] + readings[j - 1][1])
                              * (readings[j][0] - readings[j - 1][0]))
                span = readings[-1][0] - readings[0][0]
                assert inp.air.has_mean and inp.air.mean == (area2 * 128 + span // 2) // span, i
                means += 1
            # the next cycle starts at this reading
            started = True
            readings = [(t_ms, c)]
        t_ms += 7000
    assert means >= 3, means
    # the slow mean stands in only until a whole cycle is seen
    assert inp.ahead_fine() == inp.air.mean


def test_ahead_is_the_slow_mean_before_a_whole_cycle_and_the_fixed_ambient_without_air():
    inp = Inputs(21.0)
    assert inp.ahead_fine() == 21 * SCALE * 256
    inp.reference(4.0, 0, True)
    assert inp.ahead_fine() == 4 * SCALE * 256
    for _ in range(60):
        inp.reference(6.0, 10000, False)   # a step up: the slow mean moves towards it
    assert not inp.air.has_mean and 4 * SCALE * 256 < inp.ahead_fine() < 6 * SCALE * 256
    assert Inputs(None).ahead_fine() == 0


def test_air_that_stops_cycling_drops_the_cycle_mean():
    inp = Inputs(None)
    t = 0
    for i in range(2000):
        a = 4.0 + 2.0 * math.sin(2.0 * math.pi * t / 1200.0)
        inp.reference(a, 0 if i == 0 else 10000, False)
        t += 10
    assert inp.air.has_mean
    for _ in range(1500):   # 4 h of a steady air: no whole cycle that long
        inp.reference(4.0, 10000, False)
    assert not inp.air.has_mean


def test_hovering_drink_is_not_arrived_but_a_real_crossing_is():
    # A strap-on probe on a drink that settles where the air's swing carries it
    # from 0.02 C above its target to 0.52 C above it (no air sensor; 1 s
    # readings, noise 0.12 C, 0.1 C steps): it never gets there. The noise once
    # took a block mean 0.01 C past the target, and the arrival was held while
    # the drink went 0.5 C back up (before: 121 such rows with either setting).
    k = 1.0 / 1500.0
    w = 2.0 * math.pi / PERIOD_S
    amp = 1.33
    swing = amp * k / math.sqrt(k * k + w * w)   # the drink's own swing, 0.25 C
    target = 6.0
    mean = target + swing + 0.02
    for approach in (0, -1):
        rng = XorShift(1)
        est = ThermalEstimator(quantum_c=0.1)
        t = 0.0
        early = 0
        while t <= 4.0 * 3600.0:
            clean = drink_c(t, 12.0, mean, amp, k)
            y = quantised(clean + rng.gauss(0.12), 0.1)
            est.update(y, 0.0 if t == 0.0 else 1.0)
            if approach:
                est.predict(target, approach)
            else:
                est.predict(target)
            # early as the benchmarks count it: short by more than max(0.3 C, 3 sd)
            if est.status == st.ARRIVED and clean - target > 0.37:
                early += 1
            t += 1.0
        assert early == 0, (approach, early)
    # a drink that crosses its target is shown arrived soon after the crossing
    target = 6.0
    cross = crossing_s(target, 12.0, 4.4, 3.0, k)
    seen = [None]

    def on_arrival(t, clean, est):
        if seen[0] is None and est.status == st.ARRIVED:
            seen[0] = t

    for approach in (0, -1):
        seen[0] = None
        run_cycling(ThermalEstimator(), target, cross + 900.0, start_c=12.0, mean_c=4.4,
                    amp_c=3.0, k=k, on_row=on_arrival, approach=approach)
        assert seen[0] is not None and cross - 30.0 <= seen[0] <= cross + 300.0, (seen[0], cross)


def _wake_run(rounder=None):
    """Save and restore on every reading of a 2 h cycling-air trace against an uninterrupted run."""
    rng = XorShift(5)
    steady = ThermalEstimator()
    saved = None
    worst = 0.0
    t = 0.0
    cycles = 0
    while t <= 7200.0:
        y = quantised(drink_c(t, 20.0, 4.0, 2.0, 1.0 / 2500.0) + rng.gauss(0.03))
        a = quantised(air_c(t, 4.0, 2.0) + rng.gauss(0.05))
        dt = 0.0 if t == 0.0 else 10.0
        steady.update(y, dt, ambient_c=a)
        woken = ThermalEstimator()
        if saved is not None:
            assert woken.restore(saved) == bl.RESTORED
        woken.update(y, dt, ambient_c=a)
        if rounder is not None:
            round_instance_floats(steady, rounder)
            round_instance_floats(woken, rounder)
        if woken.inputs.measured and woken.inputs.air.has_mean:
            cycles += 1
        steady.predict(5.0)
        woken.predict(5.0)
        assert steady.status == woken.status, (t, steady.status, woken.status)
        if steady.eta_s:
            rel = abs(steady.eta_s - woken.eta_s) / steady.eta_s
            if rel > worst:
                worst = rel
        saved = woken.save()
        t += 10.0
    assert cycles > 100  # the cycle's mean was in the saved state for most of the run
    return worst


def test_save_restore_with_a_cycling_air_is_exact():
    assert _wake_run() == 0.0


def test_save_restore_with_a_cycling_air_float32_device():
    # the new state is integers: the float32 emulation changes nothing beyond
    # what the rounding after each update does to both runs alike
    assert _wake_run(to_float32) <= 1e-4
