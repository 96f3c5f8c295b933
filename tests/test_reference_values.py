"""Checks of the foundation physics against published standards and reference libraries.

Each test names its source beside the check.  "value from memory" marks a
published number the authors could not re-read in its source.
"""

import numpy as np
import pytest
import astropy.units as u
import astropy.constants as ac
from astropy.modeling.models import BlackBody

from snrkit import constants as C
from snrkit.bodies import geometry as geo
from snrkit.bodies import metrics as met
from snrkit.atmosphere.composition import mean_molecular_weight
from snrkit.bodies.star import Star
from snrkit.bodies.planet import Planet
from snrkit.bodies.system import System


def test_iau_2015_nominal_values():
    # Prša et al. 2016, AJ 152, 41 (IAU 2015 Resolution B3), Table 1 nominal values.
    assert C.R_SUN == 6.957e8
    assert C.R_EARTH == 6.3781e6          # equatorial
    assert C.R_JUP == 7.1492e7            # equatorial
    assert C.GM_SUN == pytest.approx(1.3271244e20, rel=1e-12)
    assert C.GM_EARTH == pytest.approx(3.986004e14, rel=1e-12)
    assert C.L_SUN == 3.828e26
    # IAU 2012 Resolution B2: the astronomical unit is exactly 149 597 870 700 m.
    assert C.AU == 149_597_870_700.0


def test_nominal_luminosity_and_solar_constant():
    # Prša et al. 2016, Table 1: nominal Teff = 5772 K and S = 1361 W m-2 are
    # consistent with L = 3.828e26 W and R = 6.957e8 m to the 4 digits quoted.
    lum = met.luminosity(5772.0, C.R_SUN)
    assert lum == pytest.approx(3.828e26, rel=1e-3)
    assert C.L_SUN / (4 * np.pi * C.AU ** 2) == pytest.approx(1361.0, rel=1e-3)


def test_us_standard_atmosphere_scale_height():
    # U.S. Standard Atmosphere 1976 (NOAA/NASA/USAF), sea level: T0 = 288.15 K,
    # M0 = 28.9644 g/mol, g0 = 9.80665 m s-2; pressure scale height 8434.5 m
    # (Table 1 of Part 4, value from memory; equals R* T0/(M0 g0) with R* = 8.31432).
    h = met.scale_height(288.15, 28.9644, 9.80665)
    assert h == pytest.approx(8434.5, rel=2e-4)
    assert h == pytest.approx(8.31432e3 * 288.15 / (28.9644 * 9.80665), rel=1e-4)


def test_us_standard_atmosphere_mean_molecular_weight():
    # U.S. Standard Atmosphere 1976, Table 3 (sea-level composition by volume):
    # N2 0.78084, O2 0.209476, Ar 0.00934, CO2 0.000314 (minor gases folded into
    # N2 here); M0 = 28.9644 g/mol.
    mu = mean_molecular_weight({"O2": 0.209476, "Ar": 0.00934, "CO2": 0.000314},
                               fill_gas="N2")
    assert mu == pytest.approx(28.9644, rel=1e-4)


def _earth_sun(**planet_kw):
    star = Star(teff=5772 * u.K, radius=1 * u.R_sun, mass=1 * u.M_sun)
    kw = dict(radius=1 * u.R_earth, mass=1 * u.M_earth, period=365.25 * u.day,
              impact_parameter=0.0, name="Earth analogue")
    kw.update(planet_kw)
    return System(star, Planet(**kw))


def test_earth_sun_transit_depth_and_duration():
    # Winn 2010 ("Transits and Occultations", in Exoplanets, ed. Seager), eq. 14
    # with the IAU 2015 radii: depth ~84 ppm and central T14 ~13.1 h for the
    # Earth transiting the Sun (also ../shared/DESIGN.md validation list).
    d = _earth_sun().derived_arrays()
    assert d["transit_depth"][0] * 1e6 == pytest.approx(84.05, abs=0.05)
    assert d["t14_s"][0] / 3600 == pytest.approx(13.1, abs=0.05)
    # The same formula computed independently with astropy Quantities.
    a = d["semi_major_axis_m"][0] * u.m
    k = ac.R_earth / ac.R_sun
    t14 = (365.25 * u.day / np.pi) * np.arcsin((ac.R_sun / a * (1 + k)).decompose()).to_value(u.rad)
    assert d["t14_s"][0] == pytest.approx(t14.to_value(u.s), rel=1e-10)


