"""Record a vessel's readings to flash as trace CSV files, for calibration on the PC.

Put the logger on prototypes of your product, make a few dozen real uses
(different fills, start temperatures, rooms), pull the files off the board
(README, "Recording traces on a prototype") and give them to
``python -m host_sim calibrate``. Each file is a trace in the format
``host_sim/replay/trace_reader.py`` reads::

    # tinytherm trace_logger session 3 part 0
    time_s,temp_c[,ambient_c][,heater],seq
    0.0,81.250,0
    5.0,81.125,1

``time_s`` counts from the start of the session (one power-on) and goes on
across the parts of a session; ``seq`` is the row number in the session (the
reader ignores it; a gap in it shows lost rows). A file is closed when the
next row would take it past ``max_file_bytes`` and the next part begins with
its own header; when more than ``max_files`` files exist the oldest is
removed, so the logs never take more than ``max_files * max_file_bytes``
bytes of flash.

Power loss. Every row is one ``write`` of a whole line, and the file is
flushed every ``flush_every`` rows (on littlefs a flush commits the file, so
the file ends on a row boundary; FAT can keep a torn row). A power-on never
appends to an old file: it starts a new session file. A torn last row has
fewer fields than the header (``seq`` is the last column, so a tear anywhere
before it removes a field) and ``read_trace(..., skip_bad=True)`` skips and
counts it; a tear inside ``seq`` leaves the data intact.

Wear: each flush rewrites a flash block on littlefs; at 5 s per row and
``flush_every=1`` that is 17,280 block writes a day spread by the wear
levelling. Raise ``flush_every`` to trade the last rows for fewer writes.

Run ``trace_logger.main()`` from main.py with board.py beside it; the NTC is
read as in mug.py. CAUTION: logging does not make a vessel safe; hot liquids
scald, and a heater needs its own thermal cut-out.
"""
import os

import board
from tinytherm import sensors

LOG_DIR = "/logs"          # folder on the board's filesystem (created when missing)
PREFIX = "tt"              # file names: tt0003_00.csv = session 3, part 0
SAMPLE_S = 5               # seconds between readings
MAX_FILE_BYTES = 32768     # size cap of one file, bytes
MAX_FILES = 16             # oldest files are removed beyond this many
FLUSH_EVERY = 1            # rows between flushes (1: lose at most the row being written)
OVERSAMPLE = 8             # ADC reads averaged per reading
MAX_ROWS = 0               # stop after this many rows (0: run until power-off)


def _join(directory, name):
    if directory.endswith("/"):
        return directory + name
    return directory + "/" + name


def _parse_name(prefix, name):
    """``(session, part)`` of a log file name, or None for any other file."""
    if not (name.startswith(prefix) and name.endswith(".csv")):
        return None
    core = name[len(prefix):-4]
    if len(core) != 7 or core[4] != "_":
        return None
    try:
        return int(core[:4]), int(core[5:])
    except ValueError:
        return None


