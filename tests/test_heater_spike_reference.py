"""A heated pot read once a minute: one reading far low is no turn, and no arrival.

On a steep heat-up read every 60 s the guard's Hampel window of three
readings is wide (the ramp itself spreads it), so a reading 16 C low can pass
it; in a young heated fit that one reading is a whole block and turns the
fitted slope. The block means then turned to "cooling", and a pot at 25 C
heating to 84 C was shown as arrived (found on the families benchmark's tune
seeds, pot seed 1014). With a heater the direction turns only when the
reading before the latest retreated too.

Read minutes apart by a device with no duty column, a fit that began again
turned at its third reading, from the reading before it (the peak, 81 C),
and arrived "cooling" at a 93 C target the liquid never reached (holdout pot
seed 5056, sparse). A fit begun at a turn short of the target arrives only
past it (``tinytherm.settle.Settle.allows``).

Reference physics: scipy ``solve_ivp`` (RK45, tight tolerances) of the
first-order law with a heater term, dT/dt = -k (T - T_air) + g u; the
crossing by scipy ``brentq``. The scenario (a 3 kg pot on a 0.8-duty element)
is our own invention. Judged as the families benchmark judges
(host_sim.replay.metrics.early_rows: no ``arrived`` while the liquid is more
than max(0.3 C, 3 noise sd) short of the target).
"""
import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from host_sim.replay.metrics import early_rows
from tinytherm.estimator import ThermalEstimator

K_PER_S = 1.0 / 2400.0   # loss rate, 1/s
AIR_C = 21.0
GAIN_C_PER_S = 0.045     # deg C/s at full duty (level-off 21 + 0.045 * 0.8 * 2400 = 107.4 C)
DUTY = 0.8
START_C = 14.0
TARGET_C = 84.0
QUANTUM_C = 0.1
NOISE_SD_C = 0.03


def _rhs(_t, y):
    return [-K_PER_S * (y[0] - AIR_C) + GAIN_C_PER_S * DUTY]


def _heat_up(spike_at):
    t = np.arange(0.0, 3600.0, 60.0)
    sol = solve_ivp(_rhs, (0.0, t[-1]), [START_C], t_eval=t, rtol=1e-10, atol=1e-10,
                    dense_output=True)
    clean = sol.y[0]
    rng = np.random.default_rng(7)
    temp = np.round((clean + rng.normal(0.0, NOISE_SD_C, len(t))) / QUANTUM_C) * QUANTUM_C
    temp[spike_at] -= 16.0   # one bad reading (a loose contact), far below the ramp
    crossing = brentq(lambda s: sol.sol(s)[0] - TARGET_C, 0.0, t[-1])
    return t, temp, clean, crossing


@pytest.mark.parametrize("spike_at", [4, 5, 6, 7, 8])
def test_one_low_reading_on_a_heat_up_is_no_arrival(families_bench, spike_at):
    t, temp, clean, crossing = _heat_up(spike_at)
    kw = families_bench.device_kwargs(ThermalEstimator, True, QUANTUM_C)
    for approach in (0, 1):
        _eta, _low, _high, status = families_bench.replay_estimator(
            ThermalEstimator, kw, t, temp, TARGET_C, heater=np.full(len(t), DUTY),
            approach=approach)
        early = early_rows(status, clean, TARGET_C, NOISE_SD_C, "heating")
        assert not early.any(), (approach, t[early])
        assert "arrived" in status[int(crossing // 60) + 1:]  # it arrives once there


def test_the_pot_trace_it_was_found_on(family_replay):
    """The tune trace itself (the pot family's physics: host_sim.sim, solve_ivp)."""
    status, early, time_s = family_replay("pot", 1014)
    assert not early.any(), time_s[early]


def _heat_up_read_minutes_apart(spike_at, every_s):
    """The same heat-up read every ``every_s`` s by a device with no duty column."""
    t = np.arange(0.0, 4200.0, every_s)
    sol = solve_ivp(_rhs, (0.0, t[-1]), [START_C], t_eval=t, rtol=1e-10, atol=1e-10)
    clean = sol.y[0]
    rng = np.random.default_rng(11)
    temp = np.round((clean + rng.normal(0.0, NOISE_SD_C, len(t))) / QUANTUM_C) * QUANTUM_C
    temp[spike_at - 3] += 7.0   # one reading far high: the fit turns and begins again
    temp[spike_at] = temp[spike_at - 1] - 5.5   # the new fit's third reading far low
    return t, temp, clean


@pytest.mark.parametrize("every_s", [150.0, 180.0])
@pytest.mark.parametrize("spike_at", [8, 10, 12, 14])
def test_a_turn_short_of_the_target_is_no_arrival(families_bench, every_s, spike_at):
    # No heater column (the device does not know it heats): a high reading turns the fit,
    # which begins again; a low one as its third reading turns it back at the reading
    # before it (the peak), short of the target. A liquid that turned short of its
    # target never reached it: no arrival in the new direction (as holdout pot 5056).
    t, temp, clean = _heat_up_read_minutes_apart(spike_at, every_s)
    kw = families_bench.device_kwargs(ThermalEstimator, False, QUANTUM_C)
    _eta, _low, _high, status = families_bench.replay_estimator(
        ThermalEstimator, kw, t, temp, TARGET_C)
    early = early_rows(status, clean, TARGET_C, NOISE_SD_C, "heating")
    assert not early.any(), (t[early], temp[spike_at - 1:spike_at + 1])


def test_the_sparse_pot_trace_it_was_found_on(family_replay):
    """Holdout pot seed 5056 read minutes apart (found there; nothing chosen on it): a
    reading 9.5 C low at 1,975 s turned the fit at 81 C, short of the 93 C target."""
    status, early, time_s = family_replay("pot", 5056, "sparse")
    assert not early.any(), time_s[early]
