"""Fleet replay: many traces through the core on a dask.distributed cluster.

``python -m host_sim fleet MANIFEST.csv --out RESULTS.csv [--workers N]
[--scheduler ADDR]``

Input: a manifest CSV with the columns ``path,target`` (paths relative to the
manifest's folder, target in deg C) and any tag columns (product, firmware,
kind, ...); optional ``crossing_s`` (a known crossing time, seconds) and
``noise_sd_c`` (sensor noise sd, deg C) columns are used, not treated as
tags. A folder (every ``*.csv`` in it) or a glob pattern of trace CSVs works
too, with ``--target`` for all (``--target`` also fills empty manifest
targets).

Each trace is streamed (:mod:`host_sim.fleet.core`): memory per worker does
not grow with the trace length. Traces go to the workers in chunks; results
are put back in manifest order, so they do not depend on the number of
workers or on the order in which chunks finish. A malformed trace becomes a
row with its ``error``; a chunk whose worker died is run again by the
scheduler (up to its ``allowed-failures``); a chunk that still fails is run
again one trace per task, so that only the trace that kills its worker (or
raises) becomes an error row.

A/B: ``--baseline-core PATH`` (another checkout, or a folder where a
``tinytherm`` package is installed) and/or ``--baseline-set NAME=VALUE``
replay every trace a second time as the baseline; ``--core`` and ``--set``
choose the candidate (default: the installed core with its defaults). The
settings are those of every command that replays
(:class:`host_sim.replay.settings.ReplaySettings`), checked against the
estimator of the core they are for. The
outputs then list the traces that got worse (:mod:`host_sim.fleet.report`).
"""
import glob
import math
import os
import sys

from host_sim.fleet import core as fleet_core
from host_sim.replay.settings import ReplaySettings
from host_sim.replay.trace_checks import target_problem
from host_sim.replay.trace_reader import TraceError, decoded_lines, split_fields

KNOWN_COLUMNS = ("path", "target", "crossing_s", "noise_sd_c")


class Item:
    """One trace of the fleet: index in the manifest, the path as written, the
    spec for :func:`host_sim.fleet.core.evaluate_trace`, its tags (dict of
    str) and a manifest problem (str, or "")."""

    def __init__(self, index, path, spec, tags, problem=""):
        self.index = index
        self.path = path
        self.spec = spec
        self.tags = tags
        self.problem = problem


MAX_TAG_CHARS = 1000        # a tag cell: a product, a firmware version, a note


def _first_line(path):
    """``(line number, header fields lower-cased)`` of a CSV file's first non-comment line.

    Raises :class:`TraceError` (file and line named) for input that is not
    UTF-8 CSV text, or ``(0, [])`` for a file without such a line.
    """
    with open(path, "rb") as handle:
        for number, text in enumerate(decoded_lines(handle, path), 1):
            if text.strip() and not text.lstrip().startswith("#"):
                where = "%s:%d" % (path, number)
                return number, [f.strip().lower() for f in split_fields(text, ",", where)]
    return 0, []


def _kind_of(path):
    """"manifest" (a path column), "trace" (time_s or temp_c), or None (neither, or unreadable)."""
    try:
        _, header = _first_line(path)
    except (OSError, TraceError):
        return None
    if "path" in header:
        return "manifest"
    if "time_s" in header or "temp_c" in header:
        return "trace"
    return None


def _float_cell(text, name):
    text = (text or "").strip()
    if text == "":
        return None
    try:
        value = float(text)
    except ValueError:
        raise ValueError("%s is not a number: %r" % (name, text[:40])) from None
    if not math.isfinite(value):
        raise ValueError("%s is not finite: %r" % (name, text[:40]))
    return value


