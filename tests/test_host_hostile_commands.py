"""Hostile inputs to calibrate, fleet and the profile reader: the bar replay meets (issue 19).

Every refused input ends in one line ``error: ...`` naming the file (and the row
when there is one), never a traceback, a hang or an overwritten input. The
corpus is tests/hostile_inputs (corpus.py there makes every file); the replay
corpus is run through calibrate and fleet too, so the three commands refuse the
same traces with the same words (one implementation: host_sim.replay.trace_checks).
"""
import csv
import json
import os
import subprocess
import sys

import pytest

from host_sim import cli
from host_sim.calibrate.checks import check_arguments
from host_sim.calibrate.report import load_profile
from host_sim.fleet import run as fleet
from host_sim.fleet.report import spreadsheet_text

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
CORPUS = os.path.join(HERE, "hostile_inputs")
sys.path.insert(0, CORPUS)
import corpus  # noqa: E402

# replay refuses these rows; calibrate skips bad rows by default (counted), so it
# calibrates on the rest of the trace
ROW_LEVEL = {"unterminated_quote.csv", "quote_inside_field.csv", "overlong_field.csv",
             "arabic_indic_digits.csv", "fullwidth_digits.csv", "underscore_number.csv",
             "hex_number.csv", "infinity_word.csv", "nan_cell.csv", "overflow_1e309.csv",
             "exponent_only.csv", "text_reading.csv", "empty_reading.csv",
             "two_files_joined.csv", "negative_time.csv", "decreasing_time.csv",
             "wrong_field_count.csv", "heater_out_of_range.csv", "heater_text.csv"}
# replay accepts these (its guard drops the spike); calibrate fits every reading
CALIBRATE_REFUSES = {"one_spike_1e308.csv": "line 31: temp_c 1e+308 C is outside"}


def run(argv, capsys):
    """(exit status, stdout, stderr) of the CLI in this process; argparse errors included."""
    try:
        code = cli.main(argv)
    except SystemExit as exc:           # an option refused by argparse
        code = exc.code
    cap = capsys.readouterr()
    return code, cap.out, cap.err


def one_error_line(err, *pieces):
    lines = [ln for ln in err.splitlines() if ln.startswith("error: ") or ": error: " in ln]
    assert len(lines) == 1, err
    assert "Traceback" not in err
    for piece in pieces:
        assert piece in lines[0], (piece, lines[0])
    assert len(lines[0]) < 400, lines[0]
    return lines[0]


def test_new_corpus_files_are_kept():
    extra = [(n, d) for n, d, _ in corpus.profile_cases()]
    extra += [(c[0], c[1]) for c in corpus.calibrate_cases() + corpus.manifest_cases()]
    assert len(extra) >= 30 and len({n for n, _ in extra}) == len(extra)
    for name, data in extra:
        with open(os.path.join(CORPUS, name), "rb") as handle:
            assert handle.read() == data, name + " differs from corpus.py (rerun it)"


# ------------------------------------------------------------------ the profile reader
@pytest.mark.parametrize("case", corpus.profile_cases(), ids=[c[0] for c in
                                                             corpus.profile_cases()])
def test_each_hostile_profile_gives_one_clear_line(case, tmp_path, capsys):
    name, _, text = case
    out = tmp_path / "pred.csv"
    code, _, err = run(["replay", os.path.join(CORPUS, "crlf.csv"), "--target", "60", "--out",
                        str(out), "--profile", os.path.join(CORPUS, name)], capsys)
    assert code == 2
    one_error_line(err, name, text)
    assert not out.exists()


def test_profile_reader_raises_only_value_error_and_reads_at_most_a_megabyte(tmp_path):
    for name, _, _ in corpus.profile_cases():
        try:
            prof, _ = load_profile(os.path.join(CORPUS, name))
        except ValueError:
            continue
        assert prof is None, name
    big = tmp_path / "big.json"
    big.write_bytes(b" " * ((1 << 20) + 1))
    with pytest.raises(ValueError, match="larger than"):
        load_profile(str(big))


