"""Catalogue import (snrkit.planning.catalog): formats, mappings, row screening, and the
vectorized path against the per-planet path."""

import tomllib
import warnings

import numpy as np
import pytest
import astropy.units as u
import astropy.constants as const
from astropy.table import Table, MaskedColumn
from hypothesis import given, settings, strategies as st

from snrkit.planning.catalog import (read_catalogue, catalogue_from_table, load_mapping, DEFAULT_COLUMNS,
                            FIELDS, FLAG_COLUMNS, STATUS_CODES)
from snrkit.errors import InputError, UnitMismatchError, UnknownKeyError, GrazingTransitWarning
from snrkit.bodies.star import Star
from snrkit.bodies.planet import Planet
from snrkit.bodies.system import System
from snrkit.io.tables import data_path

DEMO = data_path("demo", "catalogue.ecsv")
EXAMPLE_MAPPING = data_path("catalogue_mappings", "example-renamed.toml")


@pytest.fixture(scope="module")
def demo_table():
    return Table.read(DEMO, format="ascii.ecsv")


@pytest.fixture(scope="module")
def demo():
    return read_catalogue(DEMO)


def _assert_same(cat_a, cat_b, rtol=1e-12, same_reasons=True):
    assert len(cat_a) == len(cat_b)
    assert list(cat_a.status) == list(cat_b.status)
    if same_reasons:            # reasons name the user's columns, so only for the same layout
        assert list(cat_a.reason) == list(cat_b.reason)
    np.testing.assert_array_equal(cat_a.good_index, cat_b.good_index)
    da, db = cat_a.derived(), cat_b.derived()
    for col in ("tsm", "esm", "t14", "t23", "equilibrium_temperature", "semi_major_axis",
                "impact_parameter", "mass", "transit_depth"):
        a, b = np.asarray(u.Quantity(da[col]).value), np.asarray(u.Quantity(db[col]).value)
        np.testing.assert_allclose(a, b, rtol=rtol, equal_nan=True, err_msg=col)
    for fl in FLAG_COLUMNS:
        np.testing.assert_array_equal(cat_a.table[fl], cat_b.table[fl], err_msg=fl)


# ----------------------------------------------------------------------------- demo catalogue

def test_demo_catalogue_size_provenance_and_bad_rows(demo, demo_table):
    meta = demo_table.meta
    for key in ("source", "method", "units", "date", "script"):
        assert meta.get(key), key
    assert "invented" in meta["source"]
    assert len(demo) >= 200
    assert demo.good_index.size >= 200
    # every input row appears, in input order
    np.testing.assert_array_equal(demo.table["input_index"], np.arange(len(demo_table)))
    np.testing.assert_array_equal(demo.table["planet_name"], demo_table["planet_name"])
    bad = meta["bad_rows"]
    assert 5 <= len(bad) <= 10
    for entry in bad:
        i = entry["input_index"]
        assert demo.table["planet_name"][i] == entry["planet_name"]
        assert demo.status[i] == entry["status"], (entry, demo.reason[i])
        assert demo.reason[i]
    # and nothing else is bad
    assert set(np.flatnonzero(demo.status != "ok")) == {e["input_index"] for e in bad}
    assert {e["status"] for e in bad} >= {"missing_radius", "bad_value", "duplicate_name",
                                          "no_transit", "missing_mass", "missing_orbit"}


def test_demo_spans_planet_and_host_classes(demo):
    d = demo.derived()
    ok = d["status"] == "ok"
    r = d["radius"][ok].to_value(u.R_earth)
    teq = d["equilibrium_temperature"][ok].to_value(u.K)
    teff = np.asarray(demo.values["host_teff_K"])[ok]
    assert (r > 8).sum() >= 20 and (r < 1.6).sum() >= 20          # hot giants ... rocky
    assert teq.max() > 1500 and teq.min() < 300                   # hot ... temperate
    assert np.any(d["hz_position"][ok] == "conservative")
    for lo, hi in ((6000, 7300), (5300, 6000), (3900, 5300), (2000, 3900)):   # F, G, K, M
        assert np.sum((teff >= lo) & (teff < hi)) >= 10
    names = np.asarray(demo.values["planet_name"])
    assert all(n.startswith("Demo-") for n in names)
    # ephemerides with uncertainties, sky positions, distances for every usable row
    for col in ("transit_midtime_bjd_tdb", "transit_midtime_uncertainty_days",
                "period_uncertainty_days", "host_ra_deg", "host_dec_deg", "host_distance_pc",
                "host_mag_J", "host_mag_Ks"):
        assert np.all(np.isfinite(np.asarray(demo.values[col])[ok])), col


