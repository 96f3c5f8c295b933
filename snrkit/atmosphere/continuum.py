"""Continuum opacity: Rayleigh scattering, collision-induced absorption, haze.

Rayleigh scattering cross-section of a dilute gas (e.g. Sneep & Ubachs 2005,
JQSRT 92, 293, eq. 2)

    sigma = 24 pi^3 nu^4 / N^2 ((n^2 - 1)/(n^2 + 2))^2 F_K(nu)

with the refractive index n at the number density N of the formula's
reference conditions and the King correction factor F_K for molecular
anisotropy.  For a gas given by its polarizability alpha (volume units),
(n^2 - 1)/(n^2 + 2) = 4 pi N alpha / 3.  Per species:

=====  ===============================================================
N2     refractivity and F_K from Sneep & Ubachs 2005 (after Peck & Khanna
       1966 and Bates 1984), 288.15 K, 1013.25 hPa
O2     refractivity and F_K from Sneep & Ubachs 2005 (after Bates 1984),
       taken at 273.15 K (see :func:`refractivity`)
CO2    refractivity (Bideau-Mehu et al. 1973) and F_K from Sneep & Ubachs 2005
CH4    volume polarizability 2.630e-30 m^3 (n - 1 = 4.44e-4 at 273.15 K,
       589 nm; value from memory), no dispersion, F_K = 1
Ar     Peck & Fisher 1964 (J. Opt. Soc. Am. 54, 1362), 288.15 K, F_K = 1
He     Mansfield & Peck 1969 (J. Opt. Soc. Am. 59, 199), 273.15 K, F_K = 1
H2     Dalgarno & Williams 1962 (ApJ 136, 690) cross-section series
H2O    volume polarizability 1.47e-30 m^3 (from the refractivity of water
       vapour, n - 1 = 2.5e-4 at 273.15 K, 1 atm; value from memory),
       F_K = 1, no dispersion (common practice, no source)
=====  ===============================================================

Coefficients are values from memory of the cited papers; the tests compare
the result with published cross-sections.

Collision-induced absorption: binary coefficients K(nu, T) [m^5] as sums of
Gaussian band envelopes from ``data_tables/cia/cia_bands.ecsv`` (values from
memory, approximate; see that file).  The absorption coefficient is
alpha = K n1 n2 [m^-1].

Haze: an enhanced-Rayleigh cross-section per molecule,
``enhancement * sigma_H2(lambda_ref) * (lambda / lambda_ref)**slope``
(the parametrisation of Lecavelier des Etangs et al. 2008, A&A 481, L83).
"""

import warnings
from functools import lru_cache

import numpy as np

from ..errors import InputError, UnknownKeyError
from ..io.tables import read_columns
from .opacity import OpacityRangeWarning

__all__ = ["RAYLEIGH_SPECIES", "CIA_PAIRS", "rayleigh_cross_section", "cia_coefficient",
           "haze_cross_section", "king_factor", "refractivity", "cia_temperature_range"]

RAYLEIGH_SPECIES = ("H2", "He", "N2", "O2", "CO2", "H2O", "CH4", "Ar")
CIA_PAIRS = ("H2-H2", "H2-He", "N2-N2", "O2-O2", "CO2-CO2")

_N_288 = 2.546899e25      # m^-3 at 288.15 K, 1013.25 hPa (Sneep & Ubachs 2005)
_N_273 = 2.686780e25      # m^-3 at 273.15 K, 1013.25 hPa (Loschmidt constant)
_MIN_WAVELENGTH_M = 0.2e-6
#: volume polarizabilities [m^3] from refractivities at 273.15 K, 1 atm,
#: 589 nm: H2O n - 1 = 2.5e-4, CH4 n - 1 = 4.44e-4 (CRC Handbook of Chemistry
#: and Physics, "Index of refraction of gases"; values from memory); no
#: dispersion (a few per cent across the visible; common practice, no source)
_ALPHA_H2O_M3 = 1.47e-30
_ALPHA_CH4_M3 = 2.630e-30


def _unknown(field, value, allowed):
    import difflib
    close = difflib.get_close_matches(str(value), allowed, n=1)
    raise UnknownKeyError(field, value, "one of " + ", ".join(allowed),
                          detail=f"did you mean {close[0]!r}?" if close else "")