def test_profile_from_dev_zero_returns(tmp_path):
    # issue 19: --profile /dev/zero never returned (read the whole "file")
    if not os.path.exists("/dev/zero"):
        pytest.skip("no /dev/zero")
    proc = subprocess.run([sys.executable, "-m", "host_sim", "replay",
                           os.path.join(CORPUS, "crlf.csv"), "--target", "60", "--out",
                           str(tmp_path / "p.csv"), "--profile", "/dev/zero"], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2 and "/dev/zero" in proc.stderr
    assert "Traceback" not in proc.stderr


@pytest.fixture(scope="module")
def passive_profile(tmp_path_factory):
    """A profile calibrated (no heater) on three accepted corpus traces."""
    d = tmp_path_factory.mktemp("prof")
    out = d / "p.json"
    code = cli.main(["calibrate"] + [os.path.join(CORPUS, n) for n in
                                     ("crlf.csv", "semicolon.csv", "tab.tsv")]
                    + ["--out", str(out), "--no-plots"])
    assert code == 0
    return out


def test_replay_says_when_the_profile_is_for_the_other_heater_mode(passive_profile, tmp_path,
                                                                   capsys):
    trace = tmp_path / "heated.csv"
    rows = corpus.cooling()
    trace.write_text("time_s,temp_c,heater\n" + "".join("%.1f,%.4f,0.5\n" % r for r in rows))
    code, _, err = run(["replay", str(trace), "--target", "60", "--out", str(tmp_path / "o.csv"),
                        "--profile", str(passive_profile), "--heater", "on"], capsys)
    assert code == 0
    assert "without a heater but this run is with one" in err
    code, _, err = run(["replay", os.path.join(CORPUS, "crlf.csv"), "--target", "60", "--out",
                        str(tmp_path / "o.csv"), "--profile", str(passive_profile)], capsys)
    assert code == 0 and "warning" not in err


def test_replay_says_when_the_profile_json_was_edited(passive_profile, tmp_path, capsys):
    doc = json.loads(passive_profile.read_text())
    doc["profile"]["rate_per_s"] *= 3.0
    edited = tmp_path / "edited.json"
    edited.write_text(json.dumps(doc))
    code, _, err = run(["replay", os.path.join(CORPUS, "crlf.csv"), "--target", "60", "--out",
                        str(tmp_path / "o.csv"), "--profile", str(edited)], capsys)
    assert code == 0
    assert "differs from its blob_hex in rate_per_s" in err


def test_replay_never_overwrites_its_profile(passive_profile, capsys):
    before = passive_profile.read_bytes()
    code, _, err = run(["replay", os.path.join(CORPUS, "crlf.csv"), "--target", "60", "--out",
                        str(passive_profile), "--profile", str(passive_profile)], capsys)
    assert code == 2
    one_error_line(err, "would overwrite the input")
    assert passive_profile.read_bytes() == before


# ------------------------------------------------------------------------ calibrate
@pytest.mark.parametrize("case", corpus.cases(), ids=[c[0] for c in corpus.cases()])
def test_calibrate_refuses_what_replay_refuses(case, tmp_path, capsys):
    name, _, extra, replay_code, _ = case
    out = tmp_path / "p.json"
    extra = [e for e in extra if e != "--skip-bad"]   # calibrate skips bad rows by default
    code, _, err = run(["calibrate", os.path.join(CORPUS, name), "--out", str(out),
                        "--no-plots", "--folds", "2"] + extra, capsys)
    if name in CALIBRATE_REFUSES:
        assert code == 2
        one_error_line(err, name, CALIBRATE_REFUSES[name])
    elif replay_code == 0 or name in ROW_LEVEL:
        assert code == 0, err
        assert out.exists()
        if name in ROW_LEVEL:
            assert "skipped" in err
    else:
        assert code == 2
        one_error_line(err, name)
        assert not out.exists()


@pytest.mark.parametrize("case", corpus.calibrate_cases(),
                         ids=[c[0] for c in corpus.calibrate_cases()])
def test_calibrate_corpus(case, tmp_path, capsys):
    name, _, extra, expected, text = case
    out = tmp_path / "p.json"
    code, stdout, err = run(["calibrate", os.path.join(CORPUS, name), "--out", str(out),
                             "--no-plots"] + extra, capsys)
    assert code == expected, err
    if expected == 2:
        one_error_line(err, name, text)
        assert not out.exists()
    else:
        assert text in stdout                          # the warning is printed
        assert any(text in w for w in json.loads(out.read_text())["warnings"])


def test_calibrate_units_mixed_and_options_refused(tmp_path, capsys):
    good = os.path.join(CORPUS, "crlf.csv")
    out = str(tmp_path / "p.json")
    # times in ms and deg F under temp_c, mixed with good traces: refused, file named
    for bad, piece in (("time_in_ms.csv", "--time-unit ms"), ("fahrenheit_as_c.csv",
                                                              "--fahrenheit")):
        code, _, err = run(["calibrate", good, os.path.join(CORPUS, bad), "--out", out,
                            "--no-plots"], capsys)
        assert code == 2
        one_error_line(err, bad, piece)
    code, _, err = run(["calibrate", os.path.join(CORPUS, "time_in_ms.csv"), "--time-unit",
                        "ms", "--out", out, "--no-plots"], capsys)
    assert code == 0, err
    for option in (["--smooth-s", "inf"], ["--smooth-s", "-1"], ["--folds", "-1"],
                   ["--ambient", "nan"], ["--fill-kg", "-1"]):
        code, _, err = run(["calibrate", good, "--out", out, "--no-plots"] + option, capsys)
        assert code == 2, option
        one_error_line(err, option[0])
    code, _, err = run(["calibrate", good, "--out", str(tmp_path / "nodir" / "x.json")], capsys)
    assert code == 2
    one_error_line(err, "does not exist")


def test_calibrate_arguments_checked_in_the_library():
    for kw in ({"smooth_s": float("inf")}, {"smooth_s": 0.0}, {"folds": -1},
               {"ambient_c": float("nan")}, {"fills": [float("nan")]}, {"fills": [1.0, 2.0]}):
        with pytest.raises(ValueError):
            check_arguments(1, **kw)
    check_arguments(1, fills=[0.3], ambient_c=21.0, folds=5, smooth_s=60.0)


def test_calibrate_never_overwrites_a_trace(tmp_path, capsys):
    keep = tmp_path / "keep.csv"
    keep.write_bytes(open(os.path.join(CORPUS, "crlf.csv"), "rb").read())
    before = keep.read_bytes()
    for out in ("keep.csv", "keep.json"):          # keep.json would write keep.bin, keep.hex
        code, _, err = run(["calibrate", str(keep), "--out", str(tmp_path / out)], capsys)
        if out == "keep.csv":
            assert code == 2
            one_error_line(err, "would overwrite the input")
    assert keep.read_bytes() == before
    hexfile = tmp_path / "q.hex"
    hexfile.write_bytes(before)
    code, _, err = run(["calibrate", str(hexfile), "--out", str(tmp_path / "q.json")], capsys)
    assert code == 2
    one_error_line(err, "would overwrite the input")
    assert hexfile.read_bytes() == before


# ---------------------------------------------------------------------------- fleet
def _results(path):
    with open(path, newline="") as handle:
        rows = list(csv.reader(handle))
    return [dict(zip(rows[0], r)) for r in rows[1:]]


@pytest.mark.parametrize("case", corpus.manifest_cases(),
                         ids=[c[0] for c in corpus.manifest_cases()])
def test_each_hostile_manifest(case, tmp_path, capsys):
    name, _, extra, expected, text = case
    out = tmp_path / "RESULTS.csv"
    code, stdout, err = run(["fleet", os.path.join(CORPUS, name), "--out", str(out),
                             "--workers", "0", "--quiet", "--no-plots"] + extra, capsys)
    assert code == expected, err
    assert "Traceback" not in err
    if expected == 2:
        one_error_line(err, name, text)
        assert not out.exists()
        return
    rows = _results(out)
    if expected == 1:                                  # some traces failed: exit 1, said so
        assert "failed" in err
        assert any(text in r["error"] for r in rows), rows
    else:
        assert all(r["error"] == "" for r in rows)
        if text:
            assert text in open(out).read()


def test_fleet_results_escape_spreadsheet_formulas(tmp_path, capsys):
    out = tmp_path / "RESULTS.csv"
    code, _, err = run(["fleet", os.path.join(CORPUS, "manifest_formula_tags.csv"), "--out",
                        str(out), "--workers", "0", "--quiet", "--no-plots"], capsys)
    assert code == 0, err
    tags = [r["tag"] for r in _results(out)]
    assert tags == ["'=HYPERLINK(\"http://x.invalid\",\"x\")", "'+SUM(1+1)", "'-2+3",
                    "'@SUM(1)", "TAB", "plain"]   # cells are stripped: no tab left
    by_tag = _results(tmp_path / "RESULTS_by_tag.csv")
    assert all(not r["value"].startswith(("=", "+", "-", "@", "\t", "\r")) for r in by_tag)
    assert spreadsheet_text("\rx") == "'\rx" and spreadsheet_text("21.5") == "21.5"


def test_fleet_refuses_the_traces_replay_refuses(tmp_path, capsys):
    out = tmp_path / "RESULTS.csv"
    code, _, err = run(["fleet", os.path.join(CORPUS, "manifest_refused_traces.csv"), "--out",
                        str(out), "--workers", "0", "--quiet", "--no-plots"], capsys)
    assert code == 1 and "4 of 5 trace(s) failed" in err
    errors = {r["path"]: r["error"] for r in _results(out)}
    assert "Kelvin" in errors["kelvin.csv"] and "--time-unit ms" in errors["time_in_ms.csv"]
    assert "--fahrenheit" in errors["fahrenheit_as_c.csv"]
    assert "same time_s" in errors["all_equal_times.csv"]
    assert errors["utf8_bom.csv"] == ""
    code, _, _ = run(["fleet", os.path.join(CORPUS, "manifest_refused_traces.csv"), "--out",
                      str(out), "--workers", "0", "--quiet", "--no-plots", "--allow-failures"],
                     capsys)
    assert code == 0


def test_fleet_options_and_outputs_refused(tmp_path, capsys):
    manifest = os.path.join(CORPUS, "manifest_bom.csv")
    out = str(tmp_path / "R.csv")
    for option in (["--workers", "-1"], ["--chunk", "-1"], ["--chunk", "0"],
                   ["--target", "nan"], ["--target", "1e308"]):
        code, _, err = run(["fleet", manifest, "--out", out, "--quiet"] + option, capsys)
        assert code == 2, option
        one_error_line(err, option[0])
    for bad in ({"workers": -1}, {"chunk_size": -1}, {"workers": 1.5}):
        with pytest.raises(ValueError):
            fleet.run_fleet([], {}, progress=False, **bad)
    with pytest.raises(ValueError, match="outside a liquid"):
        fleet.load_items(CORPUS, target_c=1e308)
    # the manifest and its traces are inputs: never written over
    for victim in (manifest, os.path.join(CORPUS, "utf8_bom.csv")):
        before = open(victim, "rb").read()
        code, _, err = run(["fleet", manifest, "--out", victim, "--workers", "0", "--quiet"],
                           capsys)
        assert code == 2
        one_error_line(err, "would overwrite the input")
        assert open(victim, "rb").read() == before


def test_whole_replay_corpus_through_fleet(tmp_path, capsys):
    """Every replay corpus file as a fleet trace: an error row exactly when replay refuses."""
    manifest = tmp_path / "all.csv"
    cases = [c for c in corpus.cases() if not c[2]]        # no extra replay options
    manifest.write_text("path,target\n" + "".join(
        "%s,60\n" % os.path.join(CORPUS, c[0]) for c in cases))
    out = tmp_path / "R.csv"
    code, _, err = run(["fleet", str(manifest), "--out", str(out), "--workers", "0", "--quiet",
                        "--no-plots"], capsys)
    assert code == 1 and "Traceback" not in err
    rows = {os.path.basename(r["path"]): r for r in _results(out)}
    for name, _, _, replay_code, text in cases:
        if replay_code == 0:
            assert rows[name]["error"] == "", name
        else:
            assert rows[name]["error"], name
            assert "\n" not in rows[name]["error"]


def test_calibrate_error_during_a_progress_bar_stands_on_its_own_line(tmp_path, capsys,
                                                                       monkeypatch):
    # fuzz_calibrate finding: a fit that failed inside cross-validation left the bar
    # open, and "error: ..." was glued to the bar's line
    from host_sim.calibrate import pipeline
    real = pipeline.fit_dynamics
    calls = []

    def fail_second(*args, **kw):
        calls.append(1)
        if len(calls) == 2:
            raise ValueError("fit failed on purpose")
        return real(*args, **kw)

    monkeypatch.setattr(pipeline, "fit_dynamics", fail_second)
    traces = [os.path.join(CORPUS, n) for n in ("crlf.csv", "semicolon.csv")]
    code, _, err = run(["calibrate"] + traces + ["--out", str(tmp_path / "p.json"),
                                                 "--no-plots"], capsys)
    assert code == 2 and len(calls) == 2
    one_error_line(err, "fit failed on purpose")
    assert "\rerror: fit failed" in err or err.startswith("error: ")
