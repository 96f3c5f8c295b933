"""System model: validation, bad input, flags, immutability, vectorization."""

import warnings

import numpy as np
import pytest
import astropy.units as u

from snrkit.errors import (InputError, NoTransitError, GrazingTransitWarning,
                           UnitMismatchError)
from snrkit.bodies.star import Star
from snrkit.bodies.planet import Planet
from snrkit.bodies.system import System
from snrkit import constants as C


def sun_like(**kw):
    args = dict(teff=5772, radius=1.0, mass=1.0, magnitudes={"J": 8.0, "Ks": 7.5})
    args.update(kw)
    return Star(**args)


@pytest.mark.parametrize("field,kw", [
    ("planet.radius", {"radius": 0.0}),
    ("planet.radius", {"radius": -1.0}),
    ("planet.mass", {"mass": 0.0}),
    ("planet.mass", {"mass": -3.0}),
    ("planet.period", {"period": 0.0}),
    ("planet.period", {"period": -2.0}),
])
def test_planet_nonpositive_values(field, kw):
    base = dict(radius=1.0, period=10.0, mass=1.0)
    base.update(kw)
    with pytest.raises(InputError) as err:
        Planet(**base)
    assert err.value.field == field
    assert "got" in str(err.value) and "allowed" in str(err.value)


@pytest.mark.parametrize("kw,field,allowed", [
    ({"radius": 0.0}, "star.radius", "[0.005, 100]"),
    ({"mass": -1.0}, "star.mass", "[0.005, 300]"),
    ({"mass": 1e6}, "star.mass", "[0.005, 300]"),
    ({"teff": 0.0}, "star.effective_temperature", "[2000, 15000]"),
    ({"teff": -100.0}, "star.effective_temperature", "[2000, 15000]"),
    ({"teff": 1500.0}, "star.effective_temperature", "[2000, 15000]"),
    ({"teff": 50000.0}, "star.effective_temperature", "[2000, 15000]"),
    ({"radius": 100.0, "mass": 0.01}, "star.mass", "log g in [0, 9]"),  # a unit slip, not a star
])
def test_star_bad_values(kw, field, allowed):
    with pytest.raises(InputError) as err:
        sun_like(**kw)
    assert err.value.field == field
    assert allowed in err.value.allowed


def test_star_mass_from_logg_round_trip():
    s = Star(teff=5772, radius=1.0, logg=4.438)
    # log g of the Sun is 4.438 (cgs) with the IAU 2015 nominal GM and R.
    assert s.mass.to_value(u.M_sun)[0] == pytest.approx(1.0, rel=2e-3)
    assert s.mass_from_logg
    with pytest.raises(InputError):
        Star(teff=5772, radius=1.0)
    with pytest.raises(InputError):
        Star(teff=5772, radius=1.0, mass=1.0, logg=4.4)


def test_unknown_band_suggests():
    with pytest.raises(InputError) as err:
        sun_like(magnitudes={"K": 7.0})
    assert "Ks" in str(err.value)


def test_wrong_unit_dimension():
    with pytest.raises(UnitMismatchError) as err:
        Planet(radius=1.2 * u.kg, period=3.0)
    assert err.value.field == "planet.radius"
    with pytest.raises(UnitMismatchError):
        Planet(radius="1.2 kg", period=3.0)
    with pytest.raises(UnitMismatchError):
        Planet(radius="1.2 furlongs_per_week", period=3.0)


def test_eccentricity_range():
    for e in (-0.1, 1.0, 1.5):
        with pytest.raises(InputError) as err:
            Planet(radius=1.0, period=3.0, eccentricity=e)
        assert err.value.field == "planet.eccentricity"
        assert "[0, 1)" in err.value.allowed
    Planet(radius=1.0, period=3.0, eccentricity=0.99)


def test_no_transit_is_an_error():
    with pytest.raises(NoTransitError) as err:
        System(sun_like(), Planet(radius=1.0, period=10.0, mass=1.0, impact_parameter=1.2))
    assert "1 + Rp/Rs" in str(err.value)
    with pytest.raises(NoTransitError):
        System(sun_like(), Planet(radius=1.0, period=10.0, mass=1.0, inclination=80 * u.deg))


def test_grazing_warns_and_t23_zero():
    k = C.R_EARTH * 10 / C.R_SUN
    with pytest.warns(GrazingTransitWarning):
        s = System(sun_like(), Planet(radius=10.0, period=10.0, mass=100.0,
                                      impact_parameter=1.0, name="g"))
    d = s.derived_arrays()
    assert d["t23_s"][0] == 0.0
    assert d["t14_s"][0] > 0.0
    assert s.grazing[0]
    assert 1 - k < 1.0 < 1 + k


def test_inclination_above_90_degrees():
    # b is a sky-projected distance: i and 180 deg - i give the same b >= 0
    # (Winn 2010, eq. 7 with |cos i|).
    s1 = System(sun_like(), Planet(radius=2.0, period=5.0, mass=5.0, inclination=89.5))
    s2 = System(sun_like(), Planet(radius=2.0, period=5.0, mass=5.0, inclination=90.5))
    assert s2.impact_parameter[0] > 0
    assert s2.impact_parameter[0] == pytest.approx(s1.impact_parameter[0], rel=1e-12)
    assert s2.derived_arrays()["t14_s"][0] == pytest.approx(s1.derived_arrays()["t14_s"][0])
    # far from edge-on on the other side: no transit, not a silent T14 = 0
    with pytest.raises(NoTransitError):
        System(sun_like(), Planet(radius=2.0, period=5.0, mass=5.0, inclination=170.0))


