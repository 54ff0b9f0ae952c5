"""Every ```python block in README.md runs (docs that cannot rot)."""
import os
import re

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def python_blocks():
    with open(os.path.join(ROOT, "README.md")) as f:
        text = f.read()
    return re.findall(r"```python\n(.*?)```", text, re.S)


def test_readme_has_python_examples():
    assert len(python_blocks()) >= 1


def test_readme_python_blocks_run(capsys):
    for block in python_blocks():
        exec(compile(block, "README.md", "exec"), {"__name__": "readme_example"})
    out = capsys.readouterr().out
    # the firmware quick start's last line, as the README promises it
    assert "598 s  arrived      ready" in out
