"""replay --approach: a product that cools to its target is not 'arrived' while its probe warms up.

The trace is our own invented mug scenario (host_sim.sim.scenarios, seed 5): the
probe starts at room temperature and rises through the drinking target after
the pour. The check is the estimator's arrival promise against the scenario's
exact noise-free crossing (solve_ivp + brentq in host_sim.sim.scenarios).
"""
import csv
import json
import subprocess
import sys


def _rows(path):
    with open(path) as f:
        return list(csv.DictReader(f))


def test_no_early_arrival_by_default_nor_with_cool_approach(tmp_path):
    # the probe's rise after the pour crosses 55 C on its way up; the default
    # (no direction given) and --approach cool both wait for the drink itself
    trace = str(tmp_path / "mug.csv")
    truth = str(tmp_path / "mug.json")
    subprocess.run([sys.executable, "-m", "host_sim", "scenario", "mug", "--seed", "5",
                    "--out", trace, "--truth", truth], check=True, capture_output=True)
    with open(truth) as f:
        crossing = json.load(f)["crossing_time_s"]
    early = {}
    arrived = {}
    for approach in ("either", "cool"):
        out = str(tmp_path / ("pred_%s.csv" % approach))
        subprocess.run([sys.executable, "-m", "host_sim", "replay", trace, "--target", "55",
                        "--approach", approach, "--out", out], check=True, capture_output=True)
        rows = _rows(out)
        early[approach] = sum(1 for r in rows
                              if r["status"] == "arrived" and float(r["time_s"]) < crossing - 30.0)
        arrived[approach] = any(r["status"] == "arrived" for r in rows)
    assert early["either"] == 0 and early["cool"] == 0
    assert arrived["either"] and arrived["cool"]
