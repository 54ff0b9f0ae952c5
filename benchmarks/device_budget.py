#!/usr/bin/env python3
"""The estimator's RAM and flash budget on MicroPython, now and at another commit.

    .venv/bin/python benchmarks/device_budget.py [--compare-commit 8c38707]
        [--updates 3000] [--heap-run 20000] [--free-heap 80] [--scan 72,80]

For the working tree's core and (optionally) a commit's core, each compiled
with ``mpy-cross -O3`` (source names ``tinytherm/<module>.py``, as
``tools/build_mpy.py`` builds them) and loaded from ``.mpy`` files by the unix
``micropython`` binary (64-bit: a float box takes one 32-byte GC block; a
32-bit board uses 16), prints one markdown table:

- the smallest heap (``-X heapsize``, 1K steps) that imports the estimator
  and runs ``--heap-run`` updates of 2 s readings, each followed by
  ``predict`` of the same target, with a jump every 3,000 readings, no
  profile;
- the largest free block at a fixed heap (``--free-heap`` KiB), after the
  import and after constructing the estimator, each after ``gc.collect()``
  (``micropython.mem_info()``'s "max free sz", in GC blocks, times the block
  size): how much one request can still get there. Less noisy than the
  smallest heap, whose 1K steps move with where the import's garbage lies;
- with ``--scan LO,HI`` (KiB): every heap from LO to HI in 64-byte steps
  runs the smallest-heap script's import and construction (no readings: they
  need no more); the first heap that passes and the one from which every
  heap passes (pass/fail is not monotone in the heap size);
- the qstrs (interned names) the import and the construction make, and how
  many more new names fit before the next qstr pool (``micropython.qstr_info()``:
  its pool count moves when names are added one by one after the
  construction); the next pool takes one piece of several KB;
- the ``.mpy`` bytes of the estimator's import closure;
- heap allocated per ``update`` and per ``predict`` (mean, and the largest
  single call) with the ambient estimated, known, measured per reading, and
  with a heater, and with a passive and a heated vessel's profile (its
  blob); and per ``update`` with sparse readings (one every 120 s);
- the size of one estimator and of its saved state.

The largest single calls are a block's close: ``update`` closes the block (the
change check and the regression's update), the next ``predict`` runs its second
half (the solves), the audits when one is due, and works the answer out afresh;
every float operation there boxes its result (one GC block each here). The
largest ``predict`` is the one at a block close with an audit due.

Figures only; nothing passes or fails. The goals of the micro-core issue are
printed beside them.
"""
import argparse
import ast
import os
import subprocess
import sys
import tempfile

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(ROOT, "tests"))
from test_on_micropython import find_tool  # noqa: E402

# Runs under micropython: allocation per call in each mode.
ALLOC = r'''
import gc, sys, math
sys.path[:] = [LIBDIR]
from tinytherm.estimator import ThermalEstimator
N = UPDATES

def run(label, kw, dt, ambient, heater):
    est = ThermalEstimator(**kw)
    su = sp = n = 0
    big_u = big_p = 0
    for i in range(N):
        t = i * dt
        y = 21.0 + 60.0 * math.exp(-t / 1500.0) + 0.03 * math.sin(i * 1.7)
        y = math.floor(y * 16.0 + 0.5) / 16.0
        a = 21.0 + 0.2 * math.sin(i / 50.0) if ambient else None
        duty = 0.4 if heater else 0.0
        step = 0.0 if i == 0 else dt
        gc.collect()
        a0 = gc.mem_alloc()
        est.update(y, step, a, duty)
        a1 = gc.mem_alloc()
        est.predict(40.0)
        a2 = gc.mem_alloc()
        if i >= N // 10:
            su += a1 - a0
            sp += a2 - a1
            n += 1
            if a1 - a0 > big_u:
                big_u = a1 - a0
            if a2 - a1 > big_p:
                big_p = a2 - a1
    print(label, su // n, sp // n, big_u, big_p)

run("estimated", {}, 2.0, False, False)
run("known", {"ambient_c": 21.0}, 2.0, False, False)
run("measured", {}, 2.0, True, False)
run("heater", {"heater": True}, 2.0, False, True)
run("sparse", {}, 120.0, False, False)
from tinytherm.profile import VesselProfile
# a passive vessel with a bent law (its blob, as a product gives it) and a heated one
run("profile", {"ambient_c": 21.0, "profile": VesselProfile(
    rate_per_s=1.0 / 1500.0, rate_log_sd=0.15, eq_offset_c=-2.0, eq_offset_sd_c=1.0,
    probe_lag_s=10.0, rate_exponent=1.25).to_blob()}, 2.0, False, False)
run("profile_heater", {"heater": True, "profile": VesselProfile(
    heater=True, rate_per_s=1.0 / 1500.0, rate_log_sd=0.3, gain_k_per_s=0.01, gain_rel_sd=0.2,
    probe_lag_s=10.0).to_blob()}, 2.0, False, True)
gc.collect()
a0 = gc.mem_alloc()
est = ThermalEstimator()
gc.collect()
print("instance", gc.mem_alloc() - a0, 0, 0, 0)
print("blob", len(est.save()), 0, 0, 0)
'''

