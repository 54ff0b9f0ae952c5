"""The ETA-over-time table that ``demo`` and ``replay`` print, and the early-arrival line.

One row every ``--every`` seconds of trace time (default: a whole number of
minutes that gives at most :data:`TABLE_ROWS` rows) and at events: time since
the first reading (min), the reading, the status, the ETA a device shows (min)
with its interval and, when the crossing is known (a truth file, or the
trace's own crossing), the true time left (min) and the ETA's error in % of
it. The rows are collected while the trace streams (at most
:data:`MAX_ROWS`, so memory does not grow with the trace) and printed once
the crossing is known: replay finds the trace's crossing only at its end.

Honest cells: an ETA or interval is printed only where a device shows one
(status tracking or arrived), ``--`` elsewhere (a settling estimate with an
interval of ``0..inf`` is no answer); an interval without an upper end is
printed ``>= low``.
"""
import math

from host_sim.cli.options import positive_float
from host_sim.replay.metrics import FLOOR_S
from tinytherm import status as st

TABLE_ROWS = 30           # rows the default step aims at
MAX_ROWS = 200            # rows kept at most (a small --every on a long trace)
MAX_EVENT_ROWS = 20       # extra rows at events
STEPS_MIN = (1, 2, 5, 10, 15, 20, 30, 60, 120, 240, 480, 720, 1440)
SHOWN = (st.TRACKING, st.ARRIVED)


def add_table_options(p):
    """``--every S`` and ``--no-table``, the same in ``demo`` and ``replay``."""
    p.add_argument("--every", type=positive_float, default=None, metavar="S",
                   help="a row of the ETA table every S seconds of trace time, and at events "
                        "(default: whole minutes giving at most %d rows)" % TABLE_ROWS)
    p.add_argument("--no-table", action="store_true", help="do not print the ETA table")


def auto_step_s(span_s):
    """The table's default step, s: the smallest of :data:`STEPS_MIN` minutes giving at
    most :data:`TABLE_ROWS` rows over ``span_s`` seconds (whole days beyond a day)."""
    span_s = max(float(span_s), 0.0)
    for minutes in STEPS_MIN:
        if span_s / (60.0 * minutes) <= TABLE_ROWS:
            return 60.0 * minutes
    return 86400.0 * math.ceil(span_s / (86400.0 * TABLE_ROWS))


class EtaTable:
    """Rows of the ETA table, offered one trace row at a time.

    ``every_s``: the step, seconds of trace time; ``interval``: the ETA
    interval's probability (for the header).
    """

    def __init__(self, every_s, interval=0.8):
        self.every_s = float(every_s)
        self.interval = float(interval)
        self.rows = []
        self.left_out = 0
        self._t0 = None
        self._next = None
        self._events = 0

    def offer(self, t, temp_c, status, eta_s, low_s, high_s, event=""):
        """One row: time s, reading deg C, status code, ETA and interval s (None: none)."""
        if self._t0 is None:
            self._t0 = self._next = t
        due = t + 1e-9 >= self._next
        at_event = bool(event) and self._events < MAX_EVENT_ROWS
        if not (due or at_event):
            return
        if due:
            # the next row at the next multiple of the step after t (a gap skips rows)
            self._next = self._t0 + self.every_s * (math.floor((t - self._t0) / self.every_s)
                                                    + 1.0)
        if at_event:
            self._events += 1
        if len(self.rows) >= MAX_ROWS:
            self.left_out += 1
            return
        self.rows.append((t, temp_c, status, eta_s, low_s, high_s, event))

    def lines(self, crossing_s=None, unit="C", crossing_from="the truth file"):
        """The table as text lines; ``crossing_s``: the crossing (s, the trace's clock) or None;
        ``unit``: "C" or "F" for the readings; ``crossing_from``: where the crossing came from."""
        known = crossing_s is not None
        head = ("%7s %8s  %-12s %7s %14s" % ("time", "reading", "status", "ETA",
                                             "%d%% interval" % round(100 * self.interval)))
        units = "%7s %8s  %-12s %7s %14s" % ("min", unit, "", "min", "min")
        if known:
            head += " %10s %7s" % ("true left", "error")
            units += " %10s %7s" % ("min", "%")
        out = ["ETA over time (a row every %s of trace time, and at events):"
               % _step_text(self.every_s), head, units]
        for t, temp, code, eta, low, high, event in self.rows:
            shown = code in SHOWN and eta is not None and math.isfinite(eta)
            reading = temp * 9.0 / 5.0 + 32.0 if unit == "F" else temp
            line = "%7.1f %8.2f  %-12s %7s %14s" % (
                (t - self.rows[0][0]) / 60.0, reading, st.status_name(code),
                "%.1f" % (eta / 60.0) if shown else "--",
                _interval_text(low, high) if shown else "--")
            if known:
                rem = crossing_s - t
                if rem > 0.0:
                    # signed error against the true time left, with the metrics' 30 s floor
                    err = ("%+.0f" % (100.0 * (eta - rem) / max(rem, FLOOR_S)) if shown
                           else "--")
                    line += " %10.1f %7s" % (rem / 60.0, err)
                else:
                    line += " %10s %7s" % ("passed", "--")
            if event:
                line += "   <- " + _plain(event)
            out.append(line)
        if self.left_out:
            out.append("... %d more row(s) left out (a larger --every shows the whole trace)"
                       % self.left_out)
        out.append("  ETA, interval: what a device shows (status tracking or arrived), -- "
                   "otherwise; >= X: no upper end")
        if known:
            out.append("  true left: from %s; error: (ETA - true left) / max(true left, %.0f s),"
                       " + says later than it is" % (crossing_from, FLOOR_S))
        return out


def _step_text(seconds):
    if seconds % 60.0 == 0.0:
        return "%.0f min" % (seconds / 60.0)
    return "%g s" % seconds


def _interval_text(low, high):
    if low is None or not math.isfinite(low):
        return "--"
    if high is None or not math.isfinite(high):
        return "--" if low <= 0.0 else ">= %.1f" % (low / 60.0)
    return "%.1f..%.1f" % (low / 60.0, high / 60.0)


def _plain(text, limit=40):
    text = "".join(ch if ch.isprintable() else " " for ch in str(text))
    return text if len(text) <= limit else text[:limit - 3] + "..."


class ArrivalCount:
    """Early arrivals and the first answer of a replay, as fleet counts them.

    Feed the prediction dicts of :func:`host_sim.replay.replay.replay_rows` to
    :meth:`add` (``approach``: the replay's, -1 cool, +1 heat, 0 either);
    :meth:`line` says how many rows reported ``arrived`` while
    the readings' 5-reading running median was short of the target by more
    than 0.3 C (:class:`host_sim.fleet.metrics.TraceScorer`, the figure of
    fleet's ``early_arrival``) and when the first ETA was shown.
    """

    def __init__(self, target_c, approach=0):
        from host_sim.fleet.metrics import TraceScorer
        self._scorer = TraceScorer(target_c, direction=approach)

    def add(self, prediction):
        self._scorer.add(prediction)

    def line(self):
        from host_sim.replay.metrics import EARLY_MARGIN_C
        got = self._scorer.result()
        first = got["first_answer_s"]
        return ("early arrivals: %d row(s) said arrived while the readings (5-reading running "
                "median) were more than %.1f C short of the target; first ETA shown %s"
                % (got["early_arrival"], EARLY_MARGIN_C,
                   "never" if first is None else "after %.1f min" % (first / 60.0)))
