"""User cross-section tables: reading, k-distributions, temperature, spectra.

Each check names its source beside it.  The k-distribution checks rest on its
defining property: the k-distribution is the cross-section sorted within the
bin, so the bin-mean transmission of any column u is
``int_0^1 exp(-k(g) u) dg = (1/dnu) int exp(-sigma(nu) u) dnu``
(Lacis & Oinas 1991, JGR 96, 9027; Goody, West, Chen & Crisp 1989, JQSRT 42,
539; equation numbers not re-checked), approximated by Gauss-Legendre points ``sum_g w_g exp(-k_g u)``.
"""

import math
import warnings

import numpy as np
import pytest
import astropy.units as u
from astropy.table import Table
from hypothesis import example, given, settings, strategies as st

from snrkit.atmosphere import opacity as op
from snrkit.atmosphere import spectrum as S
from snrkit.atmosphere import mixture
from snrkit.atmosphere.user_opacity import (UserOpacitySource, read_cross_sections,
                                            sorted_k_distribution)
from snrkit.errors import InputError, UnitMismatchError, UnknownKeyError

R_JUP = 7.1492e7      # m, IAU 2015 nominal equatorial Jupiter radius (Prsa et al. 2016)
R_SUN = 6.957e8       # m, IAU 2015 nominal solar radius (Prsa et al. 2016)


def _write_csv(path, header, columns):
    data = np.column_stack(columns)
    np.savetxt(path, data, delimiter=",", header=header, comments="", fmt="%.17g")
    return path


def _lorentz_spectrum(seed=3):
    """Random Lorentz lines on a uniform wavenumber grid (cm-1, cm2).

    200 lines in 4700-5300 cm-1 (1.89-2.13 um), exponentially distributed
    strengths (Goody 1952, Q. J. R. Meteorol. Soc. 78, 165: the random-band
    strength distribution), half-width 0.1 cm-1, sampled every 0.02 cm-1
    (5 points per half-width); a weak flat continuum keeps sigma > 0.
    """
    rng = np.random.default_rng(seed)
    nu = np.arange(4700.0, 5300.0 + 1e-9, 0.02)
    centres = rng.uniform(nu[0], nu[-1], 200)
    strengths = rng.exponential(1.0, 200) * 1e-19     # cm/molecule
    hw = 0.1
    sig = np.full(nu.size, 1e-26)
    for c, s in zip(centres, strengths):
        sig += s * hw / np.pi / ((nu - c) ** 2 + hw ** 2)
    return nu, sig


@pytest.fixture(scope="module")
def lorentz_file(tmp_path_factory):
    nu, sig = _lorentz_spectrum()
    path = tmp_path_factory.mktemp("xs") / "lines.csv"
    _write_csv(path, "wavenumber [cm-1],cross_section [cm2]", [nu, sig])
    return path, nu, sig


# --------------------------------------------------------------------------
# the defining property of the k-distribution
# --------------------------------------------------------------------------

# Bins (um) inside the line table, not aligned with its grid.
_BIN_EDGES_UM = np.array([1.9, 1.93, 1.97, 2.02, 2.06, 2.1])
# Columns [molecules cm-2] from optically thin to saturated line cores.
_COLUMNS_CM2 = np.array([1e17, 1e18, 1e19, 1e20, 1e21, 1e22])


def _sample_mean_transmission(nu, sig, edges_um, columns):
    """Monochromatic mean transmission of the samples inside each bin."""
    nu_edges = 1e4 / edges_um                   # cm-1, descending
    out = np.empty((edges_um.size - 1, columns.size))
    for j in range(edges_um.size - 1):
        inside = (nu <= nu_edges[j]) & (nu >= nu_edges[j + 1])
        out[j] = np.exp(-np.outer(columns, sig[inside])).mean(axis=1)
    return out


