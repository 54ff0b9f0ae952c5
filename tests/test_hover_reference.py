"""A drink hovering just short of its target in a cycling fridge: no arrival from a line run on.

The fridge family's physics (host_sim.sim, scipy ``solve_ivp``; crossing by
``brentq``) of one trace found on the holdout seeds, where a straight-line fit
(k pinned at 0) through the probe's hover ran the level past the target while
the drink was 0.6 C warmer than at the true crossing. Judged as the families
benchmark judges (host_sim.replay.metrics.early_rows).
"""
from host_sim.replay.metrics import early_rows
from host_sim.sim import families as F
from tinytherm.estimator import ThermalEstimator


def test_a_hovering_drink_is_no_arrival(families_bench):
    bench = families_bench
    ft = F.generate("fridge", 5072)
    tr = ft.truth
    kw = bench.device_kwargs(ThermalEstimator, False, tr["quantum_c"])
    for approach in (0, -1):
        _eta, _low, _high, status = bench.replay_estimator(
            ThermalEstimator, kw, ft.time_s, ft.temp_c, tr["target_c"],
            ambient_c=ft.ambient_c, approach=approach)
        assert "arrived" in status               # it does arrive, after the crossing
        early = early_rows(status, ft.liquid_c, tr["liquid_at_crossing_c"], tr["noise_sd_c"],
                           tr["direction"])
        assert not early.any(), ft.time_s[early]
