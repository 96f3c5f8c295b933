"""Continuum opacity: Rayleigh scattering, collision-induced absorption, haze.

Each check names its source beside it.  "value from memory" marks a number
that could not be re-read in its source while writing the test.
"""

import warnings

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from snrkit.errors import InputError, UnknownKeyError
from snrkit.io.tables import read_table
from snrkit.atmosphere import continuum as co
from snrkit.atmosphere.opacity import OpacityRangeWarning

# Dry-air volume fractions (U.S. Standard Atmosphere 1976, Table 3; CO2
# rounded to 400 ppm)
AIR = (("N2", 0.78084), ("O2", 0.20946), ("Ar", 0.00934), ("CO2", 0.0004))


def air_cross_section(lam):
    return sum(x * co.rayleigh_cross_section(s, lam) for s, x in AIR)


def test_n2_at_532nm_vs_measured():
    # Sneep & Ubachs 2005 (JQSRT 92, 293): cavity ring-down measurement of N2
    # at 532 nm, (5.1 +/- 0.1)e-31 m^2 (value from memory); the paper states
    # that refractivity-based cross-sections agree with its measurements "at
    # the few %-level".  Tolerance 5 %.
    sigma = co.rayleigh_cross_section("N2", 532.2e-9)
    assert sigma == pytest.approx(5.1e-31, rel=0.05)


def test_air_at_550nm_vs_bucholtz_fit():
    # Bucholtz 1995 (Appl. Opt. 34, 2765), Table 3 fit for lambda > 0.5 um:
    # sigma = A lambda^-(B + C lambda + D/lambda) cm^2, A = 4.01061e-28,
    # B = 3.99668, C = 1.10298e-3, D = 2.71393e-2 (lambda in um; values from
    # memory) -> 4.507e-27 cm^2 at 550 nm.  Tolerance 1 %.
    lam_um = 0.55
    ref = 4.01061e-28 * lam_um ** -(3.99668 + 1.10298e-3 * lam_um + 2.71393e-2 / lam_um) * 1e-4
    assert air_cross_section(550e-9) == pytest.approx(ref, rel=0.01)


@pytest.mark.parametrize("lam_um", [0.3, 0.4, 0.5])
def test_air_uv_visible_vs_nicolet(lam_um):
    # Nicolet 1984 (Planet. Space Sci. 32, 1467) fit to Bates 1984 for air,
    # 0.2-0.55 um: sigma = 4.02e-28 / lambda^(4 + x) cm^2 with
    # x = 0.389 lambda + 0.09426/lambda - 0.3228 (formula as quoted in the
    # paper's abstract); stated accuracy 0.5 %.  Tolerance 1 %.
    x = 0.389 * lam_um + 0.09426 / lam_um - 0.3228
    ref = 4.02e-28 / lam_um ** (4 + x) * 1e-4
    assert air_cross_section(lam_um * 1e-6) == pytest.approx(ref, rel=0.01)


def test_air_near_infrared_vs_nicolet():
    # Nicolet 1984: from 0.55 um to 1 um the same formula holds with x = 0.04
    # (0.5 %).  Tolerance 1 %.
    for lam_um in (0.6, 0.8, 1.0):
        ref = 4.02e-28 / lam_um ** 4.04 * 1e-4
        assert air_cross_section(lam_um * 1e-6) == pytest.approx(ref, rel=0.01)


def test_h2_dalgarno_williams_and_static_polarizability():
    # Dalgarno & Williams 1962 (ApJ 136, 690): sigma = 8.14e-13/l^4 +
    # 1.28e-6/l^6 + 1.61/l^8 cm^2 (l in Angstrom), about 1.39e-27 cm^2 at
    # 500 nm.  Its long-wavelength limit must equal the static-polarizability
    # Rayleigh law (128 pi^5/3) alpha^2 / lambda^4 with the H2 mean static
    # polarizability 5.414 a0^3 = 0.8023e-30 m^3 (Kolos & Wolniewicz 1967,
    # J. Chem. Phys. 46, 1426; value from memory) and F_K ~ 1; tolerance 5 %.
    assert co.rayleigh_cross_section("H2", 500e-9) * 1e4 == pytest.approx(1.388e-27, rel=2e-3)
    lam = 30e-6
    alpha = 0.8023e-30
    static = 128 * np.pi ** 5 / 3 * alpha ** 2 / lam ** 4
    assert co.rayleigh_cross_section("H2", lam) == pytest.approx(static, rel=0.05)


@pytest.mark.parametrize("species,alpha_a03", [("He", 1.3832), ("Ar", 11.08)])
def test_atoms_long_wavelength_limit_vs_static_polarizability(species, alpha_a03):
    # Refractivity formulas (He: Mansfield & Peck 1969; Ar: Peck & Fisher
    # 1964) must tend to the static-polarizability Rayleigh law at long
    # wavelength: He 1.3832 a0^3 (exact theory, e.g. Pachucki & Sapirstein
    # 2001, Phys. Rev. A 63, 012504), Ar 11.08 a0^3 (CRC Handbook; values from
    # memory).  F_K = 1 for atoms.  Tolerance 3 %.
    a0 = 0.529177210903e-10
    alpha = alpha_a03 * a0 ** 3
    lam = 20e-6
    static = 128 * np.pi ** 5 / 3 * alpha ** 2 / lam ** 4
    assert co.rayleigh_cross_section(species, lam) == pytest.approx(static, rel=0.03)


