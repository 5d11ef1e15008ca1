"""Sweeps (porefill.physics.sweep, porefill.explorer.jobs.sweep_runner, porefill sweep): the grid, ranges, targets, the runner's
cache and stop flag, the command's JSON and CSV, and a run on a local Dask cluster started here."""
from __future__ import annotations

import csv
import io
import json
import math
import threading

import numpy as np
import pytest

from porefill.explorer.cli.main import main
from porefill.explorer.outputs.isotherm_export import step_json
from porefill.explorer.outputs.sweep_export import CSV_COLUMNS, sweep_csv, sweep_json
from porefill.explorer.jobs.sweep_runner import ResultCache, SweepRunner, point_job
from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.scenario import Scenario
from porefill.physics.sweep import (SweepSpec, Target, fill_class, holding_intervals, meets, parse_range, step_fill_class,
                           wall_from_d100)

POINTS = 60          # enough for the steps of small pores; the classical model keeps the tests quick
BASE = Scenario(size_angstrom=10.0, wall_angstrom=8.0, temperature_k=1.5, site_model="classical")


# parse_range ---------------------------------------------------------------------------------------
@pytest.mark.parametrize("text, expected", [
    ("10:50:5", (10.0, 20.0, 30.0, 40.0, 50.0)),       # inclusive at both ends, as numpy.linspace
    (" 1.5:2.5:3 ", (1.5, 2.0, 2.5)),
    ("50:10:3", (50.0, 30.0, 10.0)),
    ("8", (8.0,)),
    ("8,10,12.5", (8.0, 10.0, 12.5)),
    ("1e1:2e1:2", (10.0, 20.0)),
])
def test_parse_range_values(text, expected):
    assert parse_range(text) == pytest.approx(expected, rel=1e-15)


def test_parse_range_matches_linspace():
    assert np.array_equal(parse_range("10:50:40"), np.linspace(10, 50, 40))


@pytest.mark.parametrize("text, words", [
    ("10:50", "start:stop:count"),
    ("10:50:40:2", "start:stop:count"),
    ("a:50:4", "'a' is not a number"),
    ("10:50:1", "at least 2"),
    ("10:50:0", "at least 2"),
    ("10:50:2.5", "whole number"),
    ("10:50:-3", "whole number"),
    ("10:10:3", "equal"),
    ("nan:5:3", "not a number"),
    ("inf", "not a number"),
    ("", "give start:stop:count"),
    ("8,,9", "'' is not a number"),
    ("10:50:100000", "limit"),
])
def test_parse_range_errors_name_the_text(text, words):
    with pytest.raises(ValueError) as err:
        parse_range(text, name="--sizes")
    assert "--sizes" in str(err.value) and words in str(err.value)
    if text:
        assert repr(text) in str(err.value)


# the grid -----------------------------------------------------------------------------------------
def test_spec_order_temperature_slowest_size_fastest():
    spec = SweepSpec(BASE, sizes_angstrom=(10, 12), walls_angstrom=(6, 8), temperatures_k=(1.4, 1.6))
    got = [(s.temperature_k, s.wall_angstrom, s.size_angstrom) for s in spec.scenarios()]
    assert got == [(t, w, s) for t in (1.4, 1.6) for w in (6.0, 8.0) for s in (10.0, 12.0)]
    assert spec.size == 8
    assert all(s.site_model == "classical" for s in spec.scenarios())      # the rest of the base is kept


def test_spec_empty_axes_keep_the_base():
    spec = SweepSpec(BASE)
    assert spec.scenarios() == (BASE,)


@pytest.mark.parametrize("kwargs, words", [
    (dict(sizes_angstrom=(1.0,)), "size_angstrom"),
    (dict(walls_angstrom=(1.0,)), "wall_angstrom"),
    (dict(temperatures_k=(-1.0,)), "temperature_k"),
    (dict(sizes_angstrom=("ten",)), "sizes_angstrom"),
    (dict(n_points=1), "number of points"),
])
def test_spec_refuses_bad_values_by_name(kwargs, words):
    with pytest.raises(ValueError, match=words):
        SweepSpec(BASE, **kwargs)


