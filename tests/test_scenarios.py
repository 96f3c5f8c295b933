"""Atmosphere scenario presets and the scenario loader."""

import math
import tomllib

import numpy as np
import pytest

from snrkit.atmosphere.scenarios import (load_scenario, list_scenarios, preset_names,
                                         Scenario)
from snrkit.errors import InputError, UnknownKeyError
from snrkit.io.tables import data_path

REQUIRED = {"h2-clear-solar", "h2-cloudy-solar", "h2-metal-rich", "steam", "n2-o2-temperate",
            "n2-co2-ch4-anoxic", "co2-thick", "flat"}


def test_presets_present_and_described():
    names = set(preset_names())
    assert REQUIRED <= names
    listed = list_scenarios()
    assert [d["name"] for d in listed] == sorted(names)
    assert all(d["description"] for d in listed)


@pytest.mark.parametrize("name", sorted(REQUIRED) + ["h2-warm-solar"])
def test_every_preset_loads_with_provenance(name):
    sc = load_scenario(name)
    assert sc.name == name
    assert math.isclose(sum(sc.mixing_ratios.values()), 1.0, rel_tol=1e-9)
    assert sc.reference_pressure_Pa > 0
    doc = tomllib.loads(data_path("scenarios", f"{name}.toml").read_text())
    for key in ("source", "method", "units", "date", "script"):
        assert doc["provenance"][key]


def test_solar_hydrogen_preset_against_asplund_2009():
    # Asplund et al. 2009 (ARA&A 47, 481, Table 1; value from memory): log eps(He) = 10.93,
    # C 8.43, O 8.69.  With all H in H2: He/H2 = 2 * 10**(10.93-12) = 0.170;
    # CO/H2 = 2 * 10**(8.43-12); H2O/H2 = 2 * (10**(8.69-12) - 10**(8.43-12)) (hot rules).
    sc = load_scenario("h2-clear-solar")
    x = sc.mixing_ratios
    assert x["He"] / x["H2"] == pytest.approx(2 * 10 ** (10.93 - 12), rel=5e-3)
    assert x["CO"] / x["H2"] == pytest.approx(2 * 10 ** (8.43 - 12), rel=5e-3)
    assert x["H2O"] / x["H2"] == pytest.approx(2 * (10 ** (8.69 - 12) - 10 ** (8.43 - 12)),
                                               rel=5e-3)
    # mean molecular weight of a solar H2/He gas is about 2.3 g/mol (e.g. Kempton et al. 2018)
    assert sc.mean_molecular_weight == pytest.approx(2.33, abs=0.02)
    # metal-rich: 100x solar metals raise mu well above solar
    assert load_scenario("h2-metal-rich").mean_molecular_weight > 3.5
    assert load_scenario("h2-cloudy-solar").cloud_top_pressure_Pa == pytest.approx(100.0)


def test_terrestrial_presets_mean_molecular_weight():
    # U.S. Standard Atmosphere 1976: dry air 28.9644 g/mol; 0.3 % water lowers it slightly
    mu = load_scenario("n2-o2-temperate").mean_molecular_weight
    assert 28.85 < mu < 28.97
    assert load_scenario("co2-thick").mean_molecular_weight == pytest.approx(
        0.965 * 44.009 + 0.035 * 28.014, abs=0.05)
    assert load_scenario("steam").mean_molecular_weight == pytest.approx(
        0.99 * 18.015 + 0.01 * 44.009, abs=1e-3)
    assert load_scenario("flat").featureless
    assert load_scenario("flat").feature_scale_heights == 0.0


def test_user_table_and_base_override(tmp_path):
    sc = load_scenario({"mixing_ratios": {"CO2": 0.95}, "fill_gas": "N2",
                        "reference_pressure": "2 bar", "cloud_top_pressure": "100 Pa",
                        "temperature": 400})
    assert sc.name == "custom"
    assert sc.reference_pressure_Pa == pytest.approx(2e5)
    assert sc.cloud_top_pressure_Pa == pytest.approx(100.0)
    np.testing.assert_allclose(sc.temperature([100.0, 1000.0]), [400.0, 400.0])
    base = load_scenario({"scenario": "h2-clear-solar", "cloud_top_pressure": 1e-4,
                          "temperature_factor": 0.8})
    assert base.name == "h2-clear-solar (modified)"
    assert base.mixing_ratios == load_scenario("h2-clear-solar").mixing_ratios
    np.testing.assert_allclose(base.temperature(1000.0), [800.0])
    # a modified preset no longer claims the preset's band amplitude
    assert load_scenario("h2-clear-solar").feature_scale_heights > 1
    assert base.feature_scale_heights is None
    fixed = load_scenario({"scenario": "h2-clear-solar", "temperature": "650 K"})
    np.testing.assert_allclose(fixed.temperature([100.0, 2000.0]), [650.0, 650.0])
    # a separate TOML file, with a relative base of its own
    (tmp_path / "mine.toml").write_text(
        'name = "mine"\ndescription = "test"\nscenario = "h2-warm-solar"\n'
        'temperature_profile = "grey-two-stream"\ninternal_temperature = 150\n')
    (tmp_path / "child.toml").write_text('scenario = "mine.toml"\nhaze_enhancement = 10\n')
    sc = load_scenario(tmp_path / "child.toml")
    assert sc.temperature_profile == "grey-two-stream"
    assert sc.internal_temperature_K == 150.0
    assert sc.haze_enhancement == 10.0
    assert load_scenario(sc) is sc
    assert isinstance(sc, Scenario)