@settings(max_examples=40, deadline=None)
@given(st.sampled_from(co.RAYLEIGH_SPECIES), st.floats(0.3e-6, 20e-6), st.floats(1.05, 1.5))
def test_rayleigh_lambda_minus_four_scaling(species, lam, factor):
    # Rayleigh's law: sigma ~ lambda^-4, steepened slightly at short
    # wavelength by dispersion of the refractivity and the King factor
    # (Bates 1984; Bucholtz 1995 Fig. 1): the local exponent lies in [4, 4.5).
    s1 = co.rayleigh_cross_section(species, lam)
    s2 = co.rayleigh_cross_section(species, lam * factor)
    exponent = np.log(s1 / s2) / np.log(factor)
    assert 4.0 - 1e-9 <= exponent < 4.5


def test_rayleigh_ordering_at_550nm():
    # Relative Rayleigh strengths at visible wavelengths follow the squared
    # polarizabilities (CRC Handbook polarizabilities, values from memory:
    # He 0.205, H2 0.80, H2O 1.47, Ar 1.64, N2 1.74, CH4 2.59, CO2 2.91 A^3;
    # CO2 and N2 with F_K > 1).
    s = {sp: co.rayleigh_cross_section(sp, 550e-9) for sp in co.RAYLEIGH_SPECIES}
    assert s["He"] < s["H2"] < s["Ar"] < s["N2"] < s["CO2"]
    assert s["H2O"] < s["N2"] and s["CH4"] > s["N2"]


def test_rayleigh_bad_input():
    with pytest.raises(UnknownKeyError, match="species"):
        co.rayleigh_cross_section("Xe", 500e-9)
    with pytest.raises(InputError, match="wavelength"):
        co.rayleigh_cross_section("N2", 150e-9)
    with pytest.raises(InputError, match="wavelength"):
        co.rayleigh_cross_section("N2", np.array([500e-9, np.nan]))


# --- collision-induced absorption -----------------------------------------

def test_cia_positive_finite_and_shaped():
    lam = np.geomspace(0.3e-6, 30e-6, 500)
    temps = np.array([[150.0, 300.0], [1000.0, 2500.0]])
    for pair in co.CIA_PAIRS:
        k = co.cia_coefficient(pair, lam, temps)
        assert k.shape == (2, 2, 500)
        assert np.all(np.isfinite(k)) and np.all(k >= 0) and np.any(k > 0)


def test_cia_band_model_evaluated_in_si():
    # Consistency of the evaluation with the documented band list (not an
    # external check): at each band centre and 296 K the coefficient equals
    # the tabulated peak (cm^5 -> m^5: x 1e-10) plus the other bands' tails.
    t = read_table("cia", "cia_bands.ecsv")
    for row in t:
        if row["centre"] < 333.4:           # outside 0.3-30 um
            continue
        k = co.cia_coefficient(str(row["pair"]), 1e-2 / row["centre"], 296.0)
        assert float(k) >= row["peak_296"] * 1e-10 * (1 - 1e-9)
        assert float(k) <= row["peak_296"] * 1e-10 * 2.0


def test_h2_h2_fundamental_band_location_and_magnitude():
    # The H2-H2 collision-induced fundamental lies at 2.0-2.5 um (Q branch of
    # H2 at 4161 cm^-1 with S(0), S(1) at 4498, 4713 cm^-1; Herzberg 1949,
    # Nature 163, 170 discovered it in planetary spectra).  Its 296 K peak
    # binary coefficient is of order 1e-46 cm^5 (HITRAN CIA, Richard et al.
    # 2012, JQSRT 113, 1276; value from memory, factor 3).
    lam = np.geomspace(1.7e-6, 3.2e-6, 300)
    k = co.cia_coefficient("H2-H2", lam, 296.0)
    assert 2.0e-6 < lam[np.argmax(k)] < 2.5e-6
    assert 3e-57 < k.max() < 3e-56


def test_cia_temperature_clamped_with_warning():
    lo, hi = co.cia_temperature_range()
    with pytest.warns(OpacityRangeWarning, match=f"{lo:g}-{hi:g} K"):
        k = co.cia_coefficient("H2-He", 2.2e-6, np.array([10.0, 5000.0]))
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        ref = co.cia_coefficient("H2-He", 2.2e-6, np.array([lo, hi]))
    assert np.allclose(k, ref)
    with pytest.raises(UnknownKeyError, match="pair"):
        co.cia_coefficient("He-He", 2.2e-6, 300.0)
    with pytest.raises(InputError, match="temperature"):
        co.cia_coefficient("H2-H2", 2.2e-6, -5.0)


# --- haze ------------------------------------------------------------------

@settings(max_examples=30, deadline=None)
@given(st.floats(0.0, 1e4), st.floats(-10.0, 0.0), st.floats(0.3e-6, 5e-6))
def test_haze_scaling(enhancement, slope, lam):
    # Lecavelier des Etangs et al. 2008 (A&A 481, L83) parametrisation:
    # enhancement x sigma_H2(0.35 um) x (lambda / 0.35 um)^slope.
    ref = 0.35e-6
    got = co.haze_cross_section(lam, enhancement, slope)
    expect = enhancement * co.rayleigh_cross_section("H2", ref) * (lam / ref) ** slope
    assert got == pytest.approx(expect, rel=1e-12, abs=1e-300)
    assert co.haze_cross_section(ref, enhancement, slope) == pytest.approx(
        enhancement * co.rayleigh_cross_section("H2", ref), rel=1e-12, abs=1e-300)


def test_haze_bad_input():
    with pytest.raises(InputError, match="enhancement"):
        co.haze_cross_section(1e-6, -1.0, -4.0)
    with pytest.raises(InputError, match="slope"):
        co.haze_cross_section(1e-6, 1.0, np.nan)