def check_target(target_c, option="--target", unit="C", target_in_f=False):
    """ValueError unless ``target_c`` (deg C) is None or a liquid's temperature.

    ``unit``, ``target_in_f``: how the user gave it (``--fahrenheit``,
    ``--target-in-f``), for the message."""
    if target_c is None:
        return None
    if isinstance(target_c, bool) or not isinstance(target_c, (int, float)):
        raise ValueError("%s must be a number, got %r" % (option, target_c))
    problem = target_problem(float(target_c), unit, target_in_f)
    if problem:
        raise ValueError("%s: %s" % (option, problem))
    return float(target_c)


def load_items(source, target_c=None, skip_bad=False, units=None):
    """The fleet's traces from a manifest CSV, a folder or a glob pattern.

    ``target_c`` (deg C): the target of traces without one. ``units``: dict of
    how to read every trace, as replay's options say it: ``fahrenheit``,
    ``time_unit``, ``checks`` (False: run traces the shared checks refuse) and
    ``target_in_f`` (the manifest's targets are in deg F). Returns
    ``(items, tag_names)``; manifest rows with a bad cell get a ``problem``
    and become error rows, they do not stop the run. A manifest that cannot
    be read as one (not UTF-8, no header, duplicate columns, an unbalanced
    quote, a tag over :data:`MAX_TAG_CHARS` characters) raises ValueError
    (a :class:`TraceError`) naming the file and line.
    """
    units = dict(units or {})
    target_c = check_target(target_c, "--target", *_target_unit(units))
    if os.path.isdir(source) or any(ch in source for ch in "*?["):
        pattern = os.path.join(source, "*.csv") if os.path.isdir(source) else source
        # manifests lying among the traces are not traces
        paths = sorted(p for p in glob.glob(pattern)
                       if os.path.isfile(p) and _kind_of(p) != "manifest")
        return [_plain_item(i, p, target_c, skip_bad, units) for i, p in enumerate(paths)], []
    if not os.path.isfile(source):
        raise ValueError("%s: no such manifest, folder or pattern" % source)
    try:
        number, header = _first_line(source)
    except OSError as exc:
        raise ValueError("%s: cannot read (%s)" % (source, exc.strerror or exc)) from None
    if "path" not in header:
        if "time_s" in header or "temp_c" in header:
            return [_plain_item(0, source, target_c, skip_bad, units)], []
        if not header:
            raise TraceError("%s: empty file (no manifest header, no trace)" % source)
        shown = ",".join(header)
        hint = (" (no header row? the first cell looks like a file name)"
                if header[0].endswith(".csv") else "")
        raise TraceError("%s:%d: neither a manifest (header path,target,...) nor a trace "
                         "(header time_s,temp_c): the first line is %s%s"
                         % (source, number, shown[:80] + ("..." if len(shown) > 80 else ""),
                            hint))
    return _manifest_items(source, target_c, skip_bad, units)


def _target_unit(units):
    """``(unit, target_in_f)`` of a units dict, for :func:`check_target`."""
    return ("F" if units.get("fahrenheit") else "C"), bool(units.get("target_in_f"))


def _spec(path, target_c, skip_bad, units):
    """The spec of :func:`host_sim.fleet.core.evaluate_trace` for one trace."""
    spec = {"path": path, "target_c": target_c, "skip_bad": skip_bad}
    for name in ("fahrenheit", "time_unit", "checks"):
        if name in units:
            spec[name] = units[name]
    return spec


