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
