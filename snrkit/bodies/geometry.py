"""Orbit and transit geometry: pure numpy compute functions in SI units.

All functions broadcast over a leading planet axis.  Formulas follow Winn
2010, "Transits and Occultations", in *Exoplanets*, ed. S. Seager (Univ. of
Arizona Press), arXiv:1001.2010; equation numbers refer to that chapter.
"""

import numpy as np

from ..constants import G

__all__ = [
    "semi_major_axis_from_period", "period_from_semi_major_axis",
    "eccentricity_factor", "impact_parameter_from_inclination",
    "inclination_from_impact_parameter", "transit_duration", "transit_depth",
]


def semi_major_axis_from_period(period_s, mass_total_kg):
    """Kepler's third law, a = [G M P^2 / (4 pi^2)]^(1/3).

    Parameters
    ----------
    period_s : array_like
        Orbital period [s].
    mass_total_kg : array_like
        Star plus planet mass [kg].

    Returns
    -------
    numpy.ndarray
        Semi-major axis [m].
    """
    return np.cbrt(G * np.asarray(mass_total_kg) * np.asarray(period_s) ** 2 / (4 * np.pi ** 2))


def period_from_semi_major_axis(a_m, mass_total_kg):
    """Kepler's third law, P = 2 pi sqrt(a^3 / (G M)) [s]."""
    return 2 * np.pi * np.sqrt(np.asarray(a_m) ** 3 / (G * np.asarray(mass_total_kg)))


def eccentricity_factor(ecc, omega_rad):
    """Eccentric-orbit factor (1 - e^2) / (1 + e sin w) at conjunction.

    This is the planet-star distance at mid-transit in units of a (Winn
    2010, eq. 5 with f = pi/2 - w).  The transit durations scale by
    sqrt(1 - e^2) / (1 + e sin w) (Winn 2010, eq. 16).
    """
    ecc = np.asarray(ecc, dtype=np.float64)
    return (1 - ecc ** 2) / (1 + ecc * np.sin(omega_rad))


def impact_parameter_from_inclination(a_over_rs, inc_rad, ecc, omega_rad):
    """b = (a |cos i| / Rs) (1 - e^2) / (1 + e sin w)  (Winn 2010, eq. 7).

    The impact parameter is a sky-projected distance and so never negative:
    an inclination i > 90 deg gives the same b as 180 deg - i.
    """
    return a_over_rs * np.abs(np.cos(inc_rad)) * eccentricity_factor(ecc, omega_rad)


def inclination_from_impact_parameter(a_over_rs, b, ecc, omega_rad):
    """Inverse of :func:`impact_parameter_from_inclination` [rad], in [0, 90 deg]."""
    cosi = np.asarray(b) / (a_over_rs * eccentricity_factor(ecc, omega_rad))
    return np.arccos(np.clip(cosi, -1.0, 1.0))


def transit_duration(period_s, a_over_rs, k, b, inc_rad, ecc, omega_rad, *, inner=False):
    """Total (T14) or full (T23) transit duration [s].

    T14 = (P / pi) asin[(Rs/a) sqrt((1 + k)^2 - b^2) / sin i]
    x sqrt(1 - e^2) / (1 + e sin w), and T23 the same with (1 - k)^2
    (Winn 2010, eqs. 14-16).

    Parameters
    ----------
    period_s : array_like
        Period [s].
    a_over_rs : array_like
        a / R_star.
    k : array_like
        Radius ratio Rp / R_star.
    b : array_like
        Impact parameter (sky-projected separation at conjunction, in R_star).
    inc_rad : array_like
        Inclination [rad].
    ecc, omega_rad : array_like
        Eccentricity and argument of periastron [rad].
    inner : bool
        Return T23 instead of T14.

    Returns
    -------
    numpy.ndarray
        Duration [s]; 0 where the chord is too short (no transit for T14,
        grazing geometry for T23).
    """
    k = np.asarray(k, dtype=np.float64)
    b = np.asarray(b, dtype=np.float64)
    edge = (1 - k) if inner else (1 + k)
    chord2 = edge ** 2 - b ** 2
    with np.errstate(invalid="ignore"):
        arg = np.sqrt(np.clip(chord2, 0.0, None)) / (a_over_rs * np.sin(inc_rad))
    dur = (period_s / np.pi) * np.arcsin(np.clip(arg, 0.0, 1.0))
    ecc = np.asarray(ecc, dtype=np.float64)
    dur = dur * np.sqrt(1 - ecc ** 2) / (1 + ecc * np.sin(omega_rad))
    ok = chord2 > 0
    if inner:
        ok = ok & (k < 1)  # a planet larger than its star has no T23 (no flat bottom)
    return np.where(ok, dur, 0.0)


def transit_depth(rp_m, rs_m):
    """Geometric transit depth (Rp / Rs)^2 (dimensionless, no limb darkening)."""
    return (np.asarray(rp_m) / np.asarray(rs_m)) ** 2
