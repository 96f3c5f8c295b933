"""System files: parsing, units, unknown keys, mixing ratios, per-planet selection."""

import numpy as np
import pytest
import astropy.units as u

from snrkit.errors import InputError, UnknownKeyError, UnitMismatchError
from snrkit.io.systemfile import read_system_text, load_system
from snrkit.io.tables import data_path

STAR = """
[star]
name = "Test star"
effective_temperature = 3400
radius = "0.35 solRad"
mass = 0.33
[star.magnitudes]
J = 9.0
Ks = 8.2
"""


def planet_block(extra="", name="T b"):
    return f"""
[[planet]]
name = "{name}"
radius = "1.5 earthRad"
period = "6 d"
impact_parameter = 0.2
{extra}
"""


def test_units_and_defaults():
    s = read_system_text(STAR + planet_block("mass = \"2.0 earthMass\""))
    assert s.star.radius.to_value(u.R_sun)[0] == pytest.approx(0.35)
    assert s.planet.period.to_value(u.day)[0] == pytest.approx(6.0)
    assert s.planet.mass.to_value(u.M_earth)[0] == pytest.approx(2.0)
    s2 = read_system_text(STAR + planet_block("mass = 2.0", name="x").replace('"6 d"', '"144 h"'))
    assert s2.planet.period_s[0] == pytest.approx(s.planet.period_s[0])


def test_unit_of_wrong_dimension():
    text = STAR + planet_block().replace('"1.5 earthRad"', '"1.2 kg"')
    with pytest.raises(UnitMismatchError) as err:
        read_system_text(text)
    assert "planet.radius" in err.value.field and "T b" in err.value.field
    assert "kg" in str(err.value)


def test_unknown_unit():
    text = STAR + planet_block().replace('"6 d"', '"6 fortnights_ish"')
    with pytest.raises(UnitMismatchError):
        read_system_text(text)


def test_unknown_key_suggests_closest():
    text = STAR + planet_block("radios = 2.0")
    with pytest.raises(UnknownKeyError) as err:
        read_system_text(text)
    assert "radios" in err.value.field
    assert "did you mean 'radius'" in str(err.value)
    with pytest.raises(UnknownKeyError) as err:
        read_system_text(STAR.replace("effective_temperature", "efective_temperature")
                         + planet_block())
    assert "effective_temperature" in str(err.value)


def test_mixing_ratios_must_sum_correctly():
    bad = planet_block("[planet.atmosphere]\nmixing_ratios = { N2 = 0.8, O2 = 0.3 }")
    with pytest.raises(InputError) as err:
        read_system_text(STAR + bad)
    assert "mixing_ratios" in err.value.field
    short = planet_block("[planet.atmosphere]\nmixing_ratios = { N2 = 0.5, O2 = 0.2 }")
    with pytest.raises(InputError):
        read_system_text(STAR + short)
    ok = planet_block("[planet.atmosphere]\nmixing_ratios = { O2 = 0.2 }\nfill_gas = \"N2\"")
    s = read_system_text(STAR + ok)
    # molar masses of O2 and N2 from the IUPAC 2021 standard atomic weights
    # (Prohaska et al. 2022, Pure Appl. Chem. 94, 573): 31.998 and 28.014 g/mol
    assert s.mean_molecular_weight[0] == pytest.approx(0.2 * 31.998 + 0.8 * 28.014)


def test_unknown_species():
    bad = planet_block("[planet.atmosphere]\nmixing_ratios = { H2O = 0.1, XeF2 = 0.1 }\nfill_gas = \"N2\"")
    with pytest.raises(InputError) as err:
        read_system_text(STAR + bad)
    assert "XeF2" in str(err.value)


def test_missing_required_keys():
    with pytest.raises(InputError):
        read_system_text(STAR)
    with pytest.raises(InputError):
        read_system_text(planet_block())
    with pytest.raises(InputError):
        read_system_text(STAR + planet_block().replace('radius = "1.5 earthRad"', ""))


def test_duplicate_planet_names():
    with pytest.raises(InputError):
        read_system_text(STAR + planet_block() + planet_block())