def test_lorentz_lines_k_distribution_reproduces_bin_transmission(lorentz_file):
    # Lacis & Oinas 1991 (JGR 96, 9027): sum_g w_g exp(-k_g u) equals the
    # monochromatic bin-mean transmission, up to the g quadrature.  Tolerances
    # (absolute transmission) from errors measured here: 1.0e-3 at 16 points and
    # 1.3e-4 at 64 (up to 1.8e-3 / 1.6e-4 for other random seeds); the kinks of
    # k(g) at line peaks limit Gauss-Legendre to slow convergence.  The mean of
    # the samples differs from the log-linearly interpolated table by ~2e-5.
    path, nu, sig = lorentz_file
    src = UserOpacitySource({"H2O": path})
    ref = _sample_mean_transmission(nu, sig, _BIN_EDGES_UM, _COLUMNS_CM2)
    errors = {}
    for n_g, tol in ((16, 3e-3), (64, 3e-4)):
        g, w = op.g_quadrature(n_g)
        k = src.species_k_coefficients("H2O", _BIN_EDGES_UM * 1e-6, 800.0, n_g=n_g)
        assert k.shape == (_BIN_EDGES_UM.size - 1, n_g)
        assert np.all(np.diff(k, axis=-1) >= 0)
        trans = np.exp(-k[:, None, :] * (_COLUMNS_CM2[None, :, None] * 1e4)) @ w
        errors[n_g] = np.abs(trans - ref).max()
        assert errors[n_g] < tol
    assert errors[64] < errors[16]
    # the test discriminates: the bin-mean cross-section (no sub-bin structure)
    # misses the transmission by far more than the tolerance
    mean_sigma = np.array([sig[(nu <= a) & (nu >= b)].mean()
                           for a, b in zip(1e4 / _BIN_EDGES_UM[:-1], 1e4 / _BIN_EDGES_UM[1:])])
    naive = np.exp(-np.outer(mean_sigma, _COLUMNS_CM2))
    assert np.abs(naive - ref).max() > 0.3


def test_sorted_distribution_is_exact_with_many_g_points(lorentz_file):
    # The sorted distribution itself is exact (only the quadrature errs): with
    # 20000 midpoint g-nodes the transmission of the log-linearly interpolated
    # table matches a 20x sub-sampled direct average to 1e-5 (measured 1e-6).
    _, nu, sig = lorentz_file
    sub = np.linspace(nu[0], nu[-1], (nu.size - 1) * 20 + 1)
    sig_sub = np.exp(np.interp(sub, nu, np.log(sig)))
    g = (np.arange(20000) + 0.5) / 20000
    k = sorted_k_distribution(nu * 100, sig * 1e-4, _BIN_EDGES_UM * 1e-6, g)
    nu_edges = 1e4 / _BIN_EDGES_UM
    for j in range(_BIN_EDGES_UM.size - 1):
        inside = (sub <= nu_edges[j]) & (sub >= nu_edges[j + 1])
        for col in _COLUMNS_CM2:
            direct = np.trapezoid(np.exp(-sig_sub[inside] * col), sub[inside]) / (
                sub[inside][-1] - sub[inside][0])
            assert np.mean(np.exp(-k[j] * col * 1e4)) == pytest.approx(direct, abs=1e-5)


# --------------------------------------------------------------------------
# simple exact cases
# --------------------------------------------------------------------------

def test_constant_cross_section_gives_constant_k(tmp_path):
    # The sorted distribution of a constant is that constant at every g
    # (definition of the k-distribution; common practice, no source).
    nu = np.linspace(3000.0, 7000.0, 37)          # coarse: most bins hold no table point
    p = _write_csv(tmp_path / "c.csv", "wavenumber [cm-1],cross_section [cm2]",
                   [nu, np.full(nu.size, 2.5e-21)])
    src = UserOpacitySource({"CH4": p})
    edges = mixture.wavelength_bin_edges(300, 1.5e-6, 3.2e-6)
    for n_g in (1, 4, 8):
        k = src.species_k_coefficients("CH4", edges, [300.0, 900.0], n_g=n_g)
        assert k.shape == (2, edges.size - 1, n_g)
        np.testing.assert_allclose(k, 2.5e-25, rtol=1e-12)


