"""Hypothesis profiles, and the families benchmark as a module for the tests that check its parts.

Hypothesis: CI runs the property tests on fixed examples, exploring is a separate command.

- ``ci`` (the default): ``derandomize=True``: every run draws the same
  examples, so the suite cannot fail by chance.
- ``explore``: random examples, for finding new failures::

      HYPOTHESIS_PROFILE=explore .venv/bin/python -m pytest -q tests/test_*properties*.py \\
          tests/test_model_reference.py tests/test_forecast_reference.py --hypothesis-seed 7

  (a failure found there becomes a fixed test; see DEVELOPERS.md).
"""
import importlib.util
import os

import pytest
from hypothesis import settings

settings.register_profile("ci", derandomize=True, print_blob=True)
settings.register_profile("explore", derandomize=False, print_blob=True)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))


@pytest.fixture(scope="session")
def families_bench():
    """``benchmarks/families.py`` loaded as a module (a script, not in a package)."""
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    spec = importlib.util.spec_from_file_location(
        "bench_families", os.path.join(root, "benchmarks", "families.py"))
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


@pytest.fixture(scope="session")
def family_replay(families_bench):
    """Replay one families-benchmark trace as a device would; (statuses, early-arrival rows).

    ``family_replay(family, seed, sampling="dense", approach=0)``: the trace from
    ``host_sim.sim.families.generate`` (its physics by scipy ``solve_ivp``), fed
    through ``benchmarks/families.py``'s replay with the device's settings, and
    judged as the benchmark judges (``host_sim.replay.metrics.early_rows``, against
    the liquid where the trace has one, else the clean signal).
    """
    from host_sim.replay.metrics import early_rows
    from host_sim.sim import families as F
    from tinytherm.estimator import ThermalEstimator

    def replay(family, seed, sampling="dense", approach=0):
        ft = F.generate(family, seed, sampling=sampling)
        tr = ft.truth
        heated = ft.heater is not None
        kw = families_bench.device_kwargs(ThermalEstimator, heated, tr["quantum_c"])
        _eta, _low, _high, status = families_bench.replay_estimator(
            ThermalEstimator, kw, ft.time_s, ft.temp_c, tr["target_c"],
            ambient_c=ft.ambient_c, heater=ft.heater, approach=approach)
        liquid = ft.liquid_c is not None
        early = early_rows(status, ft.liquid_c if liquid else ft.clean_c,
                           tr["liquid_at_crossing_c"] if liquid else tr["target_c"],
                           tr["noise_sd_c"], tr["direction"])
        return status, early, ft.time_s
    return replay