def test_wall_from_d100_matches_the_array_spacing():
    # hexagonal (p6mm) lattice: 1/d_hk² = 4(h² + hk + k²)/(3a²), so d100 = a0·√3/2 (common practice, no source)
    from porefill.physics.pore.geometry import HexagonPore

    side, wall = 20.0, 9.0
    a0 = HexagonPore(side, wall).lattice_spacing_angstrom
    assert wall_from_d100(side, a0 * math.sqrt(3.0) / 2.0) == pytest.approx(wall, rel=1e-12)


# what fills ---------------------------------------------------------------------------------------
@pytest.mark.parametrize("label, cls", [("corner", "corner"), ("face", "face"), ("wall", "wall"),
                                        ("ring 1", "ring"), ("ring 12", "ring"), ("centre", "centre")])
def test_fill_class(label, cls):
    assert fill_class(label) == cls


def test_step_fill_class_takes_the_most_sites():
    from porefill.physics.lattice_gas.steps import Step

    step = Step("continuous", 0.0, 1.0, 0.1, 1.0, 7.0, (("ring 2", 6.0), ("centre", 1.0)))
    assert step_fill_class(step) == "ring"
    assert step_fill_class(Step("continuous", 0.0, 1.0, 0.1, 1.0, 0.0, ())) == "spread"


# the sweep agrees with single isotherms -------------------------------------------------------------
SIZES = (8.0, 10.0, 14.0)


@pytest.fixture(scope="module")
def local_sweep():
    # from empty caches, as the fresh worker processes of the pooled run start: what earlier tests left cached
    # (e.g. a row blend's lattices) can move a Brent search's last digit (1e-13 relative), and the pooled run is
    # compared with this one digit for digit
    from porefill.physics.caching import clear_caches

    clear_caches()
    spec = SweepSpec(BASE, sizes_angstrom=SIZES, n_points=POINTS)
    return SweepRunner(workers=1).run(spec)


def test_sweep_steps_equal_single_isotherms(local_sweep):
    assert local_sweep.complete and not local_sweep.stopped
    for size, point in zip(SIZES, local_sweep.points):
        iso = compute_isotherm(BASE.replace(size_angstrom=size), n_points=POINTS)
        assert point["size_angstrom"] == size and point["site_model"] == "classical"
        assert point["steps"] == [step_json(iso, s) for s in iso.steps]          # exactly: same function
        assert point["step_fills"] == [step_fill_class(s) for s in iso.steps]
        assert point["steps"], "every pore here has layer steps"


def test_sweep_in_worker_processes_equals_the_one_in_process(local_sweep):
    spec = SweepSpec(BASE, sizes_angstrom=SIZES, n_points=POINTS)
    with SweepRunner(workers=2) as runner:
        pooled = runner.run(spec)
    assert json.dumps(pooled.points) == json.dumps(local_sweep.points)


# targets ------------------------------------------------------------------------------------------
def _by_hand(iso):
    """Group occupancies at every grid point from the sites themselves (not from the orbit labels)."""
    lat = iso.stage.lattice
    kind, ring = np.asarray(lat.kind), np.asarray(lat.ring)
    centre = kind == "centre"
    wall_contact = np.isin(kind, ("corner", "face", "wall"))
    next_ring = (~centre) & (ring == ring[~centre].max())
    rows = [iso.site_occupancy(k) for k in range(iso.mu.size)]
    return {"centre": np.array([r[centre].mean() for r in rows]),
            "next_ring": np.array([r[next_ring].max() for r in rows]),
            "first_layer": np.array([r[wall_contact].min() for r in rows]),
            "pore": np.array([r.min() for r in rows])}


@pytest.fixture(scope="module")
def iso14():
    return compute_isotherm(BASE.replace(size_angstrom=14.0), n_points=120, row_blend=False)   # one lattice's sites