def test_power_law_bin_distribution_spans_its_values(tmp_path):
    # sigma monotonic in a bin: the k-distribution lies between the values at
    # the bin edges, and its g-weighted mean of ln k is the bin mean of ln sigma
    # (Gauss-Legendre is exact for ln k linear in g, the uniform-in-ln case:
    # Abramowitz & Stegun 1964, 25.4.29).
    nu = np.linspace(4000.0, 6000.0, 2001)
    sig = np.exp(-0.01 * (nu - 4000.0)) * 1e-20
    t = Table({"wavenumber": nu / u.cm, "cross_section": sig * u.cm**2})
    src = UserOpacitySource({"H2O": t})
    edges = np.array([1.7e-6, 1.8e-6, 2.0e-6])
    g, w = op.g_quadrature(8)
    k = src.species_k_coefficients("H2O", edges, 500.0, n_g=8) * 1e4   # cm2
    for j in range(2):
        nu_hi, nu_lo = 1e-2 / edges[j], 1e-2 / edges[j + 1]
        s_hi = 1e-20 * math.exp(-0.01 * (nu_lo - 4000))
        s_lo = 1e-20 * math.exp(-0.01 * (nu_hi - 4000))
        assert s_lo * (1 - 1e-9) < k[j, 0] < k[j, -1] < s_hi * (1 + 1e-9)
        mean_ln = math.log(1e-20) - 0.01 * (0.5 * (nu_hi + nu_lo) - 4000)
        assert np.sum(w * np.log(k[j])) == pytest.approx(mean_ln, abs=1e-9)


def test_partly_covered_bin_with_outside_zero(tmp_path):
    # outside="zero": the uncovered half of a bin has sigma = 0, so the bin
    # transmission is 0.5 + 0.5 exp(-sigma u) exactly (definition; no source).
    nu_mid = 1e4 / 2.0
    lo_edge, hi_edge = 1e4 / 2.1, 1e4 / 1.9        # cm-1
    nu = np.linspace(nu_mid, hi_edge + 100, 50)    # covers [nu_mid, ...]
    p = _write_csv(tmp_path / "half.csv", "wavenumber [cm-1],cross_section [cm2]",
                   [nu, np.full(nu.size, 1e-22)])
    # bin chosen so that exactly half its wavenumber width lies below nu_mid
    half_width = min(nu_mid - lo_edge, hi_edge - nu_mid)
    edges = 1e-2 / np.array([nu_mid + half_width, nu_mid - half_width])
    src = UserOpacitySource({"CO": p}, outside="zero")
    g, w = op.g_quadrature(8)
    k = src.species_k_coefficients("CO", edges, 400.0, n_g=8)[0]
    uu = 3e21 * 1e4
    assert np.sum(w * np.exp(-k * uu)) == pytest.approx(0.5 + 0.5 * math.exp(-1e-22 * 3e21),
                                                        rel=1e-9)
    # wholly outside: zero opacity
    far = src.species_k_coefficients("CO", np.array([1.0e-6, 1.1e-6]), 400.0, n_g=4)
    assert np.all(far == 0.0)
    # the default refuses and names the range that is not covered
    strict = UserOpacitySource({"CO": p})
    with pytest.raises(InputError, match=r"wavelengths 1(\.0*)?-1\.1 um not covered"):
        strict.species_k_coefficients("CO", np.array([1.0e-6, 1.1e-6]), 400.0)
    with pytest.raises(InputError, match="outside='zero'"):
        strict.species_k_coefficients("CO", edges, 400.0)


# --------------------------------------------------------------------------
# units and formats
# --------------------------------------------------------------------------