def test_kepler_third_law_gaussian_year():
    # The Gaussian gravitational constant k = 0.01720209895 (IAU 1976) defines a
    # massless body's period at 1 au around 1 M_sun: P = 2 pi / k days; the IAU
    # 2012 au and GM_sun keep that to about 1e-9.
    period = 2 * np.pi / 0.01720209895 * C.DAY
    a = geo.semi_major_axis_from_period(period, C.GM_SUN / C.G)
    assert a / C.AU == pytest.approx(1.0, abs=1e-7)


def test_kepler_one_year_against_astropy_constants():
    # Kepler's third law for a sidereal year (365.256363 d) with M_sun + M_earth,
    # computed with astropy Quantities and constants.
    p = 365.256363004 * u.day
    a_ref = (np.cbrt(ac.G * (ac.M_sun + ac.M_earth) * p ** 2 / (4 * np.pi ** 2))).to(u.au)
    d = _earth_sun(period=p).derived_arrays()
    assert d["semi_major_axis_m"][0] / C.AU == pytest.approx(a_ref.value, rel=1e-12)
    assert a_ref.value == pytest.approx(1.0, abs=3e-5)


def test_eccentric_duration_factor():
    # Winn 2010, eq. 16: durations scale by sqrt(1 - e^2) / (1 + e sin w) for
    # small Rs/a; check near-exactly for a wide orbit.
    base = _earth_sun().derived_arrays()["t14_s"][0]
    e, w = 0.3, np.radians(60.0)
    ecc = _earth_sun(eccentricity=e, periastron_argument=60.0 * u.deg).derived_arrays()["t14_s"][0]
    assert ecc / base == pytest.approx(np.sqrt(1 - e ** 2) / (1 + e * np.sin(w)), rel=1e-4)


def _exact_duration(period_s, aor, inc, e, w, edge):
    """Time between the two contacts at sky separation ``edge`` [R_star], from
    the Keplerian orbit itself: r = a (1 - e^2) / (1 + e cos f) and the sky
    separation r sqrt(1 - sin^2(w + f) sin^2 i) (Winn 2010, eqs. 1-4), with
    f -> E -> M by Kepler's equation.  No duration formula is used."""
    from scipy.optimize import brentq

    def sep(f):
        r = aor * (1 - e ** 2) / (1 + e * np.cos(f))
        return r * np.sqrt(1 - np.sin(w + f) ** 2 * np.sin(inc) ** 2) - edge

    def time(f):
        big_e = 2 * np.arctan2(np.sqrt(1 - e) * np.sin(f / 2), np.sqrt(1 + e) * np.cos(f / 2))
        return (big_e - e * np.sin(big_e)) * period_s / (2 * np.pi)

    fc = np.pi / 2 - w          # conjunction (Winn 2010, Section 2)
    f1 = brentq(sep, fc - 0.6, fc)
    f2 = brentq(sep, fc, fc + 0.6)
    return time(f2) - time(f1)


@pytest.mark.parametrize("e,w_deg,b,aor_tol", [
    (0.0, 90.0, 0.0, 1e-9), (0.3, 60.0, 0.0, 1e-5), (0.3, 60.0, 0.5, 1e-5),
    (0.5, -30.0, 0.3, 1e-5), (0.3, 200.0, 0.7, 1e-5), (0.6, -90.0, 0.4, 1e-5),
])
def test_durations_against_the_keplerian_orbit(e, w_deg, b, aor_tol):
    # Winn 2010, eqs. 7 and 14-16 (the approximate eccentric durations) against
    # the contact times of the Keplerian orbit solved numerically, for an
    # Earth-Sun-like orbit (Rs/a ~ 0.005, where eq. 16 is accurate).
    s = _earth_sun(eccentricity=e, periastron_argument=w_deg * u.deg, impact_parameter=b)
    d = s.derived_arrays()
    p, aor, k, inc = 365.25 * C.DAY, d["a_over_rs"][0], d["radius_ratio"][0], d["inclination_rad"][0]
    w = np.radians(w_deg)
    # eq. 7: the sky separation at conjunction is b
    r_c = aor * (1 - e ** 2) / (1 + e * np.sin(w))
    assert r_c * np.cos(inc) == pytest.approx(b, abs=1e-12)
    assert d["t14_s"][0] == pytest.approx(_exact_duration(p, aor, inc, e, w, 1 + k), rel=aor_tol)
    assert d["t23_s"][0] == pytest.approx(_exact_duration(p, aor, inc, e, w, 1 - k), rel=aor_tol)


