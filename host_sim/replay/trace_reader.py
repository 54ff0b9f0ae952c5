"""Streaming trace reader: one row at a time, constant memory, clear errors.

Trace format (one header row, comma separated)::

    time_s,temp_c[,ambient_c][,heater][,event]

- ``time_s``: seconds since the start of the recording, float, non-decreasing
  (a column named ``time`` instead may hold ISO 8601 date-times such as
  ``2026-01-31T14:05:00``: converted to seconds from the first row's);
- ``temp_c``: the sensor reading in deg C (deg F with ``fahrenheit=True``);
- ``ambient_c`` (optional): a second sensor's reading in deg C (deg F with
  ``fahrenheit=True``); an empty cell means "no ambient reading on this row";
- ``heater`` (optional): heater duty in [0, 1] applied since the previous row;
- ``event`` (optional): free-text marker such as ``top-up``;
- any other column is ignored.

Blank lines and lines whose first character is ``#`` are comments. Every other
row must parse: a bad row raises :class:`TraceError` naming the file, the line
and the problem, unless ``skip_bad=True``, in which case the row is skipped and
counted in :attr:`Trace.skipped_rows` (with the reasons in
:attr:`Trace.skipped_reasons`).

:func:`iter_trace_rows` streams a file one row at a time (constant memory);
:func:`host_sim.replay.trace_io.read_trace` collects every row into a
:class:`host_sim.replay.trace_io.Trace`. Input must be UTF-8 text (a leading
byte-order mark is accepted); a header without commas that holds ``;`` or a
tab uses that as the separator. Numbers are plain ASCII decimals (``80.5``,
``-1e-3``); quoted fields may not span lines.
"""
import csv
import datetime
import io
import math
import re

REQUIRED_COLUMNS = ("time_s", "temp_c")


class TraceError(ValueError):
    """A malformed trace file; the message names the file, line and problem."""


def fahrenheit_to_celsius(value_f):
    """deg F -> deg C: ``(F - 32) * 5/9`` (definition of the Fahrenheit scale)."""
    return (value_f - 32.0) * 5.0 / 9.0