def test_wavenumber_and_wavelength_files_give_the_same_k(tmp_path, lorentz_file):
    # The same table in wavenumber [cm-1] and in wavelength [um] (converted with
    # astropy.units.spectral(), the reference library) and with cm2 or m2 cross-
    # sections gives the same k; also through ECSV, FITS and plain text.
    _, nu, sig = lorentz_file
    nu, sig = nu[::10], sig[::10]
    lam = (nu / u.cm).to_value(u.um, equivalencies=u.spectral())
    files = {
        "wn_cm2": _write_csv(tmp_path / "a.csv", "wavenumber [cm-1],cross_section [cm2]",
                             [nu, sig]),
        "lam_m2": _write_csv(tmp_path / "b.csv", "wavelength [um],cross_section [m2]",
                             [lam, sig * 1e-4]),
    }
    Table({"wavelength": lam * u.um, "cross_section": sig * u.cm**2}).write(
        tmp_path / "c.ecsv", format="ascii.ecsv")
    Table({"wavenumber": nu * 100 / u.m, "cross_section": sig * 1e-4 * u.m**2}).write(
        tmp_path / "d.fits", format="fits")
    np.savetxt(tmp_path / "e.txt", np.column_stack([lam * 1e3, sig]), fmt="%.17g",
               header="lines, wavelength in nm, no header line")
    files["ecsv"] = tmp_path / "c.ecsv"
    files["fits"] = tmp_path / "d.fits"
    edges = _BIN_EDGES_UM * 1e-6
    ref = UserOpacitySource({"H2O": files["wn_cm2"]}).species_k_coefficients(
        "H2O", edges, 600.0, n_g=8)
    for name, path in files.items():
        k = UserOpacitySource({"H2O": path}).species_k_coefficients("H2O", edges, 600.0, n_g=8)
        np.testing.assert_allclose(k, ref, rtol=1e-9, err_msg=name)
    t = read_cross_sections(tmp_path / "e.txt", "H2O", spectral_unit="nm")
    k = UserOpacitySource({"H2O": t}).species_k_coefficients("H2O", edges, 600.0, n_g=8)
    np.testing.assert_allclose(k, ref, rtol=1e-9)


def test_read_cross_sections_table_layout(tmp_path):
    p = tmp_path / "x.ecsv"
    Table({"wavelength": [2.0, 1.0] * u.um, "cross_section": [1e-20, 2e-20] * u.cm**2,
           "temperature": [300.0, 300.0] * u.K}).write(p, format="ascii.ecsv")
    t = read_cross_sections(p, "NH3")
    assert t.colnames == ["wavenumber", "wavelength", "cross_section", "temperature"]
    np.testing.assert_allclose(t["wavenumber"].quantity.to_value(1 / u.cm), [5000.0, 10000.0])
    np.testing.assert_allclose(t["wavelength"].quantity.to_value(u.um), [2.0, 1.0])
    np.testing.assert_allclose(t["cross_section"].quantity.to_value(u.cm**2), [1e-20, 2e-20])
    assert t.meta["species"] == "NH3" and t.meta["temperatures_K"] == [300.0]
    # a per-molecule unit string as often written in files
    q = tmp_path / "m.csv"
    q.write_text("wavenumber [cm-1],cross_section [cm2/molecule]\n4000,1e-20\n4001,2e-20\n")
    t2 = read_cross_sections(q, "NH3")
    np.testing.assert_allclose(t2["cross_section"].quantity.to_value(u.cm**2), [1e-20, 2e-20])
    # plain text with a header line carrying the units, temperatures stacked
    r = tmp_path / "h.dat"
    r.write_text("# my line list\nwavelength [nm]  cross_section [m2]  temperature [K]\n"
                 "1000 1e-24 600\n2000 2e-24 600\n1000 3e-24 300\n2000 4e-24 300\n")
    t3 = read_cross_sections(r, "NH3")
    assert t3.meta["temperatures_K"] == [300.0, 600.0]
    np.testing.assert_allclose(t3["wavelength"].quantity.to_value(u.um), [2.0, 1.0, 2.0, 1.0])
    np.testing.assert_allclose(t3["cross_section"].quantity.to_value(u.cm**2),
                               [4e-20, 3e-20, 2e-20, 1e-20])
    np.testing.assert_allclose(t3["temperature"].quantity.to_value(u.K), [300, 300, 600, 600])


# --------------------------------------------------------------------------
# temperature
# --------------------------------------------------------------------------

