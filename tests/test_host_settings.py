"""One settings object for every command (host_sim.replay.settings.ReplaySettings).

The settings and the option tables follow the estimator's signature, read
here with ``inspect.signature`` as the reference; traces are our own invented
scenarios (host_sim.sim.scenarios). Only arguments every recent core takes
are named (ambient_c, ambient_prior_c, interval, quantum_c, spike_window),
so the tests hold across changes of the estimator's signature.
"""
import functools
import inspect
import math

import pytest

from host_sim import cli
from host_sim.cli.dispatch import build_parser
from host_sim.replay.replay import replay, replay_rows
from host_sim.replay.settings import ReplaySettings, estimator_arguments, settings_of
from host_sim.replay.trace_io import read_predictions, read_trace
from host_sim.replay.trace_reader import iter_trace_rows
from host_sim.sim.scenarios import generate, write_scenario
from test_host_cli_options import one_error, run
from tinytherm.estimator import ThermalEstimator
from tinytherm.profile import VesselProfile


@pytest.fixture(scope="module")
def mug(tmp_path_factory):
    d = tmp_path_factory.mktemp("mug")
    gen = generate("mug", 4)
    write_scenario(gen, d / "mug.csv")
    return gen.truth["target_c"], d / "mug.csv"


def _subparser(name):
    parser = build_parser()
    sub = [a for a in parser._actions if a.dest == "command"][0]
    return sub.choices[name]


def _flags(parser):
    return {flag for action in parser._actions for flag in action.option_strings}


def test_names_and_defaults_come_from_the_signature():
    want = {n: p.default for n, p in inspect.signature(ThermalEstimator.__init__).parameters.items()
            if n != "self"}
    assert estimator_arguments() == want
    s = ReplaySettings()
    for name, default in want.items():
        if name != "heater":              # the replay's auto/on/off takes its place
            assert s.value(name) == default
    assert (s.value("heater"), s.value("approach"), s.value("use_ambient_column")) == (
        "auto", 0, True)


def test_text_values_are_read_by_the_kind_of_the_default():
    s = ReplaySettings(["interval=0.5", "spike_window= 5", "ambient_c=none", "approach=cool",
                        "heater=off", "use_ambient_column=false", "quantum_c=1e-1"])
    assert s.given == {"interval": 0.5, "spike_window": 5, "ambient_c": None, "approach": -1,
                       "heater": "off", "use_ambient_column": False, "quantum_c": 0.1}
    assert (s.approach, s.heater, s.use_ambient_column) == (-1, "off", False)
    # a made-up signature: a bool, an int and a float or None, read the same way
    args = {"flag": False, "count": 3, "level_c": None, "heater": False}
    t = ReplaySettings(["flag=yes", "count=7", "level_c=2.5"], arguments=args)
    assert t.given == {"flag": True, "count": 7, "level_c": 2.5}
    assert t.constructor_kwargs(has_heater=False, any_duty=False) == {
        "flag": True, "count": 7, "level_c": 2.5, "heater": False}


@pytest.mark.parametrize("pair, text", [
    ("interval=nan", "interval must be a finite number"),
    ("interval=inf", "interval must be a finite number"),
    ("ambient_c=-inf", "ambient_c must be a finite number"),
    ("quantum_c=fine", "quantum_c must be a number"),
    ("spike_window=3.5", "spike_window must be an integer"),
    ("approach=down", "approach must be cool, heat or either"),
    ("heater=maybe", "heater must be auto, on or off"),
    ("use_ambient_column=2", "use_ambient_column must be true or false"),
    ("no_such_setting=1", "unknown setting no_such_setting"),
    ("interval", "is not NAME=VALUE"),
    ("=0.5", "has no name"),
])
def test_bad_settings_are_refused_naming_the_setting(pair, text):
    with pytest.raises(ValueError) as exc:
        ReplaySettings([pair])
    assert text in str(exc.value)


def test_python_values_meet_the_same_checks():
    assert ReplaySettings({"interval": 0.5, "approach": 1}).given == {"interval": 0.5,
                                                                      "approach": 1}
    for bad in ({"interval": math.nan}, {"interval": "0.5x"}, {"spike_window": 3.0},
                {"spike_window": True}, {"approach": 2}):
        with pytest.raises(ValueError):
            ReplaySettings(bad)
    with pytest.raises(ValueError, match="given twice"):
        ReplaySettings(["interval=0.5", "interval=0.6"])
    with pytest.raises(ValueError, match="given twice"):
        settings_of(ReplaySettings({"interval": 0.5}), interval=0.6)


