"""One time unit per plot, chosen for its span, in replay's, calibrate's and fleet's plots.

Issue 19: a long trace's plot had its time axis in minutes up to 1,660 while its
legend said "8.6 h", and calibrate drew seconds where replay drew minutes. Every
figure now takes its unit from host_sim.replay.plots.TimeAxis: minutes below three
hours, hours from there on, on the axes and in every legend text. The figures are
inspected as they are saved (matplotlib's Figure.savefig is wrapped).
"""
import math
import os
import re

import matplotlib
import pytest

matplotlib.use("Agg")
from matplotlib.figure import Figure  # noqa: E402

from host_sim import cli  # noqa: E402
from host_sim.fleet.report import plot_ab_replay  # noqa: E402

HERE = os.path.dirname(os.path.abspath(__file__))
CORPUS = os.path.join(HERE, "hostile_inputs")
TIME_TEXT = re.compile(r"\d(?:\.\d+)? ?(min|h|s)\b")


@pytest.fixture
def saved(monkeypatch):
    """What each saved figure shows: axis labels, x limits, legend texts, x data ranges."""
    got = []
    real = Figure.savefig

    def spy(fig, *args, **kwargs):
        axes = [ax for ax in fig.axes if ax.get_visible() and ax.axison]
        sup = fig._supxlabel.get_text() if getattr(fig, "_supxlabel", None) else ""
        got.append({
            "xlabels": [ax.get_xlabel() for ax in axes if ax.get_xlabel()] + ([sup] if sup
                                                                             else []),
            "ylabels": [ax.get_ylabel() for ax in axes],
            "xmax": max(ax.get_xlim()[1] for ax in axes),
            "data_xmax": max((float(max(line.get_xdata())) for ax in axes
                              for line in ax.get_lines() if len(line.get_xdata()) > 2),
                             default=0.0),
            "legend": [t.get_text() for ax in axes if ax.get_legend()
                       for t in ax.get_legend().get_texts()]})
        return real(fig, *args, **kwargs)
    monkeypatch.setattr(Figure, "savefig", spy)
    return got


def write_cooling(path, hours, step_s=60.0, k=None):
    """An invented cooling liquid over ``hours`` (a slow bath or a big pot)."""
    n = int(hours * 3600.0 / step_s)
    k = k or 1.0 / (hours * 3600.0 / 3.0)
    with open(path, "w") as fh:
        fh.write("time_s,temp_c\n")
        for i in range(n + 1):
            fh.write("%.1f,%.4f\n" % (i * step_s, 20.0 + 60.0 * math.exp(-k * i * step_s)))


def units_in(texts):
    return {m.group(1) for text in texts for m in TIME_TEXT.finditer(text)}


@pytest.mark.parametrize("hours, unit", [(0.5, "min"), (8.6, "h")])
def test_replay_plot_has_one_time_unit(hours, unit, tmp_path, saved, capsys):
    trace = tmp_path / "t.csv"
    write_cooling(trace, hours)
    code = cli.main(["replay", str(trace), "--target", "40", "--out", str(tmp_path / "p.csv"),
                     "--plot", str(tmp_path / "p.png"), "--no-table"])
    capsys.readouterr()
    assert code == 0 and len(saved) == 1
    fig = saved[0]
    assert fig["xlabels"] == ["time since the first reading (%s)" % unit]
    assert "time to target (%s)" % unit in fig["ylabels"]
    span = hours * 3600.0 / (60.0 if unit == "min" else 3600.0)
    assert span <= fig["xmax"] <= 1.1 * span + 0.1          # the axis in that unit
    legend_units = units_in(fig["legend"])
    assert legend_units and legend_units <= {unit}, fig["legend"]
    # fleet's A/B figure of the same predictions uses the same unit
    rows = len((tmp_path / "p.csv").read_text().splitlines()) - 1
    plot_ab_replay(str(tmp_path / "ab.png"), str(tmp_path / "p.csv"), str(tmp_path / "p.csv"),
                   rows, 40.0, None, "a/b")
    assert saved[1]["xlabels"] == ["time since the first reading (%s)" % unit]
    assert span * 0.9 <= saved[1]["data_xmax"] <= span * 1.01


def test_calibrate_plots_use_replays_time_unit(tmp_path, saved, capsys):
    traces = [os.path.join(CORPUS, n) for n in ("crlf.csv", "semicolon.csv", "tab.tsv")]
    code = cli.main(["calibrate"] + traces + ["--out", str(tmp_path / "p.json"),
                                               "--folds", "2"])
    capsys.readouterr()
    assert code == 0
    fit = saved[0]
    # the corpus traces last 395 s: minutes, as replay would draw them
    assert fit["xlabels"] == ["time since the first reading (min)"]
    assert 395.0 / 60.0 * 0.99 <= fit["data_xmax"] <= 395.0 / 60.0 * 1.01