def _two_level(nu, temperature):
    # ln sigma linear in 1/T with a wavenumber-dependent slope, as for line
    # intensities with a lower-state Boltzmann factor exp(-c2 E''/T) (line
    # intensity temperature scaling, e.g. Rothman et al. 1998, JQSRT 60, 665;
    # from memory): the ordering within a bin changes with temperature.
    e_low = 800.0 + 600.0 * np.sin(nu / 3.0)              # "E''" [K units]
    return 1e-21 * (1.0 + 0.9 * np.cos(nu / 1.7)) * np.exp(-e_low / temperature)


def test_temperature_interpolation_between_two_tables(tmp_path):
    # Linear interpolation of ln sigma in 1/T is exact for sigma = A exp(-E/T):
    # the two-temperature table at 500 K equals a table written at 500 K.
    nu = np.arange(4500.0, 5500.0, 0.5)
    t1, t2, tm = 300.0, 1200.0, 500.0
    stacked = np.concatenate([nu, nu[::-1]])          # second block in descending order
    temps = np.concatenate([np.full(nu.size, t2), np.full(nu.size, t1)])
    sig = np.concatenate([_two_level(nu, t2), _two_level(nu[::-1], t1)])
    p2 = _write_csv(tmp_path / "two.csv", "wavenumber [cm-1],cross_section [cm2],temperature [K]",
                    [stacked, sig, temps])
    single = {T: _write_csv(tmp_path / f"one{T:g}.csv",
                            "wavenumber [cm-1],cross_section [cm2],temperature [K]",
                            [nu, _two_level(nu, T), np.full(nu.size, T)]) for T in (t1, tm, t2)}
    edges = _BIN_EDGES_UM[1:4] * 1e-6
    two = UserOpacitySource({"CO2": p2})
    k = two.species_k_coefficients("CO2", edges, np.array([t1, tm, t2]), n_g=8)
    assert k.shape == (3, 2, 8)
    for i, T in enumerate((t1, tm, t2)):
        ref = UserOpacitySource({"CO2": single[T]}).species_k_coefficients("CO2", edges, T, n_g=8)
        np.testing.assert_allclose(k[i], ref, rtol=1e-9)
    # k differs from interpolating the k-distributions themselves (the ordering
    # changes with temperature), so this test sees monochromatic interpolation
    k1, k2 = k[0], k[2]
    f = (1 / tm - 1 / t1) / (1 / t2 - 1 / t1)
    kd = np.exp((1 - f) * np.log(k1) + f * np.log(k2))
    assert np.max(np.abs(np.log(kd / k[1]))) > 0.01
    # outside the table: clamped, with a warning naming the range (as opacity.py)
    with pytest.warns(op.OpacityRangeWarning, match="300-1200 K"):
        kc = two.species_k_coefficients("CO2", edges, [100.0, 5000.0], n_g=8)
    np.testing.assert_allclose(kc[0], k[0], rtol=1e-12)
    np.testing.assert_allclose(kc[1], k[2], rtol=1e-12)


def test_table_without_temperature_is_temperature_independent(tmp_path):
    nu = np.linspace(4000.0, 6000.0, 300)
    p = _write_csv(tmp_path / "n.csv", "wavenumber [cm-1],cross_section [cm2]",
                   [nu, _two_level(nu, 700.0)])
    src = UserOpacitySource({"H2O": p})
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        k = src.species_k_coefficients("H2O", _BIN_EDGES_UM * 1e-6, [[100.0], [3000.0]], n_g=4,
                                       pressure_Pa=[1.0, 1e4, 1e6])
    assert k.shape == (2, 3, _BIN_EDGES_UM.size - 1, 4)
    assert np.all(k == k[0, 0])


# --------------------------------------------------------------------------
# as an opacity source
# --------------------------------------------------------------------------