def test_summary_counts(demo):
    s = demo.summary()
    assert s["rows"] == len(demo)
    assert s["ok"] + s["rejected"] == s["rows"]
    assert sum(s["by_status"].values()) == s["rows"]
    assert list(s["by_status"])[0] == "ok"
    for code, count in s["by_status"].items():
        assert code in STATUS_CODES
        assert count == int(np.sum(demo.status == code))
    ok = demo.status == "ok"
    assert s["estimated"]["mass_estimated"] == int(np.sum(np.asarray(demo.table["mass_estimated"])[ok]))
    assert s["estimated"]["mass_estimated"] == int(demo.system.planet.mass_estimated.sum())
    assert s["estimated"]["impact_parameter_assumed"] == int(demo.system.planet.impact_parameter_assumed.sum())


# ----------------------------------------------------------------------------- formats

def test_three_formats_round_trip(demo, demo_table, tmp_path):
    csv = tmp_path / "cat.csv"
    vot = tmp_path / "cat.vot"
    demo_table.write(csv, format="ascii.csv")          # units dropped: default layout supplies them
    demo_table.write(vot, format="votable")
    for path in (csv, vot):
        _assert_same(demo, read_catalogue(path))
    # the format can be forced when the extension says nothing
    other = tmp_path / "cat.txt"
    demo_table.write(other, format="ascii.csv")
    _assert_same(demo, read_catalogue(other, format="csv"))
    with pytest.raises(InputError, match="format"):
        read_catalogue(other)
    with pytest.raises(InputError):
        read_catalogue(tmp_path / "missing.csv")


def test_values_table_reads_back_to_the_same_catalogue(demo, tmp_path):
    path = tmp_path / "values.ecsv"
    demo.values.write(path, format="ascii.ecsv")
    _assert_same(demo, read_catalogue(path))


# ----------------------------------------------------------------------------- mappings

def _to_mapped_layout(table, mapping_path):
    """Rewrite a default-layout table into the mapping's column names and units."""
    doc = tomllib.loads(mapping_path.read_text())
    entries = {}
    for part in ("planet", "star"):
        for key, val in doc.get(part, {}).items():
            if key == "magnitudes":
                entries.update({f"star.magnitudes.{b}": v for b, v in val.items()})
            else:
                entries[f"{part}.{key}"] = val
    out = Table()
    for field, entry in entries.items():
        entry = {"column": entry} if isinstance(entry, str) else entry
        src = table[DEFAULT_COLUMNS[field]]
        if FIELDS[field].kind == "text":
            out[entry["column"]] = src
            continue
        vals = np.ma.filled(np.ma.asarray(src, dtype=float), np.nan)
        if "unit" in entry and FIELDS[field].unit:
            vals = (vals * u.Unit(FIELDS[field].unit)).to_value(entry["unit"])
        vals = vals - entry.get("offset", 0.0)
        out[entry["column"]] = MaskedColumn(vals, mask=np.isnan(vals))
    return out


def test_custom_mapping_with_renamed_columns_and_units(demo, demo_table, tmp_path):
    user = _to_mapped_layout(demo_table, EXAMPLE_MAPPING)
    assert "Rp" in user.colnames and "planet_radius_earth" not in user.colnames
    # radius in Jupiter radii: 1 R_jup = 11.209 R_earth (IAU 2015 nominal equatorial radii)
    i = int(demo.good_index[0])
    assert user["Rp"][i] * 11.2089807 == pytest.approx(demo_table["planet_radius_earth"][i], rel=1e-6)
    assert user["Per"][i] == pytest.approx(demo_table["period_days"][i] * 24.0, rel=1e-12)
    path = tmp_path / "user.csv"
    user.write(path, format="ascii.csv")
    cat = read_catalogue(path, mapping=EXAMPLE_MAPPING)
    np.testing.assert_array_equal(cat.status, demo.status)
    _assert_same(demo, cat, rtol=1e-9, same_reasons=False)
    assert cat.columns["planet.radius"][:2] == ("Rp", "jupiterRad")