def test_occupancies_read_by_targets_match_the_sites(iso14):
    from porefill.physics.sweep import occupancy_profile

    prof, hand = occupancy_profile(iso14), _by_hand(iso14)
    for key, values in hand.items():
        np.testing.assert_allclose(prof[key], values, rtol=0, atol=1e-12)       # same numbers, other path


@pytest.mark.parametrize("kind", ["single-channel", "first-layer", "full-pore"])
def test_target_marking_against_the_isotherm_by_hand(iso14, kind):
    hand = _by_hand(iso14)
    p = iso14.pressure_pa
    faces = [s for s in iso14.steps if any(lab in ("corner", "face") for lab, _ in s.filling)]
    lo, hi = 10.0 * faces[-1].pressure_pa, float(p[-1])        # a window from past the last face step up to p0
    target = Target(kind, low_pa=lo, high_pa=hi)
    want = {"single-channel": (hand["centre"] >= 0.5) & (hand["next_ring"] < 0.5),
            "first-layer": hand["first_layer"] >= 0.5, "full-pore": hand["pore"] >= 0.5}[kind]
    want &= (p >= lo) & (p <= hi)
    ok, rng = meets(target, iso14)
    assert ok == bool(want.any())
    if ok:
        first = np.flatnonzero(want)[0]
        assert rng[0] == pytest.approx(p[first], rel=1e-12)
    if kind == "first-layer":
        assert ok and rng[0] == pytest.approx(p[np.searchsorted(p, lo)], rel=1e-12)   # complete all through
        assert rng[1] == pytest.approx(hi, rel=1e-12)


def test_first_layer_completes_just_after_the_last_face_step(iso14):
    faces = [s for s in iso14.steps if any(lab in ("corner", "face") for lab, _ in s.filling)]
    ok, (lo, _) = meets(Target("first-layer"), iso14)
    ratio = iso14.pressure_pa[1] / iso14.pressure_pa[0]            # one grid spacing in pressure
    assert ok and faces[-1].pressure_pa <= lo <= faces[-1].pressure_pa * ratio**2


def test_below_a_pressure_under_the_first_layer_the_target_is_not_met(iso14):
    corner = iso14.steps[0].pressure_pa
    assert meets(Target("first-layer", high_pa=corner), iso14) == (False, None)


def test_single_channel_on_a_made_up_profile():
    # invented occupancies: the centre fills at the 2nd point, the next ring at the 4th
    profile = {"pressure_pa": [1.0, 2.0, 3.0, 4.0, 5.0], "centre": [0.0, 0.9, 0.9, 1.0, 1.0],
               "next_ring": [0.0, 0.1, 0.2, 0.9, 1.0], "first_layer": [1.0] * 5, "pore": [0, 0, 0, 0.9, 1.0]}
    point = {"profile": profile}
    assert meets(Target("single-channel"), point) == (True, (2.0, 3.0))
    assert meets(Target("single-channel", low_pa=3.5), point) == (False, None)
    assert holding_intervals(Target("full-pore"), point) == [(4.0, 5.0)]


@pytest.mark.parametrize("kwargs, words", [(dict(kind="two-layers"), "target kind"),
                                           (dict(kind="full-pore", low_pa=5.0, high_pa=1.0), "low < high"),
                                           (dict(kind="full-pore", low_pa=-1.0), "low_pa"),
                                           (dict(kind="full-pore", threshold=1.5), "threshold")])
def test_target_refuses_bad_values(kwargs, words):
    with pytest.raises(ValueError, match=words):
        Target(**kwargs)


# the runner: cache and stop -------------------------------------------------------------------------
def test_cache_makes_a_second_run_instant_and_equal(local_sweep):
    spec = SweepSpec(BASE, sizes_angstrom=SIZES, n_points=POINTS)
    runner = SweepRunner(workers=1)
    first = runner.run(spec)
    again = runner.run(spec)
    assert again.from_cache == len(SIZES) and all(a is b for a, b in zip(again.points, first.points))
    other = runner.run(SweepSpec(BASE, sizes_angstrom=SIZES, n_points=POINTS + 1))   # points are in the key
    assert other.from_cache == 0


