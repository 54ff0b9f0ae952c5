"""Hostile inputs to the replay CLI: every bad file ends in one clear line, never a traceback.

The corpus (tests/hostile_inputs/, made by corpus.py there) covers non-UTF-8 and
binary input, containers, separators, quotes, over-long fields, numbers float()
would take but a trace must not hold, impossible units and clocks, and broken
structure. The reproducers of issue 12 item 7-8 and issue 13's header problems are
among them.
"""
import os
import subprocess
import sys

import pytest

from host_sim import cli

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
CORPUS = os.path.join(HERE, "hostile_inputs")
sys.path.insert(0, CORPUS)
import corpus  # noqa: E402

CASES = corpus.cases()
PLOTTED = ("emoji_event.csv", "one_spike_1e308.csv", "overlong_header_name.csv")


def run_cli(argv, capsys):
    code = cli.main(argv)
    cap = capsys.readouterr()
    return code, cap.out, cap.err


def test_corpus_is_large_and_kept_in_the_tests():
    assert len(CASES) >= 50
    assert len({c[0] for c in CASES}) == len(CASES)
    for name, data, _, _, _ in CASES:
        path = os.path.join(CORPUS, name)
        with open(path, "rb") as handle:
            assert handle.read() == data, name + " differs from corpus.py (rerun it)"


@pytest.mark.parametrize("case", CASES, ids=[c[0] for c in CASES])
def test_each_hostile_file_gives_one_clear_line(case, tmp_path, capsys):
    name, _, extra, expected_code, text = case
    out = tmp_path / "pred.csv"
    code, stdout, stderr = run_cli(["replay", os.path.join(CORPUS, name), "--target", "60",
                                    "--out", str(out)] + extra, capsys)
    assert code == expected_code, (name, stderr)
    if expected_code == 0:
        assert out.exists() and "replayed" in stdout
        if name not in PLOTTED:
            return
        png = tmp_path / "plot.png"                    # some accepted files also plot
        code, stdout, stderr = run_cli(["replay", os.path.join(CORPUS, name), "--target", "60",
                                        "--out", str(out), "--plot", str(png)] + extra, capsys)
        assert code == 0 and png.read_bytes()[:4] == b"\x89PNG", stderr
        return
    lines = [ln for ln in stderr.splitlines() if ln.strip()]
    errors = [ln for ln in lines if ln.startswith("error: ")]
    assert len(errors) == 1, stderr
    assert "Traceback" not in stderr
    assert name in errors[0]                           # names the file
    assert text in errors[0], errors[0]
    assert len(errors[0]) < 400, errors[0]             # one readable line, never a dump
    assert not out.exists()                            # no half-written predictions


def test_hundred_thousand_column_header_is_read_in_linear_time(tmp_path, capsys):
    # issue 12 item 7: the duplicate-column check was quadratic and hung. A hang
    # guard only (the subprocess would time out), not a speed figure.
    path = tmp_path / "wide.csv"
    names = ["time_s", "temp_c"] + ["c%d" % i for i in range(99998)]
    with open(path, "w") as handle:
        handle.write(",".join(names) + "\n")
        for i in range(6):
            handle.write("%d,%.2f," % (i * 120, 80 - i) + ",".join(["1"] * 99998) + "\n")
    proc = subprocess.run([sys.executable, "-m", "host_sim", "replay", str(path), "--target",
                           "60", "--out", str(tmp_path / "p.csv")], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert "replayed 6 rows" in proc.stdout
    dup = tmp_path / "dup.csv"
    dup.write_text(",".join(["time_s", "temp_c"] + ["c"] * 99998) + "\n0,1," + "," * 99997 + "\n")
    code, _, err = run_cli(["replay", str(dup), "--target", "60", "--out",
                            str(tmp_path / "q.csv")], capsys)
    assert code == 2 and "duplicate column(s) c" in err and len(err) < 300


def test_line_without_end_over_a_megabyte(tmp_path, capsys):
    path = tmp_path / "long.csv"
    path.write_bytes(b"time_s,temp_c\n0," + b"1" * (3 << 20))
    code, _, err = run_cli(["replay", str(path), "--target", "60", "--out",
                            str(tmp_path / "p.csv")], capsys)
    assert code == 2 and "long.csv:2: line longer than" in err


def test_folder_as_trace_and_missing_trace(tmp_path, capsys):
    code, _, err = run_cli(["replay", str(tmp_path), "--target", "60", "--out",
                            str(tmp_path / "p.csv")], capsys)
    assert code == 2 and "is a folder" in err
    code, _, err = run_cli(["replay", str(tmp_path / "nope.csv"), "--target", "60", "--out",
                            str(tmp_path / "p.csv")], capsys)
    assert code == 2 and "no such file" in err


def test_real_entry_point_prints_no_traceback(tmp_path):
    for name in ("binary_junk.bin", "utf16_le_bom.csv", "latin1_header.csv",
                 "zip_archive.zip", "overlong_field.csv", "unterminated_quote.csv"):
        proc = subprocess.run([sys.executable, "-m", "host_sim", "replay",
                               os.path.join(CORPUS, name), "--target", "60", "--out",
                               str(tmp_path / "p.csv")], cwd=ROOT, capture_output=True,
                              text=True, timeout=120)
        assert proc.returncode == 2, name
        assert "Traceback" not in proc.stderr and proc.stderr.startswith("error: "), proc.stderr
        assert proc.stderr.count("\n") == 1, proc.stderr