def test_mapping_start_from_default_and_dict_form(demo, demo_table):
    t = demo_table.copy()
    t.rename_column("planet_radius_earth", "R")
    # the file carries its own unit (Jupiter radii); the mapping names only the column
    t["R"] = MaskedColumn(t["R"].quantity.to_value(u.R_jup), mask=t["R"].mask, unit=u.R_jup)
    cat = catalogue_from_table(t, {"start_from_default": True, "planet": {"radius": "R"}})
    _assert_same(demo, cat, rtol=1e-12, same_reasons=False)


def test_mapping_errors(demo_table):
    t = demo_table
    with pytest.raises(InputError, match="did you mean 'planet_radius_earth'"):
        catalogue_from_table(t, {"start_from_default": True,
                                 "planet": {"radius": "planet_radius_eart"}})
    with pytest.raises(UnknownKeyError, match="did you mean 'radius'"):
        catalogue_from_table(t, {"planet": {"radios": "planet_radius_earth"}})
    with pytest.raises(UnknownKeyError):
        load_mapping({"planets": {}})
    with pytest.raises(UnknownKeyError, match="did you mean 'Ks'"):
        load_mapping({"star": {"magnitudes": {"K": "host_mag_Ks"}}})
    with pytest.raises(UnknownKeyError):          # offset only for the mid-time
        load_mapping({"planet": {"period": {"column": "p", "offset": 1.0}}})
    # wrong dimension: whole-file error naming the column
    with pytest.raises(UnitMismatchError, match="'period_days'"):
        catalogue_from_table(t, {"start_from_default": True,
                                 "planet": {"period": {"column": "period_days", "unit": "m"}}})
    with pytest.raises(UnitMismatchError, match="'period_days'"):
        catalogue_from_table(t, {"start_from_default": True,
                                 "planet": {"period": {"column": "period_days", "unit": "parsnips"}}})
    # file unit and mapping unit disagree
    with pytest.raises(UnitMismatchError, match="disagree"):
        catalogue_from_table(t, {"start_from_default": True,
                                 "planet": {"radius": {"column": "planet_radius_earth",
                                                       "unit": "jupiterRad"}}})
    # dimensionless field given a unit
    with pytest.raises(UnitMismatchError, match="'eccentricity'"):
        catalogue_from_table(t, {"start_from_default": True,
                                 "planet": {"eccentricity": {"column": "eccentricity", "unit": "deg"}}})
    # no column for a required field
    no_radius = t.copy()
    no_radius.remove_column("planet_radius_earth")
    with pytest.raises(InputError, match="planet.radius"):
        catalogue_from_table(no_radius)
    no_orbit = t.copy()
    no_orbit.remove_columns(["period_days", "semi_major_axis_au"])
    with pytest.raises(InputError, match="planet.period or planet.semi_major_axis"):
        catalogue_from_table(no_orbit)


def test_mapping_file_errors(tmp_path):
    bad = tmp_path / "m.toml"
    bad.write_text("[planet\n")
    with pytest.raises(InputError, match="TOML"):
        load_mapping(bad)
    with pytest.raises(InputError):
        load_mapping(tmp_path / "none.toml")
    m = load_mapping(EXAMPLE_MAPPING)
    assert m["fields"]["planet.transit_midtime"]["offset"] == 2450000.0


# ----------------------------------------------------------------------------- screening

GOOD = dict(planet_name="T-01 b", host_name="T-01", planet_radius_earth=2.0,
            planet_mass_earth=5.0, period_days=10.0, host_teff_K=3500.0, host_radius_sun=0.5,
            host_mass_sun=0.5, host_mag_J=9.0, impact_parameter=0.3)
UNITS = {"planet_radius_earth": "earthRad", "planet_mass_earth": "earthMass", "period_days": "d",
         "semi_major_axis_au": "AU", "host_teff_K": "K", "host_radius_sun": "solRad",
         "host_mass_sun": "solMass", "inclination_deg": "deg"}


def _table(rows):
    cols = sorted({k for r in rows for k in r} | set(GOOD), key=list(DEFAULT_COLUMNS.values()).index)
    t = Table()
    for c in cols:
        vals = [r.get(c, GOOD.get(c)) for r in rows]
        if c in ("planet_name", "host_name"):
            t[c] = MaskedColumn(["" if v is None else v for v in vals], mask=[v is None for v in vals])
        else:
            vals = [np.nan if v is None else v for v in vals]
            t[c] = MaskedColumn(vals, mask=np.isnan(vals), unit=UNITS.get(c))
    return t


