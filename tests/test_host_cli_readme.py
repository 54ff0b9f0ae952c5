"""README structure for a new user (issue 13): order, quick start, display table, links, tags."""
import io
import os
import re
from contextlib import redirect_stdout

from host_sim.replay.trace_io import read_trace
from tinytherm import status as st

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def readme():
    with open(os.path.join(ROOT, "README.md")) as f:
        return f.read()


def section(text, heading):
    return text.split(heading + "\n", 1)[1].split("\n## ", 1)[0]


def run_block(code):
    out = io.StringIO()
    with redirect_stdout(out):
        exec(compile(code, "README.md", "exec"), {"__name__": "readme_example"})
    return out.getvalue()


def test_order_job_then_quick_start_then_installing_then_replay():
    text = readme()
    heads = re.findall(r"^## (.+)$", text, re.M)
    assert heads[:4] == ["Firmware quick start", "Cautions", "Installing",
                         "Replaying traces on a PC"]
    intro = text.split("\n## ", 1)[0]
    assert "how long until the liquid reaches a target" in intro   # the job paragraph


def test_quick_start_loop_runs_and_ends_arrived():
    block = re.findall(r"```python\n(.*?)```", section(readme(), "## Firmware quick start"),
                       re.S)[0]
    for call in ("update_ticks(", "predict(", "0x3FFFFFFF"):
        assert call in block
    lines = run_block(block).splitlines()
    assert len(lines) == 3
    assert lines[-1] == " 598 s  arrived      ready"     # the line the README promises
    for line in lines:
        assert line.split()[2] in st.STATUS_NAMES


def test_display_table_covers_every_status_with_cautions():
    sec = section(readme(), "## Firmware quick start")
    table = sec.split("### What to show for each status", 1)[1]
    rows = [ln for ln in table.splitlines() if ln.startswith("| `")]
    assert sorted(r.split("`")[1] for r in rows) == sorted(st.STATUS_NAMES)
    header = [ln for ln in table.splitlines() if ln.startswith("| status")][0]
    for product in ("mug", "kettle", "bath"):
        assert product in header
    for caution in ("scald", "never a safety\ninterlock", "local codes"):
        assert caution in table


def test_recording_block_writes_a_trace_the_reader_takes():
    sec = section(readme(), "## Recording a trace on a device")
    block = re.findall(r"```python\n(.*?)```", sec, re.S)[0]
    namespace = {"__name__": "readme_example"}
    out = io.StringIO()
    with redirect_stdout(out):
        exec(compile(block, "README.md", "exec"), namespace)
    assert out.getvalue().strip() == "['time_s,temp_c', '0.0,80.0000']"
    trace = read_trace(namespace["PATH"])
    assert len(trace) == 120 and trace.time_s[-1] == 238.0
    assert "firmware_examples/trace_logger.py" in sec
    assert os.path.exists(os.path.join(ROOT, "firmware_examples", "trace_logger.py"))


def test_estimator_section_and_links_exist():
    text = readme()
    # the estimator's section says what it measured and at which commit
    assert "## Estimator\n" in text and "commit" in section(text, "## Estimator")
    for link in re.findall(r"\]\(([^)#]+)\)", text):
        if not link.startswith("http"):
            assert os.path.exists(os.path.join(ROOT, link)), link


def test_figures_name_their_commit():
    # a paragraph or table caption that gives measured figures names the commit
    for name in ("README.md", os.path.join("docs", "benchmarks.md")):
        with open(os.path.join(ROOT, name)) as f:
            paragraphs = f.read().split("\n\n")
        for p in paragraphs:
            if re.search(r"\b[Mm]easured (with the core|at\b|by `)", p):
                assert re.search(r"\bcommits? [0-9a-f]{7}", p), (name, p[:200])
    assert len(readme().splitlines()) <= 360     # about 300 lines; the long tables live in docs/
    with open(os.path.join(ROOT, "DEVELOPERS.md")) as f:
        assert len(f.read().splitlines()) <= 300  # a map of the code; history in docs/benchmarks.md
