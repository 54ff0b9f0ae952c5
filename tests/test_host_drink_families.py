"""The room and top-up families, the liquid as the judge of an arrival, and the sparse grid.

Independent references: scipy's brentq on the dense solution for the
crossing (as for the older families, in tests/test_host_families.py, which
also checks every family against scipy's implicit Radau solver); the mixing
of two volumes of one liquid by an energy balance, ``T = (m1 T1 + m2 T2) /
(m1 + m2)`` (common practice, no source); numpy for the expected counts.
"""

import numpy as np
import pytest

from host_sim.sim import drink_families, families as F, family_tables
from host_sim.sim.physics import crossing_by_brentq
from host_sim.replay.metrics import early_arrivals, trace_metrics, unseen_rows

ORIGINAL = ("mug", "pot", "bath", "kettle", "wort", "fridge")


def _draws(cls, n=300):
    rng = np.random.default_rng(2468)
    out = []
    for _ in range(n):
        fam = cls(rng)
        fam.draw()
        out.append(fam)
    return out


def _spans(values, lo, hi, cover=0.8):
    vals = np.array(values, dtype=float)
    assert vals.min() >= lo and vals.max() <= hi
    assert vals.max() - vals.min() >= cover * (hi - lo)


# ------------------------------------------------------------------ the tables
def test_new_families_are_appended_so_the_old_keep_their_seed_codes():
    # a family's random stream is seeded by (seed, 101 + its place): the six
    # original families must keep places 0..5 for their traces to stay the same
    assert F.FAMILIES[:6] == ORIGINAL
    assert F.FAMILIES[6:] == ("room", "topup")
    assert [F._FAMILY_CODE[f] for f in ORIGINAL] == [101, 102, 103, 104, 105, 106]


def test_room_draws_cover_the_stated_ranges():
    fams = _draws(drink_families.RoomDrinkFamily)
    d = [f.p for f in fams]
    _spans([x["cycle_amp_c"] for x in d], 0.5, 4.0)
    _spans([x["cycle_period_s"] for x in d], 900.0, 4200.0)
    _spans([x["w_air"] for x in d], 0.02, 0.3)
    _spans([x["sensor_lag_s"] for x in d], 15.0, 300.0)
    _spans([x["air_sensor_lag_s"] for x in d], 20.0, 300.0)
    _spans([x["air_sensor_sd_c"] for x in d], 0.02, 0.3)
    assert {x["place"] for x in d} == {"room", "cabinet"}
    assert {x["drink"] for x in d} == {"hot", "cold", "warm"}
    assert {x["vessel"] for x in d} == set(drink_families.ROOM_VESSELS)
    assert {x["air_sensor_quantum_c"] for x in d} == set(drink_families.AIR_QUANTA_C)
    assert {f.direction for f in fams} == {-1, 1}            # cools and warms
    for x in d:
        assert x["w_liquid"] >= 0.0 and x["w_container"] >= 0.3
        assert x["w_liquid"] + x["w_container"] + x["w_air"] == pytest.approx(1.0)
    # the duty skew keeps the air cycle monotone in its phase: theta' = 1 + skew sin(ph) > 0
    assert max(abs(x["cycle_skew"]) for x in d) < 1.0
    # room air is a room's (16-30 C), a cabinet's 4-14 C; the fridge's is 2-7 C
    assert min(x["air_mean_c"] for x in d if x["place"] == "room") >= 16.0
    # every target lies outside the band the air swings in
    for f in fams:
        lo, hi = f.target_limits_c
        band = f.p["cycle_amp_c"] + 1.0
        if f.direction < 0:
            assert lo >= f.p["air_mean_c"] + band
        else:
            assert hi <= f.p["air_mean_c"] - band


def test_topup_draws_cover_the_stated_ranges():
    d = [f.p for f in _draws(drink_families.TopUp)]
    _spans([x["sensor_lag_s"] for x in d], 5.0, 90.0)
    _spans([x["capacity_ml"] for x in d], 250.0, 500.0)
    _spans([x["topup1_c"] for x in d], 70.0, 98.0)
    assert {x["topups"] for x in d} == {1, 2}
    assert 0.2 < np.mean([x["topups"] == 2 for x in d]) < 0.4
    for x in d:
        if x["topups"] == 2:
            assert 300.0 <= x["topup2_s"] - x["topup1_s"] <= 1800.0


