"""Trace CSV parsing (including malformed files) and prediction CSV writing."""
import io
import math

import numpy as np
import pytest

from host_sim.replay.trace_io import (PREDICTION_COLUMNS, parse_trace, read_predictions,
                                       read_trace, write_predictions, write_trace)
from host_sim.replay.trace_reader import TraceError, fahrenheit_to_celsius


def parse(text, **kw):
    return parse_trace(io.StringIO(text), source="t.csv", **kw)


def test_minimal_trace_and_optional_columns():
    tr = parse("time_s,temp_c,ambient_c,heater,event,notes\n"
               "0,80.5,21,1.0,poured,x\n"
               "5,80.0,,0.5,,y\n"
               "5,79.9,21.2,0,top-up,z\n")
    assert list(tr.time_s) == [0.0, 5.0, 5.0]          # non-decreasing: equal allowed
    assert list(tr.temp_c) == [80.5, 80.0, 79.9]
    assert tr.ambient_c[0] == 21.0 and math.isnan(tr.ambient_c[1])  # empty cell = no reading
    assert list(tr.heater) == [1.0, 0.5, 0.0]
    assert tr.events == ["poured", "", "top-up"]
    assert tr.line_numbers == [2, 3, 4]
    assert tr.skipped_rows == 0


def test_comments_and_blank_lines_are_not_rows():
    tr = parse("# recorded on a bench\ntime_s,temp_c\n\n0,50\n# note\n1,49.5\n")
    assert len(tr) == 2 and tr.line_numbers == [4, 6]
    assert not tr.has_ambient and not tr.has_heater


def test_bad_number_names_line_and_problem():
    with pytest.raises(TraceError) as err:
        parse("time_s,temp_c\n0,50\n1,5o.2\n2,49\n")
    msg = str(err.value)
    assert "t.csv:3" in msg and "temp_c is not a number" in msg and "5o.2" in msg


def test_missing_column():
    with pytest.raises(TraceError) as err:
        parse("seconds,temp_c\n0,50\n")
    assert "t.csv:1" in str(err.value) and "no time_s column" in str(err.value)
    # a `time` column holds ISO 8601 date-times (issue 19); numbers there are refused
    with pytest.raises(TraceError) as err:
        parse("time,temp_c\n0,50\n")
    assert "t.csv:2" in str(err.value) and "time_s" in str(err.value)


def test_iso_date_times_in_a_time_column_are_seconds_from_the_first_row():
    trace = parse("time,temp_c\n2026-03-01T23:59:30Z,50\n2026-03-02T00:00:10+00:00,49\n"
                  "2026-03-02T01:00:10+01:00,48\n")
    assert list(trace.time_s) == [0.0, 40.0, 40.0]       # 01:00:10+01:00 is 00:00:10 UTC


def test_missing_temp_column_hints_fahrenheit():
    with pytest.raises(TraceError) as err:
        parse("time_s,temp_f\n0,120\n")
    assert "--fahrenheit" in str(err.value)


def test_decreasing_time():
    with pytest.raises(TraceError) as err:
        parse("time_s,temp_c\n0,50\n10,49\n9.5,48\n")
    assert "t.csv:4" in str(err.value) and "decreases" in str(err.value)


def test_wrong_field_count_and_heater_range_and_nonfinite():
    with pytest.raises(TraceError, match=r"t.csv:3: expected 2 fields"):
        parse("time_s,temp_c\n0,50\n1,49,7\n")
    with pytest.raises(TraceError, match=r"t.csv:2: heater duty '1.5' is outside 0..1"):
        parse("time_s,temp_c,heater\n0,50,1.5\n")
    with pytest.raises(TraceError, match=r"t.csv:2: temp_c is not finite"):
        parse("time_s,temp_c\n0,nan\n")
    with pytest.raises(TraceError, match=r"empty temp_c"):
        parse("time_s,temp_c\n0,\n")


def test_skip_bad_counts_every_skipped_row():
    text = ("time_s,temp_c\n0,50\n1,bad\n2,49\n1.5,48\n3,nan\n4,47,extra\n5,46\n")
    tr = parse(text, skip_bad=True)
    assert list(tr.time_s) == [0.0, 2.0, 5.0]
    assert tr.skipped_rows == 4
    assert len(tr.skipped_reasons) == 4
    assert "t.csv:3" in tr.skipped_reasons[0]
    assert "t.csv:5" in tr.skipped_reasons[1]   # time decreasing after the accepted 2.0
    # without the flag the first bad row stops the read
    with pytest.raises(TraceError, match="t.csv:3"):
        parse(text)


def test_empty_or_all_bad():
    with pytest.raises(TraceError, match="empty file"):
        parse("")
    with pytest.raises(TraceError, match="no data rows"):
        parse("time_s,temp_c\n")
    with pytest.raises(TraceError, match="all 2 skipped"):
        parse("time_s,temp_c\nx,1\ny,2\n", skip_bad=True)


def test_fahrenheit_conversion():
    # Fixed points of the scales: 32 F = 0 C, 212 F = 100 C, -40 F = -40 C
    # (definition of the Fahrenheit scale, e.g. NIST SP 811 appendix B).
    assert fahrenheit_to_celsius(32.0) == 0.0
    assert fahrenheit_to_celsius(212.0) == pytest.approx(100.0, abs=1e-12)
    assert fahrenheit_to_celsius(-40.0) == pytest.approx(-40.0, abs=1e-12)
    tr = parse("time_s,temp_f,ambient_f\n0,212,68\n1,32,\n", fahrenheit=True)
    assert tr.temp_c[0] == pytest.approx(100.0) and tr.temp_c[1] == pytest.approx(0.0)
    assert tr.ambient_c[0] == pytest.approx(20.0) and math.isnan(tr.ambient_c[1])


def test_write_then_read_trace_roundtrip(tmp_path):
    path = tmp_path / "t.csv"
    t = np.array([0.0, 1.5, 3.25])
    y = np.array([70.0, 69.9375, 69.875])
    write_trace(path, t, y, ambient_c=np.array([21.0, np.nan, 21.5]),
                heater=np.array([0.0, 1.0, 0.25]), events=["", "lid off", ""])
    tr = read_trace(path)
    assert np.allclose(tr.time_s, t) and np.allclose(tr.temp_c, y)
    assert math.isnan(tr.ambient_c[1]) and tr.ambient_c[2] == 21.5
    assert list(tr.heater) == [0.0, 1.0, 0.25] and tr.events[1] == "lid off"


def test_prediction_writer_exact_columns_and_empty_cells(tmp_path):
    path = tmp_path / "p.csv"
    rows = [
        dict(time_s=0.0, temp_c=70.0, eta_s=None, eta_low_s=None, eta_high_s=None,
             status="gathering", rate_per_s=None, equilibrium_c=None),
        dict(time_s=5.0, temp_c=69.9, eta_s=300.0, eta_low_s=250.0, eta_high_s=math.inf,
             status="settling", rate_per_s=3.3e-4, equilibrium_c=21.0),
    ]
    write_predictions(path, rows)
    lines = path.read_text().splitlines()
    assert lines[0] == "time_s,temp_c,eta_s,eta_low_s,eta_high_s,status,rate_per_s,equilibrium_c"
    assert lines[1] == "0.000,70.0000,,,,gathering,,"
    back = read_predictions(path)
    assert tuple(back) == PREDICTION_COLUMNS
    assert back["eta_s"] == [None, 300.0] and back["eta_high_s"][1] == math.inf
    assert back["status"] == ["gathering", "settling"]
