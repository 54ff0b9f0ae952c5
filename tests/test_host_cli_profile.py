"""replay --profile: the profile goes through its device blob, and a refused one is an error.

Traces are our own invented scenarios (host_sim.sim.scenarios); the profile is
written by hand in the JSON form `calibrate` writes (only ``blob_hex`` is
read, as the device would read only the blob).
"""
import json
import subprocess
import sys

from tinytherm.profile import VesselProfile


def _run(args):
    return subprocess.run([sys.executable, "-m", "host_sim"] + args, capture_output=True,
                          text=True)


def test_replay_takes_a_profile_and_refuses_a_corrupted_one(tmp_path):
    trace = str(tmp_path / "mug.csv")
    assert _run(["scenario", "mug", "--seed", "3", "--out", trace]).returncode == 0
    good = tmp_path / "good.json"
    blob = VesselProfile(rate_per_s=1.0 / 1500.0, rate_log_sd=0.3).to_blob()
    good.write_text(json.dumps({"blob_hex": blob.hex()}))
    proc = _run(["replay", trace, "--target", "50", "--approach", "cool", "--profile",
                 str(good), "--out", str(tmp_path / "p.csv")])
    assert proc.returncode == 0, proc.stderr
    bad = tmp_path / "bad.json"
    broken = bytearray(blob)
    broken[10] ^= 0xFF
    bad.write_text(json.dumps({"blob_hex": bytes(broken).hex()}))
    proc = _run(["replay", trace, "--target", "50", "--profile", str(bad),
                 "--out", str(tmp_path / "q.csv")])
    assert proc.returncode == 2
    assert "profile_crc" in proc.stderr and "Traceback" not in proc.stderr