def _row(i, **changes):
    r = dict(GOOD, planet_name=f"T-{i:02d} b")
    r.update(changes)
    return r


# (changes to the good row, expected status, words the reason must contain)
CASES = [
    (dict(), "ok", ""),
    (dict(planet_name=None), "missing_name", "planet_name"),
    (dict(planet_name="T-00 b"), "duplicate_name", "input row 0"),
    (dict(planet_radius_earth=None), "missing_radius", "planet_radius_earth"),
    (dict(host_teff_K=None), "missing_star_temperature", "host_teff_K"),
    (dict(host_radius_sun=None), "missing_star_radius", "host_radius_sun"),
    (dict(host_mass_sun=None), "missing_star_mass", "host_logg_cgs"),
    (dict(period_days=None), "missing_orbit", "semi_major_axis_au"),
    (dict(planet_radius_earth=-2.0), "bad_value", "= -2 earthRad; allowed [0.1, 60] earthRad"),
    (dict(period_days=0.0), "bad_value", "'period_days' (orbital period) = 0 d; allowed [0.01, 100000] d"),
    (dict(planet_mass_earth=np.inf), "bad_value", "planet_mass_earth"),
    (dict(host_teff_K=1999.0), "bad_value", "= 1999 K; allowed [2000, 15000] K"),
    (dict(host_teff_K=15001.0), "bad_value", "host_teff_K"),
    (dict(eccentricity=1.0), "bad_value", "'eccentricity' (eccentricity) = 1; allowed [0, 1)"),
    (dict(eccentricity=-0.1), "bad_value", "eccentricity"),
    (dict(host_mag_J=45.0), "bad_value", "host_mag_J"),
    (dict(planet_radius_earth=15.0, planet_mass_earth=None), "missing_mass", "14.26"),
    (dict(semi_major_axis_au=0.001, period_days=None), "inside_star", "inside the star"),
    # extremes that used to overflow in SI and fail the whole catalogue
    (dict(host_distance_pc=1e300), "bad_value", "host_distance_pc"),
    (dict(period_days=1e300), "bad_value", "period_days"),
    (dict(planet_radius_earth=1e-300), "bad_value", "planet_radius_earth"),
    (dict(planet_mass_earth=1e-300), "bad_value", "planet_mass_earth"),
    # Rp/Rs = 2 x 6378.1 km / (0.5 x 695700 km) = 0.0366716 (IAU 2015 nominal radii)
    (dict(impact_parameter=1.05), "no_transit", "1 + Rp/Rs = 1.03667"),
    (dict(impact_parameter=None, inclination_deg=80.0), "no_transit", "does not transit"),
    (dict(impact_parameter=1.02), "ok", ""),                      # grazing, still usable
    (dict(planet_mass_earth=None), "ok", ""),                     # mass estimated
    (dict(period_days=None, semi_major_axis_au=0.05), "ok", ""),  # period estimated
    (dict(host_mass_sun=None, host_logg_cgs=4.74), "ok", ""),     # mass from log g
    (dict(impact_parameter=None), "ok", ""),                      # b = 0 assumed
]


@pytest.fixture(scope="module")
def screened():
    rows = [_row(i, **ch) for i, (ch, _, _) in enumerate(CASES)]
    return catalogue_from_table(_table(rows))


def test_each_bad_row_class_gets_its_status(screened):
    assert len(screened) == len(CASES)
    np.testing.assert_array_equal(screened.table["input_index"], np.arange(len(CASES)))
    for i, (ch, status, words) in enumerate(CASES):
        assert screened.status[i] == status, (ch, screened.reason[i])
        assert words in screened.reason[i], (words, screened.reason[i])
        assert (screened.reason[i] == "") == (status == "ok")
    good = [i for i, c in enumerate(CASES) if c[1] == "ok"]
    np.testing.assert_array_equal(screened.good_index, good)
    assert len(screened.system) == len(good)
    s = screened.summary()
    assert s["by_status"]["bad_value"] == 12
    assert s["by_status"]["no_transit"] == 2
    assert s["ok"] == 6 and s["rows"] == len(CASES)