def test_text_form_gives_the_same_settings_back():
    s = ReplaySettings({"interval": 0.1 + 0.2, "ambient_c": None, "spike_window": 5,
                        "approach": -1, "heater": "on", "use_ambient_column": False})
    assert ReplaySettings(s.to_pairs()) == s
    assert ReplaySettings(s.to_pairs()).given["interval"] == 0.1 + 0.2     # exactly


def test_heater_mode_and_the_trace_decide_the_estimators_heater():
    auto, on, off = (ReplaySettings({"heater": h}) for h in ("auto", "on", "off"))
    assert auto.constructor_kwargs(True, True)["heater"] is True
    assert auto.constructor_kwargs(True, False)["heater"] is False
    assert off.constructor_kwargs(True, True)["heater"] is False
    assert on.constructor_kwargs(True, False)["heater"] is True
    with pytest.raises(ValueError, match="needs a heater column"):
        on.constructor_kwargs(False, False)
    # a value the estimator refuses is a ValueError naming it, not a TypeError
    with pytest.raises(ValueError, match="interval"):
        ReplaySettings({"interval": 5.0}).estimator(False, False)


def test_replay_builds_the_estimator_once_and_streams_row_prediction_pairs(mug, tmp_path,
                                                                           capsys, monkeypatch):
    target, trace = mug
    import tinytherm.estimator as core
    built = []

    @functools.wraps(ThermalEstimator.__init__)   # the same signature, read by the CLI
    def counted(self, **kw):
        built.append(kw)
        ThermalEstimator.__init__(self, **kw)

    Counted = type("Counted", (ThermalEstimator,), {"__init__": counted})
    monkeypatch.setattr(core, "ThermalEstimator", Counted)
    assert run(["replay", trace, "--target", target, "--interval", "0.6", "--out",
                tmp_path / "p.csv"], capsys)[0] == 0
    assert len(built) == 1 and built[0]["interval"] == 0.6
    monkeypatch.undo()
    settings = ReplaySettings({"interval": 0.6})
    est = settings.estimator(False, False)
    with iter_trace_rows(str(trace)) as rows:
        pairs = list(replay_rows(rows, target, est, settings))
    pred = read_predictions(tmp_path / "p.csv")
    assert [row[0] for row, _ in pairs] == [p["time_s"] for _, p in pairs]
    assert [p["status"] for _, p in pairs] == pred["status"]
    # the CSV writes seconds to 0.1 s
    assert [p["eta_s"] for _, p in pairs] == pytest.approx(pred["eta_s"], abs=0.051)


def test_option_and_set_are_one_setting(mug, tmp_path, capsys):
    target, trace = mug
    outs = []
    for i, extra in enumerate((["--interval", "0.5", "--approach", "cool"],
                               ["--set", "interval=0.5", "--set", "approach=cool"],
                               [])):
        out = tmp_path / ("p%d.csv" % i)
        assert run(["replay", trace, "--target", target, "--out", out] + extra,
                   capsys)[0] == 0
        outs.append(out.read_text())
    assert outs[0] == outs[1] and outs[0] != outs[2]
    # the same through the library call
    res = replay(read_trace(str(trace)), target, interval=0.5, approach=-1)
    assert [r["status"] for r in res.rows] == read_predictions(tmp_path / "p0.csv")["status"]


@pytest.mark.parametrize("extra, text", [
    (["--interval", "0.5", "--set", "interval=0.6"], "setting interval given twice"),
    (["--set", "interval=nan"], "interval must be a finite number"),
    (["--set", "no_such_setting=1"], "unknown setting no_such_setting"),
    (["--set", "interval=5"], "interval"),
])
def test_replay_refuses_bad_settings_in_one_line(mug, tmp_path, capsys, extra, text):
    target, trace = mug
    code, _, err = run(["replay", trace, "--target", target, "--out", tmp_path / "p.csv"]
                       + extra, capsys)
    assert code == 2 and text in one_error(err)
    assert not (tmp_path / "p.csv").exists()


def test_option_tables_follow_the_signature():
    names = [n for n in estimator_arguments() if n != "heater"]
    for command in ("replay", "benchmark"):
        parser = _subparser(command)
        group = [g for g in parser._action_groups if g.title.startswith("estimator settings")]
        dests = {a.dest for a in group[0]._group_actions}
        assert dests == set(names) | {"ignore_ambient_column", "approach", "heater", "set"}
        flags = _flags(parser)
        assert all("--" + n.replace("_", "-") in flags for n in names)
        assert {"--set", "--approach", "--heater", "--ignore-ambient-column"} <= flags


