"""The hostile-input corpus for the replay CLI: how each file is made and what must happen.

``python tests/hostile_inputs/corpus.py`` rewrites the files next to this module
(tests/test_host_cli_hostile.py checks that the kept files still match).
Each case: (file name, file bytes, extra CLI arguments, expected exit status,
a piece of the one-line message that must appear: what is wrong or how to fix it).
Exit 0 cases are inputs the reader must accept (BOM, other separators, CRLF, ...).
All traces are invented.
"""
import io
import os
import random
import struct
import zipfile

HERE = os.path.dirname(os.path.abspath(__file__))


def cooling(n=80, step=5.0, t0=0.0, temp0=80.0, k=1.0 / 900, amb=21.0):
    """(time_s, temp_c) of an invented cooling drink, readings every ``step`` s."""
    import math
    return [(t0 + i * step, amb + (temp0 - amb) * math.exp(-k * i * step)) for i in range(n)]


def csv_text(rows, header="time_s,temp_c", sep=",", fmt=("%.1f", "%.4f"), end="\n"):
    lines = [header.replace(",", sep)]
    for r in rows:
        lines.append(sep.join(f % v for f, v in zip(fmt, r)))
    return (end.join(lines) + end)


def good(**kw):
    return csv_text(cooling(**kw)).encode()


def with_line(text, index, line):
    """Replace data line ``index`` (1 = first data row) of a CSV text."""
    lines = text.split("\n")
    lines[index] = line
    return "\n".join(lines)


def zip_of(name, data):
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        z.writestr(zipfile.ZipInfo(name, date_time=(2026, 1, 1, 0, 0, 0)), data)
    return buf.getvalue()


