"""Yields in process: designs and their overrides, the hand count, budgets, bad input."""

import json
import math
import warnings

import numpy as np
import pytest
from hypothesis import given, strategies as st

from snrkit.cli import main
from snrkit.planning.catalog import catalogue_from_table
from snrkit.errors import InputError, UnknownKeyError
from snrkit.photons.instruments import load_mode
from snrkit.planning.population import generate_block, generate_population
from snrkit.planning.yields import population_yields
from snrkit.planning.yields.chunk import reached_mask, YEAR_S
from snrkit.planning.yields.designs import (build_mode, design_from_text, load_designs,
                                            designs_from_options)
from snrkit.engine.transits import transits_for_system

MODE = "cold6m-prism-lowres"
SCENARIO = "h2-metal-rich"


def test_aperture_scales_the_collecting_area_as_the_diameter_squared():
    # a mode given by its area: a filled circle of the same area, A = pi D^2 / 4
    base = load_mode(MODE)
    d0 = math.sqrt(4 * base.area_m2 / math.pi)
    mode, aperture = build_mode(design_from_text("aperture_m=12", MODE))
    assert aperture == 12.0
    assert mode.area_m2 == pytest.approx(base.area_m2 * (12.0 / d0) ** 2, rel=1e-12)
    assert mode.area_m2 == pytest.approx(math.pi * 12.0**2 / 4, rel=1e-12)
    # a mode given by its diameter keeps its obscured fraction (0.11 in the preset)
    mode, _ = build_mode(design_from_text("aperture_m=4.8", "space2.4m-grism-scan"))
    assert mode.area_m2 == pytest.approx(math.pi * 4.8**2 / 4 * (1 - 0.11), rel=1e-12)
    assert mode.area_m2 == pytest.approx(load_mode("space2.4m-grism-scan").area_m2 * 4, rel=1e-12)


def test_throughput_scale_and_floor_overrides():
    base = load_mode(MODE)
    mode, _ = build_mode(design_from_text("throughput_scale=1.5,floor_ppm=7", MODE))
    assert np.allclose(mode.throughput.value, 1.5 * base.throughput.value)
    assert mode.floor_ppm == 7.0
    top = float(base.throughput.value.max())
    with pytest.raises(InputError, match="throughput_scale"):
        build_mode(design_from_text(f"throughput_scale={1.01 / top}", MODE))


def test_design_grid_file_and_unknown_key(tmp_path):
    grid = tmp_path / "grid.toml"
    grid.write_text(f'[defaults]\nmode = "{MODE}"\nhours = 200\n'
                    '[[design]]\nname = "6 m"\naperture_m = 6\n'
                    '[[design]]\nname = "8 m"\naperture_m = 8\nyears = 5\n')
    designs = load_designs(grid)
    assert [d.name for d in designs] == ["6 m", "8 m"]
    assert designs[1].hours == 200 and designs[1].years == 5 and designs[0].mode == MODE
    grid.write_text(f'[[design]]\nmode = "{MODE}"\napperture_m = 6\n')
    with pytest.raises(UnknownKeyError, match="did you mean 'aperture_m'"):
        load_designs(grid)
    with pytest.raises(InputError, match="a different name"):
        designs_from_options(None, ["name=a,aperture_m=6", "name=a,aperture_m=8"], MODE)


def test_cli_unknown_design_key_exits_2_with_the_closest_key(tmp_path, capsys):
    grid = tmp_path / "grid.toml"
    grid.write_text(f'[[design]]\nmode = "{MODE}"\nfloor_pmm = 20\n')
    rc = main(["yields", "--generate", "10", "--designs", str(grid), "--scheduler", "in-process",
               "--out", str(tmp_path / "run")])
    out, err = capsys.readouterr()
    assert rc == 2 and out == ""
    assert err.count("\n") == 1 and "floor_pmm" in err and "did you mean 'floor_ppm'" in err


def _tiny_population():
    """The first rows of one generator block (invented planets), every size class."""
    t = generate_block(7, 0)
    return t[:14]