def test_one_spelling_in_every_command():
    for command in ("replay", "benchmark", "fleet", "calibrate"):
        assert "--set" in _flags(_subparser(command)), command
    for command in ("replay", "fleet", "calibrate"):
        flags = _flags(_subparser(command))
        assert {"--skip-bad", "--no-skip-bad"} <= flags and "--strict" not in flags, command
    defaults = {c: _subparser(c).get_default("skip_bad") for c in ("replay", "fleet",
                                                                     "calibrate")}
    assert defaults == {"replay": False, "fleet": False, "calibrate": True}


@pytest.mark.parametrize("argv, text", [
    (["fleet", "m.csv", "--out", "r.csv", "--target", "nan"], "argument --target"),
    (["fleet", "m.csv", "--out", "r.csv", "--worse-by", "inf"], "argument --worse-by"),
    (["fleet", "m.csv", "--out", "r.csv", "--workers", "-1"], "argument --workers"),
    (["calibrate", "t.csv", "--out", "p.json", "--ambient", "nan"], "argument --ambient"),
    (["calibrate", "t.csv", "--out", "p.json", "--fill-kg", "nan"], "argument --fill-kg"),
    (["calibrate", "t.csv", "--out", "p.json", "--smooth-s", "-5"], "argument --smooth-s"),
    (["benchmark", "--per-kind", "0"], "argument --per-kind"),
])
def test_fleet_and_calibrate_numbers_are_finite(argv, text, capsys):
    with pytest.raises(SystemExit) as exc:
        cli.main(argv)
    assert exc.value.code == 2 and text in capsys.readouterr().err


def test_fleet_settings_are_checked_before_any_work(mug, tmp_path, capsys):
    _, trace = mug
    for pair, text in (("interval=nan", "interval must be a finite number"),
                       ("no_such_setting=1", "unknown setting no_such_setting"),
                       ("heater=sometimes", "heater must be auto, on or off")):
        code, out, err = run(["fleet", trace, "--target", "50", "--out", tmp_path / "r.csv",
                              "--workers", "0", "--quiet", "--set", pair], capsys)
        assert code == 2 and text in one_error(err) and out == ""
        assert not (tmp_path / "r.csv").exists()


def test_calibrate_decides_heater_and_profile_itself(mug, tmp_path, capsys):
    _, trace = mug
    for pair in ("heater=on", "profile=p.json"):
        code, _, err = run(["calibrate", trace, "--out", tmp_path / "p.json", "--set", pair],
                           capsys)
        assert code == 2 and "decides it itself" in one_error(err)


def test_a_profile_file_needs_the_command_lines_reader(tmp_path):
    prof = VesselProfile(rate_per_s=1.0 / 1500.0, rate_log_sd=0.3)
    with pytest.raises(ValueError, match="needs a profile reader"):
        ReplaySettings({"profile": str(tmp_path / "p.json")})
    given = ReplaySettings({"profile": prof, "interval": 0.6})
    assert given.constructor_kwargs(False, False)["profile"] is prof
    with pytest.raises(ValueError, match="no text form"):
        given.to_pairs()
    read = ReplaySettings(["profile=p.json"], read_profile=lambda path: prof)
    assert read.given["profile"] is prof and read.to_pairs() == ["profile=p.json"]
    merged = settings_of(read, approach="cool")       # keeps the profile and its file name
    assert merged.given["profile"] is prof and merged.profile_path == "p.json"


def test_calibrate_replays_with_the_settings_given():
    from host_sim.calibrate.conformal import replay_pairs
    from host_sim.calibrate.prepare import prepare
    import numpy as np
    from host_sim.sim import vessels
    prep = prepare(vessels.use_trace(vessels.generate_use("mug", 1)))
    wide = replay_pairs(prep, False)
    narrow = replay_pairs(prep, False, ReplaySettings({"interval": 0.5}))
    assert len(wide) == len(narrow) > 0
    for w, n in zip(wide, narrow):
        both = np.isfinite(w.low) & np.isfinite(n.low) & np.isfinite(w.high) & np.isfinite(n.high)
        assert both.any()
        # the same answers, a narrower interval around them
        assert np.array_equal(w.eta, n.eta, equal_nan=True)
        assert np.all(n.high[both] - n.low[both] <= w.high[both] - w.low[both])
        assert np.any(n.high[both] - n.low[both] < w.high[both] - w.low[both])
    with pytest.raises(ValueError, match="given twice"):
        replay_pairs(prep, False, ReplaySettings({"heater": "on"}))
