"""Every firmware example runs under the unix micropython binary against a replayed world.

The traces are generated here from the lumped model's closed form
``T(t) = R + (T0 - R) exp(-k t)`` (mug, fermenter) or simulated by the fake
world from the same model with the relay in the loop (water bath); the fake
adds probe lag, ADC or 1-Wire quantisation, noise and faults. Each test
checks the answers the example prints against the truth of its trace.

The packaging tests install each part with ``mip`` from its package.json
(served on 127.0.0.1), alone, and run it from the installed copy; the last one
installs the core and the sensors part and runs the mug against them, so the
parts must hold everything the examples import.
"""
import ast
import functools
import http.server
import json
import math
import os
import re
import subprocess
import sys
import threading

import pytest

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
EXAMPLES = os.path.join(ROOT, "firmware_examples")
RUNNER = os.path.join(EXAMPLES, "fake", "run.py")
EPOCH_S = 800000000  # the fake RTC's time at power-on (fake/_world.py default)


def micropython():
    path = os.path.join(os.path.dirname(sys.executable), "micropython")
    if not os.path.exists(path):
        pytest.fail("micropython not found: install the dev extra")
    return path


def write_trace(path, start_c, ambient_c, rate_per_s, end_s, step_s=1):
    with open(path, "w") as fh:
        fh.write("t_s,liquid_c\n")
        t = 0
        while t <= end_s:
            fh.write("%d,%.6f\n" % (t, ambient_c + (start_c - ambient_c) * math.exp(-rate_per_s * t)))
            t += step_s


