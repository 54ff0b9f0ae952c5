"""Peak memory of a single-trace replay against the trace's length (and a git commit).

For each ``--rows`` (default 100,000, 1,000,000 and 2,000,000) writes an invented
cooling trace (one reading a second, seeded sensor noise of 0.05 C on a 0.01 C
quantum), then runs child processes and prints each one's peak resident memory
(VmHWM of /proc/self/status, read as the child exits; Linux) and wall time:

- ``baseline``: the interpreter with the CLI's imports and no trace, the floor;
- ``replay``: ``python -m host_sim replay TRACE --target 30 --out PRED`` of this tree
  (it streams the trace twice and spools what the metrics need to a temporary
  file, :mod:`host_sim.replay.spool`);
- with ``--against COMMIT``: the same baseline and command from ``git archive
  COMMIT`` in a temporary folder, e.g. the commit before a memory change.

It prints the bytes per row above each tree's own baseline, the ratio of the
commit's memory above baseline to this tree's, and whether both runs printed the
same lines (the accuracy metrics) and wrote byte-identical prediction files.
Figures are printed, never asserted. Run with ``nice``: on a shared machine
1,000,000 rows take a few minutes per child.
"""
import argparse
import filecmp
import math
import os
import random
import shutil
import subprocess
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))

# Peak RSS is read from /proc/self/status (VmHWM) inside each child as it exits:
# ru_maxrss from wait4 is at least the parent's own high-water mark (the child
# is vforked, and exec keeps the old memory's peak).
PEAK = r"""
import atexit, sys
def _peak():
    with open("/proc/self/status") as status:
        for line in status:
            if line.startswith("VmHWM:"):
                sys.stderr.write("\nPEAK_KB %s\n" % line.split()[1])
atexit.register(_peak)
"""

BASELINE = PEAK + r"""
import numpy, tqdm
import host_sim.cli.dispatch, host_sim.replay.metrics, host_sim.replay.replay, tinytherm.estimator
host_sim.cli.dispatch.build_parser()     # imports every subcommand's module, as a CLI run does
"""

CLI = PEAK + r"""
import runpy
sys.argv = ["host_sim"] + sys.argv[1:]
runpy.run_module("host_sim", run_name="__main__", alter_sys=True)
"""


def write_trace(path, rows, seed=7):
    """An invented cooling curve, 80 C towards 21 C, one reading a second (time_s, temp_c)."""
    rng = random.Random(seed)
    tau_s = rows * 0.4          # crosses 30 C at about 0.75 of the trace
    with open(path, "w") as handle:
        handle.write("time_s,temp_c\n")
        for i in range(rows):
            t = float(i)
            temp = 21.0 + 59.0 * math.exp(-t / tau_s) + rng.gauss(0.0, 0.05)
            handle.write("%.1f,%.2f\n" % (t, round(temp / 0.01) * 0.01))


def child(argv, cwd):
    """(peak RSS in KiB of that child, VmHWM; wall seconds; stdout text)."""
    start = time.perf_counter()
    with tempfile.TemporaryFile() as err, tempfile.TemporaryFile() as out:
        proc = subprocess.Popen(argv, cwd=cwd, stdout=out, stderr=err)
        proc.wait()
        wall = time.perf_counter() - start
        err.seek(0)
        text = err.read().decode(errors="replace")
        if proc.returncode != 0:
            raise SystemExit("child failed: %s\n%s" % (" ".join(argv), text[-2000:]))
        peaks = [int(line.split()[1]) for line in text.splitlines()
                 if line.startswith("PEAK_KB ")]
        if not peaks:
            raise SystemExit("child printed no peak (Linux /proc needed): %s" % " ".join(argv))
        out.seek(0)
        return peaks[-1], wall, out.read().decode()


def export_commit(commit, folder):
    """``git archive COMMIT`` unpacked in ``folder`` (run with that folder as cwd)."""
    archive = subprocess.run(["git", "archive", commit], cwd=ROOT, check=True,
                             stdout=subprocess.PIPE).stdout
    subprocess.run(["tar", "-x", "-C", folder], input=archive, check=True)


def measure(trees, rows, folder):
    """Runs and figures for one trace length; returns a list of printed lines."""
    trace = os.path.join(folder, "trace_%d.csv" % rows)
    write_trace(trace, rows)
    lines = ["%d rows (%.1f MB of CSV)" % (rows, os.path.getsize(trace) / 1e6),
             "  %-20s %12s %18s %12s %10s" % ("run", "peak RSS MB", "above baseline MB",
                                               "B per row", "wall s")]
    results = {}
    for name, cwd in trees:
        base_kb, _, _ = child([sys.executable, "-c", BASELINE], cwd)
        pred = os.path.join(folder, "pred_%s.csv" % name.replace(" ", "_"))
        peak_kb, wall, out = child([sys.executable, "-c", CLI, "replay", trace,
                                    "--target", "30", "--out", pred], cwd)
        above = (peak_kb - base_kb) / 1024.0
        results[name] = (above, out.replace(pred, "PRED.csv"), pred)
        lines.append("  %-20s %12.1f %18s %12s %10s" % ("baseline " + name, base_kb / 1024.0,
                                                         "", "", ""))
        lines.append("  %-20s %12.1f %18.1f %12.0f %10.1f" % (
            "replay " + name, peak_kb / 1024.0, above, above * 1048576 / rows, wall))
    if len(trees) == 2:
        (mine, cwd_mine), (peer, _) = trees
        a_mine, out_mine, pred_mine = results[mine]
        a_peer, out_peer, pred_peer = results[peer]
        same_pred = filecmp.cmp(pred_mine, pred_peer, shallow=False)   # block by block
        lines.append("  %s / %s, memory above baseline: %s; printed lines identical: %s; "
                     "prediction files identical: %s" % (
                         peer, mine, "%.1fx" % (a_peer / a_mine) if a_mine > 0 else "inf",
                         out_mine == out_peer, same_pred))
    acc = [ln for ln in results[trees[0][0]][1].splitlines() if ln.startswith("accuracy")]
    lines.extend("  " + ln for ln in acc)
    return lines


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--rows", type=int, nargs="+", default=[100000, 1000000, 2000000],
                    help="trace lengths to replay (default 100000 1000000 2000000)")
    ap.add_argument("--against", metavar="COMMIT",
                    help="also replay with the tree of this git commit (e.g. main~3)")
    args = ap.parse_args()
    folder = tempfile.mkdtemp(prefix="tinytherm-mem-")
    try:
        trees = [("this tree", ROOT)]
        if args.against:
            peer = os.path.join(folder, "peer")
            os.mkdir(peer)
            export_commit(args.against, peer)
            trees.append((args.against[:12], peer))
        print("replay memory: one child process per run; peak RSS is the child's VmHWM")
        for rows in args.rows:
            for line in measure(trees, rows, folder):
                print(line, flush=True)
    finally:
        shutil.rmtree(folder)


if __name__ == "__main__":
    main()
