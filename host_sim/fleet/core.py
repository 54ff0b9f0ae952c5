"""One trace of a fleet replay: stream it through a core and score it.

:func:`evaluate_trace` reads a trace file twice, one row at a time (first
pass: the trace's own crossing of the target and whether a heater duty is
ever nonzero; second pass: the replay, scored by
:class:`host_sim.fleet.metrics.TraceScorer`), so memory does not grow with
the trace. Any failure becomes the result's ``error`` text.

A variant whose ``core`` names another checkout (or a folder where a
``tinytherm`` package is installed) runs in a separate Python process that
loads that folder's ``tinytherm`` package by file location before anything
imports it (:class:`CoreProcess`, protocol: one JSON object per line on
stdin/stdout), so two cores never mix in one interpreter. The rest of the
code in that process (this module, replay, metrics) is this checkout's.
"""
import atexit
import json
import os
import subprocess
import sys
import threading

from host_sim.fleet.metrics import TraceScorer
from host_sim.replay.replay import CrossingFinder, replay_rows
from host_sim.replay.settings import ReplaySettings, estimator_arguments
from host_sim.replay.trace_checks import TraceScan, trace_problems
from host_sim.replay.trace_io import write_predictions
from host_sim.replay.trace_reader import TraceError, iter_trace_rows

RESULT_KEYS = ("rows", "skipped_rows", "crossing_s", "median_rel_error", "p90_rel_error",
               "coverage", "no_estimate_fraction", "early_arrival", "first_answer_s",
               "time_to_trust", "evaluated_rows", "metrics_exact", "error")


def core_root(path):
    """The folder holding a ``tinytherm`` package: ``path`` itself or its parent.

    ``path``: a checkout (``path/tinytherm/__init__.py``), a site-packages
    style folder, or the package folder itself. Raises ValueError otherwise.
    """
    path = os.path.abspath(os.path.expanduser(path))
    if os.path.isfile(os.path.join(path, "tinytherm", "__init__.py")):
        return path
    if os.path.basename(path) == "tinytherm" and os.path.isfile(os.path.join(path, "__init__.py")):
        return os.path.dirname(path)
    raise ValueError("%s holds no tinytherm package (no tinytherm/__init__.py)" % path)


def _reader_options(spec):
    """The keyword arguments of ``iter_trace_rows`` a spec asks for (deg F, time unit)."""
    return {"skip_bad": bool(spec.get("skip_bad", False)),
            "fahrenheit": bool(spec.get("fahrenheit", False)),
            "time_unit": spec.get("time_unit", "s")}


def _scan(path, target_c, reader_options, want_crossing, checks=True, ambient_used=True):
    """First pass: (crossing or None, has heater column, any nonzero duty).

    With ``checks``, a trace that replay would refuse (the shared checks of
    :mod:`host_sim.replay.trace_checks`) raises :class:`TraceError`.
    """
    finder = CrossingFinder(target_c) if want_crossing else None
    with iter_trace_rows(path, **reader_options) as rows:
        scan = TraceScan(rows)
        for row in rows:
            if finder is not None:
                finder.add(row[0], row[1])
            scan.add(row)
        scan.finish()
    problems = trace_problems(scan, "F" if reader_options["fahrenheit"] else "C",
                              reader_options["time_unit"],
                              ambient_option="--set use_ambient_column=false",
                              ambient_used=ambient_used) if checks else []
    if problems:
        raise TraceError("%s: %s (--no-checks runs it anyway)" % (path, "; ".join(problems)))
    return (finder.result() if finder is not None else None), scan.has_heater, scan.heater_on


def evaluate_trace(spec, variant, predictions_out=None):
    """Replay and score one trace; returns a dict of :data:`RESULT_KEYS` and ``profile``.

    ``spec``: dict with ``path`` (trace CSV), ``target_c`` (deg C), optional
    ``crossing_s`` (a known crossing, seconds; otherwise the trace's own,
    :class:`host_sim.replay.replay.CrossingFinder`), ``noise_sd_c`` (deg C) and
    ``skip_bad`` (skip malformed rows instead of failing), ``fahrenheit``
    (the temperature columns hold deg F), ``time_unit`` ("s", "ms", "min":
    the unit of the time column) and ``checks``
    (default True: refuse what replay refuses, see
    :mod:`host_sim.replay.trace_checks`). ``variant``: dict with
    ``settings``, ``NAME=VALUE`` texts (or a dict) for
    :class:`host_sim.replay.settings.ReplaySettings`, read against this
    process's core.
    ``predictions_out``: also write the prediction CSV there. Errors of any
    kind are returned as ``error`` text (empty when the trace replayed).
    """
    out = dict.fromkeys(RESULT_KEYS)
    out["error"] = ""
    out["profile"] = []
    try:
        target = float(spec["target_c"])
        reader_options = _reader_options(spec)
        known = spec.get("crossing_s")
        settings = ReplaySettings(variant.get("settings"))
        crossing, has_heater, any_duty = _scan(spec["path"], target, reader_options,
                                               known is None, spec.get("checks", True),
                                               settings.use_ambient_column)
        if known is not None:
            crossing = float(known)
        estimator = settings.estimator(has_heater, any_duty)
        scorer = TraceScorer(target, crossing, spec.get("noise_sd_c"), settings.approach)
        with iter_trace_rows(spec["path"], **reader_options) as rows:
            stream = replay_rows(rows, target, estimator, settings)

            def scored():
                for _, pred in stream:
                    scorer.add(pred)
                    yield pred

            if predictions_out:
                write_predictions(predictions_out, scored())
            else:
                for _ in scored():
                    pass
            skipped = rows.skipped_rows
        figs = scorer.result()
        out.update({k: figs[k] for k in figs if k in out})
        out["skipped_rows"] = skipped
        out["crossing_s"] = crossing
        out["profile"] = sorted([fb, eb, n] for (fb, eb), n in scorer.profile.items())
    except TraceError as exc:
        out["error"] = str(exc)
    except (OSError, ValueError, TypeError, OverflowError, ZeroDivisionError) as exc:
        out["error"] = "%s: %s" % (type(exc).__name__, exc)
    return out