def run_example(name, cfg, tmp_path, lib=None, cwd=None):
    scenario = tmp_path / (name + ".json")
    scenario.write_text(json.dumps(cfg))
    cmd = [micropython(), RUNNER, name, str(scenario)]
    if lib:
        cmd.append(lib)
    proc = subprocess.run(cmd, cwd=cwd or ROOT, capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, proc.stdout[-3000:] + proc.stderr
    assert "== scenario over" in proc.stdout, proc.stdout[-3000:]
    return proc.stdout


def parse_logs(out):
    rows = []
    for line in out.splitlines():
        if line.startswith("log "):
            rows.append(dict(kv.split("=", 1) for kv in line.split()[1:] if "=" in kv))
    return rows


# ---------------------------------------------------------------- mug

MUG = dict(start_c=82.0, ambient_c=22.0, rate_per_s=1.0 / 1500.0)


def mug_cfg(tmp_path, start_c, ambient_c, rate_per_s, end_s, seed, settings=None):
    trace = tmp_path / ("mug_%d.csv" % seed)
    write_trace(trace, start_c, ambient_c, rate_per_s, end_s + 60)
    cfg = {"trace": str(trace), "end_s": end_s, "adc_noise_counts": 2.0, "probe_lag_s": 5.0,
           "seed": seed}
    if settings:
        cfg["settings"] = settings
    return cfg


def read_rtc_log(path):
    """Every payload the example wrote to RTC memory, in order."""
    with open(path) as fh:
        return [bytes.fromhex(line.strip()) for line in fh if line.strip()]


def mug_estimator():
    """A CPython estimator with the mug's settings (new_estimator() in mug.py)."""
    sys.path.insert(0, ROOT)
    try:
        from tinytherm.estimator import ThermalEstimator
    finally:
        sys.path.remove(ROOT)
    return ThermalEstimator(ambient_prior_c=21.0)


def test_mug_deep_sleep_cycle_matches_truth(tmp_path):
    cfg = mug_cfg(tmp_path, end_s=1400, seed=3, **MUG)
    cfg["rtc_log"] = str(tmp_path / "rtc.hex")
    out = run_example("mug", cfg, tmp_path)
    logs = parse_logs(out)
    shown = [l[len("[display] "):] for l in out.splitlines() if l.startswith("[display] ")]
    # one wake every 20 s, each a fresh program: the answers need RTC memory
    assert len(logs) >= 65
    assert len(shown) == len(logs)
    # RTC memory holds the estimator's state blob and nothing else: 512 bytes
    payloads = read_rtc_log(cfg["rtc_log"])
    assert len(payloads) == len(logs)
    assert {len(p) for p in payloads} == {512}
    # the state really crossed every sleep: restored each wake, one more reading each time
    assert logs[0]["restore"] == "blob_length" and logs[0]["readings"] == "1"
    for i, row in enumerate(logs[1:], 2):
        assert row["restore"] == "restored" and row["readings"] == str(i), row
    # truth: closed-form arrival at 60 C (the probe lags it by ~5 s)
    arrival_s = math.log((MUG["start_c"] - MUG["ambient_c"]) / (60.0 - MUG["ambient_c"])) / \
        MUG["rate_per_s"]
    tracked = 0
    for row, text in zip(logs, shown):
        t = int(row["t"]) - EPOCH_S
        if row["status"] == "tracking":
            eta = int(row["eta"])
            remaining = arrival_s - t
            assert abs(eta - remaining) <= 0.15 * remaining + 30.0, (t, eta, remaining)
            m = re.match(r"drinkable in about (\d+) min$", text)
            if eta >= 90:
                # the log rounds eta to whole seconds, the display to minutes
                assert m and abs(int(m.group(1)) - eta / 60.0) <= 0.52, (text, eta)
            tracked += 1
        if t > arrival_s + 40.0:
            assert row["status"] == "arrived", row
            assert text.startswith("drinkable now")
    assert tracked >= 20
    assert any(re.match(r"drinkable in about 3 min$", s) for s in shown)
    # tracking begins within the first 4 minutes
    first = min(int(r["t"]) - EPOCH_S for r in logs if r["status"] == "tracking")
    assert first <= 240


def test_mug_blob_restores_in_cpython(tmp_path):
    # A blob written by the MicroPython mug restores into a CPython estimator
    # with the same settings and gives the answer the mug logged at that wake
    # (it saves right after the reading, so its answer is what a restore answers; the blob is exact)
    cfg = mug_cfg(tmp_path, end_s=500, seed=6, **MUG)
    cfg["rtc_log"] = str(tmp_path / "rtc.hex")
    logs = parse_logs(run_example("mug", cfg, tmp_path))
    payloads = read_rtc_log(cfg["rtc_log"])
    compared = 0
    for row, payload in zip(logs, payloads):
        if row["status"] != "tracking":
            continue
        est = mug_estimator()
        assert est.restore(payload) == 0  # tinytherm.blob.RESTORED
        assert est.readings == int(row["readings"])
        est.predict(60.0)
        assert est.status == 2, row  # status.TRACKING
        eta = int(row["eta"])
        assert abs(est.eta_s - eta) <= 0.02 * eta + 2.0, (est.eta_s, row)
        compared += 1
    assert compared >= 10


def test_mug_corrupted_rtc_memory_starts_afresh(tmp_path):
    # Damage RTC memory during three sleeps: a flipped bit (CRC), a truncated
    # payload, all zeros. Each of those wakes must start a fresh estimator,
    # keep running, and be tracking again (against the truth) a few wakes later.
    cfg = mug_cfg(tmp_path, end_s=1000, seed=7, **MUG)
    cfg["rtc_log"] = str(tmp_path / "rtc.hex")
    cfg["rtc_faults"] = [[8, "flip"], [16, "truncate"], [24, "zero"]]
    out = run_example("mug", cfg, tmp_path)
    logs = parse_logs(out)
    assert len(logs) == 1000 // 20 + 1  # no wake lost to a crash
    assert {len(p) for p in read_rtc_log(cfg["rtc_log"])} == {512}
    # wake n is logs[n] (logs[0] is the power-on)
    assert [logs[n]["restore"] for n in (8, 16, 24)] == ["blob_crc", "blob_length", "blob_magic"]
    arrival_s = math.log((MUG["start_c"] - MUG["ambient_c"]) / (60.0 - MUG["ambient_c"])) / \
        MUG["rate_per_s"]
    for n in (8, 16, 24):
        assert logs[n]["readings"] == "1" and logs[n]["status"] == "gathering", logs[n]
        assert logs[n + 1]["restore"] == "restored" and logs[n + 1]["readings"] == "2"
        # re-learnt within the 8 wakes before the next fault
        later = [r for r in logs[n + 1:n + 8] if r["status"] == "tracking"]
        assert later, logs[n:n + 8]
        for row in later:
            remaining = arrival_s - (int(row["t"]) - EPOCH_S)
            assert abs(int(row["eta"]) - remaining) <= 0.15 * remaining + 30.0, (row, remaining)
    assert all(r["restore"] == "restored" for i, r in enumerate(logs) if i not in (0, 8, 16, 24))


def test_mug_open_sensor_says_so_and_keeps_its_state(tmp_path):
    cfg = mug_cfg(tmp_path, end_s=600, seed=8, **MUG)
    cfg["ntc_open_from_s"] = 400
    out = run_example("mug", cfg, tmp_path)
    logs = parse_logs(out)
    shown = [l[len("[display] "):] for l in out.splitlines() if l.startswith("[display] ")]
    for row, text in zip(logs, shown):
        t = int(row["t"]) - EPOCH_S
        if t >= 400:
            assert text == "check the sensor" and row["temp"] == "-999.00", (row, text)
            # rejected readings are not counted, but the state still travels
            assert row["restore"] == "restored" and row["readings"] == "20", row
        if t >= 480:
            assert row["status"] == "sensor_fault", row


def test_mug_levelling_off_above_target(tmp_path):
    # A 31 C summer room and a 29 C target: the drink levels off at the room.
    cfg = mug_cfg(tmp_path, start_c=70.0, ambient_c=31.0, rate_per_s=1.0 / 1200.0, end_s=1800,
                  seed=4, settings={"DRINKABLE_C": 29.0})
    out = run_example("mug", cfg, tmp_path)
    shown = [l for l in out.splitlines() if l.startswith("[display] ")]
    late = shown[2 * len(shown) // 3:]
    levelling = [s for s in late if "levelling off at" in s]
    assert len(levelling) >= 0.8 * len(late), late
    for s in levelling:
        level = int(s.rsplit(" ", 2)[1])
        assert abs(level - 31) <= 1, s


# ---------------------------------------------------------------- water bath

def bath_cfg(tmp_path, **extra):
    mc = 5.0 * 4186.0
    cfg = {
        # the real bath differs from the figures in the example (1000 W, 3 W/K)
        "plant": {"start_c": 18.0, "ambient_c": 20.0, "rate_per_s": 4.0 / mc,
                  "gain_k_per_s": 950.0 / mc},
        "relay_pin": 26, "end_s": 4500, "adc_noise_counts": 2.0, "probe_lag_s": 8.0,
        "seed": 5, "truth_csv": str(tmp_path / "bath_truth.csv"),
    }
    cfg.update(extra)
    return cfg


def read_truth(path):
    rows = []
    with open(path) as fh:
        fh.readline()
        for line in fh:
            t, c, r = line.strip().split(",")
            rows.append((int(t), float(c), int(r)))
    return rows


def test_water_bath_delay_start_eta_and_hold(tmp_path):
    cfg = bath_cfg(tmp_path)
    out = run_example("water_bath", cfg, tmp_path)
    assert "not a safety interlock" in out and "thermal cut-out" in out
    truth = read_truth(cfg["truth_csv"])
    m = re.search(r"^t=(\d+) s: heating starts", out, re.M)
    assert m, out
    start_s = int(m.group(1))
    arrival_s = next(t for t, c, _ in truth if c >= 60.0)
    # delay start: heater off while waiting, ready by the deadline, not absurdly early
    assert all(r == 0 for t, _, r in truth if t < start_s)
    assert start_s > 1800
    assert arrival_s <= 3600
    assert arrival_s >= 3600 - 20 * 60
    # ETA while heating against the true arrival
    logs = parse_logs(out)
    assert len(logs) >= 20
    for row in logs:
        t = int(row["t"])
        remaining = arrival_s - t
        if remaining > 0:
            assert abs(int(row["ready_at"]) - arrival_s) <= 0.15 * remaining + 30.0, row
    # holding: never far above the setpoint, never far below once there
    after = [c for t, c, _ in truth if t > arrival_s + 60]
    assert after and max(after) < 61.0 and min(after) > 59.0


def test_water_bath_probe_fault_turns_heater_off(tmp_path):
    cfg = bath_cfg(tmp_path, ntc_open_from_s=3000, end_s=3400)
    out = run_example("water_bath", cfg, tmp_path)
    assert "FAULT: probe open/short, heater off" in out
    truth = read_truth(cfg["truth_csv"])
    assert any(r == 1 for t, _, r in truth if t < 3000)
    assert all(r == 0 for t, _, r in truth if t >= 3005)


# ---------------------------------------------------------------- wort monitor

WORT = dict(start_c=26.0, ambient_c=14.0, rate_per_s=1.0 / 18000.0)


def test_wort_monitor_time_to_pitching(tmp_path):
    trace = tmp_path / "wort.csv"
    write_trace(trace, end_s=17000, step_s=10, **WORT)
    cfg = {"trace": str(trace), "end_s": 16000, "digital_noise_c": 0.03, "probe_lag_s": 90.0,
           "probe_start_c": 24.0, "seed": 8,
           "faults": [[600.75, "power_up"], [1800.75, "crc"], [3000.75, "open"]]}
    out = run_example("wort_monitor", cfg, tmp_path)
    logs = parse_logs(out)
    assert len(logs) >= 25
    arrival_s = math.log((WORT["start_c"] - WORT["ambient_c"]) / (20.0 - WORT["ambient_c"])) / \
        WORT["rate_per_s"]
    tracked = 0
    for row in logs:
        t = int(row["t"]) - EPOCH_S
        remaining = arrival_s - t
        # after the first hour (the fit needs curvature over a slow approach)
        if t >= 3600 and row["status"] == "tracking" and remaining > 600:
            assert abs(int(row["eta"]) - remaining) <= 0.15 * remaining + 120.0, (row, remaining)
            tracked += 1
        if t >= 3600 and remaining > 600:
            assert row["status"] == "tracking", row
        if remaining < -300:
            assert row["status"] == "arrived", row
    assert tracked >= 12
    # the three faults were skipped: power-up code, and two scratchpads failing the CRC
    last = logs[-1]
    assert last["skipped"] == "3" and last["crc"] == "2" and last["power_up"] == "1"
    assert re.search(r"pitching temperature 20 C in \d+ h \d\d min \(", out)


# ---------------------------------------------------------------- packaging

sys.path.insert(0, os.path.join(ROOT, "tools"))
import build_mpy  # noqa: E402  (the parts table and the import closure)

sys.path.remove(os.path.join(ROOT, "tools"))
PARTS = {name: (path, entry) for name, path, entry in build_mpy.PARTS}

# A short run of each part on the installed copy alone (prints one line "ok ...").
PART_RUNS = {
    "core": "from tinytherm.estimator import ThermalEstimator\n"
            "e = ThermalEstimator()\n"
            "for i in range(200):\n"
            "    e.update(22.0 + 60.0 * 2.718281828 ** (-i * 10.0 / 1500.0), 10.0)\n"
            "print('ok', e.status)\n",
    "profile": "from tinytherm.profile import VesselProfile\n"
               "p = VesselProfile()\n"
               "print('ok', p.problem() is None and p.time_to_target_s(80.0, 60.0, 20.0) > 0.0)\n",
    "air": "from tinytherm.air import Air\n"
           "a = Air()\n"
           "a.start(1024)\n"
           "print('ok', a.step(1088, 10000, False) > 1024)\n",
    "forecast": "from tinytherm.forecast import Forecast, AmbientTracker\n"
                "fc = Forecast(1.0 / 900.0, 0.0, 20.0)\n"
                "fc.set_ambient_periodic(20.0, 2.0, 3600.0)\n"
                "print('ok', fc.time_to_target_s(80.0, 40.0) > 0.0)\n",
    "planner": "from tinytherm.planner import ReadyByPlanner\n"
               "pl = ReadyByPlanner(1.0 / 1800.0, 20.0, 0.05)\n"
               "print('ok', pl.latest_start(20.0, 60.0, 7200.0))\n",
    "sensors": "from tinytherm import sensors\n"
               "print('ok', sensors.digital_raw_to_c(0x0191))\n",
}


def _core_imports(source):
    """tinytherm module names imported by a Python source."""
    names = set()
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.ImportFrom) and node.module:
            if node.module == "tinytherm":
                names.update(a.name for a in node.names)
            elif node.module.startswith("tinytherm."):
                names.add(node.module.split(".")[1])
        elif isinstance(node, ast.Import):
            for a in node.names:
                if a.name.startswith("tinytherm."):
                    names.add(a.name.split(".")[1])
    return names


def _package_json(name):
    with open(os.path.join(ROOT, PARTS[name][0])) as fh:
        return json.load(fh)


def _listed(name):
    return {dest for dest, _ in _package_json(name)["urls"]}


def _parts_for(modules):
    """The parts a product installs for these tinytherm modules: the core, plus
    every part whose entry module it imports."""
    return ["core"] + sorted(n for n, (_, entry) in PARTS.items()
                             if n != "core" and entry in modules)


def test_every_part_package_json_is_complete_and_current():
    for name, (path, entry) in PARTS.items():
        pkg = _package_json(name)
        # exactly the import closure of the part's entry module, as the tool writes it
        assert pkg == build_mpy.package_json_data(path, entry), path
        folder = os.path.dirname(os.path.join(ROOT, path))
        for dest, src in pkg["urls"]:
            assert os.path.normpath(os.path.join(folder, src)) == os.path.join(ROOT, dest), src
            assert os.path.exists(os.path.join(ROOT, dest)), dest
        with open(os.path.join(ROOT, "pyproject.toml")) as fh:
            assert 'version = "%s"' % pkg["version"] in fh.read()
    # the core is what the estimator loads; the forecast is not part of it
    assert "tinytherm/estimator.py" in _listed("core")
    assert "tinytherm/forecast.py" not in _listed("core")


def test_every_core_module_belongs_to_exactly_one_part():
    owners = build_mpy.part_owners()
    modules = {f[:-3] for f in os.listdir(os.path.join(ROOT, "tinytherm")) if f.endswith(".py")}
    assert set(owners) == modules
    for mod in sorted(modules):
        assert len(owners[mod]) == 1, (mod, owners[mod])
    # the estimator's closure leaves the optional parts out
    core = build_mpy.import_closure("estimator")
    for part in ("forecast", "ambient", "heater_plan", "piecewise", "planner", "sensors"):
        assert part not in core, part


def test_package_json_lists_what_the_examples_import():
    for f in sorted(os.listdir(EXAMPLES)):
        if not f.endswith(".py"):
            continue
        with open(os.path.join(EXAMPLES, f)) as fh:
            todo = _core_imports(fh.read())
        if not todo:
            continue
        seen = set()
        while todo:
            mod = todo.pop()
            seen.add(mod)
            with open(os.path.join(ROOT, "tinytherm", mod + ".py")) as fh:
                todo |= _core_imports(fh.read()) - seen
        installed = set()
        for part in _parts_for(seen):
            installed |= _listed(part)
        for mod in seen | {"__init__"}:
            assert "tinytherm/%s.py" % mod in installed, (f, mod)


@pytest.fixture
def repo_server():
    class Quiet(http.server.SimpleHTTPRequestHandler):
        def log_message(self, *args):
            pass

    server = http.server.ThreadingHTTPServer(("127.0.0.1", 0),
                                             functools.partial(Quiet, directory=ROOT))
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        yield "http://127.0.0.1:%d" % server.server_address[1]
    finally:
        server.shutdown()
        server.server_close()


def _mip_install(server, name, lib, cwd):
    url = server + "/" + PARTS[name][0]
    code = "import mip; mip.install(%r, target=%r)" % (url, str(lib))
    proc = subprocess.run([micropython(), "-c", code], cwd=str(cwd), capture_output=True,
                          text=True, timeout=120)
    assert proc.returncode == 0 and "Done" in proc.stdout, proc.stdout + proc.stderr


@pytest.mark.parametrize("name", sorted(PARTS))
def test_mip_installs_each_part_on_its_own(tmp_path, repo_server, name):
    lib = tmp_path / "lib"
    _mip_install(repo_server, name, lib, tmp_path)
    got = {"tinytherm/" + f for f in os.listdir(str(lib / "tinytherm"))}
    assert got == _listed(name)
    # import and run it from the installed copy alone (cwd is not the repository)
    code = "import sys\nsys.path[:] = [%r]\n" % str(lib) + PART_RUNS[name]
    proc = subprocess.run([micropython(), "-c", code], cwd=str(tmp_path), capture_output=True,
                          text=True, timeout=120)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    assert proc.stdout.startswith("ok "), proc.stdout
    assert "False" not in proc.stdout, proc.stdout


def test_mip_install_from_package_json_runs_an_example(tmp_path, repo_server):
    # the mug needs the core and the sensors part
    lib = tmp_path / "lib"
    for name in ("core", "sensors"):
        _mip_install(repo_server, name, lib, tmp_path)
    assert (lib / "tinytherm" / "estimator.py").exists()
    assert not (lib / "tinytherm" / "forecast.py").exists()
    # run the mug against the installed copy only (cwd is not the repository)
    cfg = mug_cfg(tmp_path, end_s=400, seed=9, **MUG)
    out = run_example("mug", cfg, tmp_path, lib=str(lib), cwd=str(tmp_path))
    assert "status=tracking" in out
