"""benchmarks/miss_causes.py --split sorts the same rows as without it (CPython only).

The split (the trace's air column, the row's share of the approach) only refines the
causes: per trace, each cause's split counts must add up to its unsplit count, and
the air column named must be the trace's.
"""
import os
import sys
from collections import Counter

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(ROOT, "benchmarks"))

import miss_causes  # noqa: E402
from host_sim.sim import families as fam  # noqa: E402


@pytest.mark.parametrize("family,sampling,seed", [("room", "dense", 1009),
                                                  ("room", "sparse", 1001),
                                                  ("mug", "dense", 1004)])
def test_split_adds_up_to_the_causes(family, sampling, seed):
    plain = miss_causes.trace_causes(family, seed, sampling)
    split = miss_causes.trace_causes(family, seed, sampling, split=True)
    column = "air" if fam.load_or_generate(family, seed, sampling=sampling).truth[
        "has_ambient_column"] else "no air"
    merged = Counter()
    shares = set()
    for key, n in split.items():
        cause, _, where = key.partition(" | ")
        named, _, share = where.partition(", ")
        assert named == column, key
        assert share in ("<0.1", "<0.5", "<0.9", ">=0.9"), key
        merged[cause] += n
        shares.add(share)
    assert merged == plain
    assert sum(plain.values()) > 0 and len(shares) > 1  # (rows sorted, over more than one share)
