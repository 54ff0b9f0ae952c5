"""The streaming trace reader (iter_trace_rows): same rows as parse_trace, one at a time."""
import io
import tracemalloc

import pytest

from host_sim.replay.trace_io import parse_trace, read_trace
from host_sim.replay.trace_reader import TraceError, TraceRow, iter_trace_rows


def test_rows_match_the_collecting_reader():
    text = ("time_s,temp_c,ambient_c,heater,event\n"
            "0,80.5,21,1.0,poured\n# note\n\n5,80.0,,0.5,\n6,79.9,21.2,0,top-up\n")
    reader = iter_trace_rows(io.StringIO(text), name="t.csv")
    assert reader.columns == ["time_s", "temp_c", "ambient_c", "heater", "event"]
    assert reader.has_ambient and reader.has_heater and reader.has_event
    rows, lines = [], []
    for row in reader:
        rows.append(row)
        lines.append(reader.line)
    assert rows == [(0.0, 80.5, 21.0, 1.0, "poured"), (5.0, 80.0, None, 0.5, None),
                    (6.0, 79.9, 21.2, 0.0, "top-up")]
    assert isinstance(rows[0], TraceRow) and rows[1].ambient_c is None and rows[2].event == "top-up"
    assert lines == [2, 5, 6]
    tr = parse_trace(io.StringIO(text), source="t.csv")
    assert list(tr.time_s) == [r.time_s for r in rows] and tr.line_numbers == lines


def test_optional_columns_absent_give_none():
    rows = list(iter_trace_rows(["time_s,temp_c\n", "0,50\n", "1,49.5\n"]))
    assert rows == [(0.0, 50.0, None, None, None), (1.0, 49.5, None, None, None)]


def test_time_unit_and_fahrenheit_convert():
    rows = list(iter_trace_rows(["time_s,temp_f\n", "0,212\n", "1500,32\n"],
                                fahrenheit=True, time_unit="ms"))
    # 212 F = 100 C, 32 F = 0 C (definition of the Fahrenheit scale, NIST SP 811 app. B)
    assert rows[0].temp_c == pytest.approx(100.0) and rows[1].temp_c == pytest.approx(0.0)
    assert rows[1].time_s == pytest.approx(1.5)
    rows = list(iter_trace_rows(["time_s,temp_c\n", "2.5,20\n"], time_unit="min"))
    assert rows[0].time_s == 150.0
    with pytest.raises(ValueError, match="time_unit"):
        iter_trace_rows(["time_s,temp_c\n"], time_unit="h")


def test_header_errors_raise_before_iteration_and_bad_rows_while_iterating():
    with pytest.raises(TraceError, match="no time_s column"):
        iter_trace_rows(["seconds,temp_c\n", "0,1\n"], name="x.csv")
    reader = iter_trace_rows(["time_s,temp_c\n", "0,50\n", "1,hot\n"], name="x.csv")
    it = iter(reader)
    assert next(it) == (0.0, 50.0, None, None, None)
    with pytest.raises(TraceError, match="x.csv:3: temp_c is not a number"):
        next(it)


def test_skip_bad_counts_per_reason_and_keeps_a_bounded_list():
    lines = ["time_s,temp_c\n"] + ["%d,%s\n" % (i, "x" if i % 2 else "50") for i in range(1000)]
    reader = iter_trace_rows(lines, skip_bad=True)
    assert sum(1 for _ in reader) == 500
    assert reader.skipped_rows == 500
    assert len(reader.skipped_reasons) == 100                 # bounded, all counted
    assert reader.skipped_by_reason == {"temp_c is not a number": 500}
    # the collecting reader keeps every message (its existing contract)
    assert len(parse_trace(lines, skip_bad=True).skipped_reasons) == 500


def test_file_is_read_line_by_line_in_constant_memory(tmp_path):
    path = tmp_path / "big.csv"
    with open(path, "w") as handle:
        handle.write("time_s,temp_c\n")
        for i in range(200000):
            handle.write("%d,%.4f\n" % (i, 80.0 - 1e-4 * i))
    tracemalloc.start()
    count, last = 0, None
    for row in iter_trace_rows(path):
        count += 1
        last = row
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert count == 200000 and last.time_s == 199999.0
    # 200,000 rows as Python floats would be > 10 MB; one line at a time stays small
    assert peak < 1_000_000, peak


def test_path_reader_closes_its_file(tmp_path):
    path = tmp_path / "t.csv"
    path.write_text("time_s,temp_c\n0,1\n")
    reader = iter_trace_rows(path)
    assert list(reader) == [(0.0, 1.0, None, None, None)]
    assert reader._handle is None
    assert read_trace(path).temp_c[0] == 1.0