def test_estimate_flags(screened):
    t = screened.table
    idx = {i: ch for i, (ch, st_, _) in enumerate(CASES) if st_ == "ok"}
    for i, ch in idx.items():
        assert bool(t["mass_estimated"][i]) == ("planet_mass_earth" in ch)
        assert bool(t["period_estimated"][i]) == ("semi_major_axis_au" in ch)
        assert bool(t["semi_major_axis_estimated"][i]) == ("semi_major_axis_au" not in ch)
        assert bool(t["star_mass_from_log_gravity"][i]) == ("host_logg_cgs" in ch)
        assert bool(t["impact_parameter_assumed"][i]) == (ch.get("impact_parameter", 0.3) is None)
        assert bool(t["grazing"][i]) == (ch.get("impact_parameter") == 1.02)
        assert t["equilibrium_temperature_estimated"][i]
    # the System over the good rows carries the same flags
    np.testing.assert_array_equal(screened.system.planet.mass_estimated,
                                  np.asarray(t["mass_estimated"])[screened.good_index])
    np.testing.assert_array_equal(screened.system.planet.impact_parameter_assumed,
                                  np.asarray(t["impact_parameter_assumed"])[screened.good_index])


def test_period_from_kepler_and_mass_from_log_gravity(screened):
    d = screened.derived()
    # period estimated from a = 0.05 au: P = 2 pi sqrt(a^3 / (G (M_star + M_p))), Kepler's
    # third law with astropy's constants; M_p from Chen & Kipping 2017 (not given: 5 M_earth).
    i = [k for k, c in enumerate(CASES) if c[0].get("semi_major_axis_au") == 0.05][0]
    sys_row = int(np.flatnonzero(screened.good_index == i)[0])
    p = screened.system.planet.period[sys_row]
    mtot = 0.5 * const.M_sun + 5.0 * const.M_earth
    p_ref = (2 * np.pi * np.sqrt((0.05 * u.au) ** 3 / (const.G * mtot))).to(u.d)
    assert p.to_value(u.d) == pytest.approx(p_ref.value, rel=1e-12)
    assert d["semi_major_axis"][i].to_value(u.au) == pytest.approx(0.05, rel=1e-12)
    # log g 4.74 with R = 0.5 R_sun: M = g R^2 / G
    j = [k for k, c in enumerate(CASES) if "host_logg_cgs" in c[0]][0]
    sys_row = int(np.flatnonzero(screened.good_index == j)[0])
    m_ref = (10 ** 4.74 * u.cm / u.s ** 2 * (0.5 * const.R_sun) ** 2 / const.G).to(u.M_sun)
    assert screened.system.star.mass[sys_row].value == pytest.approx(m_ref.value, rel=1e-12)


def test_text_that_is_not_a_number_is_a_bad_row(tmp_path):
    path = tmp_path / "dirty.csv"
    path.write_text("planet_name,planet_radius_earth,planet_mass_earth,period_days,"
                    "host_teff_K,host_radius_sun,host_mass_sun\n"
                    "A b,2.0,5,10,3500,0.5,0.5\n"
                    "B b,two,5,10,3500,0.5,0.5\n"
                    "C b,,5,10,3500,0.5,0.5\n"
                    ",2.0,5,10,3500,0.5,0.5\n")
    cat = read_catalogue(path)
    assert list(cat.status) == ["ok", "bad_value", "missing_radius", "missing_name"]
    assert "holds 'two', which is not a number" in cat.reason[1]
    assert "planet_radius_earth" in cat.reason[1]


def test_reason_quotes_the_users_column_and_unit():
    t = _table([_row(0), _row(1, period_days=-5.0)])
    t.rename_column("period_days", "P_hr")
    t["P_hr"].unit = None
    cat = catalogue_from_table(t, {"start_from_default": True,
                                   "planet": {"period": {"column": "P_hr", "unit": "h"}}})
    assert cat.status[1] == "bad_value"
    assert "column 'P_hr' (orbital period) = -5 h (= -0.208333 d); allowed [0.01, 100000] d" in cat.reason[1]


def test_no_usable_rows_gives_no_system():
    cat = catalogue_from_table(_table([_row(0, host_teff_K=100.0)]))
    assert cat.system is None and cat.good_index.size == 0
    assert cat.summary()["ok"] == 0
    assert len(cat.derived()) == 1


def test_our_column_names_do_not_clobber_the_users():
    t = _table([_row(0), _row(1)])
    t["status"] = ["mine", "mine"]
    cat = catalogue_from_table(t)
    assert list(cat.table["status_input"]) == ["mine", "mine"]
    assert list(cat.status) == ["ok", "ok"]