def test_source_delegates_everything_else():
    # The other species and continua are snrkit's own (identical arrays).
    t = Table({"wavenumber": [4000.0, 6000.0] / u.cm, "cross_section": [1e-22, 1e-22] * u.cm**2})
    src = UserOpacitySource({"PH3": t})
    assert src.OPACITY_SPECIES == op.OPACITY_SPECIES + ("PH3",)
    edges = np.array([1.8e-6, 1.9e-6, 2.0e-6])
    np.testing.assert_array_equal(src.species_k_coefficients("H2O", edges, 700.0),
                                  op.species_k_coefficients("H2O", edges, 700.0))
    from snrkit.atmosphere import continuum
    assert src.rayleigh_cross_section is continuum.rayleigh_cross_section
    assert src.CIA_PAIRS == continuum.CIA_PAIRS
    assert src.PRESSURE_RANGE_PA == op.PRESSURE_RANGE_PA
    assert src.wavelength_range_um("PH3") == pytest.approx((1e4 / 6000.0, 1e4 / 4000.0))


@pytest.mark.parametrize("solver", ["analytic", "layers"])
@pytest.mark.parametrize("alpha", [-4.0, 2.0])
def test_power_law_table_gives_slope_alpha_scale_heights(solver, alpha):
    # (radius at the reference pressure, so that the lift by ten times the opacity shows)
    # Lecavelier des Etangs et al. 2008 (A&A 481, L83): for sigma ~ lambda^alpha
    # the effective radius changes by dR/d ln(lambda) = alpha H, H the local
    # scale height (g ~ 1/r^2 here: H(r) = H0 (r/R0)^2; the chord-length factor
    # adds 1.5 H/r, as in tests/test_spectrum.py).  Within 0.05 H (measured
    # 0.025 H; Rayleigh and CIA of the H2/He gas add a little).
    lam = np.geomspace(0.9, 3.2, 4000)
    t = Table({"wavelength": lam * u.um, "cross_section": 1e-21 * lam ** alpha * u.cm**2})
    src = UserOpacitySource({"PH3": t})
    edges = mixture.wavelength_bin_edges(30, 1.0e-6, 3.0e-6)
    ds = S.transmission_spectrum({"mixing_ratios": {"He": 0.15, "PH3": 1e-4}, "fill_gas": "H2",
                                  "reference_pressure": 1.0},
                                 R_JUP * u.m, R_SUN * u.m, gravity=25.0,
                                 equilibrium_temperature=1000.0, wavelength_edges=edges * 1e6,
                                 solver=solver, n_g=4, opacity_source=src,
                                 radius_calibration="reference-pressure")
    r_eff = np.sqrt(ds.transit_depth_ppm.values[0] * 1e-6) * R_SUN
    slope = np.polyfit(np.log(ds.wavelength.values), r_eff, 1)[0]
    h = ds.scale_height_km.values[0] * 1e3
    z = r_eff.mean() - R_JUP
    h_loc = h * ((R_JUP + z) / R_JUP) ** 2
    expect = alpha * h_loc / (1 - 1.5 * h_loc / (R_JUP + z))
    assert abs(slope - expect) < 0.05 * h
    # and the spectrum is the user's opacity: ten times the cross-section lifts
    # it by H ln 10 (same source, Heng & Kitzmann 2017, MNRAS 470, 2972)
    t10 = Table({"wavelength": lam * u.um, "cross_section": 1e-20 * lam ** alpha * u.cm**2})
    ds10 = S.transmission_spectrum({"mixing_ratios": {"He": 0.15, "PH3": 1e-4}, "fill_gas": "H2",
                                    "reference_pressure": 1.0},
                                   R_JUP * u.m, R_SUN * u.m, gravity=25.0,
                                   equilibrium_temperature=1000.0, wavelength_edges=edges * 1e6,
                                   solver=solver, n_g=4,
                                   opacity_source=UserOpacitySource({"PH3": t10}),
                                   radius_calibration="reference-pressure")
    r10 = np.sqrt(ds10.transit_depth_ppm.values[0] * 1e-6) * R_SUN
    assert np.mean(r10 - r_eff) == pytest.approx(math.log(10) * h_loc, rel=0.05)


# --------------------------------------------------------------------------
# properties
# --------------------------------------------------------------------------

