"""The README's host_sim commands run as written (in a scratch folder)."""
import os
import re
import shlex
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def host_sim_commands():
    with open(os.path.join(ROOT, "README.md")) as f:
        text = f.read()
    section = text.split("## Replaying traces on a PC", 1)[1].split("\n## ", 1)[0]
    blocks = re.findall(r"```sh\n(.*?)```", section, re.S)
    return [line for b in blocks for line in b.splitlines() if line.startswith("python -m host_sim")]


def test_readme_host_sim_block_runs(tmp_path):
    cmds = host_sim_commands()
    assert len(cmds) >= 3
    env = dict(os.environ, PYTHONPATH=ROOT + os.pathsep + os.environ.get("PYTHONPATH", ""))
    for cmd in cmds:
        argv = shlex.split(cmd)
        proc = subprocess.run([sys.executable] + argv[1:], cwd=tmp_path, env=env,
                              capture_output=True, text=True, timeout=120)
        assert proc.returncode == 0, cmd + "\n" + proc.stderr
    assert (tmp_path / "pred.csv").read_text().startswith(
        "time_s,temp_c,eta_s,eta_low_s,eta_high_s,status,rate_per_s,equilibrium_c\n")
    assert (tmp_path / "replay.png").stat().st_size > 0 and (tmp_path / "demo.png").stat().st_size > 0