def cases():
    rng = random.Random(13)
    base = csv_text(cooling())
    out = []

    def add(name, data, args, code, text):
        out.append((name, data if isinstance(data, bytes) else data.encode(), list(args),
                    code, text))

    # encodings and containers
    add("binary_junk.bin", bytes(rng.randrange(256) for _ in range(4096)), [], 2, "")
    add("binary_junk_no_nul.bin", bytes(rng.randrange(128, 256) for _ in range(2048)), [],
        2, "not UTF-8")
    add("utf16_le_bom.csv", base.encode("utf-16"), [], 2, "UTF-16")
    add("utf16_be_bom.csv", b"\xfe\xff" + base.encode("utf-16-be"), [], 2, "UTF-16")
    add("utf16_le_no_bom.csv", base.encode("utf-16-le"), [], 2, "UTF-8 CSV")
    add("latin1_cell.csv", ("time_s,temp_c,event\n" + "\n".join(
        "%d,%.2f,%s" % (i * 5, 80 - 0.1 * i, "caf\xe9" if i == 7 else "") for i in range(60))
        + "\n").encode("latin-1"), [], 2, ":9: not UTF-8")
    add("latin1_header.csv", ("time_s,temp_c,note\xb0C\n" + base.split("\n", 1)[1].replace(
        "\n", ",x\n")).encode("latin-1"), [], 2, ":1: not UTF-8")
    add("windows1252_quotes.csv", ("time_s,temp_c,event\n0,80,\u201cpoured\u201d\n").encode(
        "cp1252"), [], 2, "not UTF-8")
    add("zip_archive.zip", zip_of("trace.csv", base), [], 2, "ZIP archive")
    add("spreadsheet.xlsx", zip_of("xl/workbook.xml", "<workbook/>"), [], 2, "export")
    import gzip
    add("gzipped.csv.gz", gzip.compress(base.encode(), mtime=0), [], 2, "gunzip")
    add("nul_in_middle.csv", with_line(base, 5, "25.0,79\x00.8"), [], 2, "NUL")
    add("png_image.csv", b"\x89PNG\r\n\x1a\n" + bytes(200), [], 2, "PNG image")
    # byte-order mark, separators, line ends: accepted
    add("utf8_bom.csv", b"\xef\xbb\xbf" + base.encode(), [], 0, "")
    add("semicolon.csv", csv_text(cooling(), sep=";"), [], 0, "")
    add("tab.tsv", csv_text(cooling(), sep="\t"), [], 0, "")
    add("crlf.csv", csv_text(cooling(), end="\r\n"), [], 0, "")
    add("quoted_header.csv", base.replace("time_s,temp_c", '"time_s","temp_c"', 1), [], 0, "")
    add("padded_cells.csv", base.replace(",", " ,  "), [], 0, "")
    add("emoji_event.csv", "time_s,temp_c,event\n" + "\n".join(
        "%d,%.2f,%s" % (i * 5, 80 - 0.1 * i, "\u2615 poured" if i == 0 else "")
        for i in range(60)) + "\n", [], 0, "")
    add("one_spike_1e308.csv", with_line(base, 30, "145.0,1e308"), [], 0, "")
    add("semicolon_decimal_comma.csv", csv_text(cooling(), sep=";").replace(".", ","), [], 2,
        "decimal comma")
    add("pipe_separated.csv", csv_text(cooling(), sep="|"), [], 2, "separate columns with commas")
    add("cr_only_line_ends.csv", csv_text(cooling(), end="\r"), [], 2, "CR")
    # quotes and field sizes
    add("unterminated_quote.csv", with_line(base, 3, '10.0,"79.5'), [], 2, "unbalanced")
    add("quote_spanning_lines.csv", "time_s,temp_c,event\n0,80,\"poured\nlate\"\n5,79.9,\n",
        [], 2, "quote")
    add("quote_inside_field.csv", with_line(base, 4, '15.0,7"9.5"'), [], 2, "")
    add("overlong_field.csv", with_line(base, 2, "5.0," + "9" * 200000), [], 2,
        "200000 characters")
    add("overlong_header_name.csv", "time_s,temp_c," + "n" * 5000 + "\n" + base.split(
        "\n", 1)[1].replace("\n", ",1\n"), [], 0, "")
    # numbers that float() would take
    add("arabic_indic_digits.csv", with_line(base, 3, "10.0,\u0668\u0660.\u0665"), [], 2,
        "ASCII")
    add("fullwidth_digits.csv", with_line(base, 3, "10.0,\uff18\uff10.5"), [], 2, "ASCII")
    add("underscore_number.csv", with_line(base, 3, "10.0,8_0.9"), [], 2, "underscore")
    add("hex_number.csv", with_line(base, 3, "0x10,80.0"), [], 2, "not a number")
    add("infinity_word.csv", with_line(base, 3, "10.0,Infinity"), [], 2, "not finite")
    add("nan_cell.csv", with_line(base, 3, "10.0,nan"), [], 2, "not finite")
    add("overflow_1e309.csv", with_line(base, 3, "10.0,1e309"), [], 2, "too large")
    add("exponent_only.csv", with_line(base, 3, "10.0,1e"), [], 2, "not a number")
    add("text_reading.csv", with_line(base, 3, "10.0,hot"), [], 2, "temp_c is not a number")
    add("empty_reading.csv", with_line(base, 3, "10.0,"), [], 2, "empty temp_c")
    # physics and units that cannot be meant
    add("kelvin.csv", csv_text([(t, y + 273.15) for t, y in cooling()]), [], 2, "Kelvin")
    add("fahrenheit_as_c.csv", csv_text([(t, y * 1.8 + 32 + 40) for t, y in cooling()]),
        [], 2, "--fahrenheit")
    add("fahrenheit_hot_start.csv", csv_text([(t, y * 1.8 + 32) for t, y in cooling(
        n=300, step=10.0, temp0=85.0)]), [], 2, "readings are above 150 C")
    add("all_1e308.csv", csv_text([(t, 1e308) for t, _ in cooling()], fmt=("%.1f", "%g")),
        [], 2, "not a liquid temperature")
    add("ambient_kelvin.csv", "time_s,temp_c,ambient_c\n" + "\n".join(
        "%.1f,%.4f,294.15" % r for r in cooling()) + "\n", [], 2, "ambient_c")
    add("all_equal_times.csv", csv_text([(5.0, y) for _, y in cooling()]), [], 2,
        "same time_s")
    add("mostly_repeated_times.csv", csv_text([(5.0 * (i // 3), y) for i, (_, y) in
                                               enumerate(cooling(n=90))]), [], 2,
        "repeat the previous")
    add("times_near_1e300.csv", csv_text([(1e300 + t, y) for t, y in cooling()],
                                         fmt=("%.17g", "%.4f")), [], 2, "seconds since the start")
    add("time_in_minutes.csv", csv_text([(t / 60.0, y) for t, y in cooling()],
                                        fmt=("%.4f", "%.4f")), [], 2, "--time-unit min")
    add("time_in_minutes_fixed.csv", csv_text([(t / 60.0, y) for t, y in cooling()],
                                              fmt=("%.4f", "%.4f")), ["--time-unit", "min"],
        0, "")
    add("time_in_ms.csv", csv_text([(t * 1000.0, y) for t, y in cooling()]), [], 2,
        "--time-unit ms")
    add("time_in_ms_fixed.csv", csv_text([(t * 1000.0, y) for t, y in cooling()]),
        ["--time-unit", "ms"], 0, "")
    add("short_trace.csv", csv_text(cooling(n=8, step=4.0)), [], 2, "covers only")
    add("single_row.csv", "time_s,temp_c\n0,80\n", [], 2, "covers only")
    add("epoch_ms_timestamps.csv", csv_text([(1.7e12 + 1000 * t, y) for t, y in cooling()],
                                            fmt=("%.0f", "%.4f")), [], 2, "--time-unit ms")
    # structure
    add("empty.csv", b"", [], 2, "empty file")
    add("only_comments.csv", "# recorded on a bench\n# nothing else\n", [], 2, "empty file")
    add("header_only.csv", "time_s,temp_c\n", [], 2, "no data rows")
    add("no_time_column.csv", base.replace("time_s", "seconds", 1), [], 2, "no time_s column")
    add("time_ms_column.csv", csv_text([(t * 1000.0, y) for t, y in cooling()],
                                       header="time_ms,temp_c"), [], 2,
        "rename it time_s and add --time-unit ms")
    add("iso_time_column.csv", "time,temp_c\n" + "".join(
        "2026-03-01T09:%02d:%02d,%.4f\n" % (int(t) // 60, int(t) % 60, y)
        for t, y in cooling()), [], 0, "")
    add("iso_time_column_bad_stamp.csv", "time,temp_c\n2026-03-01T09:00:00,80.0\n"
        "2026-03-01 nine o'clock,79.9\n", [], 2, ":3: time is neither a number nor an ISO")
    add("temp_f_without_flag.csv", base.replace("temp_c", "temp_f", 1), [], 2, "--fahrenheit")
    add("html_page.csv", "<!DOCTYPE html>\n<html><body>not found</body></html>\n", [], 2,
        "starts with the line time_s,temp_c")
    add("json_document.csv", '{"time_s": [0, 5], "temp_c": [80, 79]}\n', [], 2,
        "no time_s column")
    add("duplicate_columns.csv", base.replace("time_s,temp_c", "time_s,temp_c,temp_c", 1)
        .replace("\n", ",1\n").replace("temp_c,1\n", "temp_c\n", 1), [], 2, "duplicate")
    add("two_files_joined.csv", base + base, [], 2, "second header line")
    add("two_files_joined_skip_bad.csv", base + csv_text(cooling(t0=400.0)), ["--skip-bad"], 0,
        "")
    add("negative_time.csv", with_line(base, 1, "-5.0,80.0"), [], 2, "negative")
    add("decreasing_time.csv", with_line(base, 10, "1.0,78.0"), [], 2, "decreases")
    add("wrong_field_count.csv", with_line(base, 5, "20.0,79.0,1"), [], 2, "expected 2 fields")
    add("heater_out_of_range.csv", "time_s,temp_c,heater\n" + "\n".join(
        "%.1f,%.4f,%s" % (t, y, "1.5" if i == 3 else "1") for i, (t, y) in
        enumerate(cooling())) + "\n", [], 2, "outside 0..1")
    add("heater_text.csv", "time_s,temp_c,heater\n" + "\n".join(
        "%.1f,%.4f,%s" % (t, y, "on" if i == 3 else "1") for i, (t, y) in
        enumerate(cooling())) + "\n", [], 2, "heater is not a number")
    add("struct_packed_floats.csv", struct.pack("<200d", *[80.0 - 0.01 * i for i in
                                                            range(200)]), [], 2, "")
    add("skip_bad_all_bad.csv", "time_s,temp_c\n" + "".join("%d,x\n" % i for i in range(50)),
        ["--skip-bad"], 2, "all 50 skipped")
    return out


def profile_cases():
    """Files given to ``replay --profile``: (name, bytes, piece of the one error line)."""
    out = [
        ("profile_list.json", b"[1]\n", "not an object"),
        ("profile_string.json", b'"abc"\n', "not an object"),
        ("profile_blob_number.json", b'{"blob_hex": 12}\n', "blob_hex is a number"),
        ("profile_null.json", b"null\n", "the JSON is null"),
        ("profile_nan.json", b"NaN\n", "NaN"),
        ("profile_nested.json", b"[" * 100000 + b"]" * 100000, "nested too deeply"),
        ("profile_truth.json", b'{"crossing_time_s": 812.5, "target_c": 60}\n', "truth file"),
        ("profile_not_json.json", b"blob_hex = 01ff\n", "not JSON"),
        ("profile_latin1.json", '{"blob_hex": "caf\xe9"}\n'.encode("latin-1"), "not UTF-8"),
        ("profile_not_hex.hex", b"zz" * 54 + b"\n", "not hexadecimal"),
        ("profile_short.bin", b"\x01\x00" * 5, "profile_length"),
    ]
    return out


def calibrate_cases():
    """Traces for ``calibrate`` beyond the replay corpus: (name, bytes, extra arguments,
    expected exit status, piece of the one error line or of a warning for exit 0)."""
    base = cooling(n=300)
    out = [
        ("cal_row_at_1e9.csv", csv_text(base + [(1e9, 21.0)]), [], 2, "spans"),
        ("cal_row_at_1e9_no_checks.csv", csv_text(base + [(1e9, 21.0)]), ["--no-checks"], 2,
         "grid points"),
        ("cal_row_at_3e7.csv", csv_text(base + [(3e7, 21.0)]), ["--no-checks"], 2,
         "grid points"),
        ("cal_gap_8h.csv", csv_text(base + [(3e4, 21.0)]), [], 2, "a gap of"),
        ("cal_eight_rows.csv", csv_text(cooling(n=8, step=30.0)), [], 0, "only 8 rows"),
        ("cal_step.csv", csv_text([(5.0 * i, 80.0 if i < 100 else 20.0) for i in range(200)]),
         [], 0, "a step"),
    ]
    return [(n, d.encode(), a, c, t) for n, d, a, c, t in out]


def manifest_cases():
    """Manifests for ``fleet`` (traces named are files of this corpus): (name, bytes, extra
    arguments, expected exit status, piece of the one error line or of RESULTS.csv)."""
    good = "utf8_bom.csv"
    formulas = ["=HYPERLINK(\"http://x.invalid\",\"x\")", "+SUM(1+1)", "-2+3", "@SUM(1)",
                "\tTAB", "plain"]
    out = [
        ("manifest_bom.csv", b"\xef\xbb\xbf" + ("path,target\n%s,60\n" % good).encode(),
         [], 0, ""),
        ("manifest_latin1.csv", ("path,target,note\n%s,60,caf\xe9\n" % good).encode("latin-1"),
         [], 2, ":2: not UTF-8"),
        ("manifest_no_header.csv", ("%s,60\ncrlf.csv,60\n" % good).encode(), [], 2,
         "no header row?"),
        ("manifest_wrong_header.csv", ("file,target_c\n%s,60\n" % good).encode(), [], 2,
         "neither a manifest"),
        ("manifest_no_target_column.csv", ("path,product\n%s,mug\n" % good).encode(), [], 2,
         "no target column"),
        ("manifest_duplicate_columns.csv", ("path,target,target\n%s,60,61\n" % good).encode(),
         [], 2, "duplicate column(s) target"),
        ("manifest_unterminated_quote.csv", ('path,target,note\n%s,60,"oops\ncrlf.csv,60,x\n'
                                             % good).encode(), [], 2, ":2: unbalanced"),
        ("manifest_long_tag.csv", ("path,target,note\n%s,60,%s\n" % (good, "n" * 131073))
         .encode(), [], 2, "131073 characters"),
        ("manifest_binary.zip", zip_of("m.csv", "path,target\n"), [], 2, "ZIP archive"),
        ("manifest_formula_tags.csv", ("path,target,tag\n" + "".join(
            '%s,60,"%s"\n' % (good, f.replace('"', '""')) for f in formulas)).encode(),
         [], 0, "'=HYPERLINK"),
        ("manifest_target_nan.csv", ("path,target\n%s,nan\n" % good).encode(), [], 1,
         "target is not finite"),
        ("manifest_target_1e308.csv", ("path,target\n%s,1e308\n" % good).encode(), [], 1,
         "outside a liquid's"),
        ("manifest_refused_traces.csv", ("path,target\n" + "".join(
            "%s,60\n" % n for n in ("kelvin.csv", "time_in_ms.csv", "fahrenheit_as_c.csv",
                                    "all_equal_times.csv", good))).encode(), [], 1, "Kelvin"),
    ]
    return out


def write(folder=HERE):
    """Write every case's file into ``folder``; returns the names written."""
    names = []
    extra = [(n, d, None, None, None) for n, d, _ in profile_cases()]
    for name, data, _, _, _ in cases() + calibrate_cases() + manifest_cases() + extra:
        with open(os.path.join(folder, name), "wb") as handle:
            handle.write(data)
        names.append(name)
    return names


if __name__ == "__main__":
    print("wrote %d files to %s" % (len(write()), HERE))