# ----------------------------------------------------------------------------- physics checks

def test_vectorized_path_equals_per_planet_path(demo):
    """Required check: every usable row, built alone as a System, gives the same TSM,
    T14 and Teq as the whole-catalogue System."""
    v = demo.values
    d = demo.derived()

    def num(col, i):
        if col not in v.colnames:
            return None
        x = float(np.ma.filled(v[col][i], np.nan))
        return None if np.isnan(x) else x

    for i in demo.good_index:
        mass, logg = num("host_mass_sun", i), num("host_logg_cgs", i)
        star = Star(num("host_teff_K", i), num("host_radius_sun", i),
                    mass=mass, logg=None if mass is not None else logg,
                    metallicity=num("host_metallicity_dex", i) or 0.0,
                    magnitudes={b: num(f"host_mag_{b}", i) for b in ("V", "J", "H", "Ks")},
                    distance=num("host_distance_pc", i), ra=num("host_ra_deg", i),
                    dec=num("host_dec_deg", i))
        b = num("impact_parameter", i)
        ecc = num("eccentricity", i)
        w = num("periastron_argument_deg", i)
        planet = Planet(num("planet_radius_earth", i), num("period_days", i),
                        mass=num("planet_mass_earth", i),
                        semi_major_axis=num("semi_major_axis_au", i),
                        impact_parameter=b,
                        inclination=num("inclination_deg", i) if b is None else None,
                        eccentricity=0.0 if ecc is None else ecc,
                        periastron_argument=90.0 if w is None else w,
                        name=str(v["planet_name"][i]))
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", GrazingTransitWarning)  # two demo rows graze on purpose
            one = System(star, planet).derived_arrays()
        assert one["tsm"][0] == pytest.approx(float(d["tsm"][i]), rel=1e-10)
        assert one["t14_s"][0] / 3600 == pytest.approx(d["t14"][i].to_value(u.h), rel=1e-10)
        assert one["equilibrium_temperature_K"][0] == pytest.approx(
            d["equilibrium_temperature"][i].to_value(u.K), rel=1e-10)


def test_tsm_reproduces_kempton_2018_eq1_for_hand_computed_rows():
    """Kempton et al. 2018, PASP 130, 114401, eq. 1:
    TSM = s x Rp^3 Teq / (Mp Rs^2) x 10^(-mJ/5), Rp [R_earth], Mp [M_earth], Rs [R_sun],
    Teq = Teff sqrt(Rs/a) (1/4)^(1/4) (zero albedo, full redistribution), scale factors s
    from their Table 1 (1.26 for 1.5-2.75 R_earth, 1.15 for 4-10 R_earth, used above 10 too).
    R_sun / au = 695700 km / 149597870.7 km = 0.00465047 (IAU 2015 / IAU 2012).

    Row A: Rp 2.0, Mp 5.0, Rs 0.5, Teff 3500 K, a 0.05 au, J 9.0, s = 1.26
      Rs/a = 0.5 x 0.00465047 / 0.05 = 0.0465047; sqrt = 0.215649
      Teq = 3500 x 0.215649 x 0.707107 = 533.71 K
      s Rp^3 Teq = 1.26 x 8 x 533.71 = 5379.7;  Mp Rs^2 = 5 x 0.25 = 1.25
      10^(-9/5) = 0.0158489  ->  TSM = 5379.7 / 1.25 x 0.0158489 = 68.21
    Row B: Rp 11.2, Mp 300, Rs 1.0, Teff 5800 K, a 0.04 au, J 10.0, s = 1.15
      Rs/a = 0.00465047 / 0.04 = 0.116262; sqrt = 0.340972
      Teq = 5800 x 0.340972 x 0.707107 = 1398.40 K
      s Rp^3 Teq = 1.15 x 1404.928 x 1398.40 = 2.25935e6;  Mp Rs^2 = 300
      10^(-10/5) = 0.01  ->  TSM = 2.25935e6 / 300 x 0.01 = 75.31
    """
    rows = [dict(GOOD, planet_name="A b", planet_radius_earth=2.0, planet_mass_earth=5.0,
                 host_radius_sun=0.5, host_teff_K=3500.0, semi_major_axis_au=0.05, host_mag_J=9.0),
            dict(GOOD, planet_name="B b", planet_radius_earth=11.2, planet_mass_earth=300.0,
                 host_radius_sun=1.0, host_mass_sun=1.0, host_teff_K=5800.0,
                 semi_major_axis_au=0.04, host_mag_J=10.0)]
    cat = catalogue_from_table(_table(rows))
    d = cat.derived()
    assert list(cat.status) == ["ok", "ok"]
    assert d["equilibrium_temperature"][0].to_value(u.K) == pytest.approx(533.71, abs=0.01)
    assert d["equilibrium_temperature"][1].to_value(u.K) == pytest.approx(1398.40, abs=0.01)
    assert float(d["tsm"][0]) == pytest.approx(68.21, abs=0.01)
    assert float(d["tsm"][1]) == pytest.approx(75.31, abs=0.01)