# A plain decimal number in ASCII: float() alone would also take "8_0.9",
# Arabic-Indic or full-width digits, "infinity" and surrounding Unicode spaces.
_NUMBER = re.compile(r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?\Z")

MAX_LINE_BYTES = 1 << 20     # one line of a trace (a 100,000-column header fits)
MAX_COLUMNS = 200000
MAX_REASONS_KEPT = 100       # skipped-row messages kept in full; all are counted
_ZIP_MAGIC = b"PK\x03\x04"
_GZIP_MAGIC = b"\x1f\x8b"
_OTHER_MAGIC = ((b"\x89PNG", "a PNG image"), (b"%PDF", "a PDF document"),
                (b"\xd0\xcf\x11\xe0", "an old Excel/Office file (.xls)"),
                (b"SQLite format 3", "an SQLite database"))
_BOMS = ((b"\xef\xbb\xbf", None), (b"\xff\xfe", "UTF-16"), (b"\xfe\xff", "UTF-16"))


def _shown(text, limit=40):
    """repr() of a cell for a message, cut to about ``limit`` characters."""
    if len(text) > limit:
        return repr(text[:limit]) + "... (%d characters)" % len(text)
    return repr(text)


def _parse_float(text, column, where):
    text = text.strip()
    if text == "":
        raise TraceError("%s: empty %s" % (where, column))
    if not _NUMBER.match(text):
        low = text.lower()
        if low in ("nan", "inf", "+inf", "-inf", "infinity", "-infinity", "+infinity"):
            raise TraceError("%s: %s is not finite: %r" % (where, column, text))
        shown = _shown(text)
        hint = ""
        if re.fullmatch(r"[+-]?[0-9]+,[0-9]+", text):
            hint = " (a decimal comma? write the number with a point: %s)" % text.replace(",", ".")
        elif any(ch.isdigit() for ch in text) and not text.isascii():
            hint = " (digits must be ASCII 0-9)"
        elif "_" in text:
            hint = " (no underscores in numbers)"
        raise TraceError("%s: %s is not a number: %s%s" % (where, column, shown, hint))
    value = float(text)
    if not math.isfinite(value):
        raise TraceError("%s: %s is too large for a float: %s" % (where, column, _shown(text)))
    return value


class TraceRow(tuple):
    """One data row: ``(time_s, temp_c, ambient_c, heater, event)``.

    ``time_s`` seconds (after ``time_unit`` conversion), ``temp_c`` deg C,
    ``ambient_c`` deg C or None (no column or empty cell), ``heater`` duty in
    [0, 1] or None (no column), ``event`` str or None (no column or empty cell).
    """
    __slots__ = ()
    _fields = ("time_s", "temp_c", "ambient_c", "heater", "event")

    def __new__(cls, time_s, temp_c, ambient_c=None, heater=None, event=None):
        return tuple.__new__(cls, (time_s, temp_c, ambient_c, heater, event))

    time_s = property(lambda self: self[0], doc="seconds since the start")
    temp_c = property(lambda self: self[1], doc="reading, deg C")
    ambient_c = property(lambda self: self[2], doc="ambient reading, deg C, or None")
    heater = property(lambda self: self[3], doc="heater duty 0..1, or None")
    event = property(lambda self: self[4], doc="event text, or None")


TIME_UNITS = {"s": 1.0, "ms": 0.001, "min": 60.0}


def _decoded_lines(handle, source):
    """Text lines from a binary file handle, with clear errors for non-UTF-8 input."""
    first = True
    number = 0
    while True:
        raw = handle.readline(MAX_LINE_BYTES + 1)
        if not raw:
            return
        number += 1
        if first:
            first = False
            if raw.startswith(_ZIP_MAGIC):
                raise TraceError("%s: this is a ZIP archive (a spreadsheet .xlsx or a zipped "
                                 "file?), not CSV text: export or unzip it as .csv" % source)
            if raw.startswith(_GZIP_MAGIC):
                raise TraceError("%s: this is gzip-compressed, not CSV text: decompress it "
                                 "first (gunzip)" % source)
            for magic, what in _OTHER_MAGIC:
                if raw.startswith(magic):
                    raise TraceError("%s: this is %s, not CSV text: export the readings as "
                                     "a UTF-8 CSV file" % (source, what))
            for bom, enc in _BOMS:
                if raw.startswith(bom):
                    if enc is not None:
                        raise TraceError("%s: the file is %s text; save it as UTF-8 CSV"
                                         % (source, enc))
                    raw = raw[len(bom):]
                    break
        if len(raw) > MAX_LINE_BYTES and not raw.endswith(b"\n"):
            raise TraceError("%s:%d: line longer than %d bytes (not a trace, or a missing "
                             "line break?)" % (source, number, MAX_LINE_BYTES))
        if b"\x00" in raw:
            raise TraceError("%s:%d: NUL bytes: this is binary or UTF-16 data, not UTF-8 "
                             "CSV text; save it as UTF-8 CSV" % (source, number))
        try:
            text = raw.decode("utf-8")
        except UnicodeDecodeError as exc:
            raise TraceError("%s:%d: not UTF-8 text (byte 0x%02x at column %d; Latin-1 or "
                             "Windows-1252?): save the file as UTF-8 CSV"
                             % (source, number, raw[exc.start], exc.start + 1)) from None
        if "\r" in text.rstrip("\r\n"):
            raise TraceError("%s:%d: a carriage return inside the line (line ends are CR "
                             "only?): save the file with LF or CRLF line ends"
                             % (source, number))
        yield text


def _text_lines(lines, source):
    """Lines from an iterable of str (or bytes), BOM on the first one removed."""
    first = True
    for number, line in enumerate(lines, 1):
        if isinstance(line, (bytes, bytearray)):
            try:
                line = bytes(line).decode("utf-8")
            except UnicodeDecodeError:
                raise TraceError("%s:%d: not UTF-8 text: save the file as UTF-8 CSV"
                                 % (source, number)) from None
        if first:
            first = False
            line = line.lstrip("\ufeff")
        if len(line) > MAX_LINE_BYTES:
            raise TraceError("%s:%d: line longer than %d characters"
                             % (source, number, MAX_LINE_BYTES))
        if "\x00" in line:
            raise TraceError("%s:%d: NUL characters: binary data, not CSV text"
                             % (source, number))
        yield line


def _split(line, sep, where):
    """Fields of one physical line; quotes may not span lines."""
    line = line.rstrip("\r\n")
    if '"' not in line:
        return line.split(sep)
    if line.count('"') % 2:
        raise TraceError('%s: unbalanced double quote (a quoted field must close on the same '
                         'line): remove or close the quote' % where)
    try:
        return next(csv.reader([line], delimiter=sep, strict=True))
    except csv.Error as exc:
        raise TraceError("%s: malformed CSV (%s)" % (where, exc)) from None


# for other readers of the same CSV dialect (the fleet manifest)
decoded_lines = _decoded_lines
split_fields = _split


def _is_comment(fields):
    return not "".join(fields).strip() or fields[0].lstrip().startswith("#")


class FileOwner:
    """``close()`` and ``with`` support for an object that may hold an open file in ``_handle``."""

    _handle = None

    def close(self):
        """Close the file (if this object opened one); safe to call twice."""
        if self._handle is not None:
            self._handle.close()
            self._handle = None

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
        return False


class TraceRows(FileOwner):
    """Streaming trace reader: iterate to get :class:`TraceRow` tuples one at a time.

    Holds one line at a time (not the file). The header is read on
    construction (a bad header raises :class:`TraceError` at once).
    ``source``: a path (opened in binary, decoded as UTF-8 with an optional
    byte-order mark), a binary file object (read the same way, not closed) or
    an iterable of text lines. ``fahrenheit``: temperature
    columns in deg F (header may say ``temp_f``/``ambient_f``), converted to
    deg C. ``time_unit``: ``"s"``, ``"ms"`` or ``"min"`` for the time column,
    converted to seconds. ``skip_bad``: skip malformed rows, counting them.

    Attributes: ``columns`` (header names after aliasing), ``separator``,
    ``has_ambient``, ``has_heater``, ``has_event``, ``line`` (file line of the
    last row yielded), ``rows`` (rows yielded so far), ``skipped_rows``,
    ``skipped_reasons`` (the first :data:`MAX_REASONS_KEPT` messages),
    ``skipped_by_reason`` (dict: short reason -> count), ``name``.
    """

    def __init__(self, source, fahrenheit=False, skip_bad=False, time_unit="s", name=None):
        if time_unit not in TIME_UNITS:
            raise ValueError("time_unit must be one of %s" % ", ".join(TIME_UNITS))
        self._scale = TIME_UNITS[time_unit]
        self.fahrenheit = bool(fahrenheit)
        self.skip_bad = bool(skip_bad)
        self._handle = None
        if isinstance(source, (io.BufferedIOBase, io.RawIOBase)):
            self.name = getattr(source, "name", "<trace>") if name is None else name
            self.name = str(self.name)
            self._lines = _decoded_lines(source, self.name)
        elif isinstance(source, (str, bytes)) or hasattr(source, "__fspath__"):
            self.name = str(source) if name is None else name
            try:
                self._handle = open(source, "rb")
            except IsADirectoryError:
                raise TraceError("%s: is a folder, not a trace file" % self.name) from None
            except FileNotFoundError:
                raise TraceError("%s: no such file" % self.name) from None
            except OSError as exc:
                raise TraceError("%s: cannot open (%s)" % (self.name, exc.strerror or exc)) from None
            self._lines = _decoded_lines(self._handle, self.name)
        else:
            self.name = "<trace>" if name is None else name
            self._lines = _text_lines(source, self.name)
        self.line = 0
        self.rows = 0
        self.skipped_rows = 0
        self.skipped_reasons = []
        self.skipped_by_reason = {}
        self.keep_reasons = MAX_REASONS_KEPT
        self._started = False
        self._first_stamp = None
        try:
            self._read_header()
        except BaseException:
            self.close()
            raise

    def _next_line(self):
        try:
            text = next(self._lines)
        except OSError as exc:
            raise TraceError("%s: read error (%s)" % (self.name, exc)) from None
        self.line += 1
        return text

    def _read_header(self):
        while True:
            try:
                text = self._next_line()
            except StopIteration:
                raise TraceError("%s: empty file (no header row)" % self.name) from None
            stripped = text.strip()
            if stripped and not stripped.startswith("#"):
                break
        where = "%s:%d" % (self.name, self.line)
        sep = ","
        if "," not in text:
            for cand in (";", "\t"):
                if cand in text:
                    sep = cand
                    break
        self.separator = sep
        header = [c.strip().lower() for c in _split(text, sep, where)]
        if len(header) > MAX_COLUMNS:
            raise TraceError("%s: header has %d columns (at most %d)"
                             % (where, len(header), MAX_COLUMNS))
        if self.fahrenheit:
            aliases = {"temp_f": "temp_c", "ambient_f": "ambient_c"}
            header = [aliases.get(c, c) for c in header]
        # a logger's `time` column of ISO 8601 date-times
        self._stamps = "time_s" not in header and "time" in header
        if self._stamps:
            header = ["time_s" if c == "time" else c for c in header]
        for name in REQUIRED_COLUMNS:
            if name not in header:
                hint = ""
                if name == "temp_c" and "temp_f" in header:
                    hint = " (found temp_f: use --fahrenheit)"
                elif name == "time_s" and ("time_ms" in header or "time_min" in header):
                    unit = "ms" if "time_ms" in header else "min"
                    hint = " (found time_%s: rename it time_s and add --time-unit %s)" % (
                        unit, unit)
                elif len(header) == 1 and any(s in text for s in (";", "\t", "|")):
                    hint = " (separate columns with commas)"
                shown = ",".join(header)
                if len(shown) > 200:
                    shown = shown[:200] + "... (%d columns)" % len(header)
                raise TraceError("%s: header has no %s column%s; header is %s; a trace "
                                 "starts with the line time_s,temp_c"
                                 % (where, name, hint, shown))
        seen, dup = set(), set()
        for c in header:
            if c in seen and c:
                dup.add(c)
            seen.add(c)
        if dup:
            shown = sorted(dup)
            raise TraceError("%s: duplicate column(s) %s" % (
                where, ",".join(shown[:10]) + (" and %d more" % (len(shown) - 10)
                                               if len(shown) > 10 else "")))
        self.columns = header
        self.header_line = self.line
        col = {}
        for i, c in enumerate(header):
            col.setdefault(c, i)
        self._i_time, self._i_temp = col["time_s"], col["temp_c"]
        self._i_amb, self._i_heat, self._i_event = (col.get("ambient_c"), col.get("heater"),
                                                    col.get("event"))
        self.has_ambient = self._i_amb is not None
        self.has_heater = self._i_heat is not None
        self.has_event = self._i_event is not None

    def _row(self, fields, where, last_time):
        if [f.strip().lower() for f in fields[:2]] == self.columns[:2] \
                or (fields and fields[0].strip().lower() == "time_s"):
            raise TraceError("%s: a second header line (files joined together?): remove it, "
                             "or replay each file alone" % where)
        if len(fields) != len(self.columns):
            raise TraceError("%s: expected %d fields (as in the header), got %d%s"
                             % (where, len(self.columns), len(fields),
                                " (quote a cell that holds the separator)"
                                if len(fields) > len(self.columns) else ""))
        cell = fields[self._i_time].strip()
        if self._stamps:
            if _NUMBER.match(cell):
                raise TraceError("%s: time holds a number (%s): a time column holds ISO 8601 "
                                 "date-times; name a column of seconds time_s (or use "
                                 "--time-unit for ms or min)" % (where, _shown(cell)))
            t = self._stamp_seconds(cell, where)
        else:
            raw_t = _parse_float(cell, "time_s", where)
            if raw_t < 0.0:
                raise TraceError("%s: time_s is negative: %s (times are seconds since the "
                                 "start)" % (where, _shown(cell)))
            t = raw_t * self._scale
        if t < last_time:
            raise TraceError("%s: time_s decreases (%g after %g): rows must be in time order"
                            % (where, t, last_time))
        temp = _parse_float(fields[self._i_temp], "temp_c", where)
        if self.fahrenheit:
            temp = fahrenheit_to_celsius(temp)
        amb = None
        if self._i_amb is not None and fields[self._i_amb].strip() != "":
            amb = _parse_float(fields[self._i_amb], "ambient_c", where)
            if self.fahrenheit:
                amb = fahrenheit_to_celsius(amb)
        duty = None
        if self._i_heat is not None:
            duty = _parse_float(fields[self._i_heat], "heater", where)
            if not 0.0 <= duty <= 1.0:
                raise TraceError("%s: heater duty %r is outside 0..1 (a fraction of full "
                                 "power, not percent)" % (where, fields[self._i_heat].strip()))
        event = None
        if self._i_event is not None:
            event = fields[self._i_event].strip() or None
        return TraceRow(t, temp, amb, duty, event)

    def _stamp_seconds(self, cell, where):
        """Seconds from the first row's stamp to an ISO 8601 date-time ``cell``."""
        try:
            stamp = datetime.datetime.fromisoformat(cell.replace("Z", "+00:00")
                                                    if cell.endswith("Z") else cell)
        except ValueError:
            raise TraceError("%s: time is neither a number nor an ISO 8601 date-time "
                             "(2026-01-31T14:05:00): %s" % (where, _shown(cell))) from None
        if self._first_stamp is None:
            self._first_stamp = stamp
        elif (stamp.tzinfo is None) != (self._first_stamp.tzinfo is None):
            raise TraceError("%s: time %s mixes date-times with and without a time zone"
                             % (where, _shown(cell)))
        return (stamp - self._first_stamp).total_seconds()

    def __iter__(self):
        if self._started:
            raise RuntimeError("a TraceRows object can be iterated once")
        self._started = True
        return self._generate()

    def _generate(self):
        last_time = -math.inf
        sep = self.separator
        try:
            while True:
                try:
                    text = self._next_line()
                except StopIteration:
                    break
                if not text.strip():
                    continue
                where = "%s:%d" % (self.name, self.line)
                try:
                    fields = _split(text, sep, where)
                    if _is_comment(fields):
                        continue
                    row = self._row(fields, where, last_time)
                except TraceError as exc:
                    if not self.skip_bad:
                        raise
                    self._skip(str(exc), where)
                    continue
                last_time = row[0]
                self.rows += 1
                yield row
        finally:
            self.close()
        if not self.rows:
            raise TraceError("%s: no data rows%s" % (
                self.name, " (all %d skipped as bad)" % self.skipped_rows
                if self.skipped_rows else ""))

    def _skip(self, message, where):
        self.skipped_rows += 1
        if self.keep_reasons is None or len(self.skipped_reasons) < self.keep_reasons:
            self.skipped_reasons.append(message)
        short = message[len(where) + 2:] if message.startswith(where + ": ") else message
        short = short.split(":")[0].split(" (")[0]
        short = re.sub(r"\d+", "N", short)
        self.skipped_by_reason[short] = self.skipped_by_reason.get(short, 0) + 1


def iter_trace_rows(source, fahrenheit=False, skip_bad=False, time_unit="s", name=None):
    """Streaming read of a trace: a :class:`TraceRows` (iterable of :class:`TraceRow`).

    ``source`` is a path or an iterable of text lines; see :class:`TraceRows`
    for the arguments and the header attributes. Memory stays one line.
    """
    return TraceRows(source, fahrenheit=fahrenheit, skip_bad=skip_bad, time_unit=time_unit,
                     name=name)