# Runs under micropython at a fixed heap: the largest free block (bytes) after the import
# and after the construction, each after a collection.
FREE = r'''
import gc, sys, micropython
sys.path[:] = [LIBDIR]

def block_bytes(x):
    a0 = gc.mem_alloc()
    x = x + 1.0  # a float box takes one block (in a function: no global's table grows)
    return gc.mem_alloc() - a0

def largest(label):
    gc.collect()
    micropython.mem_info()  # its line "... max free sz: N" (blocks)
    print(label, block_bytes(1.5))

from tinytherm.estimator import ThermalEstimator
largest("import")
est = ThermalEstimator()
largest("construct")
'''

# Runs under micropython in a large heap (the next pool must fit): the qstr pools before the
# import, after the construction, then before each new name added one by one.
QSTRS = r'''
import sys, micropython
sys.path[:] = [LIBDIR]
micropython.qstr_info()  # its line "qstr pool: n_pool=N, n_qstr=N, ..."
from tinytherm.estimator import ThermalEstimator
est = ThermalEstimator()
micropython.qstr_info()


class Names:
    pass


names = Names()
for i in range(2000):
    micropython.qstr_info()
    setattr(names, "zq%d" % i, i)
'''


def _qstr_counts(line):
    """(n_pool, n_qstr) of a ``qstr_info()`` line."""
    fields = dict(f.split("=") for f in line.split(":", 1)[1].replace(",", " ").split())
    return int(fields["n_pool"]), int(fields["n_qstr"])


def largest_free(lib, heap_k):
    """{"import": bytes, "construct": bytes}: the largest free block after each; and
    "qstrs" (new qstrs), "pools" (qstr pools), "qstr_room" (new names before the next pool)."""
    proc = micropython(FREE.replace("LIBDIR", repr(lib)), "%dK" % heap_k)
    out, blocks = {}, None
    for line in proc.stdout.splitlines() if proc.returncode == 0 else ():
        if "max free sz:" in line:
            blocks = int(line.split("max free sz:")[1].split()[0])
        elif line.split()[:1] in (["import"], ["construct"]) and blocks is not None:
            out[line.split()[0]] = blocks * int(line.split()[1])
    names = micropython(QSTRS.replace("LIBDIR", repr(lib)), "4M")
    pools = [_qstr_counts(line) for line in names.stdout.splitlines()
             if line.startswith("qstr pool:")]
    if len(pools) > 2:
        out["qstrs"] = pools[1][1] - pools[0][1]
        out["pools"] = pools[1][0]
        grown = [i for i, p in enumerate(pools[2:]) if p[0] > pools[1][0]]
        out["qstr_room"] = grown[0] - 1 if grown else None
    return out


def scan(lib, lo_k, hi_k):
    """(first heap that passes, heap from which every heap passes), bytes, 64-byte steps,
    for the import and the construction alone (HEAP_RUN with no readings)."""
    script = HEAP_RUN.replace("LIBDIR", repr(lib)).replace("RUN", "0")
    passed = []
    for heap in range(lo_k * 1024, hi_k * 1024 + 1, 64):
        proc = micropython(script, str(heap))
        passed.append((heap, proc.returncode == 0 and proc.stdout.startswith("ok")))
    first = next((h for h, ok in passed if ok), None)
    every = None
    for heap, ok in reversed(passed):
        if not ok:
            break
        every = heap
    return first, every


# Runs under micropython with a small heap: exits 0 only if everything ran.
HEAP_RUN = r'''
import sys, math
sys.path[:] = [LIBDIR]
from tinytherm.estimator import ThermalEstimator
est = ThermalEstimator()
temp = 80.0
for i in range(RUN):
    if i % 3000 == 2999:
        temp += 6.0
    temp = 21.0 + (temp - 21.0) * 0.998
    est.update(math.floor((temp + 0.03 * math.sin(i * 1.7)) * 16.0 + 0.5) / 16.0,
               0.0 if i == 0 else 2.0)
    est.predict(40.0)
print("ok", est.readings)
'''