def test_durations_close_in_orbit_within_one_percent():
    # Winn 2010, text at eq. 16: the eccentric factor is an approximation for
    # small Rs/a; for a close-in eccentric orbit (a/Rs ~ 11) it stays within
    # 1 per cent of the Keplerian contact times (same exact method as above;
    # the difference found is 0.1 per cent).
    star = Star(teff=5772, radius=1.0, mass=1.0)
    s = System(star, Planet(radius=11.0, mass=300.0, period=4.0, impact_parameter=0.3,
                            eccentricity=0.4, periastron_argument=30.0))
    d = s.derived_arrays()
    exact = _exact_duration(4.0 * C.DAY, d["a_over_rs"][0], d["inclination_rad"][0], 0.4,
                            np.radians(30.0), 1 + d["radius_ratio"][0])
    assert d["t14_s"][0] == pytest.approx(exact, rel=0.01)


def test_equilibrium_temperature_earth():
    # Teq of the Earth for A = 0.3, f = 1/4: 255 K (e.g. Seager 2010,
    # Exoplanet Atmospheres, Section 3.1; common textbook value).
    teq = met.equilibrium_temperature(5772.0, C.R_SUN, C.AU, albedo=0.3)
    assert teq == pytest.approx(255.0, abs=1.0)


def test_kopparapu_solar_habitable_zone():
    # Kopparapu et al. 2014, ApJL 787, L29, Table 1 and text: for the Sun and a
    # 1 M_earth planet the conservative HZ runs from 0.95 au (runaway
    # greenhouse) to 1.67 au (maximum greenhouse) (value from memory).
    lim = met.habitable_zone_fluxes(5780.0)
    assert np.sqrt(1.0 / lim["runaway_greenhouse"]) == pytest.approx(0.95, abs=0.005)
    assert np.sqrt(1.0 / lim["maximum_greenhouse"]) == pytest.approx(1.67, abs=0.01)
    # The optimistic limits: recent Venus 1.776, early Mars 0.320 S_earth at 5780 K (Table 1).
    assert lim["recent_venus"] == pytest.approx(1.776)
    assert lim["early_mars"] == pytest.approx(0.320)
    # Outside 2600-7200 K the fits do not apply (Kopparapu et al. 2013, Section 5).
    assert np.isnan(met.habitable_zone_fluxes(2500.0)["early_mars"])
    assert np.isfinite(met.habitable_zone_fluxes(2600.0)["early_mars"])


def test_kopparapu_limits_for_an_m_dwarf():
    # The authors' online habitable-zone calculator for Kopparapu et al. 2014 (Virtual
    # Planetary Laboratory, Univ. of Washington) gives, for Teff = 3700 K and
    # L = 0.04 L_sun: recent Venus 0.163 au, runaway greenhouse 0.207 au, maximum
    # greenhouse 0.398 au, early Mars 0.419 au, and for the Sun 0.750 / 0.950 / 1.676 au
    # (values as quoted to three decimals in a public test suite of that calculator).
    # d = sqrt(L / S_eff) exercises every polynomial coefficient away from 5780 K.
    for teff, lum, ref in ((3700.0, 0.04, (0.163, 0.207, 0.398, 0.419)),
                           (5780.0, 1.0, (0.750, 0.950, 1.676, None))):
        lim = met.habitable_zone_fluxes(teff)
        got = [np.sqrt(lum / lim[k]) for k in met.HZ_LIMITS]
        for g, r in zip(got, ref):
            if r is not None:
                assert g == pytest.approx(r, abs=1.5e-3)


