"""Reading populations (snrkit.planning.population.read_population): Parquet, CSV
and ECSV, the catalogue mappings, and per-row status for bad rows and columns."""

import numpy as np
import pytest
from astropy.table import Table

from snrkit.planning.catalog import catalogue_from_table
from snrkit.errors import InputError
from snrkit.planning.population import generate_population, read_population
from snrkit.planning.population.reader import screen_population

FORMATS = ("parquet", "csv", "ecsv")


@pytest.fixture(scope="module")
def population():
    return generate_population(6000, 21)


def _write(table, tmp_path, fmt, name="pop"):
    path = tmp_path / f"{name}.{fmt}"
    table.write(path, format={"parquet": "parquet", "csv": "ascii.csv",
                              "ecsv": "ascii.ecsv"}[fmt], overwrite=True)
    return path


@pytest.mark.parametrize("fmt", FORMATS)
def test_generated_population_reads_back(population, tmp_path, fmt):
    out = read_population(_write(population, tmp_path, fmt))
    assert len(out) == len(population) and set(out["status"]) == {"ok"}
    for name in ("planet_name", "scenario", "planet_class", "hz_position"):
        assert list(out[name]) == list(population[name])
    for name in ("planet_radius_earth", "period_days", "host_mag_J", "star_index"):
        np.testing.assert_allclose(np.asarray(out[name], dtype=float),
                                   np.asarray(population[name], dtype=float), rtol=1e-12)
    cat = catalogue_from_table(out[out["status"] == "ok"])
    assert cat.system is not None and len(cat.good_index) == len(out)


def _bad_rows(population):
    t = population[:7].copy()
    t["planet_radius_earth"] = t["planet_radius_earth"].astype("U40")
    t["planet_radius_earth"][1] = "-2.0"           # negative radius
    t["planet_radius_earth"][2] = ""               # missing value
    t["planet_radius_earth"][3] = "300 K"          # a unit of the wrong dimension
    rjup = float(t["planet_radius_earth"][4]) * 6378.1 / 71492.0
    t["planet_radius_earth"][4] = f"{rjup!r} jupiterRad"   # a unit of the right dimension
    t["planet_radius_earth"][5] = "big"            # not a number
    t["planet_radius_earth"].unit = None
    return t


@pytest.mark.parametrize("fmt", FORMATS)
def test_bad_rows_get_their_own_status(population, tmp_path, fmt):
    t = _bad_rows(population)
    out = read_population(_write(t, tmp_path, fmt))
    assert list(out["planet_name"]) == list(t["planet_name"])      # every row once, in order
    assert list(out["status"]) == ["ok", "bad_value", "missing_radius", "wrong_unit", "ok",
                                   "bad_value", "ok"]
    assert "300 K" in out["reason"][3] and "planet_radius_earth" in out["reason"][3]
    assert "-2" in out["reason"][1]
    # R_jup / R_earth = 71492 / 6378.1 km, the IAU 2015 nominal radii (Prsa et al. 2016, AJ
    # 152, 41)
    np.testing.assert_allclose(out["planet_radius_earth"][4], population["planet_radius_earth"][4],
                               rtol=1e-9)


@pytest.mark.parametrize("fmt", FORMATS)
def test_missing_required_column(population, tmp_path, fmt):
    t = population[:4].copy()
    t.remove_column("host_teff_K")
    out = read_population(_write(t, tmp_path, fmt))
    assert list(out["planet_name"]) == list(t["planet_name"])
    assert set(out["status"]) == {"missing_column"}
    assert all("host_teff_K" in r for r in out["reason"])


@pytest.mark.parametrize("fmt", ("parquet", "ecsv"))
def test_column_with_a_wrong_unit(population, tmp_path, fmt):
    t = population[:4].copy()
    t["host_distance_pc"].unit = "K"
    out = read_population(_write(t, tmp_path, fmt))
    assert list(out["planet_name"]) == list(t["planet_name"])
    assert set(out["status"]) == {"wrong_unit"}
    assert all("host_distance_pc" in r and "K" in r for r in out["reason"])
    t["host_distance_pc"].unit = "lyr"             # a convertible unit is converted
    out = read_population(_write(t, tmp_path, fmt, "lyr"))
    np.testing.assert_allclose(out["host_distance_pc"], population["host_distance_pc"][:4]
                               * 0.30660139378795, rtol=1e-9)   # 1 lyr in pc (IAU, astropy)


def test_mapping_and_carried_columns(population):
    t = population[:5].copy()
    t.rename_columns(["planet_name", "planet_radius_earth", "period_days"], ["id", "Rp", "P"])
    t["Rp"] = t["Rp"] * 6378.1 / 71492.0
    t["Rp"].unit = None
    mapping = {"start_from_default": True,
               "planet": {"name": "id", "radius": {"column": "Rp", "unit": "jupiterRad"},
                          "period": "P"}}
    out = screen_population(t, mapping)
    assert set(out["status"]) == {"ok"}
    np.testing.assert_allclose(out["planet_radius_earth"], population["planet_radius_earth"][:5],
                               rtol=1e-12)
    assert list(out["scenario"]) == list(population["scenario"][:5])
    out = screen_population(t, {"planet": {"name": "id", "radius": "Radius"}})
    assert set(out["status"]) == {"missing_column"} and len(out) == 5
    assert "'Radius'" in out["reason"][0]


def test_bad_files(tmp_path):
    with pytest.raises(InputError):
        read_population(tmp_path / "pop.txt")
    with pytest.raises(InputError):
        read_population(tmp_path / "absent.parquet")
    bad = tmp_path / "bad.parquet"
    bad.write_bytes(b"not parquet")
    with pytest.raises(InputError) as exc:
        read_population(bad)
    assert "\n" not in str(exc.value)
    with pytest.raises(InputError):
        screen_population(Table(), {"planet": {"nmae": "x"}})
