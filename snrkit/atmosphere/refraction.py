"""Refraction: the refractivity of a gas mixture and the pressure below which refraction hides the atmosphere."""

import numpy as np

from ..constants import K_B
from .profiles import _planet_axis, scale_height

__all__ = ["REFRACTIVITY_STP", "REFRACTIVITY_FALLBACK", "LOSCHMIDT", "mixture_refractivity",
           "refraction_floor_pressure"]


#: Refractivity ``n - 1`` of pure gases at 0 degC and 1 atm, visible light
#: (about 589 nm).  Handbook values (e.g. Kaye & Laby, "Tables of Physical and
#: Chemical Constants", refractive index of gases) -- values from memory;
#: dispersion across 0.3-30 um changes them by a few per cent, which moves the
#: refraction floor by the same fraction of its pressure.
REFRACTIVITY_STP = {
    "H2": 1.32e-4, "He": 3.5e-5, "N2": 2.97e-4, "O2": 2.71e-4, "Ar": 2.81e-4,
    "CO2": 4.49e-4, "CH4": 4.44e-4, "H2O": 2.54e-4, "CO": 3.38e-4, "NH3": 3.76e-4,
}
#: Refractivity assumed for a species without a value above (typical small
#: molecule; common practice, no source).  Only matters for trace gases.
REFRACTIVITY_FALLBACK = 3.0e-4
#: Loschmidt number density at 273.15 K and 101325 Pa [m-3] (CODATA 2018).
LOSCHMIDT = 101325.0 / (K_B * 273.15)


def mixture_refractivity(mixing_ratios):
    """Refractivity at STP of a gas mixture, ``sum_i x_i (n_i - 1)``.

    Parameters
    ----------
    mixing_ratios : dict of str to array_like
        Volume mixing ratios (summing to one).

    Returns
    -------
    numpy.ndarray
        Refractivity at 273.15 K, 101325 Pa (dimensionless).
    """
    total = 0.0
    for name, x in mixing_ratios.items():
        total = total + np.asarray(x, dtype=np.float64) * REFRACTIVITY_STP.get(
            name, REFRACTIVITY_FALLBACK)
    return np.asarray(total, dtype=np.float64)


def refraction_floor_pressure(refractivity_stp, profile, mu_g_mol, planet_radius_m,
                              gravity_m_s2, stellar_radius_m, semi_major_axis_m, n_iter=4):
    """Deepest pressure a refracted ray from the star can reach the observer from [Pa].

    A ray grazing an exponential atmosphere at radius ``r`` is bent by
    ``omega = nu(r) sqrt(2 pi r / H)`` (``nu = n - 1`` at the tangent point;
    the classical result for an isothermal atmosphere, e.g. Baum & Code 1953,
    AJ 58, 108).  Rays bent by more than the angle ``(R_* + R_p)/a`` subtended
    from the planet by the far stellar limb cannot come from the stellar disc
    (Sidis & Sari 2010; Betremieux & Kaltenegger 2014; Robinson, Fortney &
    Hubbard 2017, ApJ 850, 128, who give the analytic treatment).  Hence

    .. math:: \\nu_{max} = \\frac{R_* + R_p}{a}\\sqrt{\\frac{H}{2\\pi R_p}},\\qquad
              p_{max} = \\frac{\\nu_{max}}{\\nu_{STP}} n_{L} k_B T(p_{max}),

    with ``n_L`` the Loschmidt density.  We could not read Robinson et al.
    (2017) while writing this; the expression is derived from the bending
    angle above and written from memory of their approach.  It is solved by
    fixed-point iteration for a non-isothermal profile.

    Parameters
    ----------
    refractivity_stp : array_like, shape (n_planet,)
        Mixture refractivity at STP (:func:`mixture_refractivity`).
    profile : IsothermalProfile or GreyTwoStreamProfile
    mu_g_mol, planet_radius_m, gravity_m_s2, stellar_radius_m, semi_major_axis_m : array_like
        Shape (n_planet,); SI units, mu in g/mol.
    n_iter : int
        Fixed-point iterations for the temperature at the floor.

    Returns
    -------
    numpy.ndarray, shape (n_planet,)
        Floor pressure [Pa].
    """
    nu0 = _planet_axis(refractivity_stp, "refractivity")
    rp = _planet_axis(planet_radius_m, "planet_radius")
    g = _planet_axis(gravity_m_s2, "gravity")
    rs = _planet_axis(stellar_radius_m, "stellar_radius")
    a = _planet_axis(semi_major_axis_m, "semi_major_axis")
    mu = _planet_axis(mu_g_mol, "mean_molecular_weight")
    theta = (rs + rp) / a
    t = profile.reference_temperature()
    p = None
    for _ in range(max(1, int(n_iter))):
        h = scale_height(t, mu, g)
        nu_max = theta * np.sqrt(h / (2.0 * np.pi * rp))
        p = nu_max / nu0 * LOSCHMIDT * K_B * t
        t = profile.temperature(p[:, None])[:, 0]
    return p