def test_tiny_population_equals_a_hand_count_through_the_per_planet_path(tmp_path):
    """Each planet alone through transits_for_system, counted by hand per class.

    Two designs with the same instrument and different budgets share one engine
    evaluation per chunk; each must still be counted with its own budgets.
    """
    pop = _tiny_population()
    design = "name=8m,aperture_m=8,years=0.2,hours=30"
    free = "name=8m free,aperture_m=8"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")   # the engine's own notes (SnrkitWarning) are not checked here
        res = population_yields(pop, design_texts=[design, free], mode=MODE, scenarios=[SCENARIO],
                                resolution=10, scheduler="in-process", out_dir=tmp_path / "run")
        mode, _ = build_mode(design_from_text(design, MODE))
        hand, hand_free = {}, {}
        for i in range(len(pop)):
            cat = catalogue_from_table(pop[i:i + 1])
            rec = transits_for_system(cat.system, mode, SCENARIO, resolution=10,
                                      probabilities=())["planets"][0]
            n = rec["transits_needed"] or 0
            avail = math.floor(0.2 * YEAR_S / (float(pop["period_days"][i]) * 86400.0))
            ok = (rec["status"] == "ok" and 0 < n <= min(500, avail)
                  and rec["hours_total"] is not None and rec["hours_total"] <= 30)
            key = (str(pop["planet_class"][i]), str(pop["hz_position"][i]))
            hand[key] = hand.get(key, 0) + int(ok)
            hand_free[key] = hand_free.get(key, 0) + int(rec["status"] == "ok" and 0 < n <= 500)
    ds = res["dataset"]
    for k, counts in enumerate((hand, hand_free)):
        got = ds["reached"].isel(draw=0, design=k, scenario=0, test=0)
        for (pc, hz), count in counts.items():
            assert int(got.sel(planet_class=pc, hz_position=hz)) == count
        assert int(got.sum()) == sum(counts.values())
    assert 0 < sum(hand.values()) < sum(hand_free.values())  # the budgets cut some planets
    assert int(ds["planets"].sum()) == len(pop)
    # the per-planet Parquet holds every input row once per design x scenario x test
    import pyarrow.parquet as pq
    rows = pq.read_table(tmp_path / "run" / "planets").to_pandas()
    assert len(rows) == 2 * len(pop)
    assert int(rows[rows["design"] == "8m"]["reached"].sum()) == sum(hand.values())
    # the netCDF reads back to the same counts
    import xarray as xr
    with xr.open_dataset(tmp_path / "run" / "yields.nc", engine="scipy") as back:
        assert (back["reached"].values == ds["reached"].values).all()


statuses = st.sampled_from(["ok", "ok", "ok", "not_reachable", "saturated"])


@given(st.lists(st.tuples(statuses, st.integers(0, 800), st.floats(0.1, 5000),
                          st.floats(0.3, 400)), min_size=1, max_size=30),
       st.integers(1, 500), st.integers(1, 500), st.floats(0.01, 20), st.floats(0.01, 20),
       st.floats(1, 5000), st.floats(1, 5000))
def test_reached_grows_with_every_budget(rows, n1, n2, y1, y2, h1, h2):
    """More transits, years or hours never reach fewer planets; reached implies status ok."""
    status = np.array([r[0] for r in rows], dtype=object)
    tn = np.array([r[1] for r in rows])
    hrs = np.array([r[2] for r in rows])
    period_s = np.array([r[3] for r in rows]) * 86400.0
    lo = reached_mask(status, tn, hrs, period_s, min(n1, n2), min(y1, y2), min(h1, h2))[0]
    hi = reached_mask(status, tn, hrs, period_s, max(n1, n2), max(y1, y2), max(h1, h2))[0]
    assert not (lo & ~hi).any()
    assert (status[hi] == "ok").all()
    free = reached_mask(status, tn, hrs, period_s, max(n1, n2))[0]
    assert not (hi & ~free).any()