def core_info():
    """Where the loaded core lives and what its estimator takes, for the A/B header.

    ``file``: the package folder; ``version``; ``arguments``: the estimator's
    ``{name: default}`` (:func:`host_sim.replay.settings.estimator_arguments`;
    a default JSON cannot carry is given as its repr).
    """
    import tinytherm
    plain = (type(None), bool, int, float, str)
    return {"file": os.path.dirname(os.path.abspath(tinytherm.__file__)),
            "version": getattr(tinytherm, "__version__", None),
            "arguments": {k: v if isinstance(v, plain) else repr(v)
                          for k, v in estimator_arguments().items()}}


def serve(stdin=None, stdout=None):
    """The other core's process: answer one JSON request per line until EOF."""
    stdin = stdin or sys.stdin
    stdout = stdout or sys.stdout
    for line in stdin:
        req = json.loads(line)
        try:
            if req["op"] == "info":
                reply = {"ok": core_info()}
            else:
                reply = {"ok": evaluate_trace(req["spec"], req["variant"],
                                              req.get("predictions_out"))}
        except Exception as exc:          # reported to the caller, never a dead pipe
            reply = {"fail": "%s: %s" % (type(exc).__name__, exc)}
        stdout.write(json.dumps(reply) + "\n")
        stdout.flush()


_BOOT = """import importlib.util, os, sys
root = sys.argv[1]
pkg = os.path.join(root, "tinytherm")
spec = importlib.util.spec_from_file_location(
    "tinytherm", os.path.join(pkg, "__init__.py"), submodule_search_locations=[pkg])
mod = importlib.util.module_from_spec(spec)
sys.modules["tinytherm"] = mod
spec.loader.exec_module(mod)
from host_sim.fleet import core as fleet_core
fleet_core.serve()
"""


class CoreProcess:
    """A child Python process that replays with the core found at ``root``.

    Requests are serialised by a lock, so threads of one worker may share
    it. A child that dies is started again once per request.
    """

    def __init__(self, root):
        self.root = core_root(root)
        self._lock = threading.Lock()
        self._proc = None

    def _start(self):
        # the folder holding the host_sim package (host_sim/fleet/core.py -> three levels up)
        here = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
        env = dict(os.environ)
        env["PYTHONPATH"] = here + (os.pathsep + env["PYTHONPATH"] if env.get("PYTHONPATH") else "")
        self._proc = subprocess.Popen([sys.executable, "-c", _BOOT, self.root],
                                      stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                                      env=env, text=True, bufsize=1)

    def _ask(self, req):
        line = json.dumps(req) + "\n"
        with self._lock:
            for attempt in (1, 2):
                if self._proc is None or self._proc.poll() is not None:
                    self._start()
                try:
                    self._proc.stdin.write(line)
                    self._proc.stdin.flush()
                    reply = self._proc.stdout.readline()
                except (BrokenPipeError, OSError):
                    reply = ""
                if reply:
                    reply = json.loads(reply)
                    if "fail" in reply:
                        raise RuntimeError("core at %s: %s" % (self.root, reply["fail"]))
                    return reply["ok"]
                self.close()
            raise RuntimeError("the process for the core at %s died twice" % self.root)

    def info(self):
        """:func:`core_info` of the child's core."""
        return self._ask({"op": "info"})

    def evaluate(self, spec, variant, predictions_out=None):
        """:func:`evaluate_trace` in the child."""
        return self._ask({"op": "eval", "spec": spec, "variant": variant,
                          "predictions_out": predictions_out})

    def close(self):
        """Stop the child (safe to call twice)."""
        proc, self._proc = self._proc, None
        if proc is not None:
            try:
                proc.stdin.close()
            except OSError:
                pass
            try:
                proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                proc.kill()
                proc.wait()


_PROCESSES = {}
_PROCESSES_LOCK = threading.Lock()


def core_process(root):
    """The :class:`CoreProcess` of this interpreter for ``root`` (started on first use)."""
    key = core_root(root)
    with _PROCESSES_LOCK:
        if key not in _PROCESSES:
            _PROCESSES[key] = CoreProcess(key)
            atexit.register(_PROCESSES[key].close)
        return _PROCESSES[key]


def run_variant(spec, variant, predictions_out=None):
    """:func:`evaluate_trace` here, or in the child of ``variant["core"]`` if set."""
    core = variant.get("core")
    if not core:
        return evaluate_trace(spec, variant, predictions_out)
    try:
        return core_process(core).evaluate(spec, variant, predictions_out)
    except (RuntimeError, ValueError) as exc:
        out = dict.fromkeys(RESULT_KEYS)
        out["error"] = str(exc)
        out["profile"] = []
        return out