def test_room_air_follows_its_stated_cycle():
    fam = _draws(drink_families.RoomDrinkFamily, 5)[3]
    fam.build()
    p = fam.p
    t = np.arange(0.0, 6.0 * p["cycle_period_s"], 5.0)
    air = np.array([fam.model.air_c(v) for v in t])
    # mean + drift t + amp sin(theta): the swing about the drifting mean is the amplitude
    swing = air - p["air_mean_c"] - p["drift_c_per_s"] * t
    assert swing.max() == pytest.approx(p["cycle_amp_c"], rel=2e-3)
    assert swing.min() == pytest.approx(-p["cycle_amp_c"], rel=2e-3)


# ------------------------------------------------------------------ generated room traces
@pytest.fixture(scope="module")
def room_traces():
    return [F.generate("room", seed, keep_solution=True) for seed in range(300, 316)]


def test_room_traces_air_column_in_about_half(room_traces):
    with_air = [ft for ft in room_traces if ft.truth["has_ambient_column"]]
    # 16 draws with chance 0.5: 3..13 holds with probability 0.996 (binomial)
    assert 3 <= len(with_air) <= 13
    for ft in with_air:
        p = ft.truth["params"]
        q = p["air_sensor_quantum_c"]
        # the column is the lagged air sensor, noisy and on its own quantum
        lagged = ft.solution(ft.time_s)[3]
        assert np.allclose(ft.ambient_c / q, np.round(ft.ambient_c / q), atol=1e-6)
        assert np.median(np.abs(ft.ambient_c - lagged)) < 3.0 * p["air_sensor_sd_c"] + q
    for ft in room_traces:
        assert (ft.ambient_c is not None) == ft.truth["has_ambient_column"]


def test_room_traces_truth(room_traces):
    directions = set()
    for ft in room_traces:
        tr = ft.truth
        directions.add(tr["direction"])
        c = tr["crossing_time_s"]
        assert crossing_by_brentq(ft.sensor_signal, tr["target_c"], c - 1.0, c + 1.0) == \
            pytest.approx(c, abs=1e-6)
        lo, hi = tr["target_limits_c"]
        assert lo - 0.5 <= tr["target_c"] <= hi + 0.5
        # the liquid per row and at the crossing are the dense solution's
        assert np.allclose(ft.liquid_c, ft.solution(ft.time_s)[0], atol=1e-9)
        assert tr["liquid_at_crossing_c"] == pytest.approx(float(ft.solution([c])[0][0]))
        assert tr["approach_start_s"] == 0.0
    assert directions == {"cooling", "heating"}


# ------------------------------------------------------------------ top-up traces
def _topup_with_rising_probe(start=1000, tries=40, sampling="dense"):
    """The first top-up trace whose probe is well below the target at the last pour."""
    for seed in range(start, start + tries):
        ft = F.generate("topup", seed, sensor_faults=False, keep_solution=True, sampling=sampling)
        last = ft.truth["pours"][-1]["time_s"]
        if float(ft.sensor_signal([last])[0]) < ft.truth["target_c"] - 3.0:
            return ft
    raise AssertionError("no top-up trace with the probe below the target at the pour")


def test_topup_truth_liquid_versus_probe():
    ft = _topup_with_rising_probe()
    tr, p = ft.truth, ft.truth["params"]
    pours = tr["pours"]
    assert len(pours) == p["topups"]
    last = pours[-1]
    assert tr["approach_start_s"] == last["time_s"]
    for k, pour in enumerate(pours, start=1):
        # mixing by an energy balance (common practice, no source): keep what was not drunk
        keep = pour["kg_before"] * (1.0 - p["topup%d_drunk" % k])
        add = pour["kg_after"] - keep
        assert add >= 0.1 * p["capacity_ml"] * 1e-3 - 1e-12
        mixed = (keep * pour["liquid_before_c"] + add * p["topup%d_c" % k]) / (keep + add)
        assert pour["liquid_after_c"] == pytest.approx(mixed, abs=1e-9)
    # the probe does not jump: it rises through the target while the liquid is far hotter
    t = np.arange(last["time_s"], tr["crossing_time_s"], 1.0)
    probe, liquid = ft.sensor_signal(t), ft.solution(t)[0]
    rising = np.nonzero(probe >= tr["target_c"])[0][0]
    assert liquid[rising] > tr["target_c"] + 5.0
    # the crossing is the final approach's: after the probe's peak, by brentq
    c = tr["crossing_time_s"]
    assert c > t[int(np.argmax(probe))]
    assert crossing_by_brentq(ft.sensor_signal, tr["target_c"], c - 1.0, c + 1.0) == \
        pytest.approx(c, abs=1e-6)
    # at the crossing, probe and liquid agree within the lag's and the wall's share
    assert abs(tr["liquid_at_crossing_c"] - tr["target_c"]) < 3.0