def test_invalid_toml():
    with pytest.raises(InputError):
        read_system_text("[star\nradius = 1")


def test_several_planets_and_selection(tmp_path):
    text = STAR + planet_block(name="T b") + planet_block(name="T c").replace('"6 d"', '"12 d"')
    f = tmp_path / "sys.toml"
    f.write_text(text)
    s = load_system(f)
    assert list(s.names) == ["T b", "T c"]
    c = load_system(f, planet="T c")
    assert list(c.names) == ["T c"]
    assert c.planet.period.to_value(u.day)[0] == pytest.approx(12.0)
    with pytest.raises(InputError):
        load_system(f, planet="T d")
    with pytest.raises(InputError):
        load_system(tmp_path / "missing.toml")


def test_inclination_and_impact_parameter_mixed_across_planets():
    text = STAR + planet_block(name="a") + planet_block(name="b").replace(
        "impact_parameter = 0.2", "inclination = 89.5")
    s = read_system_text(text)
    assert s.impact_parameter[0] == pytest.approx(0.2)
    assert np.degrees(s.inclination_rad[1]) == pytest.approx(89.5)


def test_demo_files_load():
    files = sorted(data_path("demo").glob("*.toml"))
    assert len(files) >= 3
    for f in files:
        s = load_system(f)
        d = s.derived_arrays()
        assert np.all(np.isfinite(d["t14_s"])) and np.all(d["t14_s"] > 0)


def test_one_value_per_key():
    # a system file describes one star and one value per planet key: a list is
    # an error, not a hidden second planet with the same name
    with pytest.raises(InputError) as err:
        read_system_text(STAR + planet_block().replace('"1.5 earthRad"', "[1.5, 2.0]"))
    assert "planet.radius" in err.value.field and "one value" in err.value.allowed
    with pytest.raises(InputError) as err:
        read_system_text(STAR.replace("J = 9.0", "J = [9.0, 8.0]") + planet_block())
    assert err.value.field == "star.magnitudes.J"
    with pytest.raises(InputError) as err:
        read_system_text(STAR.replace("mass = 0.33", "mass = [0.33, 0.4]") + planet_block())
    assert err.value.field == "star.mass"


def test_number_written_as_text_takes_the_default_unit():
    s = read_system_text(STAR + planet_block().replace('"1.5 earthRad"', '"1.5"'))
    assert s.planet.radius.to_value(u.R_earth)[0] == pytest.approx(1.5)


def test_file_that_is_not_utf8(tmp_path):
    f = tmp_path / "latin.toml"
    f.write_bytes(b'[star]\nname = "\xff\xfe"\n')
    with pytest.raises(InputError) as err:
        load_system(f)
    assert "UTF-8" in err.value.allowed


def test_planet_option_warns_only_about_that_planet(tmp_path, recwarn):
    from snrkit.errors import GrazingTransitWarning
    # one-letter names, which also occur inside the warning texts
    graze = planet_block(name="g").replace("impact_parameter = 0.2", "impact_parameter = 1.0")
    f = tmp_path / "sys.toml"
    f.write_text(STAR + planet_block(name="b") + graze)
    b = load_system(f, planet="b")
    assert list(b.names) == ["b"]
    assert not [w for w in recwarn if issubclass(w.category, GrazingTransitWarning)]
    with pytest.warns(GrazingTransitWarning, match="for g"):
        load_system(f, planet="g")
    # an error in a planet that is not chosen is still an error
    with pytest.raises(InputError):
        f.write_text(STAR + planet_block(name="b") + planet_block(name="x", extra="albedo = 2"))
        load_system(f, planet="b")


def test_semi_major_axis_inconsistent_with_period_warns():
    from snrkit.errors import SnrkitWarning
    # Kepler's third law for 0.33 M_sun and 6 d gives 0.0447 au; 0.5 au is a slip
    with pytest.warns(SnrkitWarning, match="Kepler"):
        s = read_system_text(STAR + planet_block("semi_major_axis = 0.5"))
    assert s.kepler_mismatch[0]
