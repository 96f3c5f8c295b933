"""Planet metrics: temperatures, insolation, scale height, TSM/ESM, mass
estimates and habitable-zone position.  Pure numpy compute functions in SI
(unless a published formula fixes other units, as stated), broadcasting
over a leading planet axis.
"""

import numpy as np

from ..constants import (K_B, M_U, H_PLANCK, C_LIGHT, SIGMA_SB, L_SUN, AU,
                        R_EARTH, M_EARTH, R_SUN)
from ..io.tables import read_columns

__all__ = [
    "equilibrium_temperature", "luminosity", "insolation",
    "scale_height", "annulus_signal",
    "tsm_scale_factor", "transmission_spectroscopy_metric",
    "emission_spectroscopy_metric",
    "mass_from_radius", "MASS_RADIUS_MAX_EARTH_RADII",
    "habitable_zone_fluxes", "habitable_zone_position", "HZ_LIMITS",
    "HZ_TEFF_RANGE_K",
]


def equilibrium_temperature(teff_K, rs_m, a_m, albedo=0.0, redistribution=0.25):
    """Equilibrium temperature Teq = Teff sqrt(Rs/a) [f (1 - A)]^(1/4).

    Parameters
    ----------
    teff_K : array_like
        Stellar effective temperature [K].
    rs_m, a_m : array_like
        Stellar radius and orbital distance [m].
    albedo : array_like
        Bond albedo A (default 0).
    redistribution : array_like
        Heat-redistribution factor f: 1/4 for full redistribution over the
        sphere (default), 1/2 for dayside only (e.g. Seager 2010,
        *Exoplanet Atmospheres*, eq. 3.9; Kempton et al. 2018 use f = 1/4,
        A = 0 for the TSM).

    Notes
    -----
    For an eccentric orbit this uses the semi-major axis (the usual
    convention), whereas :func:`insolation` is the orbit average, larger by
    1 / sqrt(1 - e^2).

    Returns
    -------
    numpy.ndarray
        Teq [K].
    """
    return (np.asarray(teff_K) * np.sqrt(np.asarray(rs_m) / np.asarray(a_m))
            * (np.asarray(redistribution) * (1 - np.asarray(albedo))) ** 0.25)


def luminosity(teff_K, rs_m):
    """Stellar luminosity L = 4 pi R^2 sigma Teff^4 [W]."""
    return 4 * np.pi * np.asarray(rs_m) ** 2 * SIGMA_SB * np.asarray(teff_K) ** 4


def insolation(teff_K, rs_m, a_m, ecc=0.0):
    """Orbit-averaged bolometric flux at the planet relative to Earth's.

    S / S_earth = (L / L_sun) / (a / au)^2 / sqrt(1 - e^2), the time-averaged
    flux of an eccentric orbit (Williams & Pollard 2002, Int. J. Astrobiol.
    1, 61, eq. 2).  L_sun is the IAU 2015 nominal luminosity.
    """
    ecc = np.asarray(ecc, dtype=np.float64)
    return (luminosity(teff_K, rs_m) / L_SUN) / (np.asarray(a_m) / AU) ** 2 / np.sqrt(1 - ecc ** 2)


def scale_height(temperature_K, mu_g_mol, gravity_m_s2):
    """Pressure scale height H = k T / (mu m_u g) [m].

    Parameters
    ----------
    temperature_K : array_like
        Atmospheric temperature [K].
    mu_g_mol : array_like
        Mean molecular weight [g/mol] (= mean molecular mass in u).
    gravity_m_s2 : array_like
        Gravitational acceleration [m s-2].
    """
    return K_B * np.asarray(temperature_K) / (np.asarray(mu_g_mol) * M_U * np.asarray(gravity_m_s2))


