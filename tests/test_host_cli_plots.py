"""Replay plots (issue 13): the ETA axis fits the data, no infinite spike, events and
statuses marked, ambient inside the axes, legend wording, Fahrenheit axis."""
import math

import numpy as np

from host_sim import cli
from host_sim.cli.replay import PLOT_POINTS
from host_sim.replay.plots import ReplaySeries, plot_replay, plot_series
from host_sim.replay.replay import replay
from host_sim.sim.scenarios import generate
from host_sim.replay.trace_io import Trace
from tinytherm import status as st

PNG = b"\x89PNG\r\n\x1a\n"


def scenario(kind, seed):
    gen = generate(kind, seed)
    trace = Trace(gen.time_s, gen.temp_c, ambient_c=gen.ambient_c, heater=gen.heater,
                  events=gen.events)
    return gen, trace, replay(trace, gen.truth["target_c"])


def test_demo_eta_axis_fits_the_data(tmp_path):
    gen, trace, res = scenario("mug", 7)          # the demo's scenario
    crossing = gen.truth["crossing_time_s"]
    drawn = plot_replay(trace, res, tmp_path / "d.png", crossing_s=crossing)
    assert (tmp_path / "d.png").read_bytes()[:8] == PNG
    # was three times the trace length (33 min for data under 11): now 1.2x the larger
    # of the true remaining time at the start and the shown ETAs' 95th percentile
    assert drawn["eta_axis_top_s"] <= 1.5 * max(crossing - trace.time_s[0],
                                                np.nanpercentile([r["eta_s"] for r in res.rows
                                                                  if r["eta_s"] is not None], 95))
    assert drawn["eta_axis_top_s"] < 2.0 * (trace.time_s[-1] - trace.time_s[0])
    assert drawn["events"] == sum(1 for e in trace.events if e)       # lid off, top-up
    assert "true crossing, %.1f min" % (crossing / 60.0) in drawn["legend"]
    legend = " | ".join(drawn["legend"])
    assert "model fitted at" in legend and "drawn forward (ETA" in legend
    assert "ETA interval then" in legend


def series(status, eta, high, n=200, step=5.0, ambient=None):
    t = np.arange(n) * step
    return ReplaySeries(t, 80 - 0.02 * t, 80 - 0.02 * t, eta, [None if e is None else 0.5 * e for e in eta], high,
                        status, [1e-3] * n, [20.0] * n, 60.0, ambient_c=ambient,
                        events=[(300.0, "lid off")])


def test_unbounded_upper_end_is_not_a_spike(tmp_path):
    n = 200
    eta = [900.0 - 5.0 * i for i in range(n)]
    high = [math.inf if 50 <= i < 60 else 1.3 * e for i, e in enumerate(eta)]
    status = [st.TRACKING] * n
    drawn = plot_series(series(status, eta, high), tmp_path / "u.png", crossing_s=900.0)
    assert drawn["unbounded_rows"] == 10
    assert drawn["eta_axis_top_s"] == 1.2 * 900.0     # set by the data, not by inf
    assert any("no upper end" in s for s in drawn["legend"])


def test_statuses_get_their_own_style_and_huge_etas_are_clipped(tmp_path):
    n = 200
    status = ([st.GATHERING] * 20 + [st.SETTLING] * 30 + [st.TRACKING] * 60
              + [st.DISTURBED] * 30 + [st.TRACKING] * 40 + [st.SENSOR_FAULT] * 20)
    eta = [None] * 20 + [1e7] * 30 + [700.0 - 5 * i for i in range(150)]
    eta = [None if s == st.SENSOR_FAULT else e for s, e in zip(status, eta)]
    high = [None if e is None else 1.2 * e for e in eta]
    drawn = plot_series(series(status, eta, high), tmp_path / "s.png", crossing_s=700.0)
    assert drawn["eta_clipped"] == 30                  # the 1e7 s ETAs, marked at the edge
    assert drawn["eta_axis_top_s"] < 1e4
    assert {st.GATHERING, st.DISTURBED, st.SENSOR_FAULT} <= set(drawn["shaded"])
    legend = " | ".join(drawn["legend"])
    for text in ("ETA, tracking", "ETA, disturbed", "ETA, settling", "gathering",
                 "sensor fault", "ETA above the axis"):
        assert text in legend, text


def test_ambient_is_inside_the_temperature_axis(tmp_path):
    gen, trace, res = scenario("fridge", 2)
    drawn = plot_replay(trace, res, tmp_path / "f.png", crossing_s=gen.truth["crossing_time_s"])
    lo, hi = drawn["temp_axis_c"]
    amb = trace.ambient_c[np.isfinite(trace.ambient_c)]
    assert lo <= np.percentile(amb, 1) and np.percentile(amb, 99) <= hi
    assert lo <= gen.truth["target_c"] <= hi


def test_fahrenheit_axis(tmp_path):
    n = 200
    eta = [900.0 - 5.0 * i for i in range(n)]
    drawn = plot_series(series([st.TRACKING] * n, eta, eta), tmp_path / "f.png", unit="F")
    lo, hi = drawn["temp_axis_c"]
    # readings 80 .. 60.1 C are 176 .. 140.2 F (F = C * 9/5 + 32, definition of the scale)
    assert lo < 140.2 and 176.0 < hi < 200.0
    assert "target 140.0 F" in drawn["legend"]


def test_cli_plot_of_a_long_trace_is_thinned(tmp_path, capsys, monkeypatch):
    import host_sim.replay.plots
    seen = {}
    real = host_sim.replay.plots.plot_series

    def spy(s, *a, **kw):
        seen["rows"] = len(s.time_s)
        return real(s, *a, **kw)
    monkeypatch.setattr(host_sim.replay.plots, "plot_series", spy)
    path = tmp_path / "long.csv"
    with open(path, "w") as handle:
        handle.write("time_s,temp_c\n")
        for i in range(60000):
            handle.write("%d,%.4f\n" % (i, 21 + 59 * math.exp(-i / 30000.0)))
    assert cli.main(["replay", str(path), "--target", "40", "--out", str(tmp_path / "p.csv"),
                     "--plot", str(tmp_path / "l.png")]) == 0
    assert (tmp_path / "l.png").read_bytes()[:8] == PNG
    assert "plot written" in capsys.readouterr().out
    # every 3rd row of 60,000 (plus rejected readings): at most PLOT_POINTS points
    assert 0.9 * PLOT_POINTS <= seen["rows"] <= PLOT_POINTS + 100


def test_text_from_the_file_cannot_break_the_figure(tmp_path):
    # matplotlib reads $...$ as mathtext (an unknown command raises) and has no glyph
    # for control characters: events and file names are drawn as plain text
    n = 200
    eta = [900.0 - 5.0 * i for i in range(n)]
    s = series([st.TRACKING] * n, eta, eta)
    s.events = [(100.0, r"$\notacommand$"), (200.0, "\x1b[31mred"), (300.0, "x" * 500)]
    drawn = plot_series(s, tmp_path / "t.png", title=r"replay of $\bad$.csv")
    assert drawn["events"] == 3 and (tmp_path / "t.png").read_bytes()[:8] == PNG