def _manifest_items(source, target_c, skip_bad, units):
    base = os.path.dirname(os.path.abspath(source))
    items, fields, col, tag_cols = [], None, {}, []
    with open(source, "rb") as handle:
        for number, text in enumerate(decoded_lines(handle, source), 1):
            if not text.strip() or text.lstrip().startswith("#"):
                continue
            where = "%s:%d" % (source, number)
            cells = [c.strip() for c in split_fields(text, ",", where)]
            if fields is None:
                fields = cells
                lower = [f.lower() for f in fields]
                dup = sorted({f for f in lower if f and lower.count(f) > 1})
                if dup:
                    raise TraceError("%s: duplicate column(s) %s" % (where, ",".join(dup[:10])))
                col = {f: i for i, f in enumerate(lower)}
                if "target" not in col and target_c is None:
                    raise TraceError("%s: no target column and no --target: add a target "
                                     "column (deg C) or give --target; columns are %s"
                                     % (where, ",".join(fields)[:120]))
                tag_cols = [(f, i) for i, f in enumerate(fields)
                            if f and f.lower() not in KNOWN_COLUMNS]
                continue
            for name, i in tag_cols:
                if i < len(cells) and len(cells[i]) > MAX_TAG_CHARS:
                    raise TraceError("%s: tag %s holds %d characters (at most %d)"
                                     % (where, name[:40], len(cells[i]), MAX_TAG_CHARS))
            items.append(_manifest_item(len(items), cells, fields, col, tag_cols, base,
                                        target_c, skip_bad, number, units))
    return items, [name for name, _ in tag_cols]


def _manifest_item(index, cells, fields, col, tag_cols, base, target_c, skip_bad, number,
                   units):
    path = cells[col["path"]] if col["path"] < len(cells) else ""
    tags = {name: (cells[i] if i < len(cells) else "") for name, i in tag_cols}
    spec = _spec(os.path.join(base, path), target_c, skip_bad, units)
    problem = ""
    try:
        if len(cells) != len(fields):
            raise ValueError("expected %d fields (as in the header), got %d"
                             % (len(fields), len(cells)))
        if not path:
            raise ValueError("empty path")
        if "target" in col:
            cell = _float_cell(cells[col["target"]], "target")
            if cell is not None and units.get("target_in_f"):
                cell = (cell - 32.0) * 5.0 / 9.0        # deg F -> deg C
            if cell is not None:
                spec["target_c"] = check_target(cell, "target", *_target_unit(units))
        if spec["target_c"] is None:
            raise ValueError("no target (give a target cell or --target)")
        for name in ("crossing_s", "noise_sd_c"):
            if name in col:
                spec[name] = _float_cell(cells[col[name]], name)
    except ValueError as exc:
        problem = "manifest line %d: %s" % (number, exc)
    return Item(index, path, spec, tags, problem)


def _plain_item(i, path, target_c, skip_bad, units):
    spec = _spec(os.path.abspath(path), target_c, skip_bad, units)
    problem = "" if target_c is not None else "no target (use --target with a folder or glob)"
    return Item(i, path, spec, {}, problem)


def evaluate_chunk(chunk, variants):
    """Task run on a worker: ``[(index, spec), ...]`` -> ``[(index, {name: result})]``.

    ``variants``: dict name -> variant (see
    :func:`host_sim.fleet.core.evaluate_trace`; ``core`` set means another
    checkout's core in a child process).
    """
    out = []
    for index, spec in chunk:
        out.append((index, {name: fleet_core.run_variant(spec, v)
                            for name, v in sorted(variants.items())}))
    return out


def _failed(error):
    res = dict.fromkeys(fleet_core.RESULT_KEYS)
    res["error"] = error
    res["profile"] = []
    return res


def chunk_items(items, size):
    """Runnable items in chunks of ``size``, in manifest order."""
    todo = [(it.index, it.spec) for it in items if not it.problem]
    return [todo[i:i + size] for i in range(0, len(todo), size)]