class _NaiveArrival:
    """Firmware that shows ``arrived`` whenever the reading is at or past the target
    (cooling: at or below it), ``tracking`` otherwise: the mistake the metric must see."""

    def __init__(self, **kwargs):
        self.temp_c = None

    def update(self, temp_c, dt_s, ambient_c=None, duty=0.0):
        self.temp_c = temp_c

    def predict(self, target_c, approach=0):
        self.status = "arrived" if self.temp_c <= target_c else "tracking"
        self.eta_s = 0.0 if self.status == "arrived" else 60.0
        self.eta_low_s, self.eta_high_s = self.eta_s, self.eta_s


def _naive_on_a_topup(monkeypatch, families_bench):
    """A top-up trace, its truth and score_all's positional arguments for _NaiveArrival."""
    ft = _topup_with_rising_probe()
    tr = ft.truth
    spec = "naive:Arrival"
    monkeypatch.setitem(families_bench._CLASS_CACHE, spec, _NaiveArrival)
    plan = [("naive", "naive", spec, {})]
    args = (ft.time_s, ft.temp_c, tr["target_c"], tr["crossing_time_s"], ft.clean_c,
            tr["noise_sd_c"], tr["direction"], plan)
    return ft, tr, args


def test_early_arrival_after_a_pour_is_judged_by_the_liquid(monkeypatch, families_bench):
    ft, tr, args = _naive_on_a_topup(monkeypatch, families_bench)
    by_liquid, _ = families_bench.score_all(*args, liquid_c=ft.liquid_c,
                                   liquid_at_crossing_c=tr["liquid_at_crossing_c"],
                                   approach_start_s=tr["approach_start_s"])
    by_probe, _ = families_bench.score_all(*args)
    # rows after the last pour where the probe is still below the target: arrived, and early
    after = (ft.time_s > tr["approach_start_s"]) & (ft.temp_c <= tr["target_c"])
    margin = max(0.3, 3.0 * tr["noise_sd_c"])
    hot = ft.liquid_c - tr["liquid_at_crossing_c"] > margin
    expected = int(np.count_nonzero(after & hot))
    assert expected >= 2
    assert by_liquid["naive"]["early_arrival"] >= expected
    # a judge that looks at the probe alone sees no early row there
    assert early_arrivals(["arrived"] * int(after.sum()), ft.clean_c[after], tr["target_c"],
                          tr["noise_sd_c"], "cooling") == 0
    assert by_probe["naive"]["early_arrival"] < by_liquid["naive"]["early_arrival"]
    # the approach is judged from the last pour on: no row before it is evaluated
    m = by_liquid["naive"]
    evaluated = (ft.time_s >= tr["approach_start_s"] + 60.0) & (ft.time_s < tr["crossing_time_s"])
    assert m["evaluated_rows"] == int(evaluated.sum())


def test_liquid_judge_on_a_steady_cooling_matches_the_probe_judge():
    # a strap-on probe reads 10 C below the liquid, steadily: judged against the
    # liquid's value at the crossing, an arrival at the probe's crossing is honest
    t = np.arange(0.0, 100.0, 10.0)
    liquid = 80.0 - 0.5 * t
    probe = liquid - 10.0
    target = 50.0
    crossing = 20.0                  # probe = 50 C
    status = ["tracking" if p > target else "arrived" for p in probe]
    m = trace_metrics(t, [0.0] * len(t), crossing, status=status, true_signal_c=liquid,
                      target_c=60.0, noise_sd_c=0.05, direction="cooling", warmup_s=0.0)
    assert m["early_arrival"] == 0
    assert early_arrivals(status, probe, target, 0.05, "cooling") == 0
    # arriving one row early (probe at 55 C, liquid 5 C above its crossing value) is early
    status[1] = "arrived"
    assert early_arrivals(status, liquid, 60.0, 0.05, "cooling") == 1