def test_cache_is_bounded_least_recently_used_out():
    cache = ResultCache(2)
    a, b, c = (BASE.replace(size_angstrom=s) for s in (10.0, 11.0, 12.0))
    cache.put(a, 10, {"a": 1})
    cache.put(b, 10, {"b": 1})
    assert cache.get(a, 10) == {"a": 1}          # a is now the most recent
    cache.put(c, 10, {"c": 1})
    assert len(cache) == 2 and cache.get(b, 10) is None and cache.get(a, 10) is not None
    assert cache.get(a.replace(title="words do not change results"), 10) == {"a": 1}


def test_stop_flag_returns_the_partial_result_marked_stopped():
    stop = threading.Event()
    seen = []

    def progress(done, total):
        seen.append((done, total))
        if done >= 1:
            stop.set()

    spec = SweepSpec(BASE, sizes_angstrom=(8.0, 9.0, 10.0, 11.0), n_points=POINTS)
    result = SweepRunner(workers=1).run(spec, progress=progress, stop=stop)
    assert result.stopped and not result.complete
    assert len(result.done) == 1 and seen[0] == (0, 4) and seen[-1] == (1, 4)
    out = sweep_json(result)
    assert out["stopped"] is True and out["complete"] is False and len(out["pores"]) == 1


def test_stop_before_start_computes_nothing():
    spec = SweepSpec(BASE, sizes_angstrom=(8.0, 9.0), n_points=POINTS)
    result = SweepRunner(workers=2).run(spec, stop=lambda: True)
    assert result.stopped and result.done == []


def test_a_pore_the_model_cannot_compute_is_an_entry_not_a_crash():
    point = point_job(Scenario(size_angstrom=2.0, wall_angstrom=8.0, site_model="classical"), POINTS)
    assert "error" in point and point["size_angstrom"] == 2.0


# the command ---------------------------------------------------------------------------------------
ARGS = ["sweep", "--pore", "hexagon", "--sizes", "8:10:2", "--wall", "8", "--adsorbate", "helium-4",
        "--temperature", "1.5", "--site-model", "classical", "--points", str(POINTS), "--workers", "1"]


def test_cli_json_shape_and_steps_as_porefill_isotherm(capsys):
    assert main(ARGS + ["--json"]) == 0
    captured = capsys.readouterr()
    out = json.loads(captured.out)
    assert "porefill: sweep 2/2 pores" in captured.err
    assert [p["size_angstrom"] for p in out["pores"]] == [8.0, 10.0]
    for pore in out["pores"]:
        assert {"size_angstrom", "wall_angstrom", "temperature_k", "site_model", "steps"} <= set(pore)
        assert pore["wall_angstrom"] == 8.0 and pore["temperature_k"] == 1.5 and pore["site_model"] == "classical"
        assert main(["isotherm", "--size", f"{pore['size_angstrom']:g}", "--wall", "8", "--temperature", "1.5",
                     "--site-model", "classical", "--points", str(POINTS), "--json"]) == 0
        assert pore["steps"] == json.loads(capsys.readouterr().out)["steps"]
    assert out["complete"] is True and out["stopped"] is False