@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 10_000), scale=st.floats(1e-3, 1e3), n_g=st.integers(1, 16))
@example(seed=40, scale=1.0, n_g=11)     # random wavenumbers began above a bin's edge: k = 0 there
def test_k_scales_with_the_table_and_stays_within_its_values(seed, scale, n_g):
    # Sorting commutes with a positive factor; every k lies between the
    # smallest and largest tabulated value (definition; no source).  The table
    # spans every bin (its ends are fixed): outside the table the cross-section
    # is zero by the documented rule, and k = 0 is then right.
    rng = np.random.default_rng(seed)
    nu = np.unique(np.concatenate([[4000e2, 6000e2], rng.uniform(4000e2, 6000e2, 198)]))
    sig = 10 ** rng.uniform(-28, -22, nu.size)
    edges = np.sort(1.0 / rng.uniform(nu[0], nu[-1], 4))
    g, _ = op.g_quadrature(n_g)
    k = sorted_k_distribution(nu, sig, edges, g)
    ks = sorted_k_distribution(nu, sig * scale, edges, g)
    np.testing.assert_allclose(ks, k * scale, rtol=1e-9)
    assert np.all(np.diff(k, axis=-1) >= 0)
    assert np.all(k >= sig.min() * (1 - 1e-9)) and np.all(k <= sig.max() * (1 + 1e-9))


# --------------------------------------------------------------------------
# bad input
# --------------------------------------------------------------------------

_H = "wavenumber [cm-1],cross_section [cm2]\n"


@pytest.mark.parametrize("text,kwargs,exc,match", [
    (_H + "4000,1e-20\n4001,nan\n", {}, InputError, r"'cross_section', row 2.*NaN"),
    (_H + "4000,1e-20\n4001,\n", {}, InputError, r"'cross_section', row 2.*NaN"),
    (_H + "4000,1e-20\n4001,-1e-21\n", {}, InputError, r"row 2.*>= 0"),
    (_H + "4000,1e-20\n4002,1e-20\n4001,1e-20\n", {}, InputError, r"row 3.*out of order"),
    (_H + "4000,1e-20\n4000,1e-20\n", {}, InputError, r"row 2.*duplicate"),
    (_H + "4000,1e-20\n", {}, InputError, "at least 2 rows"),
    ("wavenumber [cm-1],cross_section [cm2],temperature [K]\n4000,1e-20,300\n4001,1e-20,300\n"
     "4000,1e-20,600\n", {}, InputError, r"600 K block.*at least 2"),
    ("wavenumber [cm-1],cross_section [cm2],temperature [K]\n4000,1e-20,300\n4001,1e-20,300\n"
     "4000,1e-20,600\n4001,1e-20,600\n4000,1e-20,300\n4001,1e-20,300\n", {}, InputError,
     r"row 5.*contiguous"),
    ("wavenumber [cm-1],cross_section [cm2],temperature [K]\n4000,1e-20,300\n4001,1e-20,-5\n",
     {}, InputError, r"'temperature', row 2"),
    ("wavenumber,cross_section\n4000,1e-20\n4001,1e-20\n", {}, UnitMismatchError,
     r"'wavenumber' unit.*no unit"),
    ("wavenumber,cross_section\n4000,1e-20\n4001,1e-20\n", {"spectral_unit": "kg"},
     UnitMismatchError, "length, wavenumber, frequency or energy"),
    ("wavenumber [um],cross_section [cm2]\n4000,1e-20\n4001,1e-20\n", {}, UnitMismatchError,
     "inverse length"),
    ("wavenumber [cm-1],cross_section [cm]\n4000,1e-20\n4001,1e-20\n", {}, UnitMismatchError,
     "area"),
    ("wavenumber [cm-1],cross_section [cm2],temperture [K]\n4000,1e-20,3\n4001,1e-20,3\n", {},
     UnknownKeyError, "did you mean 'temperature'"),
    ("wavenumber [cm-1],xsec [cm2]\n4000,1e-20\n4001,1e-20\n", {}, UnknownKeyError,
     r"column 'xsec'.*cross_section"),
    ("wavenumber [cm-1],temperature [K]\n4000,300\n4001,300\n", {}, InputError,
     "a cross_section column"),
    (_H + "4000,1e-20\n4001,1e-20\n", {"species": "h2o"}, UnknownKeyError, "did you mean 'H2O'"),
    (_H + "4000,1e-20\n4001,1e-20\n", {"format": "xlsx"}, InputError, "format"),
])
def test_bad_files(tmp_path, text, kwargs, exc, match):
    p = tmp_path / "bad.csv"
    p.write_text(text)
    species = kwargs.pop("species", "H2O")
    with pytest.raises(exc, match=match):
        read_cross_sections(p, species, **kwargs)


