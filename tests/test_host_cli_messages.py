"""Every option a command's message names is an option of that command (issue 19).

A hint such as "time in milliseconds? add --time-unit ms" is only help when the
command that printed it takes ``--time-unit``. Each command (replay, calibrate,
fleet) is run on the hostile corpus (tests/hostile_inputs) and on inputs made to
trigger every hint of the shared trace checks (Kelvin, deg F, ms, minutes, a
deg F target, an ambient column in Kelvin); every ``--option`` in what it prints
and writes (stdout, stderr, fleet's RESULTS files) is checked against that
command's argparse parser. The shared unit options are one implementation: the
same spellings in every command that reads traces.
"""
import os
import re
import sys

import pytest

from host_sim import cli
from host_sim.cli.dispatch import build_parser

HERE = os.path.dirname(os.path.abspath(__file__))
CORPUS = os.path.join(HERE, "hostile_inputs")
sys.path.insert(0, CORPUS)
import corpus  # noqa: E402

OPTION = re.compile(r"(?<![\w-])--[a-z][a-z0-9]*(?:-[a-z0-9]+)*")
# traces whose messages carry a hint naming an option
HINTED = ("kelvin.csv", "fahrenheit_as_c.csv", "fahrenheit_hot_start.csv", "ambient_kelvin.csv",
          "time_in_minutes.csv", "time_in_ms.csv", "epoch_ms_timestamps.csv", "short_trace.csv",
          "time_ms_column.csv", "temp_f_without_flag.csv", "iso_time_column.csv",
          "all_equal_times.csv", "times_near_1e300.csv", "crlf.csv", "skip_bad_all_bad.csv",
          "two_files_joined.csv")


def subparser(name):
    parser = build_parser()
    for action in parser._subparsers._group_actions:
        if name in action.choices:
            return action.choices[name]
    raise AssertionError("no command %s" % name)


def options_of(name):
    return set(subparser(name)._option_string_actions)


def named_options(text):
    return set(OPTION.findall(text))


def run(argv, capsys):
    try:
        code = cli.main(argv)
    except SystemExit as exc:
        code = exc.code
    cap = capsys.readouterr()
    return code, cap.out + cap.err


def written_text(folder):
    """Every text file a command wrote into ``folder`` (fleet's RESULTS.csv, report, ...)."""
    out = []
    for name in sorted(os.listdir(folder)):
        if name.endswith((".csv", ".md", ".json", ".hex")):
            with open(os.path.join(folder, name), encoding="utf-8", errors="replace") as fh:
                out.append(fh.read())
    return "\n".join(out)


def check(command, texts):
    have = options_of(command)
    missing = {}
    for label, text in texts:
        for option in named_options(text) - have:
            missing.setdefault(option, label)
    assert not missing, "%s names options it does not have: %s" % (command, missing)


def corpus_cases(names=None):
    return [c for c in corpus.cases() if names is None or c[0] in names]


def test_the_pattern_finds_options():
    assert named_options("add --time-unit ms; (--no-checks replays it)") == {"--time-unit",
                                                                             "--no-checks"}
    assert named_options("a -- b, x--y, 3--5") == set()


def test_replay_messages_name_replay_options(tmp_path, capsys):
    texts = []
    for name, _, extra, _, _ in corpus_cases():
        code, text = run(["replay", os.path.join(CORPUS, name), "--target", "60", "--out",
                          str(tmp_path / "p.csv")] + extra, capsys)
        texts.append((name, text))
    for target in ("185", "400", "-80"):
        texts.append(("target " + target, run(["replay", os.path.join(CORPUS, "crlf.csv"),
                                                "--target", target, "--out",
                                                str(tmp_path / "p.csv")], capsys)[1]))
    for name, _, _ in corpus.profile_cases():
        texts.append((name, run(["replay", os.path.join(CORPUS, "crlf.csv"), "--target", "60",
                                 "--out", str(tmp_path / "p.csv"), "--profile",
                                 os.path.join(CORPUS, name)], capsys)[1]))
    assert any("--time-unit ms" in t for _, t in texts)      # the hints were reached
    check("replay", texts)


def test_calibrate_messages_name_calibrate_options(tmp_path, capsys):
    texts = []
    cases = [(n, [e for e in extra if e != "--skip-bad"]) for n, _, extra, _, _
             in corpus_cases(HINTED)]
    cases += [(c[0], c[2]) for c in corpus.calibrate_cases()]
    for name, extra in cases:
        code, text = run(["calibrate", os.path.join(CORPUS, name), "--out",
                          str(tmp_path / "p.json"), "--no-plots", "--folds", "2"] + extra, capsys)
        texts.append((name, text))
    assert any("Kelvin" in t for _, t in texts) and any("--time-unit" in t for _, t in texts)
    check("calibrate", texts)


def test_fleet_messages_name_fleet_options(tmp_path, capsys):
    texts = []
    runs = [([os.path.join(CORPUS, n), "--target", "60"] + extra, n)
            for n, _, extra, _, _ in corpus_cases(HINTED)]
    runs += [([os.path.join(CORPUS, "crlf.csv"), "--target", t], "target " + t)
             for t in ("185", "400")]
    runs += [([os.path.join(CORPUS, c[0])] + c[2], c[0]) for c in corpus.manifest_cases()]
    for i, (argv, label) in enumerate(runs):
        folder = tmp_path / ("run%d" % i)
        folder.mkdir()
        code, text = run(["fleet"] + argv + ["--out", str(folder / "r.csv"), "--workers", "0",
                                             "--quiet", "--no-plots"], capsys)
        texts.append((label, text + written_text(str(folder))))
    assert any("Kelvin" in t for _, t in texts) and any("--time-unit" in t for _, t in texts)
    check("fleet", texts)