def annulus_signal(h_m, rp_m, rs_m):
    """Transit-depth change of an annulus one scale height thick, 2 H Rp / Rs^2.

    Dimensionless (multiply by 1e6 for ppm).  A spectral feature spanning
    N_H scale heights changes the depth by about N_H times this (common
    practice, no source for the value of N_H; see e.g. Kempton et al. 2018,
    Section 2).
    """
    return 2 * np.asarray(h_m) * np.asarray(rp_m) / np.asarray(rs_m) ** 2


# Kempton et al. 2018, PASP 130, 114401, Table 1: TSM scale factors by radius bin.
_TSM_EDGES = np.array([1.5, 2.75, 4.0])  # R_earth
_TSM_FACTORS = np.array([0.190, 1.26, 1.28, 1.15])


def tsm_scale_factor(rp_earth):
    """TSM scale factor for a radius in Earth radii (Kempton et al. 2018, Table 1).

    0.190 (R < 1.5), 1.26 (1.5 <= R < 2.75), 1.28 (2.75 <= R < 4.0), 1.15
    (4.0 <= R < 10).  Kempton et al. define no bin above 10 R_earth; snrkit
    uses 1.15 there too (common practice, no source).
    """
    rp = np.asarray(rp_earth, dtype=np.float64)
    return _TSM_FACTORS[np.searchsorted(_TSM_EDGES, rp, side="right")]


def transmission_spectroscopy_metric(rp_m, mp_kg, rs_m, teq_K, mag_j):
    """Transmission spectroscopy metric (Kempton et al. 2018, PASP 130, 114401, eq. 1).

    TSM = s(Rp) Rp^3 Teq / (Mp Rs^2) 10^(-mJ/5), with Rp in R_earth, Mp in
    M_earth, Rs in R_sun, Teq [K] for zero albedo and full redistribution,
    and mJ the apparent J magnitude.  NaN where mJ is missing.
    """
    rp = np.asarray(rp_m) / R_EARTH
    mp = np.asarray(mp_kg) / M_EARTH
    rs = np.asarray(rs_m) / R_SUN
    return tsm_scale_factor(rp) * rp ** 3 * np.asarray(teq_K) / (mp * rs ** 2) * 10 ** (-np.asarray(mag_j) / 5)


def _planck_lambda(wavelength_m, temperature_K):
    x = H_PLANCK * C_LIGHT / (wavelength_m * K_B * np.asarray(temperature_K))
    with np.errstate(over="ignore"):  # very cold planets: B -> 0, ESM -> 0
        return 2 * H_PLANCK * C_LIGHT ** 2 / wavelength_m ** 5 / np.expm1(x)


def emission_spectroscopy_metric(rp_m, rs_m, teq_K, teff_K, mag_k):
    """Emission spectroscopy metric (Kempton et al. 2018, PASP 130, 114401, eq. 4).

    ESM = 4.29e6 B(7.5 um, T_day) / B(7.5 um, Teff) (Rp/Rs)^2 10^(-mK/5),
    with T_day = 1.10 Teq and mK the apparent Ks magnitude.
    """
    lam = 7.5e-6
    ratio = _planck_lambda(lam, 1.10 * np.asarray(teq_K)) / _planck_lambda(lam, teff_K)
    return 4.29e6 * ratio * (np.asarray(rp_m) / np.asarray(rs_m)) ** 2 * 10 ** (-np.asarray(mag_k) / 5)


def _mass_radius_rows():
    t = read_columns("mass_radius.ecsv")
    return [(float(r["radius_min"]), float(r["radius_max"]), float(r["coefficient"]),
             float(r["exponent"]), float(r["sigma_log10_mass"])) for r in t.rows()]


#: Largest radius [R_earth] at which :func:`mass_from_radius` applies.
MASS_RADIUS_MAX_EARTH_RADII = 14.26