def test_bad_source_arguments(tmp_path):
    p = _write_csv(tmp_path / "ok.csv", "wavenumber [cm-1],cross_section [cm2]",
                   [np.array([4000.0, 6000.0]), np.array([1e-20, 1e-20])])
    with pytest.raises(InputError, match="existing file"):
        read_cross_sections(tmp_path / "missing.csv", "H2O")
    with pytest.raises(InputError, match="outside"):
        UserOpacitySource({"H2O": p}, outside="extrapolate")
    with pytest.raises(UnknownKeyError, match="did you mean 'CH4'"):
        UserOpacitySource({"CH5": p})
    with pytest.raises(InputError, match="a table of H2O"):
        UserOpacitySource({"CO": read_cross_sections(p, "H2O")})
    with pytest.raises(InputError, match="dict"):
        UserOpacitySource([p])
    src = UserOpacitySource({"H2O": p})
    with pytest.raises(InputError, match="wavelength_edges_m"):
        src.species_k_coefficients("H2O", [2.0e-6, 1.9e-6], 300.0)
    with pytest.raises(InputError, match="temperature_K"):
        src.species_k_coefficients("H2O", [1.9e-6, 2.0e-6], np.nan)
    with pytest.raises(InputError, match="n_g"):
        src.species_k_coefficients("H2O", [1.9e-6, 2.0e-6], 300.0, n_g=0)


@settings(max_examples=40, deadline=None)
@given(rows=st.integers(1, 40), cols=st.integers(2, 4), header=st.booleans(),
       commas=st.booleans(), comments=st.booleans(), seed=st.integers(0, 2**31 - 1))
def test_fast_text_reader_equals_the_line_reader(tmp_path_factory, rows, cols, header, commas,
                                                  comments, seed):
    # np.loadtxt (the fast path for large files) and the line-by-line reader read the
    # same numbers, names and units from every well-formed text file
    from snrkit.atmosphere import cross_section_files
    rng = np.random.default_rng(seed)
    data = rng.uniform(-1e3, 1e3, (rows, cols)) * 10.0 ** rng.integers(-30, 5, (rows, cols))
    sep = ", " if commas else "  "
    lines = []
    if comments:
        lines.append("# a comment line")
    if header:
        lines.append(sep.join(["wavelength [um]", "sigma [cm2/molecule]", "t [K]", "p [bar]"][:cols]))
    for r in data:
        lines.append(sep.join(repr(float(x)) for x in r) + ("  # note" if comments else ""))
    path = tmp_path_factory.mktemp("xs") / "table.txt"
    path.write_text("\n".join(lines) + "\n")
    fast = cross_section_files._read_text_fast(path.read_text())
    slow = cross_section_files._read_text_lines(path.read_text().splitlines(), path, "f")
    assert fast is not None
    assert fast[0] == slow[0] and fast[1] == slow[1]
    for a, b in zip(fast[2], slow[2]):
        np.testing.assert_array_equal(a, b)


def test_malformed_text_still_names_its_line(tmp_path):
    from snrkit.atmosphere import cross_section_files
    path = tmp_path / "bad.txt"
    path.write_text("1.0 2.0\n3.0 x\n")
    with pytest.raises(InputError, match="line 2"):
        cross_section_files._read_text(path, "f")