def test_habitable_zone_positions_for_the_earth_and_neighbours():
    # With the Kopparapu et al. 2014 limits (Table 1) the Earth (S = 1) and Mars
    # (S = 0.43, at 1.52 au inside the 1.67 au maximum-greenhouse limit) lie in
    # the conservative zone and Venus (S = 1.91) inside the inner limit (Venus
    # and Mars insolations from their orbits, a = 0.723 and 1.524 au).
    s = np.array([1.0, 1 / 0.723 ** 2, 1 / 1.524 ** 2, 0.1, 1.5, 0.33])
    pos = met.habitable_zone_position(s, 5772.0)
    assert list(pos) == ["conservative", "inner", "conservative", "outer", "optimistic",
                         "optimistic"]


def test_tsm_scale_factors():
    # Kempton et al. 2018, PASP 130, 114401, Table 1.
    r = np.array([0.8, 1.49, 1.5, 2.0, 2.749, 2.75, 3.99, 4.0, 9.9])
    expected = [0.190, 0.190, 1.26, 1.26, 1.26, 1.28, 1.28, 1.15, 1.15]
    np.testing.assert_allclose(met.tsm_scale_factor(r), expected)


def test_tsm_formula_against_quantity_computation():
    # Kempton et al. 2018, eq. 1, recomputed with astropy Quantities for an
    # invented 2 R_earth, 5 M_earth planet with Teq = 500 K, Rs = 0.4, J = 9.
    rp, mp, rs, teq, j = 2.0 * u.R_earth, 5.0 * u.M_earth, 0.4 * u.R_sun, 500 * u.K, 9.0
    ref = 1.26 * (rp / u.R_earth) ** 3 * (teq / u.K) / ((mp / u.M_earth) * (rs / u.R_sun) ** 2) * 10 ** (-j / 5)
    got = met.transmission_spectroscopy_metric(rp.si.value, mp.si.value, rs.si.value, 500.0, j)
    assert got == pytest.approx(float(ref), rel=1e-12)


def test_esm_planck_ratio_against_astropy_blackbody():
    # Kempton et al. 2018, eq. 4 uses the Planck ratio at 7.5 um; check it
    # against astropy.modeling.models.BlackBody.
    teq, teff = 800.0, 3500.0
    lam = 7.5 * u.um
    ratio = (BlackBody(1.10 * teq * u.K)(lam) / BlackBody(teff * u.K)(lam)).decompose().value
    k = 0.05
    got = met.emission_spectroscopy_metric(k * C.R_SUN, C.R_SUN, teq, teff, 8.0)
    assert got == pytest.approx(4.29e6 * ratio * k ** 2 * 10 ** (-8.0 / 5), rel=1e-9)


def test_chen_kipping_break_points():
    # Chen & Kipping 2017, ApJ 834, 17, Table 1: the Terran-Neptunian transition
    # at 2.04 M_earth and the Neptunian-Jovian transition at 0.414 M_jup (value
    # from memory); the Kempton et al. 2018 eq. 2 power laws meet them at 1.23
    # and 14.26 R_earth.
    m_low, _ = met.mass_from_radius(np.array([1.2299999, 1.23]) * C.R_EARTH)
    np.testing.assert_allclose(m_low / C.M_EARTH, 2.04, rtol=0.01)
    assert 0.9718 * 1.23 ** 3.58 == pytest.approx(1.436 * 1.23 ** 1.70, rel=0.002)
    m_high, _ = met.mass_from_radius(np.array([14.2599]) * C.R_EARTH)
    assert m_high[0] / C.M_JUP == pytest.approx(0.414, rel=0.01)
    assert np.isnan(met.mass_from_radius(np.array([14.26]) * C.R_EARTH)[0][0])
    # Earth's own radius gives about one Earth mass (0.9718).
    assert met.mass_from_radius(np.array([C.R_EARTH]))[0][0] / C.M_EARTH == pytest.approx(0.9718)


def test_annulus_signal_earth_sun():
    # 2 H Rp / Rs^2 for the Earth's 8.43 km scale height across the Sun:
    # 2 * 8.43e3 * 6.3781e6 / 6.957e8**2 = 0.222 ppm (arithmetic on the
    # U.S. Standard Atmosphere 1976 and IAU 2015 values).
    sig = met.annulus_signal(8434.5, C.R_EARTH, C.R_SUN) * 1e6
    assert sig == pytest.approx(0.2222, rel=1e-3)