def test_cli_csv_one_row_per_step(tmp_path, capsys):
    path = tmp_path / "steps.csv"
    assert main(ARGS + ["--csv", str(path), "--quiet", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    rows = list(csv.DictReader(io.StringIO(path.read_text())))
    assert tuple(rows[0]) == CSV_COLUMNS
    assert len(rows) == sum(len(p["steps"]) for p in out["pores"])
    first = out["pores"][0]["steps"][0]
    assert float(rows[0]["pressure_Pa"]) == pytest.approx(first["pressure_pa"], rel=1e-9)
    assert rows[0]["fills"] == out["pores"][0]["step_fills"][0] and rows[0]["size_angstrom"] == "8"


def test_cli_target_marks_the_pores(capsys):
    assert main(ARGS + ["--quiet", "--json", "--target", "first-layer", "--window", "0", "1e-10"]) == 0
    out = json.loads(capsys.readouterr().out)
    for pore in out["pores"]:
        want = meets(Target("first-layer", high_pa=1e-10), point_job(
            BASE.replace(size_angstrom=pore["size_angstrom"]), POINTS))
        assert pore["target"]["met"] == want[0]


@pytest.mark.parametrize("extra, words", [
    (["--sizes", "10:50"], "start:stop:count"),
    (["--sizes", "1:3:3"], "size_angstrom"),
    (["--walls", "x"], "--walls 'x'"),
    (["--temperatures", "0.01:0.1:2"], "temperature 0.01 K"),
    (["--points", "1"], "--points"),
    (["--workers", "0"], "--workers"),
    (["--window", "1", "2"], "--window needs --target"),
    (["--target", "full-pore", "--window", "5", "1"], "low < high"),
    (["--csv", " "], "--csv needs a file name"),
])
def test_cli_bad_input_one_line_exit_2(extra, words, capsys):
    args = [a for a in ARGS if a not in ("--workers", "1")] if "--workers" in extra else list(ARGS)
    if "--sizes" in extra:
        i = args.index("--sizes")
        del args[i:i + 2]
    if "--temperatures" in extra:
        i = args.index("--temperature")
        del args[i:i + 2]
    assert main(args + extra) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("porefill: error:") and words in err and "Traceback" not in err
    assert len(err.splitlines()) == 1


def test_sweep_csv_keeps_a_pore_without_steps():
    spec = SweepSpec(BASE, sizes_angstrom=(2.0,), n_points=POINTS)
    rows = list(csv.DictReader(io.StringIO(sweep_csv(SweepRunner(workers=1).run(spec)))))
    assert len(rows) == 1 and rows[0]["step"] == "" and rows[0]["error"]


# a Dask cluster -----------------------------------------------------------------------------------
def test_sweep_on_a_local_dask_cluster_equals_the_local_one(capsys):
    import distributed      # the test extra installs it: a missing install fails here, it is not skipped
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=False,
                                  dashboard_address=None) as cluster:
        assert main([a for a in ARGS if a not in ("--workers", "1")]
                    + ["--cluster", cluster.scheduler_address, "--json", "--quiet"]) == 0
    remote = json.loads(capsys.readouterr().out)
    assert remote["ran_on"] == cluster.scheduler_address
    assert main(ARGS + ["--json", "--quiet"]) == 0
    local = json.loads(capsys.readouterr().out)
    assert remote["pores"] == local["pores"]


def test_d100_ties_each_wall_to_its_side():
    d100 = 40.0
    spec = SweepSpec(BASE, sizes_angstrom=(10.0, 15.0), d100_angstrom=d100)
    for sc in spec.scenarios():
        a0 = sc.pore().lattice_spacing_angstrom
        assert a0 * math.sqrt(3.0) / 2.0 == pytest.approx(d100, rel=1e-12)   # d100 = a0·√3/2, as above
    with pytest.raises(ValueError, match="side 30 Å with d100 = 40 Å"):
        SweepSpec(BASE, sizes_angstrom=(30.0,), d100_angstrom=d100)          # the pores would overlap
    with pytest.raises(ValueError, match="without walls"):
        SweepSpec(BASE, walls_angstrom=(8.0,), d100_angstrom=d100)


def test_walls_full_centre_empty_and_a_given_layer_on_a_made_up_profile():
    # invented occupancies over five pressures: the wall layer fills at the 2nd, layer 2 at the 3rd, the centre
    # (layer 3) at the 4th; p0 = 10 Pa, so the relative pressures are a tenth of the pressures
    profile = {"pressure_pa": [1.0, 2.0, 3.0, 4.0, 5.0], "relative_pressure": [0.1, 0.2, 0.3, 0.4, 0.5],
               "centre": [0.0, 0.0, 0.1, 0.9, 1.0], "next_ring": [0.0, 0.0, 0.9, 0.9, 1.0],
               "first_layer": [0.1, 0.9, 1.0, 1.0, 1.0], "pore": [0.0, 0.0, 0.1, 0.9, 1.0],
               "layers": [[0.1, 0.9, 1.0, 1.0, 1.0], [0.0, 0.0, 0.9, 0.9, 1.0], [0.0, 0.0, 0.1, 0.9, 1.0]]}
    point = {"profile": profile}
    assert holding_intervals(Target("walls-full-centre-empty"), point) == [(2.0, 3.0)]
    assert holding_intervals(Target("layer", layer=2), point) == [(3.0, 5.0)]
    assert holding_intervals(Target("layer", layer=3), point) == holding_intervals(Target("full-pore"), point)
    assert meets(Target("layer", layer=4), point) == (False, None)          # no fourth layer in this pore
    # a window in p/p0 reads the relative pressures and answers in Pa
    assert meets(Target("full-pore", high_pa=0.45, relative=True), point) == (True, (4.0, 4.0))
    assert meets(Target("full-pore", high_pa=0.35, relative=True), point) == (False, None)
    with pytest.raises(ValueError, match="layer must be a whole number"):
        Target("layer", layer=0)


def test_layers_of_a_computed_pore_fill_from_the_wall_inwards(iso14):
    # layer 1 is the wall-contact sites, the centre the last layer; each layer fills no earlier than the one
    # outside it (adsorption from the wall inwards, the configuration the sizing targets describe)
    from porefill.physics.sweep import occupancy_profile

    prof = occupancy_profile(iso14)
    np.testing.assert_array_equal(prof["layers"][0], prof["first_layer"])
    np.testing.assert_array_equal(prof["layers"][-1], iso14.equilibrium_occupancy()[:, [
        i for i, lab in enumerate(iso14.stage.orbit_labels()) if lab == "centre"]].min(axis=1))
    first_full = [int(np.argmax(layer >= 0.5)) for layer in prof["layers"]]
    assert all(np.any(layer >= 0.5) for layer in prof["layers"])
    assert first_full == sorted(first_full)
    walls_full = holding_intervals(Target("walls-full-centre-empty"), iso14)
    assert walls_full and walls_full[0][0] == pytest.approx(meets(Target("first-layer"), iso14)[1][0])


def test_a_holding_range_that_reaches_the_computed_end_says_so():
    # common practice, no source: a range cut by the computed grid is a lower bound on where the target holds
    from porefill.physics.sweep import edge_words, range_edges, sweep_point

    sc = Scenario(shape="hexagon", size_angstrom=14.0, wall_angstrom=8.0, adsorbate="helium-4", temperature_k=1.5,
                  site_model="classical")
    point = sweep_point(sc, 150)
    p = [v for v in point["profile"]["pressure_pa"] if v is not None]
    ok, rng = meets(Target("full-pore"), point)
    assert ok and rng[1] == pytest.approx(p[-1])
    assert range_edges(point, rng) == (False, True)
    assert "the computed range ends there" in edge_words(point, rng)
    inside = (p[10], p[20])
    assert range_edges(point, inside) == (False, False) and "computed range" not in edge_words(point, inside)


def test_a_sweeps_time_is_estimated_before_it_starts():
    # common practice, no source: the estimate grows with pore size and count, quantum pores cost more, the
    # workers share it, and pores already in the cache cost nothing
    from porefill.explorer.jobs.sweep_runner import estimate_seconds

    small = SweepSpec(BASE, sizes_angstrom=parse_range("10:20:5"), n_points=300)
    large = SweepSpec(BASE, sizes_angstrom=parse_range("30:40:5"), n_points=300)
    quantum = SweepSpec(BASE.replace(site_model="quantum"), sizes_angstrom=parse_range("10:20:5"), n_points=300)
    assert 0 < estimate_seconds(small, 1) < estimate_seconds(large, 1)
    assert estimate_seconds(quantum, 1) > 5 * estimate_seconds(small, 1)
    assert estimate_seconds(small, 2) == pytest.approx(estimate_seconds(small, 1) / 2)
    cache = ResultCache()
    for sc in small.scenarios():
        cache.put(sc, small.n_points, {"done": True})
    assert estimate_seconds(small, 1, cache) == 0.0