def test_system_file_atmosphere_table_is_a_scenario():
    # the [planet.atmosphere] table of a system file is read by load_scenario, so an
    # unknown key there is reported with the scenario keys' closest match
    from snrkit.io.systemfile import read_system_text
    text = ('[star]\neffective_temperature = 3300\nradius = 0.3\nmass = 0.3\n'
            '[[planet]]\nname = "x"\nradius = 1.5\nperiod = 5\n'
            '[planet.atmosphere]\nscenario = "steam"\ncloud_top_presure = 0.01\n')
    with pytest.raises(UnknownKeyError, match="cloud_top_pressure"):
        read_system_text(text)
    ok = read_system_text(text.replace("presure", "pressure"))
    assert ok.mean_molecular_weight[0] == pytest.approx(load_scenario("steam").mean_molecular_weight)
    demo = tomllib.loads(data_path("demo", "cedar.toml").read_text())
    for planet in demo["planet"]:
        if "atmosphere" in planet:
            sc = load_scenario(planet["atmosphere"])
            assert sc.mean_molecular_weight > 20


@pytest.mark.parametrize("spec,exc,match", [
    ({"mixing_ratio": {"H2O": 1.0}}, UnknownKeyError, "did you mean 'mixing_ratios'"),
    ({"mixing_ratios": {"H2Q": 0.1}, "fill_gas": "N2"}, InputError, "H2Q.*did you mean"),
    ({"mixing_ratios": {"H2O": 1.5}}, InputError, r"\[0, 1\]"),
    ({"mixing_ratios": {"H2O": 0.7, "CO2": 0.6}}, InputError, "at most 1"),
    ({"mixing_ratios": {"H2O": 0.7}}, InputError, "fill gas"),
    ({"mixing_ratios": {"H2O": 1.0}, "reference_pressure": 0}, InputError, "reference_pressure"),
    ({"mixing_ratios": {"H2O": 1.0}, "cloud_top_pressure": "-1 bar"}, InputError, "cloud_top"),
    ({"mixing_ratios": {"H2O": 1.0}, "cloud_top_pressure": 2, "surface_pressure": 1},
     InputError, "below the surface"),
    ({"mixing_ratios": {"H2O": 1.0}, "reference_pressure": "1 m"}, InputError, "bar"),
    ({"mixing_ratios": {"H2O": 1.0}, "temperature_profile": "isotherm"}, InputError,
     "did you mean 'isothermal'"),
    ({"mixing_ratios": {"H2O": 1.0}, "temperature": 300, "temperature_factor": 1.0},
     InputError, "not both"),
    ({"mixing_ratios": {"H2O": 1.0}, "featureless": "yes"}, InputError, "true or false"),
    ({"scenario": "h2-clear-solr"}, InputError, "did you mean 'h2-clear-solar'"),
    ({}, InputError, "mixing_ratios"),
    ("no-such-preset", InputError, "preset name"),
    (42, InputError, "preset name"),
])
def test_bad_scenarios(spec, exc, match):
    with pytest.raises(exc, match=match):
        load_scenario(spec)


def test_rule_needs_equilibrium_temperature():
    with pytest.raises(InputError, match="equilibrium"):
        load_scenario("h2-clear-solar").temperature(np.nan)


def test_bad_toml_file(tmp_path):
    p = tmp_path / "broken.toml"
    p.write_text("mixing_ratios = {")
    with pytest.raises(InputError, match="valid TOML"):
        load_scenario(p)


def test_preset_files_match_their_script():
    # data_tables/scripts/make_scenario_presets.py regenerates the shipped files
    import importlib.util
    spec = importlib.util.spec_from_file_location(
        "make_scenario_presets", data_path("scripts", "make_scenario_presets.py"))
    if spec is None:   # installed wheel without the scripts folder
        pytest.skip("scripts not shipped")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    for p in mod.presets():
        sc = load_scenario(p["name"])
        for k, v in p["mixing_ratios"].items():
            assert sc.mixing_ratios[k] == pytest.approx(v, rel=1e-3)
        assert sc.fill_gas == p["fill_gas"]