def test_planet_larger_than_its_star():
    # (Rp/Rs)^2 > 1 is no transit depth and there is no T23; a clear error
    tiny = Star(teff=4700, radius=0.0131, mass=0.58)
    with pytest.raises(InputError) as err:
        System(tiny, Planet(radius=10.0, mass=300.0, period=1.4, impact_parameter=0.5))
    assert err.value.field.startswith("planet.radius")
    from snrkit.bodies import geometry as geo
    assert geo.transit_duration(86400.0, 300.0, 1.5, 0.1, np.pi / 2, 0.0, np.pi / 2,
                                inner=True) == 0.0


def test_periastron_inside_the_star():
    # a/Rs ~ 4.9 and e = 0.8: the periastron a (1 - e) ~ 0.98 R_star
    with pytest.raises(InputError) as err:
        System(sun_like(radius=0.8, mass=0.8, teff=5000),
               Planet(radius=2.0, period=1.0, mass=5.0, eccentricity=0.8, impact_parameter=0.9))
    assert err.value.field.startswith("planet.eccentricity")
    assert "periastron" in str(err.value)


def test_semi_major_axis_inconsistent_with_kepler_warns():
    from snrkit.errors import SnrkitWarning
    far = Planet(radius=2.0, period=10.0, mass=5.0, semi_major_axis=5.0, name="far")
    with pytest.warns(SnrkitWarning, match="Kepler"):
        s = System(sun_like(), far, warn_kepler=True)
    assert s.kepler_mismatch[0]
    assert System(sun_like(), far).kepler_mismatch[0]      # flagged, not warned, by default
    # a from Kepler's third law itself (Earth-Sun, a = 1.0000 au for 365.2564 d): silent
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        s = System(sun_like(), Planet(radius=1.0, period=365.2564, mass=1.0, semi_major_axis=1.0),
                   warn_kepler=True)
    assert not s.kepler_mismatch[0]


def test_impact_parameter_and_inclination_round_trip():
    s1 = System(sun_like(), Planet(radius=2.0, period=5.0, mass=5.0, impact_parameter=0.5))
    inc = s1.inclination_rad[0] * u.rad
    s2 = System(sun_like(), Planet(radius=2.0, period=5.0, mass=5.0, inclination=inc))
    assert s2.impact_parameter[0] == pytest.approx(0.5, rel=1e-10)
    with pytest.raises(InputError):
        Planet(radius=2.0, period=5.0, impact_parameter=0.5, inclination=89.0)


def test_assumed_impact_parameter_flag():
    p = Planet(radius=2.0, period=5.0, mass=5.0)
    assert p.impact_parameter_assumed[0]


def test_mass_estimated_flag_and_scatter():
    p = Planet(radius=[1.0, 2.0, 3.0], period=5.0, mass=[np.nan, 6.0, np.nan])
    np.testing.assert_array_equal(p.mass_estimated, [True, False, True])
    assert p.mass[0].to_value(u.M_earth) == pytest.approx(0.9718)
    assert p.mass[1].to_value(u.M_earth) == pytest.approx(6.0)
    assert np.all(p.mass_uncertainty[[0, 2]].value > 0)
    assert np.isnan(p.mass_uncertainty[1].value)


def test_mass_required_for_giant_radius():
    with pytest.raises(InputError) as err:
        Planet(radius=15.0, period=3.0)
    assert err.value.field == "planet.mass"
    Planet(radius=15.0, period=3.0, mass=300.0)


def test_orbit_inside_star():
    with pytest.raises(InputError):
        System(sun_like(), Planet(radius=1.0, period=3.0, mass=1.0, semi_major_axis=0.004))


def test_immutable():
    p = Planet(radius=1.0, period=3.0, mass=1.0)
    with pytest.raises(AttributeError):
        p.radius = 2.0
    with pytest.raises(ValueError):
        p.radius_m[0] = 5.0


def test_arrays_of_mismatched_length():
    with pytest.raises(InputError):
        Planet(radius=[1.0, 2.0], period=[3.0, 4.0, 5.0])


def test_quantity_and_float_inputs_agree():
    a = Planet(radius=1.5, period=4.0, mass=3.0)
    b = Planet(radius=1.5 * u.R_earth, period=96.0 * u.h, mass="3 earthMass")
    np.testing.assert_allclose(a.radius_m, b.radius_m)
    np.testing.assert_allclose(a.period_s, b.period_s)
    np.testing.assert_allclose(a.mass_kg, b.mass_kg)


def test_select_and_take():
    s = System(sun_like(), Planet(radius=[1.0, 2.0], period=[3.0, 9.0], mass=[1.0, np.nan],
                                  name=["x", "y"]))
    y = s.select("y")
    assert list(y.names) == ["y"]
    assert y.planet.mass_estimated[0]
    assert y.derived_arrays()["t14_s"][0] == pytest.approx(s.derived_arrays()["t14_s"][1])
    with pytest.raises(InputError) as err:
        s.select("z")
    assert "x, y" in err.value.allowed


def test_derived_table_columns_and_units():
    s = System(sun_like(), Planet(radius=1.0, period=365.25, mass=1.0, impact_parameter=0.0))
    t = s.derived()
    assert t["t14"].unit == u.h
    assert t["scale_height"].unit == u.km
    assert t["hz_position"][0] == "conservative"
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        t["transit_depth"][0]