class TraceLogger:
    """Writes rows ``time_s,temp_c[,ambient_c][,heater],seq`` to rotating CSV files.

    ``directory``: folder for the files (made if missing). ``ambient``: log an
    ambient column (deg C; empty cell when a row has none). ``heater``: log
    the heater duty (0..1) applied since the previous row. ``max_file_bytes``
    (bytes) and ``max_files`` cap the space used; ``flush_every`` rows between
    flushes. A new logger always starts a new session (never appends).
    """

    def __init__(self, directory, ambient=False, heater=False, max_file_bytes=32768,
                 max_files=16, flush_every=1, prefix="tt"):
        if max_file_bytes < 256:
            raise ValueError("max_file_bytes must be at least 256")
        if max_files < 1 or flush_every < 1:
            raise ValueError("max_files and flush_every must be at least 1")
        self.directory = directory
        self.ambient = bool(ambient)
        self.heater = bool(heater)
        self.max_file_bytes = int(max_file_bytes)
        self.max_files = int(max_files)
        self.flush_every = int(flush_every)
        self.prefix = prefix
        self.rows = 0            # rows written in this session
        self.dropped = 0         # rows refused (no temperature, bad time)
        self.part = -1
        self.path = None
        self._file = None
        self._size = 0
        self._unflushed = 0
        self._last_t = -1.0
        try:
            os.mkdir(directory)
        except OSError:
            pass                 # it exists
        last = -1
        for name in os.listdir(directory):
            sp = _parse_name(prefix, name)
            if sp is not None and sp[0] > last:
                last = sp[0]
        self.session = (last + 1) % 10000
        header = "time_s,temp_c"
        if self.ambient:
            header += ",ambient_c"
        if self.heater:
            header += ",heater"
        self._header = header + ",seq\n"
        self._open_part()

    def files(self):
        """The log files in the directory, oldest first (names, not paths)."""
        found = []
        for name in os.listdir(self.directory):
            if _parse_name(self.prefix, name) is not None:
                found.append(name)
        found.sort()
        return found

    def _open_part(self):
        if self._file is not None:
            self._file.close()
        self.part += 1
        name = "%s%04d_%02d.csv" % (self.prefix, self.session, self.part % 100)
        self.path = _join(self.directory, name)
        self._file = open(self.path, "w")
        head = "# tinytherm trace_logger session %d part %d\n" % (self.session, self.part)
        self._file.write(head)
        self._file.write(self._header)
        self._file.flush()
        self._size = len(head) + len(self._header)
        self._unflushed = 0
        old = self.files()
        while len(old) > self.max_files:
            os.remove(_join(self.directory, old.pop(0)))

    def log(self, time_s, temp_c, ambient_c=None, duty=None):
        """Append one reading: seconds since the session began, deg C, deg C, duty 0..1.

        A row without a temperature (``None``: a failed reading) or whose time
        goes backwards is not written and counts in :attr:`dropped`. Returns
        True when the row was written.
        """
        if self._file is None:
            raise ValueError("the logger is closed")
        if temp_c is None or not (time_s >= self._last_t):
            self.dropped += 1
            return False
        line = "%.1f,%.3f" % (time_s, temp_c)
        if self.ambient:
            line += "," if ambient_c is None else ",%.3f" % ambient_c
        if self.heater:
            line += ",%.3f" % (0.0 if duty is None else duty)
        line += ",%d\n" % self.rows
        if self._size + len(line) > self.max_file_bytes:
            self._open_part()
        f = self._file
        if f is None:
            raise ValueError("the logger is closed")
        f.write(line)
        self._size += len(line)
        self._last_t = time_s
        self.rows += 1
        self._unflushed += 1
        if self._unflushed >= self.flush_every:
            f.flush()
            self._unflushed = 0
        return True

    def close(self):
        """Flush and close the current file (logging after this raises ValueError)."""
        if self._file is not None:
            self._file.flush()
            self._file.close()
            self._file = None


def read_probe_c(adc):
    """NTC reading in deg C (averaged), or None when the probe is open or shorted."""
    total = 0
    for _ in range(OVERSAMPLE):
        total += adc.read_u16()
    r = sensors.divider_resistance_ohm(total / OVERSAMPLE, board.ADC_FULL_SCALE, board.FIXED_OHM)
    return sensors.beta_temperature_c(r, board.NTC_R25_OHM, board.NTC_BETA_K)


def main():
    """Log the probe every SAMPLE_S seconds until power-off (or MAX_ROWS rows)."""
    adc = board.ntc_adc()
    log = TraceLogger(LOG_DIR, max_file_bytes=MAX_FILE_BYTES, max_files=MAX_FILES,
                      flush_every=FLUSH_EVERY, prefix=PREFIX)
    print("trace_logger: session %d in %s" % (log.session, LOG_DIR))
    prev = board.ticks_ms()
    elapsed_ms = 0           # summed tick differences: no wrap however long the session
    due_ms = 0
    while MAX_ROWS <= 0 or log.rows < MAX_ROWS:
        now = board.ticks_ms()
        elapsed_ms += board.ticks_diff(now, prev)
        prev = now
        log.log(elapsed_ms / 1000.0, read_probe_c(adc))
        due_ms += SAMPLE_S * 1000
        wait = due_ms - elapsed_ms - board.ticks_diff(board.ticks_ms(), prev)
        if wait > 0:
            board.sleep_ms(wait)
    log.close()
    print("trace_logger: %d rows, %d dropped, last file %s" % (log.rows, log.dropped, log.path))