def _wavelength(wavelength_m):
    lam = np.asarray(wavelength_m, dtype=np.float64)
    if not np.all(np.isfinite(lam)) or np.any(lam < _MIN_WAVELENGTH_M):
        bad = lam[~(np.isfinite(lam) & (lam >= _MIN_WAVELENGTH_M))].flat[0]
        raise InputError("wavelength_m", float(bad),
                         f"finite wavelengths >= {_MIN_WAVELENGTH_M:g} m (formulas fitted in "
                         "the ultraviolet to infrared)")
    return lam


def refractivity(species, wavelength_m):
    """Refractivity n - 1 and the number density it refers to.

    Parameters
    ----------
    species : str
        One of N2, O2, CO2, CH4, Ar, He.
    wavelength_m : array_like
        Vacuum wavelength [m].

    Returns
    -------
    n_minus_1 : numpy.ndarray
    number_density : float
        m^-3 of the formula's reference conditions.
    """
    lam = _wavelength(wavelength_m)
    nu = 1e-2 / lam                     # cm^-1
    s2 = (1e-6 / lam) ** 2              # um^-2
    if species == "N2":
        n1 = np.where(nu > 21360.0,
                      5677.465 + 318.81874e12 / (14.4e9 - nu ** 2),
                      6498.2 + 307.43305e12 / (14.4e9 - nu ** 2)) * 1e-8
        return n1, _N_288
    if species == "O2":
        # refers to 273.15 K: with N at 288.15 K the N2/O2/Ar mixture would
        # exceed the dry-air refractivity of Peck & Reeder 1972 by 1 %
        return (20564.8 + 2.480899e13 / (4.09e9 - nu ** 2)) * 1e-8, _N_273
    if species == "CO2":
        # the formula's fifth term, 0.1218145e-4 / (2418.136^2 - nu^2), models
        # the nu3 resonance at 4.1 um and is left out: it is below 1e-7 of the
        # total in the visible and has a pole inside our range
        n1 = 1.1427e3 * (5799.25 / (128908.9 ** 2 - nu ** 2) + 120.05 / (89223.8 ** 2 - nu ** 2)
                         + 5.3334 / (75037.5 ** 2 - nu ** 2) + 4.3244 / (67837.7 ** 2 - nu ** 2))
        return n1, _N_288
    if species == "CH4":
        return 2.0 * np.pi * _N_273 * _ALPHA_CH4_M3 * np.ones_like(lam), _N_273
    if species == "Ar":
        return 6.432135e-5 + 2.8606e-2 / (144.0 - s2), _N_288
    if species == "He":
        return 0.01470091 / (423.98 - s2), _N_273
    _unknown("species", species, ("N2", "O2", "CO2", "CH4", "Ar", "He"))


def king_factor(species, wavelength_m):
    """King correction factor F_K (Sneep & Ubachs 2005; 1 for atoms, CH4, H2O)."""
    lam = _wavelength(wavelength_m)
    nu = 1e-2 / lam
    if species == "N2":
        return 1.034 + 3.17e-12 * nu ** 2
    if species == "O2":
        return 1.096 + 1.385e-11 * nu ** 2 + 1.448e-20 * nu ** 4
    if species == "CO2":
        return 1.1364 + 25.3e-12 * nu ** 2
    if species in ("CH4", "Ar", "He", "H2O", "H2"):
        return np.ones_like(lam)
    _unknown("species", species, RAYLEIGH_SPECIES)




def rayleigh_cross_section(species, wavelength_m):
    """Rayleigh scattering cross-section per molecule.

    Parameters
    ----------
    species : str
        One of :data:`RAYLEIGH_SPECIES`.
    wavelength_m : array_like
        Vacuum wavelength [m], >= 0.2 um (the O2 formula has a pole at 156 nm).

    Returns
    -------
    numpy.ndarray
        Cross-section [m^2] (see the module docstring for the sources).
    """
    if species not in RAYLEIGH_SPECIES:
        _unknown("species", species, RAYLEIGH_SPECIES)
    lam = _wavelength(wavelength_m)
    nu = 1.0 / lam                                     # m^-1
    if species == "H2":
        la = lam * 1e10                                # Angstrom
        return (8.14e-13 / la ** 4 + 1.28e-6 / la ** 6 + 1.61 / la ** 8) * 1e-4
    if species == "H2O":
        return 128.0 * np.pi ** 5 / 3.0 * _ALPHA_H2O_M3 ** 2 * nu ** 4 * king_factor("H2O", lam)
    n1, dens = refractivity(species, lam)
    n = 1.0 + n1
    ll = (n ** 2 - 1.0) / (n ** 2 + 2.0)
    return 24.0 * np.pi ** 3 * nu ** 4 / dens ** 2 * ll ** 2 * king_factor(species, lam)


