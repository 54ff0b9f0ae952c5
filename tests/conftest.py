"""Hypothesis profiles: CI runs the property tests on fixed examples, exploring is a separate command.

- ``ci`` (the default): ``derandomize=True``: every run draws the same
  examples, so the suite cannot fail by chance.
- ``explore``: random examples, for finding new failures::

      HYPOTHESIS_PROFILE=explore .venv/bin/python -m pytest -q tests/test_*properties*.py \\
          tests/test_model_reference.py tests/test_forecast_reference.py --hypothesis-seed 7

  (a failure found there becomes a fixed test; see DEVELOPERS.md).
"""
import os

from hypothesis import settings

settings.register_profile("ci", derandomize=True, print_blob=True)
settings.register_profile("explore", derandomize=False, print_blob=True)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))
