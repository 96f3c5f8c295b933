"""Stellar spectra and band normalisation (snrkit.photons.sed), checked against outside values."""

import numpy as np
import pytest
import astropy.units as u
from astropy.table import Table
from hypothesis import given, settings, strategies as st

from snrkit.constants import R_SUN, PC, H_PLANCK, C_LIGHT, K_B
from snrkit.errors import InputError, UnitMismatchError, UnknownKeyError
from snrkit.photons.sed import (planck_flambda, planck_spectrum, read_spectrum, zero_points,
                                synthetic_magnitude, stellar_flux_density, band_names)
from snrkit.tables import read_table


def test_planck_matches_astropy_blackbody():
    # Reference: astropy.modeling.models.BlackBody (Planck's law, B_lambda per steradian);
    # snrkit returns the surface flux pi * B_lambda.
    from astropy.modeling.models import BlackBody
    lam = np.geomspace(0.2, 30.0, 200) * u.um
    for t in (2500.0, 5772.0, 9600.0, 30000.0):
        bb = BlackBody(temperature=t * u.K, scale=1.0 * u.W / (u.m**2 * u.m * u.sr))
        ref = bb(lam).to_value(u.W / (u.m**3 * u.sr)) * np.pi
        np.testing.assert_allclose(planck_flambda(lam.to_value(u.m), t), ref, rtol=1e-10)


@settings(max_examples=40, deadline=None)
@given(t=st.floats(2000.0, 50000.0))
def test_planck_rayleigh_jeans_and_wien_limits(t):
    # Rayleigh-Jeans (x = hc/lambda kT << 1): pi B_lambda -> 2 pi c k T / lambda^4, relative
    # error ~ x/2.  Wien (x >> 1): pi B_lambda -> 2 pi h c^2 / lambda^5 exp(-x), error ~ e^-x.
    # (Rybicki & Lightman 1979, Radiative Processes in Astrophysics, ch. 1.)
    lam_rj = 1e3 * H_PLANCK * C_LIGHT / (K_B * t)          # x = 1e-3
    rj = 2 * np.pi * C_LIGHT * K_B * t / lam_rj**4
    assert planck_flambda(lam_rj, t) == pytest.approx(rj, rel=1e-3)
    lam_w = H_PLANCK * C_LIGHT / (30.0 * K_B * t)          # x = 30
    wien = 2 * np.pi * H_PLANCK * C_LIGHT**2 / lam_w**5 * np.exp(-30.0)
    assert planck_flambda(lam_w, t) == pytest.approx(wien, rel=1e-12)


def test_zero_point_table_is_internally_consistent():
    # Each band's published F_nu and F_lambda zero points (Cohen, Wheaton & Megeath 2003,
    # AJ 126, 1090, Table 2; Bessell, Castelli & Plez 1998, A&A 333, 231, Table A2) must agree
    # through F_nu = F_lambda lambda^2 / c at the reference wavelength; they do to ~2 %
    # (F_nu and F_lambda are quoted at their own isophotal frequency and wavelength, so
    # exact agreement is not expected; H differs most, by 1.9 %).  Guards against a slipped
    # digit or unit in the table.
    t = read_table("photometry", "zero_points.ecsv")
    for key in ("source", "method", "units", "date", "script"):
        assert key in t.meta
    for row in t:
        lam = row["reference_wavelength"] * u.um
        flam = row["zero_point_flambda"] * t["zero_point_flambda"].unit
        fnu = (flam * lam**2 / (C_LIGHT * u.m / u.s)).to(u.Jy)
        assert fnu.value == pytest.approx(row["zero_point_fnu"], rel=0.025), row["band"]
    assert set(band_names()) >= {"J", "H", "Ks", "V"}


def test_zero_magnitude_reference_spectrum_from_fnu_file(tmp_path):
    # A zero-magnitude reference spectrum built from the published F_nu zero points (Jy),
    # written as an ECSV file, read back through the unit machinery and normalised to J = 0,
    # must reproduce the published F_lambda zero points of the other bands and give
    # magnitude ~0 in every band (Cohen et al. 2003; Bessell et al. 1998).
    t = read_table("photometry", "zero_points.ecsv")
    order = np.argsort(t["reference_wavelength"])
    spec = Table({"wavelength": t["reference_wavelength"].quantity[order],
                  "flux": t["zero_point_fnu"].quantity[order]})
    assert spec["flux"].unit == u.Jy
    path = tmp_path / "zero_mag.ecsv"
    spec.write(path, format="ascii.ecsv")
    s = read_spectrum(path).normalised(0.0, "J")
    for row in t:
        lam = row["reference_wavelength"] * 1e-6
        flam_si = (row["zero_point_flambda"] * t["zero_point_flambda"].unit).si.value
        # tolerance: the ~2 % F_nu/F_lambda consistency of the published pairs (see above)
        assert s.at(lam)[0] == pytest.approx(flam_si, rel=0.025), row["band"]
        m = synthetic_magnitude(s.wavelength_m * u.m, s.flambda * u.W / u.m**3, row["band"])
        assert abs(float(m[0])) < 0.03


