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

Each trace is streamed (:mod:`host_sim.fleet_core`): memory per worker does
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
outputs then list the traces that got worse (:mod:`host_sim.fleet_report`).
"""
import argparse
import csv
import glob
import math
import os
import sys

from host_sim import fleet_core

KNOWN_COLUMNS = ("path", "target", "crossing_s", "noise_sd_c")


class Item:
    """One trace of the fleet: index in the manifest, the path as written, the
    spec for :func:`host_sim.fleet_core.evaluate_trace`, its tags (dict of
    str) and a manifest problem (str, or "")."""

    def __init__(self, index, path, spec, tags, problem=""):
        self.index = index
        self.path = path
        self.spec = spec
        self.tags = tags
        self.problem = problem


def _is_manifest(path):
    try:
        with open(path, newline="") as handle:
            for row in csv.reader(handle):
                if row and "".join(row).strip() and not row[0].lstrip().startswith("#"):
                    return "path" in [c.strip().lower() for c in row]
    except (OSError, UnicodeDecodeError):
        return False
    return False


def _float_cell(text, name):
    text = (text or "").strip()
    if text == "":
        return None
    value = float(text)           # ValueError names the bad text
    if not math.isfinite(value):
        raise ValueError("%s is not finite: %r" % (name, text))
    return value


def load_items(source, target_c=None, skip_bad=False):
    """The fleet's traces from a manifest CSV, a folder or a glob pattern.

    ``target_c`` (deg C): the target of traces without one. Returns
    ``(items, tag_names)``; manifest rows with a bad cell get a ``problem``
    and become error rows, they do not stop the run.
    """
    if os.path.isdir(source) or any(ch in source for ch in "*?["):
        pattern = os.path.join(source, "*.csv") if os.path.isdir(source) else source
        # manifests lying among the traces are not traces
        paths = sorted(p for p in glob.glob(pattern) if os.path.isfile(p) and not _is_manifest(p))
        return [_plain_item(i, p, target_c, skip_bad) for i, p in enumerate(paths)], []
    if not os.path.isfile(source):
        raise ValueError("%s: no such manifest, folder or pattern" % source)
    if not _is_manifest(source):
        return [_plain_item(0, source, target_c, skip_bad)], []
    base = os.path.dirname(os.path.abspath(source))
    items = []
    with open(source, newline="") as handle:
        rows = (r for r in handle if r.strip() and not r.lstrip().startswith("#"))
        reader = csv.DictReader(rows)
        fields = [f.strip() for f in reader.fieldnames]
        reader.fieldnames = fields
        tag_names = [f for f in fields if f.lower() not in KNOWN_COLUMNS]
        lower = {f.lower(): f for f in fields}
        for i, row in enumerate(reader):
            path = (row.get(lower["path"]) or "").strip()
            tags = {t: (row.get(t) or "").strip() for t in tag_names}
            spec = {"path": os.path.join(base, path), "target_c": target_c,
                    "skip_bad": skip_bad}
            problem = ""
            try:
                if not path:
                    raise ValueError("empty path")
                if "target" in lower:
                    cell = _float_cell(row.get(lower["target"]), "target")
                    if cell is not None:
                        spec["target_c"] = cell
                if spec["target_c"] is None:
                    raise ValueError("no target (give a target cell or --target)")
                if "crossing_s" in lower:
                    spec["crossing_s"] = _float_cell(row.get(lower["crossing_s"]), "crossing_s")
                if "noise_sd_c" in lower:
                    spec["noise_sd_c"] = _float_cell(row.get(lower["noise_sd_c"]), "noise_sd_c")
            except ValueError as exc:
                problem = "manifest line %d: %s" % (reader.line_num, exc)
            items.append(Item(i, path, spec, tags, problem))
    return items, tag_names


def _plain_item(i, path, target_c, skip_bad):
    spec = {"path": os.path.abspath(path), "target_c": target_c, "skip_bad": skip_bad}
    problem = "" if target_c is not None else "no target (use --target with a folder or glob)"
    return Item(i, path, spec, {}, problem)


def evaluate_chunk(chunk, variants):
    """Task run on a worker: ``[(index, spec), ...]`` -> ``[(index, {name: result})]``.

    ``variants``: dict name -> variant (see
    :func:`host_sim.fleet_core.evaluate_trace`; ``core`` set means another
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


def parse_settings(pairs):
    """``["memory_s=600", "heater=off", ...]`` -> (core settings dict, variant options).

    Values are floats where they parse, ``true``/``false``/``none`` as
    booleans/None, otherwise text. ``heater`` (auto/on/off), ``ambient_c``
    (deg C) and ``use_ambient_column`` are replay options, the rest go to
    the core's constructor.
    """
    settings, options = {}, {}
    for pair in pairs or ():
        if "=" not in pair:
            raise ValueError("setting %r is not NAME=VALUE" % pair)
        name, text = (s.strip() for s in pair.split("=", 1))
        low = text.lower()
        if low in ("true", "false"):
            value = low == "true"
        elif low == "none":
            value = None
        else:
            try:
                value = float(text)
            except ValueError:
                value = text
        if name in ("heater", "ambient_c", "use_ambient_column"):
            options[name] = value
        else:
            settings[name] = value
    return settings, options


def make_variant(core, pairs):
    """A variant dict from ``--core``/``--set`` style options."""
    settings, options = parse_settings(pairs)
    variant = {"core": fleet_core.core_root(core) if core else None, "settings": settings,
               "heater": options.get("heater", "auto"),
               "ambient_c": options.get("ambient_c"),
               "use_ambient_column": options.get("use_ambient_column", True)}
    if variant["heater"] not in ("auto", "on", "off"):
        raise ValueError("heater must be auto, on or off")
    check_variant(variant)
    return variant


def check_variant(variant):
    """Fail early when a variant's core does not take one of its settings."""
    if variant["core"]:
        info = fleet_core.core_process(variant["core"]).info()
    else:
        info = fleet_core.core_info()
    unknown = sorted(set(variant["settings"]) - set(info["settings"]))
    if unknown:
        raise ValueError("the core at %s has no setting %s" % (info["file"], ", ".join(unknown)))
    variant["core_file"] = info["file"]
    variant["core_version"] = info["version"]
    return info


def add_parser(sub):
    """Add the ``fleet`` subcommand to the CLI's subparsers."""
    f = sub.add_parser(
        "fleet", help="replay many traces on a dask cluster, with an A/B of two cores",
        description="Replay every trace of MANIFEST.csv (columns path,target and tag "
                    "columns; paths relative to the manifest) or of a folder/glob through "
                    "the estimator on a dask.distributed cluster (a LocalCluster here by "
                    "default) and write one result row per trace.",
        epilog="Workers need tinytherm with the sim extra, dask[distributed], and the trace "
               "files at the same paths. An estimate is never a safety interlock.")
    f.add_argument("manifest", metavar="MANIFEST.csv",
                   help="manifest CSV, a folder of trace CSVs, or a quoted glob pattern")
    f.add_argument("--out", required=True, metavar="RESULTS.csv",
                   help="per-trace results; beside it RESULTS.parquet, RESULTS_by_tag.csv, "
                        "RESULTS_report.md and PNG plots")
    f.add_argument("--workers", type=int, default=None, metavar="N",
                   help="LocalCluster workers (default: CPU count; 0: in this process, no dask)")
    f.add_argument("--scheduler", metavar="ADDR",
                   help="use an existing dask cluster, e.g. tcp://10.0.0.5:8786")
    f.add_argument("--threads", action="store_true",
                   help="LocalCluster workers as threads, not processes")
    f.add_argument("--target", type=float, metavar="C",
                   help="target, deg C, for traces without one in the manifest")
    f.add_argument("--skip-bad", action="store_true",
                   help="skip malformed rows (counted) instead of failing the trace")
    f.add_argument("--chunk", type=int, metavar="K", help="traces per task (default: auto)")
    f.add_argument("--core", metavar="PATH", help="candidate core: another checkout's folder "
                   "(default: the installed tinytherm)")
    f.add_argument("--set", action="append", metavar="NAME=VALUE", default=[],
                   help="candidate estimator setting (repeatable), e.g. memory_s=900, "
                        "heater=off, ambient_c=21")
    f.add_argument("--baseline-core", metavar="PATH",
                   help="A/B: the baseline (e.g. released) core's checkout or install folder")
    f.add_argument("--baseline-set", action="append", metavar="NAME=VALUE", default=[],
                   help="A/B: baseline estimator setting (repeatable)")
    f.add_argument("--worse-by", type=float, default=0.02, metavar="X",
                   help="A/B: a trace got worse when its median relative error rose by more "
                        "than X (default 0.02)")
    f.add_argument("--plot-worse", type=int, default=10, metavar="N",
                   help="A/B: replay plots of the N worst traces (default 10)")
    f.add_argument("--no-plots", action="store_true", help="no PNG plots")
    f.add_argument("--quiet", action="store_true", help="no progress bar")
    f.set_defaults(func=cmd_fleet)
    return f


def cmd_fleet(args):
    """The ``fleet`` subcommand; returns the exit code."""
    from host_sim import fleet_report
    try:
        items, tag_names = load_items(args.manifest, args.target, args.skip_bad)
        variants = {"cand": make_variant(args.core, args.set)}
        if args.baseline_core or args.baseline_set:
            variants["base"] = make_variant(args.baseline_core, args.baseline_set)
    except (OSError, ValueError, RuntimeError) as exc:
        print("error: %s" % exc, file=sys.stderr)
        return 2
    if not items:
        print("error: no traces in %s" % args.manifest, file=sys.stderr)
        return 2
    where = args.scheduler or ("this process" if args.workers == 0 else
                               "a LocalCluster of %d worker(s)"
                               % (args.workers or os.cpu_count() or 1))
    print("fleet: %d trace(s) on %s" % (len(items), where))
    try:
        results = run_fleet(items, variants, workers=args.workers, scheduler=args.scheduler,
                            processes=not args.threads, progress=not args.quiet,
                            chunk_size=args.chunk)
    except ImportError as exc:
        print("error: %s (the fleet command needs the fleet extra: pip install "
              "\"tinytherm[fleet]\", or --workers 0 without dask)" % exc, file=sys.stderr)
        return 2
    except OSError as exc:          # e.g. no scheduler at --scheduler ADDR
        print("error: %s" % exc, file=sys.stderr)
        return 2
    report = fleet_report.write_all(args.out, items, tag_names, variants, results,
                                    worse_by=args.worse_by, plot_worse=args.plot_worse,
                                    plots=not args.no_plots)
    for line in report:
        print(line)
    return 0


def main(argv=None):
    """``python -m host_sim.fleet ...``: the subcommand on its own."""
    p = argparse.ArgumentParser(prog="fleet")
    sub = p.add_subparsers(dest="command")
    add_parser(sub)
    args = p.parse_args(["fleet"] + list(sys.argv[1:] if argv is None else argv))
    return args.func(args)


if __name__ == "__main__":
    sys.exit(main())
