"""The validated, immutable Planet (arrays over a leading entry axis)."""

from __future__ import annotations

from typing import TYPE_CHECKING


import numpy as np
import astropy.units as u

from . import metrics as met
from ..constants import R_EARTH, M_EARTH
from ..errors import InputError
from ..units import QuantityLike, to_si, as_float_array, check_range
from .limits import LIMITS
from .star import _Frozen, _opt, _size

__all__ = ["Planet"]

if TYPE_CHECKING:   # annotations only: not imported at run time
    from collections.abc import Sequence
    import numpy.typing as npt


# size: an immutable record: __init__ checks each field (61 lines, estimates in helpers), then one-line properties
class Planet(_Frozen):
    """One or more transiting planets.

    Parameters
    ----------
    radius : Quantity, float or array
        Radius (default unit R_earth, IAU 2015 nominal equatorial).
    period : Quantity, float or array
        Orbital period (default unit d).
    mass : Quantity, float or array, optional
        Mass (default unit M_earth).  Where missing (None or NaN) it is
        estimated from the radius with the Chen & Kipping 2017 relation
        (:func:`snrkit.bodies.metrics.mass_from_radius`) and flagged in
        :attr:`mass_estimated`.
    mass_uncertainty : Quantity, float or array, optional
        1-sigma mass uncertainty (default unit M_earth).  For an estimated
        mass it defaults to the relation's intrinsic scatter.
    radius_uncertainty : Quantity, float or array, optional
        1-sigma radius uncertainty (default unit R_earth).
    semi_major_axis : Quantity, float or array, optional
        Default unit au; from Kepler's third law when missing.
    impact_parameter : float or array, optional
        b in stellar radii.  Give this or ``inclination`` (per planet: NaN
        marks the one not given); with neither, b = 0 is assumed and
        flagged in :attr:`impact_parameter_assumed`.
    inclination : Quantity, float or array, optional
        Default unit deg.
    eccentricity : float or array, optional
        In [0, 1); default 0.
    periastron_argument : Quantity, float or array, optional
        Argument of periastron of the planet's orbit (Winn 2010 convention:
        the transit happens at true anomaly 90 deg - w), default unit deg,
        default 90 (common practice, no source; with e > 0 it puts the
        transit at periastron, which shortens T14 by sqrt(1 - e^2) / (1 + e)).
    transit_midtime : float or array, optional
        A mid-transit time, BJD_TDB (days).
    transit_midtime_uncertainty, period_uncertainty : optional
        1-sigma uncertainties (default unit d).
    albedo : float or array, optional
        Bond albedo for Teq (default 0).
    redistribution : float or array, optional
        Heat-redistribution factor f for Teq, in [1/4, 2/3] (default 1/4,
        full redistribution; 1/2 uniform dayside; 2/3 instant re-radiation).
    name : str or sequence of str, optional
        Planet names.
    """

    __slots__ = ("_n", "_radius", "_radius_sigma", "_period", "_mass", "_mass_sigma", "_mass_est", "_a",
                 "_b", "_inc", "_ecc", "_omega", "_t0", "_t0_sigma", "_p_sigma",
                 "_albedo", "_redist", "_b_assumed", "_name")

    def __init__(self, radius: QuantityLike, period: QuantityLike, mass: QuantityLike | None = None,
                 mass_uncertainty: QuantityLike | None = None,
                 radius_uncertainty: QuantityLike | None = None,
                 semi_major_axis: QuantityLike | None = None,
                 impact_parameter: npt.ArrayLike | None = None,
                 inclination: QuantityLike | None = None, eccentricity: npt.ArrayLike = 0.0,
                 periastron_argument: QuantityLike = 90.0,
                 transit_midtime: QuantityLike | None = None,
                 transit_midtime_uncertainty: QuantityLike | None = None,
                 period_uncertainty: QuantityLike | None = None,
                 albedo: npt.ArrayLike = 0.0, redistribution: npt.ArrayLike = 0.25,
                 name: str | Sequence[str] | None = None) -> None:
        rad = to_si(radius, "planet.radius", u.R_earth, *LIMITS["planet.radius"])
        per = to_si(period, "planet.period", u.day, *LIMITS["planet.period"])
        rsig = _opt(radius_uncertainty, "planet.radius_uncertainty", u.R_earth,
                    *LIMITS["planet.radius_uncertainty"])
        mass_a = _opt(mass, "planet.mass", u.M_earth, *LIMITS["planet.mass"])
        msig = _opt(mass_uncertainty, "planet.mass_uncertainty", u.M_earth,
                    *LIMITS["planet.mass_uncertainty"])
        a_a = _opt(semi_major_axis, "planet.semi_major_axis", u.au,
                   *LIMITS["planet.semi_major_axis"])
        b_a, inc_a = _impact_or_inclination(impact_parameter, inclination)
        ecc = as_float_array(eccentricity, "planet.eccentricity")
        check_range(ecc, "planet.eccentricity", 0.0, 1.0, high_inclusive=False)
        omega = to_si(periastron_argument, "planet.periastron_argument", u.deg, -360.0, 360.0)
        t0 = np.asarray(np.nan) if transit_midtime is None else as_float_array(
            transit_midtime, "planet.transit_midtime")
        if transit_midtime is not None:
            check_range(t0, "planet.transit_midtime", 2.0e6, 3.0e6, unit_label="BJD_TDB",
                        allow_nan=True)
        t0s = _opt(transit_midtime_uncertainty, "planet.transit_midtime_uncertainty", u.day,
                   *LIMITS["planet.transit_midtime_uncertainty"])
        ps = _opt(period_uncertainty, "planet.period_uncertainty", u.day,
                  *LIMITS["planet.period_uncertainty"])
        alb = as_float_array(albedo, "planet.albedo")
        check_range(alb, "planet.albedo", 0.0, 1.0, high_inclusive=False)
        red = as_float_array(redistribution, "planet.redistribution")
        check_range(red, "planet.redistribution", 0.25, 2.0 / 3.0)
        names = None if name is None else np.asarray(name, dtype=str)
        n = _size(rad, rsig, per, mass_a, msig, a_a, b_a, inc_a, ecc, omega, t0, t0s, ps, alb, red,
                  *(() if names is None else (names,)))
        bc = lambda a: np.broadcast_to(a, (n,)).astype(np.float64)  # noqa: E731
        rad, mass_a, msig = bc(rad), bc(mass_a), bc(msig)
        mass_a, msig, est = _masses(rad, mass_a, msig)
        self._set("_n", n)
        self._set("_radius", rad)
        self._set("_radius_sigma", bc(rsig))
        self._set("_period", bc(per))
        self._set("_mass", mass_a)
        self._set("_mass_sigma", msig)
        self._set("_mass_est", est)
        self._set("_a", bc(a_a))
        b_a, inc_a = bc(b_a), bc(inc_a)
        b_assumed = np.isnan(b_a) & np.isnan(inc_a)
        b_a = np.where(b_assumed, 0.0, b_a)
        self._set("_b", b_a)
        self._set("_inc", inc_a)
        self._set("_ecc", bc(ecc))
        self._set("_omega", bc(omega))
        self._set("_t0", bc(t0))
        self._set("_t0_sigma", bc(t0s))
        self._set("_p_sigma", bc(ps))
        self._set("_albedo", bc(alb))
        self._set("_redist", bc(red))
        self._set("_b_assumed", b_assumed)
        self._set("_name", (np.array([f"planet-{i + 1}" for i in range(n)]) if names is None
                            else np.broadcast_to(names, (n,)).copy()))

    radius_m = property(lambda self: self._radius, doc="radius [m]")
    mass_kg = property(lambda self: self._mass, doc="mass [kg] (measured or estimated)")
    period_s = property(lambda self: self._period, doc="period [s]")
    radius = property(lambda self: (self._radius / R_EARTH) * u.R_earth, doc="radius")
    mass = property(lambda self: (self._mass / M_EARTH) * u.M_earth, doc="mass")
    mass_uncertainty = property(lambda self: (self._mass_sigma / M_EARTH) * u.M_earth,
                                doc="1-sigma mass uncertainty")
    radius_uncertainty = property(lambda self: (self._radius_sigma / R_EARTH) * u.R_earth,
                                  doc="1-sigma radius uncertainty")
    mass_estimated = property(lambda self: self._mass_est,
                              doc="True where the mass comes from the mass-radius relation")
    period = property(lambda self: (self._period * u.s).to(u.day), doc="period")
    eccentricity = property(lambda self: self._ecc, doc="eccentricity")
    periastron_argument = property(lambda self: (self._omega * u.rad).to(u.deg),
                                   doc="argument of periastron")
    transit_midtime = property(lambda self: self._t0, doc="mid-transit time [BJD_TDB]")
    transit_midtime_uncertainty = property(lambda self: (self._t0_sigma * u.s).to(u.day))
    period_uncertainty = property(lambda self: (self._p_sigma * u.s).to(u.day))
    albedo = property(lambda self: self._albedo, doc="Bond albedo")
    redistribution = property(lambda self: self._redist, doc="heat-redistribution factor")
    impact_parameter_assumed = property(lambda self: self._b_assumed,
                                        doc="True where b = 0 was assumed")
    name = property(lambda self: self._name, doc="planet names")