@pytest.mark.parametrize("command", ["replay", "calibrate", "fleet"])
def test_trace_unit_options_are_spelled_alike(command):
    have = options_of(command)
    for option in ("--fahrenheit", "--time-unit", "--no-checks", "--skip-bad"):
        assert option in have, (command, option)
    helps = {a.dest: a.help for a in subparser(command)._actions}
    assert "deg F" in helps["fahrenheit"] and "seconds" in helps["time_unit"]


def _fleet_row(argv, folder, capsys):
    import csv
    code, text = run(["fleet"] + argv + ["--out", str(folder / "r.csv"), "--workers", "0",
                                         "--quiet", "--no-plots"], capsys)
    with open(str(folder / "r.csv"), newline="") as fh:
        return code, text, list(csv.DictReader(fh))


def test_fleet_reads_units_as_replay_does(tmp_path, capsys):
    # the same drink in seconds, in milliseconds and in deg F: the same fleet figures
    rows = corpus.cooling()
    (tmp_path / "s.csv").write_text(corpus.csv_text(rows))
    (tmp_path / "ms.csv").write_text(corpus.csv_text([(1000.0 * t, y) for t, y in rows]))
    (tmp_path / "f.csv").write_text(corpus.csv_text([(t, y * 1.8 + 32.0) for t, y in rows],
                                                    fmt=("%.1f", "%.6f")))
    got = {}
    for name, extra in (("s", ["--target", "60"]),
                        ("ms", ["--target", "60", "--time-unit", "ms"]),
                        ("f", ["--target", "140", "--fahrenheit", "--target-in-f"])):
        folder = tmp_path / name
        folder.mkdir()
        code, text, res = _fleet_row([str(tmp_path / (name + ".csv"))] + extra, folder, capsys)
        assert code == 0, text
        assert res[0]["error"] == "", res[0]
        got[name] = float(res[0]["median_rel_error"])
    assert got["ms"] == pytest.approx(got["s"], rel=1e-9)
    assert got["f"] == pytest.approx(got["s"], abs=1e-3)
    # without the option the ms trace is refused with the hint, and --no-checks runs it
    folder = tmp_path / "refused"
    folder.mkdir()
    code, text, res = _fleet_row([str(tmp_path / "ms.csv"), "--target", "60"], folder, capsys)
    assert code == 1 and "--time-unit ms" in res[0]["error"] and "--no-checks" in res[0]["error"]
    folder = tmp_path / "unchecked"
    folder.mkdir()
    code, text, res = _fleet_row([str(tmp_path / "ms.csv"), "--target", "60", "--no-checks"],
                                 folder, capsys)
    assert res[0]["error"] == "", res[0]


@pytest.mark.parametrize("argv", [
    ["demo", "--kind", "mug", "--seed", "3"],
    ["demo", "--every", "1", "--kind", "fridge", "--seed", "1"],      # rows left out
    ["demo", "--plot", "{d}/missing/d.png"],
    ["demo", "--plot", "{d}/d.txt"],
    ["scenario", "mug"],
    ["scenario", "mug", "--out", "{d}/t.csv", "--truth", "{d}/t.csv"],
    ["scenario", "mug", "--out", "{d}/missing/t.csv"],
    ["benchmark", "--csv", "{d}/missing/b.csv"],
    ["benchmark", "--csv", "{d}/b.csv", "--set", "nonsense=1"],
    ["benchmark", "--csv", "{d}/b.csv", "--profile", "{d}/none.json"],
])
def test_other_commands_name_their_own_options(argv, tmp_path, capsys):
    argv = [a.replace("{d}", str(tmp_path)) for a in argv]
    code, text = run(argv, capsys)
    assert text
    check(argv[0], [(" ".join(argv), text)])


def test_the_ambient_hint_works_where_it_is_given(tmp_path, capsys):
    # a Kelvin ambient column: the hint names how to ignore the column, and following it
    # replays the trace (it was refused again with the same hint)
    trace = os.path.join(CORPUS, "ambient_kelvin.csv")
    code, text = run(["replay", trace, "--target", "60", "--out", str(tmp_path / "p.csv")],
                     capsys)
    assert code == 2 and "add --ignore-ambient-column" in text
    code, text = run(["replay", trace, "--target", "60", "--out", str(tmp_path / "p.csv"),
                      "--ignore-ambient-column", "--no-table"], capsys)
    assert code == 0, text
    folder = tmp_path / "fleet"
    folder.mkdir()
    code, text, res = _fleet_row([trace, "--target", "60"], folder, capsys)
    assert code == 1 and "add --set use_ambient_column=false" in res[0]["error"]
    code, text, res = _fleet_row([trace, "--target", "60", "--set", "use_ambient_column=false"],
                                 folder, capsys)
    assert code == 0 and res[0]["error"] == "", res[0]


def test_a_too_short_trace_gets_the_minutes_hint_only_when_it_would_help(tmp_path, capsys):
    out = str(tmp_path / "p.csv")
    code, text = run(["replay", os.path.join(CORPUS, "single_row.csv"), "--target", "60",
                      "--out", out], capsys)       # one row: 0 s, in minutes still 0 s
    assert code == 2 and "covers only 0 s (1 rows)" in text and "--time-unit" not in text
    code, text = run(["replay", os.path.join(CORPUS, "time_in_minutes.csv"), "--target", "60",
                      "--out", out], capsys)       # 6.6 "s": 6.6 min read as seconds
    assert code == 2 and "add --time-unit min" in text
    code, text = run(["replay", os.path.join(CORPUS, "time_in_minutes.csv"), "--target", "60",
                      "--out", out, "--time-unit", "min", "--no-table"], capsys)
    assert code == 0, text