def build(src_root, out):
    """Compile src_root/tinytherm/*.py to out/tinytherm/*.mpy; {module: .mpy bytes}."""
    cross = find_tool("mpy-cross")
    os.makedirs(os.path.join(out, "tinytherm"))
    sizes = {}
    for name in sorted(os.listdir(os.path.join(src_root, "tinytherm"))):
        if name.endswith(".py"):
            dst = os.path.join(out, "tinytherm", name[:-3] + ".mpy")
            # the source name as tools/build_mpy.py embeds it (each .mpy carries it, loaded
            # on import: the checkout's path would move the figures between worktrees)
            subprocess.run([cross, "-O3", "-o", dst, "-s", "tinytherm/" + name,
                            os.path.join(src_root, "tinytherm", name)], check=True)
            sizes[name[:-3]] = os.path.getsize(dst)
    return sizes


def closure(src_root, name, seen=None):
    """Core modules imported at module level by tinytherm/<name>.py, recursively (and itself)."""
    seen = set() if seen is None else seen
    if name in seen:
        return seen
    seen.add(name)
    with open(os.path.join(src_root, "tinytherm", name + ".py")) as fh:
        tree = ast.parse(fh.read())
    for node in tree.body:  # module level only: lazy imports (the profile) are not paid
        if isinstance(node, ast.ImportFrom) and node.module == "tinytherm":
            for a in node.names:
                closure(src_root, a.name, seen)
        elif isinstance(node, ast.ImportFrom) and (node.module or "").startswith("tinytherm."):
            closure(src_root, node.module.split(".")[1], seen)
    seen.add("__init__")
    return seen


def micropython(script, heap, timeout=900):
    with tempfile.NamedTemporaryFile("w", suffix=".py", delete=False) as fh:
        fh.write(script)
        path = fh.name
    try:
        return subprocess.run([find_tool("micropython"), "-X", "heapsize=" + heap, path],
                              capture_output=True, text=True, timeout=timeout)
    finally:
        os.unlink(path)


def smallest_heap_k(lib, run, lo=16, hi=256):
    """Smallest heap in KiB (1K steps) where HEAP_RUN succeeds, by bisection."""
    script = HEAP_RUN.replace("LIBDIR", repr(lib)).replace("RUN", str(run))

    def ok(k):
        proc = micropython(script, "%dK" % k)
        return proc.returncode == 0 and proc.stdout.startswith("ok")
    if not ok(hi):
        return None
    while hi - lo > 1:
        mid = (lo + hi) // 2
        if ok(mid):
            hi = mid
        else:
            lo = mid
    return hi


def measure(src_root, updates, run, label, free_heap, scan_k=None):
    with tempfile.TemporaryDirectory() as tmp:
        lib = os.path.join(tmp, "lib")
        sizes = build(src_root, lib)
        mods = closure(src_root, "estimator")
        print("%s: allocation per call ..." % label, file=sys.stderr)
        proc = micropython(ALLOC.replace("LIBDIR", repr(lib)).replace("UPDATES", str(updates)),
                           "16M")
        if proc.returncode != 0:
            raise SystemExit(proc.stdout + proc.stderr)
        alloc = {}
        for line in proc.stdout.splitlines():
            parts = line.split()
            alloc[parts[0]] = [int(p) for p in parts[1:]]
        print("%s: smallest heap ..." % label, file=sys.stderr)
        heap = smallest_heap_k(lib, run)
        free = largest_free(lib, free_heap)
        scanned = None
        if scan_k:
            print("%s: 64-byte scan ..." % label, file=sys.stderr)
            scanned = scan(lib, *scan_k)
    return {"mpy": sum(sizes[m] for m in mods), "modules": len(mods), "alloc": alloc,
            "heap_k": heap, "free": free, "scan": scanned}