@lru_cache(maxsize=1)
def _cia_bands():
    t = read_columns("cia", "cia_bands.ecsv")
    out = {}
    for row in t.rows():
        out.setdefault(str(row["pair"]), []).append(
            (100.0 * float(row["centre"]), 100.0 * float(row["fwhm_296"]),
             1e-10 * float(row["peak_296"]), float(row["peak_t_exponent"]),
             float(row["width_t_exponent"])))
    lo, hi = t.meta["temperature_range_K"]
    return out, (float(lo), float(hi))


def cia_temperature_range():
    """(lowest, highest) temperature [K] of the CIA band model."""
    return _cia_bands()[1]


def cia_coefficient(pair, wavelength_m, temperature_K):
    """Collision-induced binary absorption coefficient.

    Parameters
    ----------
    pair : str
        One of :data:`CIA_PAIRS`.
    wavelength_m : array_like
        Wavelength [m], 1-D (or broadcastable against ``temperature_K[..., None]``).
    temperature_K : array_like
        Temperature [K]; clamped to :func:`cia_temperature_range` with an
        :class:`~snrkit.atmosphere.opacity.OpacityRangeWarning`.

    Returns
    -------
    numpy.ndarray
        K [m^5], shape ``temperature_K.shape + wavelength.shape``; the
        absorption coefficient is ``K * n1 * n2`` [m^-1] for number densities
        n1, n2 [m^-3].
    """
    bands, (t_lo, t_hi) = _cia_bands()
    if pair not in bands:
        _unknown("pair", pair, CIA_PAIRS)
    lam = _wavelength(wavelength_m)
    t = np.asarray(temperature_K, dtype=np.float64)
    if not np.all(np.isfinite(t)) or np.any(t <= 0):
        raise InputError("temperature_K", "non-finite or non-positive value", "temperatures > 0 K")
    if np.any(t < t_lo) or np.any(t > t_hi):
        warnings.warn(OpacityRangeWarning(
            f"temperature_K: values outside the CIA model range {t_lo:g}-{t_hi:g} K "
            f"(got {t.min():g}-{t.max():g}); clamped to the range"), stacklevel=2)
        t = np.clip(t, t_lo, t_hi)
    nu = 1.0 / lam
    tt = (t / 296.0)[..., None] if t.ndim or lam.ndim else t / 296.0
    out = 0.0
    for centre, fwhm, peak, a, b in bands[pair]:
        width = fwhm * tt ** b
        out = out + peak * tt ** a * np.exp(-4.0 * np.log(2.0) * ((nu - centre) / width) ** 2)
    return np.asarray(out, dtype=np.float64)


def haze_cross_section(wavelength_m, enhancement, slope, reference_wavelength_m=0.35e-6):
    """Enhanced-Rayleigh haze cross-section per molecule.

    Parameters
    ----------
    wavelength_m : array_like
        Wavelength [m].
    enhancement : array_like
        Factor over the H2 Rayleigh cross-section at the reference
        wavelength (>= 0); broadcast against ``wavelength_m``.
    slope : array_like
        Power-law index in wavelength (-4 for Rayleigh-like).
    reference_wavelength_m : float
        Reference wavelength [m] (default 0.35 um).

    Returns
    -------
    numpy.ndarray
        ``enhancement * sigma_H2(ref) * (lambda / ref)**slope`` [m^2]
        (Lecavelier des Etangs et al. 2008, A&A 481, L83).
    """
    lam = _wavelength(wavelength_m)
    enh = np.asarray(enhancement, dtype=np.float64)
    slp = np.asarray(slope, dtype=np.float64)
    if not np.all(np.isfinite(enh)) or np.any(enh < 0):
        raise InputError("enhancement", "negative or non-finite value", "a factor >= 0")
    if not np.all(np.isfinite(slp)) or np.any(np.abs(slp) > 20):
        raise InputError("slope", "value out of range", "a finite power-law index in [-20, 20]")
    ref = float(reference_wavelength_m)
    if not np.isfinite(ref) or ref < _MIN_WAVELENGTH_M:
        raise InputError("reference_wavelength_m", ref, f"a wavelength >= {_MIN_WAVELENGTH_M:g} m")
    return enh * rayleigh_cross_section("H2", ref) * (lam / ref) ** slp
