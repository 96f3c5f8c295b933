"""Hypothesis property tests of the physical laws in the foundation layer."""

import numpy as np
import pytest
import astropy.units as u
from hypothesis import given, strategies as st, assume

from snrkit.bodies import metrics as met, geometry as geo
from snrkit import constants as C
from snrkit.bodies.star import Star
from snrkit.bodies.planet import Planet
from snrkit.bodies.system import System

pos = st.floats(min_value=1e-2, max_value=1e4, allow_nan=False)
temps = st.floats(min_value=50.0, max_value=4000.0)
mus = st.floats(min_value=1.5, max_value=80.0)
gs = st.floats(min_value=0.5, max_value=300.0)
factor = st.floats(min_value=1.01, max_value=10.0)


@given(temps, mus, gs, factor)
def test_scale_height_monotonic(t, mu, g, f):
    # H = kT/(mu m_u g): grows with T, falls with mu and with g, linearly.
    h = met.scale_height(t, mu, g)
    assert met.scale_height(t * f, mu, g) > h
    assert met.scale_height(t, mu * f, g) < h
    assert met.scale_height(t, mu, g * f) < h
    np.testing.assert_allclose(met.scale_height(t * f, mu * f, g), h, rtol=1e-12)


@given(st.floats(min_value=0.3, max_value=20.0), st.floats(min_value=0.1, max_value=2.0),
       st.floats(min_value=0.1, max_value=10.0))
def test_depth_scales_as_radius_ratio_squared(rp_earth, rs_sun, scale):
    rp, rs = rp_earth * C.R_EARTH, rs_sun * C.R_SUN
    d = geo.transit_depth(rp, rs)
    np.testing.assert_allclose(geo.transit_depth(rp * scale, rs * scale), d, rtol=1e-12)
    np.testing.assert_allclose(geo.transit_depth(rp * scale, rs), d * scale ** 2, rtol=1e-12)


@given(st.floats(min_value=1.0, max_value=60.0), st.floats(min_value=0.3, max_value=15.0),
       st.floats(min_value=0.0, max_value=0.95), st.floats(min_value=0.001, max_value=0.04))
def test_t14_falls_as_impact_parameter_rises(period_d, aor, b, db):
    k = 0.05
    assume(aor > 1.5)
    inc1 = geo.inclination_from_impact_parameter(aor, b, 0.0, np.pi / 2)
    inc2 = geo.inclination_from_impact_parameter(aor, b + db, 0.0, np.pi / 2)
    t1 = geo.transit_duration(period_d * C.DAY, aor, k, b, inc1, 0.0, np.pi / 2)
    t2 = geo.transit_duration(period_d * C.DAY, aor, k, b + db, inc2, 0.0, np.pi / 2)
    assert t2 < t1
    # T23 <= T14 always
    assert geo.transit_duration(period_d * C.DAY, aor, k, b, inc1, 0.0, np.pi / 2, inner=True) <= t1


@given(st.floats(min_value=0.2, max_value=1000.0), st.floats(min_value=0.08, max_value=3.0))
def test_kepler_scaling(period_d, mass_sun):
    # a^3 / P^2 = G M / (4 pi^2): a scales as P^(2/3) and M^(1/3).
    a = geo.semi_major_axis_from_period(period_d * C.DAY, mass_sun * C.M_SUN)
    a8 = geo.semi_major_axis_from_period(8 * period_d * C.DAY, mass_sun * C.M_SUN)
    np.testing.assert_allclose(a8 / a, 4.0, rtol=1e-12)
    np.testing.assert_allclose(geo.period_from_semi_major_axis(a, mass_sun * C.M_SUN),
                               period_d * C.DAY, rtol=1e-12)


@given(st.floats(min_value=2600, max_value=7200), st.floats(min_value=0.005, max_value=5.0),
       factor)
def test_teq_and_insolation_with_distance(teff, a_au, f):
    # Teq ~ a^-1/2 and S ~ a^-2.
    rs = 0.5 * C.R_SUN
    t1 = met.equilibrium_temperature(teff, rs, a_au * C.AU)
    t2 = met.equilibrium_temperature(teff, rs, f * a_au * C.AU)
    np.testing.assert_allclose(t1 / t2, np.sqrt(f), rtol=1e-12)
    s1 = met.insolation(teff, rs, a_au * C.AU)
    s2 = met.insolation(teff, rs, f * a_au * C.AU)
    np.testing.assert_allclose(s1 / s2, f ** 2, rtol=1e-12)


@given(st.lists(st.tuples(st.floats(min_value=0.5, max_value=12.0),
                          st.floats(min_value=0.5, max_value=100.0),
                          st.floats(min_value=0.0, max_value=0.8),
                          st.floats(min_value=0.0, max_value=0.5)), min_size=1, max_size=6))
@pytest.mark.filterwarnings("ignore::snrkit.errors.GrazingTransitWarning")  # grazing is fine here
def test_arrays_and_scalars_agree(rows):
    star = Star(teff=3800 * u.K, radius=0.5, mass=0.5, magnitudes={"J": 9.0, "Ks": 8.2})
    rad, per, b, e = (np.array(c) for c in zip(*rows))
    whole = System(star, Planet(radius=rad, period=per, impact_parameter=b, eccentricity=e)
                   ).derived_arrays()
    for i in range(len(rows)):
        one = System(star, Planet(radius=rad[i], period=per[i], impact_parameter=b[i],
                                  eccentricity=e[i])).derived_arrays()
        for key in ("t14_s", "t23_s", "scale_height_m", "tsm", "esm", "transit_depth",
                    "equilibrium_temperature_K", "mass_kg"):
            np.testing.assert_allclose(whole[key][i], one[key][0], rtol=1e-12)
        assert whole["hz_position"][i] == one["hz_position"][0]


@given(st.floats(min_value=0.3, max_value=14.2), factor)
def test_mass_radius_monotonic(r, f):
    # Chen & Kipping 2017: mass grows with radius below 14.26 R_earth.
    assume(r * f < 14.25)
    m1 = met.mass_from_radius(np.array([r * C.R_EARTH]))[0][0]
    m2 = met.mass_from_radius(np.array([r * f * C.R_EARTH]))[0][0]
    assert m2 > m1