def test_cli_in_process_json_and_plot(tmp_path, capsys):
    out = tmp_path / "run"
    rc = main(["yields", "--generate", "4096", "--design", "name=6m,aperture_m=6",
               "--design", "name=9m,aperture_m=9", "--mode", MODE, "--scenario", SCENARIO,
               "--resolution", "10", "--scheduler", "in-process", "--out", str(out), "--json",
               "--plot", str(tmp_path / "y.png")])
    captured = capsys.readouterr()
    assert rc == 0, captured.err
    doc = json.loads(captured.out)
    assert doc["chunks"] == 1 and doc["chunks_computed"] == 1
    assert [d["aperture_m"] for d in doc["designs"]] == [6.0, 9.0]
    assert doc["planets"] == sum(r["planets"] for r in doc["yields"] if r["design"] == "6m")
    assert all(r["yield_mean"] <= r["planets"] for r in doc["yields"])
    assert (tmp_path / "y.png").stat().st_size > 0
    # the same command again resumes: nothing left to compute, the same yields
    rc = main(["yields", "--generate", "4096", "--design", "name=6m,aperture_m=6",
               "--design", "name=9m,aperture_m=9", "--mode", MODE, "--scenario", SCENARIO,
               "--resolution", "10", "--scheduler", "in-process", "--out", str(out), "--json"])
    again = json.loads(capsys.readouterr().out)
    assert rc == 0 and again["chunks_computed"] == 0 and again["yields"] == doc["yields"]
    # other settings in the same folder are refused (exit 2) unless --restart
    rc = main(["yields", "--generate", "4096", "--mode", MODE, "--scheduler", "in-process",
               "--out", str(out)])
    err = capsys.readouterr().err
    assert rc == 2 and "--restart" in err and err.count("\n") == 1


def test_bad_scheduler_and_memory_options(tmp_path):
    with pytest.raises(InputError, match="HOST:PORT"):
        population_yields(_tiny_population(), mode=MODE, scheduler="no port here")
    with pytest.raises(InputError, match="chunk-memory"):
        population_yields(_tiny_population(), mode=MODE, scheduler="in-process",
                          chunk_memory="2 MB")
    with pytest.raises(InputError, match="chunk-memory"):
        population_yields(_tiny_population(), mode=MODE, scheduler="in-process",
                          chunk_memory="lots")


def test_draws_give_the_spread_over_independent_populations():
    """Three seeds, three different populations; spread = sample std of the per-draw yields."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")   # the engine's own notes (SnrkitWarning) are not checked here
        res = population_yields(generate=2000, seed=4, draws=3, mode=MODE, scenarios=[SCENARIO],
                                resolution=10, scheduler="in-process")
    ds = res["dataset"]
    assert ds["seed"].values.tolist() == [4, 5, 6]
    per_draw = ds["reached"].sum(["planet_class", "hz_position"]).values[:, 0, 0, 0]
    assert len(set(ds["planets"].sum(["planet_class", "hz_position"]).values.tolist())) > 1
    total_mean = ds["yield_mean"].sum(["planet_class", "hz_position"]).values[0, 0, 0]
    assert total_mean == pytest.approx(per_draw.mean())
    one = ds["reached"].isel(design=0, scenario=0, test=0)
    np.testing.assert_allclose(ds["yield_spread"].isel(design=0, scenario=0, test=0),
                               one.std("draw", ddof=1))
    np.testing.assert_allclose(ds["poisson_sigma"], np.sqrt(ds["yield_mean"]))
    assert (ds["reached"] <= ds["planets"]).all()
    # the yield of the real volume: each draw holds one block of 4096 stars, the 50 pc volume
    # about 40,200 (Mamajek 2016 local densities, see test_population_generate)
    from snrkit.planning.population import BLOCK_STARS, stars_in_volume
    scale = stars_in_volume() / BLOCK_STARS
    assert ds.attrs["volume_scale"] == pytest.approx(scale, rel=1e-12)
    np.testing.assert_allclose(ds["yield_per_volume"], ds["yield_mean"] * scale, rtol=1e-12)
    # its sampling error: Poisson counts averaged over the 3 draws, scaled alike
    np.testing.assert_allclose(ds["yield_per_volume_error"],
                               scale * np.sqrt(ds["yield_mean"] / 3), rtol=1e-12)
    # a population file has no volume
    table = generate_population(300, 4)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ds_file = population_yields(table, mode=MODE, scenarios=[SCENARIO], resolution=10,
                                    scheduler="in-process")["dataset"]
    assert np.isnan(ds_file.attrs["volume_scale"]) and ds_file["yield_per_volume"].isnull().all()