def export(rev):
    """The core of commit ``rev`` in a temporary folder (git archive)."""
    base = tempfile.mkdtemp(prefix="tinytherm_at_")
    data = subprocess.run(["git", "archive", rev, "tinytherm"], cwd=ROOT, check=True,
                          capture_output=True).stdout
    subprocess.run(["tar", "-x", "-C", base], input=data, check=True)
    return base


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--compare-commit", default=None,
                    help="also measure this commit's core (e.g. 8c38707) and print it beside")
    ap.add_argument("--updates", type=int, default=3000,
                    help="readings per mode for the allocation figures (default 3000)")
    ap.add_argument("--heap-run", type=int, default=20000,
                    help="readings of the smallest-heap run (default 20000)")
    ap.add_argument("--free-heap", type=int, default=80,
                    help="heap (KiB) of the largest-free-block figures (default 80)")
    ap.add_argument("--scan", default=None, metavar="LO,HI",
                    help="also scan the heaps LO..HI KiB in 64-byte steps (import and "
                         "construction; 16 runs per KiB), e.g. 72,80")
    args = ap.parse_args(argv)
    scan_k = tuple(int(k) for k in args.scan.split(",")) if args.scan else None
    cols = [("now", measure(ROOT, args.updates, args.heap_run, "working tree",
                            args.free_heap, scan_k))]
    if args.compare_commit:
        cols.insert(0, (args.compare_commit,
                        measure(export(args.compare_commit), args.updates, args.heap_run,
                                args.compare_commit, args.free_heap, scan_k)))
    head = subprocess.run(["git", "rev-parse", "--short", "HEAD"], cwd=ROOT,
                          capture_output=True, text=True).stdout.strip()
    print("Unix micropython, .mpy -O3 from files; working tree at %s; %d readings per mode"
          % (head, args.updates))
    print()
    print("| what | " + " | ".join(c[0] for c in cols) + " | goal |")
    print("|---|" + "---:|" * len(cols) + "---|")

    def row(what, fn, goal):
        print("| %s | %s | %s |" % (what, " | ".join(fn(c[1]) for c in cols), goal))
    row("smallest heap, import + %d update/predict (KiB)" % args.heap_run,
        lambda m: "-" if m["heap_k"] is None else "%dK" % m["heap_k"], "<= 40K")
    for when in ("import", "construct"):
        row("largest free block at a %dK heap after %s, B" % (
            args.free_heap, "the import" if when == "import" else "the construction"),
            lambda m, when=when: "%d" % m["free"][when] if when in m["free"] else "-",
            "(reported: larger is headroom)")
    if scan_k:
        def scanned(m, i):
            v = m["scan"][i]
            return "-" if v is None else "%d" % v
        row("64-byte scan %d-%dK, import + construction: first heap that passes, B" % scan_k,
            lambda m: scanned(m, 0), "(reported)")
        row("64-byte scan %d-%dK, import + construction: every heap passes from, B" % scan_k,
            lambda m: scanned(m, 1), "(reported)")
    row("new qstrs after import + construction (pools); new names left before the next pool",
        lambda m: "%s (%s); %s" % (m["free"].get("qstrs", "-"), m["free"].get("pools", "-"),
                                   m["free"].get("qstr_room", "-")), "(reported)")
    row("estimator and its imports, .mpy bytes (modules)",
        lambda m: "%d (%d)" % (m["mpy"], m["modules"]), "<= 12,000")
    for mode in ("estimated", "known", "measured", "heater"):
        row("update, mean B, ambient %s" % mode if mode != "heater" else "update, mean B, heater",
            lambda m, mode=mode: "%d" % m["alloc"][mode][0], "<= 400")
    for mode in ("estimated", "known", "measured", "heater"):
        row("predict, mean B (%s)" % mode, lambda m, mode=mode: "%d" % m["alloc"][mode][1],
            "<= 512")
    for mode in ("profile", "profile_heater"):
        row("update / predict, mean B, with a %s profile" % (
            "heated vessel's" if mode == "profile_heater" else "passive vessel's"),
            lambda m, mode=mode: "%d / %d" % tuple(m["alloc"][mode][:2]), "<= 400 / <= 512")
    modes = ("estimated", "known", "measured", "heater", "profile", "profile_heater")
    def largest(m, i):
        mode = max(modes, key=lambda k: m["alloc"][k][i])
        return "%d (%s)" % (m["alloc"][mode][i], mode)
    row("largest single call, B (update / predict, any mode above; its mode)",
        lambda m: "%s / %s" % (largest(m, 2), largest(m, 3)), "<= 3,072")
    row("update, mean B, sparse readings (120 s apart)",
        lambda m: "%d" % m["alloc"]["sparse"][0], "(reported)")
    row("one ThermalEstimator, B", lambda m: "%d" % m["alloc"]["instance"][0], "")
    row("saved state, B", lambda m: "%d" % m["alloc"]["blob"][0], "<= 512 (RTC memory)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