def _impact_or_inclination(impact_parameter, inclination):
    """The impact parameter or the inclination [rad] of each planet (NaN where not given)."""
    b_a = np.asarray(np.nan)
    inc_a = np.asarray(np.nan)
    if impact_parameter is not None:
        b_a = as_float_array(impact_parameter, "planet.impact_parameter")
        check_range(b_a, "planet.impact_parameter", *LIMITS["planet.impact_parameter"],
                    allow_nan=True)
    if inclination is not None:
        inc_a = to_si(inclination, "planet.inclination", u.deg, 0.0, 180.0, allow_nan=True)
    both = ~np.isnan(b_a) & ~np.isnan(inc_a)
    if np.any(both):
        raise InputError("planet.inclination", inclination,
                         "only one of impact_parameter and inclination per planet")
    return b_a, inc_a


def _masses(rad, mass_a, msig):
    """Masses [kg] and their 1-sigma, estimated from the radius where missing (Chen & Kipping
    2017), and which were estimated."""
    est = np.isnan(mass_a)
    if est.any():
        m_est, sig_dex = met.mass_from_radius(rad)
        bad = est & np.isnan(m_est)
        if bad.any():
            r = float(rad[bad][0] / R_EARTH)
            raise InputError("planet.mass", None,
                             "a measured mass for radii above "
                             f"{met.MASS_RADIUS_MAX_EARTH_RADII} R_earth",
                             detail=f"radius {r:.4g} R_earth is beyond the mass-radius relation")
        mass_a = np.where(est, m_est, mass_a)
        # 1-sigma of a log-normal scatter, quoted as the mean of the upper/lower offsets
        sig_abs = m_est * (10 ** sig_dex - 10 ** (-sig_dex)) / 2
        msig = np.where(est & np.isnan(msig), sig_abs, msig)
    return mass_a, msig, est