# ------------------------------------------------------------------ the sparse grid
@pytest.mark.parametrize("family", F.sparse_families())
def test_sparse_grid_gives_ten_readings_per_approach(family):
    for seed in (1000, 5000):
        ft = F.generate(family, seed, sampling="sparse")
        tr = ft.truth
        assert tr["sampling"] == "sparse"
        dt = tr["sample_interval_s"]
        assert dt in F.SPARSE_INTERVALS_S and 60.0 <= dt <= 600.0
        # readings in the approach, after dropouts and spikes
        n = int(np.sum((ft.time_s >= tr["approach_start_s"]) & (ft.time_s < tr["crossing_time_s"])))
        assert n >= F.SPARSE_MIN_READINGS
        # irregular but ordered: each reading moved by at most 45 % of the interval
        steps = np.diff(ft.time_s)
        assert np.all(steps > 0.0) and steps.min() >= 0.1 * dt - 1e-9
        c = tr["crossing_time_s"]
        assert abs(float(np.interp(c, ft.time_s, ft.clean_c)) - tr["target_c"]) < 5.0


def test_sparse_grid_refuses_a_family_too_fast_for_it_and_keeps_dense_apart(tmp_path):
    assert "kettle" not in F.sparse_families()
    assert set(F.sparse_families()) == set(F.FAMILIES) - {"kettle"}
    with pytest.raises(ValueError, match="kettle"):
        F.generate("kettle", 1, sampling="sparse")
    with pytest.raises(ValueError, match="sampling"):
        F.generate("mug", 1, sampling="hourly")
    dense = F.load_or_generate("mug", 7, cache_dir=str(tmp_path))
    sparse = F.load_or_generate("mug", 7, cache_dir=str(tmp_path), sampling="sparse")
    assert dense.truth["sampling"] == "dense" and sparse.truth["sampling"] == "sparse"
    again = F.load_or_generate("mug", 7, cache_dir=str(tmp_path), sampling="sparse")
    assert np.array_equal(again.time_s, sparse.time_s) and again.truth == sparse.truth
    assert np.array_equal(again.liquid_c, sparse.liquid_c)


def test_answers_by_reading_counts_from_the_third_reading_of_the_approach():
    t = np.arange(0.0, 1200.0, 120.0)            # ten readings, 2 min apart
    status = ["gathering", "gathering", "gathering", "tracking", "settling",
              "tracking", "tracking", "arrived", "tracking", "tracking"]
    m = trace_metrics(t, [None] * 10, 1000.0, status=status)
    # readings 3..9 are before the crossing (t < 1000 s): 3 and 5 without an answer
    assert m["no_estimate_from_third"] == pytest.approx(2.0 / 7.0)
    assert m["first_answer_reading"] == 4
    # from the last pour on (t = 480 s): its readings 3, 4, 5 (t 720..960 s) all answered
    m = trace_metrics(t, [None] * 10, 1000.0, status=status, approach_start_s=480.0)
    assert m["first_answer_reading"] == 2
    assert m["no_estimate_from_third"] == 0.0


def test_unseen_rows_end_at_the_second_reading_past_the_margin():
    # a pour at t = 3 s: the lagging probe moves 0.1, 0.5, 0.2 (back: a spike-like
    # single reading), 0.6, 0.9 C from its last value before it; margin 0.3 C
    t = np.arange(0.0, 9.0)
    probe = np.array([20.0, 20.0, 20.0, 20.1, 20.5, 20.2, 20.6, 20.9, 21.5])
    unseen = unseen_rows(t, probe, [3.0], 0.3)
    # rows 3.. are after the pour; 20.6 and 20.9 are the first two consecutive readings beyond
    assert unseen.tolist() == [False, False, False, True, True, True, True, False, False]
    assert not unseen_rows(t, probe, [], 0.3).any()
    assert not unseen_rows(t, probe, [0.0], 0.3).any()     # no reading before the jump


def test_early_rows_after_a_pour_split_into_seen_and_unseen(monkeypatch, families_bench):
    ft, tr, args = _naive_on_a_topup(monkeypatch, families_bench)
    judge = dict(liquid_c=ft.liquid_c, liquid_at_crossing_c=tr["liquid_at_crossing_c"],
                 approach_start_s=tr["approach_start_s"])
    whole, _ = families_bench.score_all(*args, **judge)
    split, _ = families_bench.score_all(*args, pours_s=[p["time_s"] for p in tr["pours"]], **judge)
    seen, unseen = split["naive"]["early_arrival"], split["naive"]["early_unseen"]
    # the naive arrival stays "arrived" after the pour until the probe reads above
    # the target: the first rows are unseen, the rest (probe visibly rising) are early
    assert unseen >= 1 and seen >= 1
    assert seen + unseen == whole["naive"]["early_arrival"]
    assert whole["naive"].get("early_unseen") is None