def default_chunk_size(n_items, workers):
    """Traces per task: about 8 tasks per worker, 1..50 traces each."""
    return max(1, min(50, n_items // max(1, 8 * workers)))


def check_run_options(workers=None, chunk_size=None):
    """ValueError naming the option unless ``workers`` is None or an integer >= 0 and
    ``chunk_size`` None or an integer >= 1 (a LocalCluster of -1 workers waits forever)."""
    for value, option, least in ((workers, "--workers", 0), (chunk_size, "--chunk", 1)):
        if value is None:
            continue
        if isinstance(value, bool) or not isinstance(value, int) or value < least:
            raise ValueError("%s must be an integer of at least %d, got %r"
                             % (option, least, value))


def run_fleet(items, variants, workers=None, scheduler=None, processes=True, progress=True,
              chunk_size=None, task=None, retries=1):
    """Replay every item with every variant; returns ``{index: {name: result}}``.

    ``workers``: 0 runs in this process (no dask); N > 0 starts a
    ``LocalCluster`` of N single-threaded workers (``processes``: worker
    processes, else threads); ``scheduler``: address of an existing cluster
    (``tcp://HOST:PORT``), ``workers`` then ignored. ``chunk_size``: traces
    per task. ``task``: the task function (default :func:`evaluate_chunk`).
    ``retries``: extra attempts of a task that raised.
    """
    from tqdm import tqdm
    check_run_options(workers, chunk_size)
    task = task or evaluate_chunk
    if workers is None:
        workers = os.cpu_count() or 1
    results = {it.index: {name: _failed(it.problem) for name in variants}
               for it in items if it.problem}
    n_run = sum(1 for it in items if not it.problem)
    size = chunk_size or default_chunk_size(n_run, max(workers, 1))
    chunks = chunk_items(items, size)
    bar = tqdm(total=n_run, unit="trace", disable=not progress, file=sys.stderr,
               desc="fleet")
    try:
        if scheduler is None and workers == 0:
            for chunk in chunks:
                for index, res in task(chunk, variants):
                    results[index] = res
                bar.update(len(chunk))
            return results
        _run_dask(chunks, variants, workers, scheduler, processes, task, retries, results, bar)
        return results
    finally:
        bar.close()


def _run_dask(chunks, variants, workers, scheduler, processes, task, retries, results, bar):
    import logging

    from dask.distributed import Client, LocalCluster, as_completed
    cluster = None
    if scheduler is None:
        cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=processes,
                               dashboard_address=None, silence_logs=logging.ERROR)
        client = Client(cluster)
    else:
        client = Client(scheduler)
    try:
        futures = client.map(task, chunks, variants=variants, retries=retries, pure=False)
        which = {f.key: (chunk, False) for f, chunk in zip(futures, chunks)}
        pending = as_completed(futures)
        for fut in pending:
            chunk, alone = which.pop(fut.key)
            try:
                for index, res in fut.result():
                    results[index] = res
            except Exception as exc:     # e.g. KilledWorker
                if len(chunk) > 1 and not alone:
                    # run the chunk's traces one by one, so only the culprit fails
                    for one in chunk:
                        f = client.submit(task, [one], variants=variants, retries=retries,
                                          pure=False)
                        which[f.key] = ([one], True)
                        pending.add(f)
                    continue
                msg = "task failed: %s: %s" % (type(exc).__name__, exc)
                for index, _ in chunk:
                    results[index] = {name: _failed(msg) for name in variants}
            bar.update(len(chunk))
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def make_variant(core, pairs):
    """A variant dict from ``--core``/``--set`` style options.

    ``core``: another checkout's folder or None (the installed core);
    ``pairs``: ``NAME=VALUE`` texts, read by
    :class:`host_sim.replay.settings.ReplaySettings` against that core's
    estimator (ValueError for an unknown name or a bad value). The variant
    holds them as canonical texts (``settings``), so it travels as JSON to
    another core's process, plus ``core``, ``core_file`` and ``core_version``.
    """
    variant = {"core": fleet_core.core_root(core) if core else None}
    info = check_variant(variant)
    settings = ReplaySettings(pairs or [], arguments=info["arguments"])
    variant["settings"] = settings.to_pairs()
    return variant


def check_variant(variant):
    """Where a variant's core lives and what its estimator takes (:func:`host_sim.fleet.core.core_info`).

    Sets ``core_file`` and ``core_version`` of ``variant``; returns the info.
    """
    if variant["core"]:
        info = fleet_core.core_process(variant["core"]).info()
    else:
        info = fleet_core.core_info()
    variant["core_file"] = info["file"]
    variant["core_version"] = info["version"]
    return info
