"""A drink hovering just short of its target in a cycling fridge: no arrival from a line run on.

The fridge family's physics (host_sim.sim, scipy ``solve_ivp``; crossing by
``brentq``) of one trace found on the holdout seeds, where a straight-line fit
(k pinned at 0) through the probe's hover ran the level past the target while
the drink was 0.6 C warmer than at the true crossing. And the same fridge read minutes
apart (the sparse grid), where one reading of a dip on an air cycle passed the
extreme block test on a noise never measured. Judged as the families benchmark
judges (host_sim.replay.metrics.early_rows).
"""
import pytest


# (seed, sampling) of the fridge family:
# - 5072, dense: a straight-line fit (k pinned at 0) through the probe's hover ran the
#   level past the target while the drink was 0.6 C warmer than at the true crossing;
# - 5007, sparse (holdout seed, found there; nothing chosen on it): readings ~180 s apart
#   never teach the noise (successive differences that far apart measure drift), so it
#   stays at the prior 0.05 C against the trace's 0.149 C; the probe dipping on an air
#   cycle to within 0.07 C of the target plus one reading 1.7 sd low passed the extreme
#   block test on that prior while the drink was 0.48 C warmer than at the true crossing
CASES = [pytest.param(5072, "dense", id="hovering-drink"),
         pytest.param(5007, "sparse", id="dip-read-minutes-apart")]


@pytest.mark.parametrize("seed, sampling", CASES)
def test_a_drink_near_its_target_is_no_early_arrival(family_replay, seed, sampling):
    for approach in (0, -1):
        status, early, time_s = family_replay("fridge", seed, sampling, approach)
        assert "arrived" in status               # it does arrive, after the crossing
        assert not early.any(), time_s[early]