def test_sun_absolute_magnitudes_against_willmer_2018():
    # A 5772 K blackbody with the IAU 2015 nominal solar radius at 10 pc compared with the
    # Sun's absolute magnitudes of Willmer 2018, ApJS 236, 47 (zero-magnitude-star system, as
    # our zero points): M_V = 4.81 and
    # M_Ks = 3.27 (abstract); M_J = 3.67, M_H = 3.32 (value from memory).  A blackbody is a
    # good solar model in V and J (<= 0.1 mag); in H and Ks the real Sun is brighter than
    # the blackbody because of the H- opacity minimum near 1.6 um, hence 0.3 mag.
    lam = np.geomspace(0.3e-6, 5e-6, 3000)
    f = planck_flambda(lam, 5772.0) * (R_SUN / (10.0 * PC)) ** 2
    expect = {"V": (4.81, 0.1), "J": (3.67, 0.1), "H": (3.32, 0.3), "Ks": (3.27, 0.3)}
    for band, (ref, tol) in expect.items():
        m = float(synthetic_magnitude(lam * u.m, f * u.W / u.m**3, band))
        assert abs(m - ref) < tol, (band, m)


@settings(max_examples=40, deadline=None)
@given(teff=st.floats(2500.0, 40000.0), mag=st.floats(-1.0, 20.0),
       band=st.sampled_from(["J", "H", "Ks", "V"]))
def test_normalised_spectrum_has_the_requested_magnitude(teff, mag, band):
    # Round trip: the synthetic magnitude of the normalised spectrum equals the input.
    s = planck_spectrum(teff).normalised(mag, band)
    m = synthetic_magnitude(s.wavelength_m * u.m, s.flambda * u.W / u.m**3, band)
    # the sampled grid (4000 log-spaced points) interpolates the exact Planck curve to ~1e-6
    assert float(m[0]) == pytest.approx(mag, abs=1e-5)
    lam_ref = zero_points()[band][0]
    exact = -2.5 * np.log10(s.at([lam_ref])[0, 0] / zero_points()[band][1])
    assert exact == pytest.approx(mag, abs=1e-10)


def test_flux_density_at_reference_wavelength_equals_zero_point():
    # A star of magnitude m in J has F_lambda(1.235 um) = F_0 10^(-0.4 m)
    # (Cohen et al. 2003 zero point 3.129e-13 W cm-2 um-1, value from memory).
    f = stellar_flux_density(1.235, 5800.0, 10.0, "J")
    assert f.to_value(u.W / u.cm**2 / u.um)[0, 0] == pytest.approx(3.129e-13 * 1e-4, rel=1e-9)
    # vectorised over stars
    f2 = stellar_flux_density([1.0, 2.0] * u.um, [3000.0, 6000.0], [8.0, 9.0], "Ks")
    assert f2.shape == (2, 2)


def test_csv_spectrum_with_units_in_header(tmp_path):
    p = tmp_path / "s.csv"
    lam = np.linspace(0.5, 6.0, 50)
    p.write_text("wavelength [um],flux [erg / (s cm2 Angstrom)]\n"
                 + "\n".join(f"{a},{1e-12 / a**4}" for a in lam))
    s = read_spectrum(p)
    assert s.range_m == pytest.approx((0.5e-6, 6.0e-6))
    # 1 erg s-1 cm-2 A-1 = 1e7 W m-3
    assert s.flambda[0, 0] == pytest.approx(1e-12 / 0.5**4 * 1e7)


def test_bad_spectra_and_bands(tmp_path):
    with pytest.raises(UnknownKeyError, match="Ks"):
        stellar_flux_density(1.0, 5000.0, 10.0, "Q")
    p = tmp_path / "nounits.csv"
    p.write_text("wavelength,flux\n1,2\n2,3\n")
    with pytest.raises(UnitMismatchError):
        read_spectrum(p)
    p2 = tmp_path / "cols.csv"
    p2.write_text("lam [um],flux [Jy]\n1,2\n2,3\n")
    with pytest.raises(InputError, match="wavelength"):
        read_spectrum(p2)
    p3 = tmp_path / "short.csv"
    p3.write_text("wavelength [um],flux [Jy]\n1.5,2\n2.0,3\n")
    s = read_spectrum(p3)
    with pytest.raises(InputError, match="1.235"):
        s.normalised(10.0, "J")            # J reference wavelength outside 1.5-2 um
    with pytest.raises(InputError, match="1.5-2 um"):
        s.at([1.0e-6])
    with pytest.raises(InputError, match="teff"):
        planck_spectrum(-5.0)
    assert set(zero_points()) == set(band_names())
