"""Peak memory of a single-trace replay: the streaming CLI against the collecting peer.

Writes an invented cooling trace of N rows (default 200,000; the issue's case is
``--rows 1000000``), then replays it in child processes and prints each one's peak
resident memory (ru_maxrss) and wall time:

- ``cli``: ``python -m host_sim replay`` (two streaming passes; it keeps only typed
  arrays of time, reading, ETA, interval and a shown flag for the metrics, 41 B
  per row);
- ``peer``: the collecting path the CLI used before: ``read_trace`` (every row)
  then ``host_sim.replay.replay.replay`` (a dict per row) then ``write_predictions``;
- ``baseline``: the interpreter with the same imports and no trace, the floor.

Figures are printed, never asserted. Run with ``nice``: 1,000,000 rows take
about a minute per child on this shared machine.
"""
import argparse
import math
import os
import shutil
import subprocess
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))

PEER = r"""
import sys
import host_sim.cli.dispatch
host_sim.cli.dispatch.build_parser()     # the same imports as the CLI child
from host_sim.replay.trace_io import read_trace, write_predictions
from host_sim.replay.replay import replay
trace = read_trace(sys.argv[1])
result = replay(trace, 30.0)
write_predictions(sys.argv[2], result.rows)
"""

BASELINE = r"""
import numpy, tqdm
import host_sim.cli.dispatch, host_sim.replay.metrics, host_sim.replay.replay, tinytherm.estimator
host_sim.cli.dispatch.build_parser()     # imports every subcommand's module, as a CLI run does
"""


def write_trace(path, rows):
    with open(path, "w") as handle:
        handle.write("time_s,temp_c\n")
        for i in range(rows):
            t = 2.0 * i
            handle.write("%.1f,%.4f\n" % (t, 21.0 + 59.0 * math.exp(-t / (rows * 0.8))))


def child(argv):
    """(peak RSS in KiB of that child alone, wall seconds)."""
    start = time.perf_counter()
    with tempfile.TemporaryFile() as err:
        proc = subprocess.Popen(argv, cwd=ROOT, stdout=subprocess.DEVNULL, stderr=err)
        _, status, usage = os.wait4(proc.pid, 0)
        proc.returncode = os.waitstatus_to_exitcode(status)
        wall = time.perf_counter() - start
        if proc.returncode != 0:
            err.seek(0)
            raise SystemExit("child failed: %s\n%s" % (" ".join(argv), err.read()[-2000:]))
    return usage.ru_maxrss, wall


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--rows", type=int, default=200000)
    args = ap.parse_args()
    folder = tempfile.mkdtemp(prefix="tinytherm-mem-")
    trace = os.path.join(folder, "big.csv")
    write_trace(trace, args.rows)
    print("replay memory: %d rows (%.1f MB of CSV), one child process each"
          % (args.rows, os.path.getsize(trace) / 1e6))
    figures = []
    for name, argv in (
            ("baseline", [sys.executable, "-c", BASELINE]),
            ("cli", [sys.executable, "-m", "host_sim", "replay", trace, "--target", "30",
                     "--out", os.path.join(folder, "p_cli.csv")]),
            ("peer", [sys.executable, "-c", PEER, trace, os.path.join(folder, "p_peer.csv")])):
        peak_kb, wall = child(argv)
        figures.append((name, peak_kb / 1024.0, wall))
    base = figures[0][1]
    print("%-9s %12s %18s %10s" % ("run", "peak RSS MB", "above baseline MB", "wall s"))
    for name, mb, wall in figures:
        print("%-9s %12.1f %18.1f %10.1f" % (name, mb, mb - base, wall))
    cli_mb, peer_mb = figures[1][1] - base, figures[2][1] - base
    print("peer / cli, memory above baseline: %.1fx; bytes per row above baseline: cli %.0f, "
          "peer %.0f" % (peer_mb / cli_mb if cli_mb > 0 else float("inf"),
                         cli_mb * 1048576 / args.rows, peer_mb * 1048576 / args.rows))
    same = open(os.path.join(folder, "p_cli.csv")).read() == open(
        os.path.join(folder, "p_peer.csv")).read()
    print("prediction files identical: %s" % same)
    shutil.rmtree(folder)


if __name__ == "__main__":
    main()