def test_catalogue_teq_sets_the_scale_height_temperature_only():
    rows = [_row(0), _row(1, planet_teq_K=800.0)]
    cat = catalogue_from_table(_table(rows))
    d = cat.derived()
    assert list(cat.table["equilibrium_temperature_estimated"]) == [True, False]
    # TSM uses Teq from the star (Kempton et al. 2018); H scales with T (H = kT / mu m_u g)
    assert float(d["tsm"][0]) == pytest.approx(float(d["tsm"][1]), rel=1e-12)
    ratio = d["scale_height"][1] / d["scale_height"][0]
    assert float(ratio) == pytest.approx(800.0 / d["equilibrium_temperature"][0].to_value(u.K),
                                         rel=1e-12)


@settings(max_examples=5, deadline=None)
@given(st.randoms(use_true_random=False))
def test_row_order_does_not_change_any_planet(demo_table, rnd):
    """Property: screening is per row, so permuting the input permutes the output
    (the duplicate-name row is dropped first, since which copy is 'first' depends on order)."""
    base = demo_table[[i for i, e in enumerate(demo_table["planet_name"])
                       if i not in {r["input_index"] for r in demo_table.meta["bad_rows"]
                                    if r["status"] == "duplicate_name"}]]
    perm = list(range(len(base)))
    rnd.shuffle(perm)
    a = catalogue_from_table(base)
    b = catalogue_from_table(base[perm])
    np.testing.assert_array_equal(b.status, a.status[perm])
    np.testing.assert_allclose(np.asarray(b.derived()["tsm"]), np.asarray(a.derived()["tsm"])[perm],
                               rtol=1e-12, equal_nan=True)


def test_kepler_mismatch_is_flagged_per_row():
    # A given semi-major axis 3x Kepler's value for its period is flagged, not rejected
    # (Kepler's third law with astropy constants; 10% tolerance: common practice, no source).
    from astropy.table import Table
    from snrkit.planning.catalog import catalogue_from_table
    t = Table({"planet_name": ["a", "b"], "planet_radius_earth": [2.0, 2.0],
               "period_days": [10.0, 10.0], "semi_major_axis_au": [np.nan, 0.25],
               "impact_parameter": [0.1, 0.1], "host_teff_K": [4500.0, 4500.0],
               "host_radius_sun": [0.7, 0.7], "host_mass_sun": [0.7, 0.7]})
    cat = catalogue_from_table(t)
    assert list(cat.status) == ["ok", "ok"]
    assert list(np.asarray(cat.table["kepler_mismatch"])) == [False, True]


def test_geometry_the_system_model_rejects_is_screened_per_row():
    # Rows that snrkit.bodies.system.System would refuse (periastron inside the star; a planet
    # larger than its star) get a status here, without the slow one-by-one path.
    from astropy.table import Table
    from snrkit.planning.catalog import catalogue_from_table
    t = Table({"planet_name": ["ok", "ecc", "big"], "planet_radius_earth": [2.0, 2.0, 2.0],
               "planet_mass_earth": [5.0, 5.0, 5.0], "period_days": [10.0, 1.0, 10.0],
               "eccentricity": [0.0, 0.9, 0.0], "impact_parameter": [0.1, 0.1, 0.1],
               "host_teff_K": [4500.0, 4500.0, 4500.0], "host_radius_sun": [0.7, 0.7, 0.01],
               "host_mass_sun": [0.7, 0.7, 0.7]})
    cat = catalogue_from_table(t)
    assert list(cat.status) == ["ok", "inside_star", "bad_value"]
    assert "periastron" in cat.reason[1] and "not smaller" in cat.reason[2]
    assert cat.system is not None and len(cat.system) == 1