def mass_from_radius(rp_m):
    """Estimate a planet mass from its radius (Chen & Kipping 2017, ApJ 834, 17).

    Uses the two power laws as quoted by Kempton et al. 2018, eq. 2:
    M = 0.9718 R^3.58 (R < 1.23) and M = 1.436 R^1.70 (1.23 <= R < 14.26),
    in Earth units.  Above 14.26 R_earth mass is not constrained by radius
    and NaN is returned.

    Returns
    -------
    mass_kg : numpy.ndarray
        Estimated mass [kg].
    sigma_log10_mass : numpy.ndarray
        Intrinsic scatter of the relation in dex (Chen & Kipping 2017,
        Table 1, converted; see ``data_tables/mass_radius.ecsv``).
    """
    r = np.asarray(rp_m, dtype=np.float64) / R_EARTH
    mass = np.full(r.shape, np.nan)
    sig = np.full(r.shape, np.nan)
    for rmin, rmax, coef, expo, s in _mass_radius_rows():
        sel = (r >= rmin) & (r < rmax)
        mass = np.where(sel, coef * r ** expo, mass)
        sig = np.where(sel, s, sig)
    return mass * M_EARTH, sig


def _hz_table():
    t = read_columns("habitable_zone.ecsv")
    return {str(r["limit"]): (float(r["seff_sun"]), float(r["a"]), float(r["b"]),
                              float(r["c"]), float(r["d"])) for r in t.rows()}


#: Names of the habitable-zone flux limits, hottest first.
HZ_LIMITS = ("recent_venus", "runaway_greenhouse", "maximum_greenhouse", "early_mars")
#: Teff range of validity of the Kopparapu et al. polynomials [K].
HZ_TEFF_RANGE_K = (2600.0, 7200.0)


def habitable_zone_fluxes(teff_K):
    """Habitable-zone flux limits S_eff (in units of Earth's insolation).

    Kopparapu et al. 2014, ApJL 787, L29, eq. 4 and Table 1 (1 Earth mass):
    S_eff = S_eff_sun + a T + b T^2 + c T^3 + d T^4, T = Teff - 5780 K.
    NaN outside 2600-7200 K, where the fits do not apply.

    Returns
    -------
    dict of str to numpy.ndarray
        One array per limit in :data:`HZ_LIMITS`.
    """
    teff = np.asarray(teff_K, dtype=np.float64)
    t = teff - 5780.0
    valid = (teff >= HZ_TEFF_RANGE_K[0]) & (teff <= HZ_TEFF_RANGE_K[1])
    out = {}
    for name, (s0, a, b, c, d) in _hz_table().items():
        s = s0 + a * t + b * t ** 2 + c * t ** 3 + d * t ** 4
        out[name] = np.where(valid, s, np.nan)
    return out


def habitable_zone_position(s_planet, teff_K):
    """Where a planet sits relative to the habitable zone.

    Parameters
    ----------
    s_planet : array_like
        Insolation relative to Earth's.
    teff_K : array_like
        Stellar effective temperature [K].

    Returns
    -------
    numpy.ndarray of str
        ``"inner"`` (hotter than the recent-Venus limit), ``"optimistic"``
        (between recent Venus and runaway greenhouse, or between maximum
        greenhouse and early Mars), ``"conservative"`` (between runaway
        and maximum greenhouse), ``"outer"`` (colder than early Mars), or
        ``"undefined"`` where Teff is outside 2600-7200 K.
    """
    s = np.asarray(s_planet, dtype=np.float64)
    lim = habitable_zone_fluxes(teff_K)
    s, rv, rg, mg, em = np.broadcast_arrays(s, lim["recent_venus"], lim["runaway_greenhouse"],
                                            lim["maximum_greenhouse"], lim["early_mars"])
    out = np.full(s.shape, "undefined", dtype="<U12")
    ok = np.isfinite(rv) & np.isfinite(s)
    out[ok & (s > rv)] = "inner"
    out[ok & (s <= rv) & (s > rg)] = "optimistic"
    out[ok & (s <= rg) & (s >= mg)] = "conservative"
    out[ok & (s < mg) & (s >= em)] = "optimistic"
    out[ok & (s < em)] = "outer"
    return out
