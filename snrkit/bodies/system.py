"""The system model: a star, its transiting planets, and their derived quantities.

:class:`Star`, :class:`Planet` and :class:`System` are validated, immutable
objects.  Every numeric field accepts an astropy Quantity, a float in the
documented default unit, a ``"<number> <unit>"`` string, or an array of one
entry per planet; inside they are float64 arrays in SI.
:meth:`System.derived` computes, as whole arrays over the planet axis,
everything later stages need (gravity, a/Rs, Teq, T14/T23, depth, scale
height, TSM/ESM, habitable zone) and returns an astropy Table.
"""

from __future__ import annotations

import warnings
from typing import TYPE_CHECKING

import numpy as np
import astropy.units as u

from . import geometry as geo
from . import metrics as met
from ..constants import R_EARTH, M_EARTH, G, AU, HOUR
from ..errors import InputError, NoTransitError, GrazingTransitWarning, SnrkitWarning
from ..units import QuantityLike, as_float_array, check_range
from .limits import DEFAULT_MEAN_MOLECULAR_WEIGHT, KEPLER_TOLERANCE
from .star import Star, _Frozen, _opt
from .planet import Planet

__all__ = ["System", "derive", "common_observation"]

if TYPE_CHECKING:   # annotations only: not imported at run time
    from collections.abc import Mapping, Sequence
    from typing import Any
    import numpy.typing as npt
    from astropy.table import QTable


# size: an immutable record: __init__ (44 lines, its checks in helpers), one-line properties and short methods
class System(_Frozen):
    """A star with one or more planets (or a catalogue: one star entry per planet).

    Parameters
    ----------
    star : Star
        One entry (shared by all planets) or one per planet.
    planet : Planet
        The planets.
    mean_molecular_weight : float or array, optional
        Atmospheric mean molecular weight [g/mol] per planet for the scale
        height; NaN or None means :data:`DEFAULT_MEAN_MOLECULAR_WEIGHT`.
    atmosphere_temperature : Quantity, float or array, optional
        Temperature for the scale height (default unit K); default
        ``atmosphere_temperature_factor`` x Teq.
    atmosphere_temperature_factor : float or array, optional
        Scale-height temperature as a multiple of Teq where no temperature is
        given (default 1).
    atmospheres : sequence of dict, optional
        Raw per-planet atmosphere descriptions (from a system file), kept for
        later stages.
    observations : sequence of dict, optional
        Raw per-planet observation descriptions.
    warn_kepler : bool, optional
        Warn where a given semi-major axis disagrees with Kepler's third
        law by more than :data:`KEPLER_TOLERANCE` (default False: catalogues
        flag rows instead; system files warn).  The per-planet flags are in
        :attr:`kepler_mismatch` either way.

    Raises
    ------
    NoTransitError
        Where b >= 1 + Rp/Rs.
    InputError
        Inconsistent inputs (e.g. a semi-major axis, or an eccentric
        orbit's periastron, inside the star, or Rp >= R_star).

    Warns
    -----
    GrazingTransitWarning
        Where 1 - Rp/Rs < b < 1 + Rp/Rs (T23 = 0).
    SnrkitWarning
        With ``warn_kepler``, where a given semi-major axis differs from
        Kepler's third law by more than :data:`KEPLER_TOLERANCE`.
    """

    __slots__ = ("_n", "star", "planet", "_a", "_b", "_inc", "_mu", "_tatm", "_tfac",
                 "atmospheres", "observations", "grazing", "kepler_mismatch")

    def __init__(self, star: Star, planet: Planet, mean_molecular_weight: npt.ArrayLike | None = None,
                 atmosphere_temperature: QuantityLike | None = None,
                 atmosphere_temperature_factor: npt.ArrayLike = 1.0,
                 atmospheres: Sequence[Mapping[str, Any] | None] | None = None,
                 observations: Sequence[Mapping[str, Any] | None] | None = None,
                 warn_kepler: bool = False) -> None:
        if not isinstance(star, Star):
            raise InputError("star", type(star).__name__, "a snrkit.Star")
        if not isinstance(planet, Planet):
            raise InputError("planet", type(planet).__name__, "a snrkit.Planet")
        n = len(planet)
        star = star.broadcast(n)
        self._set("_n", n)
        self._set("star", star)
        self._set("planet", planet)
        mu = np.broadcast_to(np.asarray(np.nan if mean_molecular_weight is None
                                        else mean_molecular_weight, dtype=np.float64), (n,))
        check_range(mu, "atmosphere.mean_molecular_weight", 1.0, 300.0, unit_label="g/mol",
                    allow_nan=True)
        self._set("_mu", np.where(np.isnan(mu), DEFAULT_MEAN_MOLECULAR_WEIGHT, mu))
        tatm = np.broadcast_to(_opt(atmosphere_temperature, "atmosphere.temperature", u.K,
                                    0.0, None, low_inclusive=False), (n,))
        self._set("_tatm", tatm.astype(np.float64))
        tfac = np.broadcast_to(as_float_array(atmosphere_temperature_factor,
                                              "atmosphere.temperature_factor"), (n,))
        check_range(tfac, "atmosphere.temperature_factor", 0.0, 10.0, low_inclusive=False)
        self._set("_tfac", tfac.astype(np.float64))
        self._set("atmospheres", tuple(atmospheres) if atmospheres is not None else (None,) * n)
        self._set("observations", tuple(observations) if observations is not None else (None,) * n)

        rs, ms = star.radius_m, star.mass_kg
        a, miss = _semi_major_axis(planet, rs, ms)
        self._set("kepler_mismatch", _kepler_mismatch(planet, a, ms, miss, warn_kepler))
        b, inc, grazing = _transit_geometry(planet, rs, a)
        self._set("_a", a)
        self._set("_b", b)
        self._set("_inc", inc)
        self._set("grazing", grazing)

    names = property(lambda self: self.planet.name, doc="planet names")
    semi_major_axis_m = property(lambda self: self._a, doc="semi-major axis [m]")
    impact_parameter = property(lambda self: self._b, doc="impact parameter [R_star]")
    inclination_rad = property(lambda self: self._inc, doc="inclination [rad]")
    mean_molecular_weight = property(lambda self: self._mu, doc="mu used for H [g/mol]")

    def select(self, name: str | Sequence[str]) -> System:
        """Return the sub-system holding only the planet called ``name``."""
        idx = np.flatnonzero(self.planet.name == name)
        if idx.size == 0:
            raise InputError("--planet", name, "one of " + ", ".join(self.planet.name))
        return self.take(idx)

    def take(self, idx: int | Sequence[int] | np.ndarray) -> System:
        """Return the sub-system of the planets at integer positions ``idx``."""
        idx = np.atleast_1d(np.asarray(idx, dtype=int))
        s, p = self.star, self.planet
        star = Star(s._teff[idx], s._radius[idx] * u.m, mass=s._mass[idx] * u.kg,
                    metallicity=s._metallicity[idx],
                    magnitudes={b: v[idx] for b, v in s._mags.items()},
                    distance=s._distance[idx] * u.m, ra=s._ra[idx] * u.rad, dec=s._dec[idx] * u.rad,
                    name=None if s._name is None else s._name[idx])
        planet = Planet(p._radius[idx] * u.m, p._period[idx] * u.s,
                        mass=np.where(p._mass_est[idx], np.nan, p._mass[idx]) * u.kg,
                        mass_uncertainty=np.where(p._mass_est[idx], np.nan,
                                                  p._mass_sigma[idx]) * u.kg,
                        radius_uncertainty=p._radius_sigma[idx] * u.m,
                        semi_major_axis=p._a[idx] * u.m,
                        impact_parameter=self._b[idx],
                        eccentricity=p._ecc[idx], periastron_argument=p._omega[idx] * u.rad,
                        transit_midtime=p._t0[idx], transit_midtime_uncertainty=p._t0_sigma[idx] * u.s,
                        period_uncertainty=p._p_sigma[idx] * u.s, albedo=p._albedo[idx],
                        redistribution=p._redist[idx], name=p._name[idx])
        object.__setattr__(planet, "_b_assumed", p._b_assumed[idx].copy())
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", GrazingTransitWarning)  # already warned once
            return System(star, planet, mean_molecular_weight=self._mu[idx],
                          atmosphere_temperature=self._tatm[idx] * u.K,
                          atmosphere_temperature_factor=self._tfac[idx],
                          atmospheres=[self.atmospheres[i] for i in idx],
                          observations=[self.observations[i] for i in idx])

    def derived_arrays(self) -> dict[str, np.ndarray]:
        """All derived quantities as a dict of SI numpy arrays (compute layer).

        See :meth:`derived` for the list and the published methods.
        """
        return derive(self)

    def derived(self) -> QTable:
        """Derived quantities of every planet as an astropy Table.

        Columns (one row per planet): ``name``, ``surface_gravity`` [m s-2],
        ``semi_major_axis`` [au], ``a_over_rs``, ``impact_parameter``,
        ``inclination`` [deg], ``equilibrium_temperature`` [K] (with the
        planet's albedo and redistribution), ``insolation`` [S_earth],
        ``transit_depth`` [ppm], ``t14`` and ``t23`` [h], ``scale_height``
        [km], ``annulus_per_scale_height`` [ppm], ``tsm``, ``esm``,
        ``mass`` [M_earth], ``mass_estimated``, ``hz_position`` and the
        four habitable-zone flux limits [S_earth].

        Returns
        -------
        astropy.table.QTable
        """
        from astropy.table import QTable
        d = derive(self)
        t = QTable()
        t["name"] = self.planet.name
        t["radius"] = d["radius_m"] / R_EARTH * u.R_earth
        t["mass"] = d["mass_kg"] / M_EARTH * u.M_earth
        t["mass_uncertainty"] = d["mass_uncertainty_kg"] / M_EARTH * u.M_earth
        t["mass_estimated"] = d["mass_estimated"]
        t["surface_gravity"] = d["surface_gravity_m_s2"] * u.m / u.s ** 2
        t["semi_major_axis"] = d["semi_major_axis_m"] / AU * u.au
        t["a_over_rs"] = d["a_over_rs"]
        t["impact_parameter"] = d["impact_parameter"]
        t["inclination"] = np.degrees(d["inclination_rad"]) * u.deg
        t["equilibrium_temperature"] = d["equilibrium_temperature_K"] * u.K
        t["insolation"] = d["insolation_earth"]
        t["transit_depth"] = d["transit_depth"] * 1e6 * u.dimensionless_unscaled
        t["t14"] = d["t14_s"] / HOUR * u.h
        t["t23"] = d["t23_s"] / HOUR * u.h
        t["mean_molecular_weight"] = d["mean_molecular_weight"] * u.g / u.mol
        t["scale_height"] = d["scale_height_m"] / 1e3 * u.km
        t["annulus_per_scale_height"] = d["annulus"] * 1e6
        t["tsm"] = d["tsm"]
        t["esm"] = d["esm"]
        t["hz_position"] = d["hz_position"]
        for lim in met.HZ_LIMITS:
            t[f"hz_{lim}"] = d[f"hz_{lim}"]
        t.meta["units_note"] = "transit_depth and annulus_per_scale_height in ppm"
        return t


def _semi_major_axis(planet, rs, ms):
    """Semi-major axes [m] (from Kepler's third law where missing), orbits outside the star."""
    a = planet._a.copy()
    miss = np.isnan(a)
    a[miss] = geo.semi_major_axis_from_period(planet._period[miss], ms[miss] + planet._mass[miss])
    inside = a <= rs + planet._radius
    if inside.any():
        i = int(np.flatnonzero(inside)[0])
        raise InputError(f"planet.semi_major_axis ({planet.name[i]})", f"{a[i] / AU:.4g} au",
                         "an orbit outside the star (a > R_star + R_planet)")
    # An eccentric orbit must also keep its periastron outside the star
    # (otherwise b, i and the durations have no meaning).
    peri_inside = a * (1 - planet._ecc) <= rs + planet._radius
    if peri_inside.any():
        i = int(np.flatnonzero(peri_inside)[0])
        raise InputError(f"planet.eccentricity ({planet.name[i]})", f"{planet._ecc[i]:.4g}",
                         f"e < 1 - (R_star + R_planet) / a = "
                         f"{1 - (rs[i] + planet._radius[i]) / a[i]:.4g}",
                         detail="the periastron a (1 - e) would lie inside the star")
    return a, miss


def _kepler_mismatch(planet, a, ms, miss, warn_kepler):
    """Planets whose given semi-major axis disagrees with Kepler's third law (a flag)."""
    given = ~miss
    a_kep = geo.semi_major_axis_from_period(planet._period, ms + planet._mass)
    mismatch = given & (np.abs(a / a_kep - 1) > KEPLER_TOLERANCE)
    if warn_kepler and mismatch.any():
        off = mismatch
        names_off = planet.name[off]
        shown = ", ".join(names_off[:5]) + (f" and {off.sum() - 5} more" if off.sum() > 5 else "")
        warnings.warn(f"semi-major axis of {shown} differs by more than "
                      f"{KEPLER_TOLERANCE:.0%} from Kepler's third law with the period "
                      "and the star's mass; the given value is used", SnrkitWarning,
                      stacklevel=3)
    return mismatch


def _transit_geometry(planet, rs, a):
    """Impact parameters and inclinations (each from the other), transiting, grazing flagged."""
    aor = a / rs
    k = planet._radius / rs
    too_big = k >= 1
    if too_big.any():
        i = int(np.flatnonzero(too_big)[0])
        raise InputError(f"planet.radius ({planet.name[i]})",
                         f"{planet._radius[i] / R_EARTH:.4g} R_earth",
                         f"a radius below the star's ({rs[i] / R_EARTH:.4g} R_earth)",
                         detail="transmission estimates need Rp/Rs < 1")
    b = planet._b.copy()
    inc = planet._inc.copy()
    from_inc = np.isnan(b)
    b[from_inc] = geo.impact_parameter_from_inclination(aor[from_inc], inc[from_inc],
                                                        planet._ecc[from_inc],
                                                        planet._omega[from_inc])
    inc[~from_inc] = geo.inclination_from_impact_parameter(aor[~from_inc], b[~from_inc],
                                                           planet._ecc[~from_inc],
                                                           planet._omega[~from_inc])
    no_transit = b >= 1 + k
    if no_transit.any():
        i = int(np.flatnonzero(no_transit)[0])
        raise NoTransitError(f"planet.impact_parameter ({planet.name[i]})", f"{b[i]:.4g}",
                             f"b < 1 + Rp/Rs = {1 + k[i]:.4g} (otherwise there is no transit)")
    grazing = b > 1 - k
    if grazing.any():
        names = ", ".join(planet.name[grazing])
        warnings.warn(f"grazing transit for {names}: b > 1 - Rp/Rs, so T23 = 0 and the "
                      "depth is less than (Rp/Rs)^2", GrazingTransitWarning, stacklevel=3)
    return b, inc, grazing


def derive(system):
    """Compute-layer derivation over the planet axis (SI numpy arrays).

    Methods: Kepler's third law; Winn 2010 transit geometry (eqs. 7, 14-16);
    Teq = Teff sqrt(Rs/a) [f (1 - A)]^(1/4); H = k T / (mu m_u g) with T =
    the atmosphere temperature (default Teq); annulus 2 H Rp / Rs^2; TSM and
    ESM of Kempton et al. 2018 (eqs. 1 and 4, with their Teq for A = 0,
    f = 1/4); habitable zone of Kopparapu et al. 2014.

    Parameters
    ----------
    system : System

    Returns
    -------
    dict of str to numpy.ndarray
    """
    s, p = system.star, system.planet
    rs, teff = s.radius_m, s.teff_K
    rp, mp = p.radius_m, p.mass_kg
    a = system.semi_major_axis_m
    aor = a / rs
    k = rp / rs
    b = system.impact_parameter
    inc = system.inclination_rad
    g = G * mp / rp ** 2
    teq = met.equilibrium_temperature(teff, rs, a, p.albedo, p.redistribution)
    teq0 = met.equilibrium_temperature(teff, rs, a, 0.0, 0.25)
    t14 = geo.transit_duration(p._period, aor, k, b, inc, p.eccentricity, p._omega)
    t23 = geo.transit_duration(p._period, aor, k, b, inc, p.eccentricity, p._omega, inner=True)
    tatm = np.where(np.isnan(system._tatm), system._tfac * teq, system._tatm)
    h = met.scale_height(tatm, system.mean_molecular_weight, g)
    s_in = met.insolation(teff, rs, a, p.eccentricity)
    out = {
        "radius_m": rp, "mass_kg": mp, "mass_uncertainty_kg": p._mass_sigma,
        "mass_estimated": p.mass_estimated,
        "surface_gravity_m_s2": g, "semi_major_axis_m": a, "a_over_rs": aor,
        "radius_ratio": k, "impact_parameter": b, "inclination_rad": inc,
        "equilibrium_temperature_K": teq, "tsm_temperature_K": teq0,
        "insolation_earth": s_in, "transit_depth": geo.transit_depth(rp, rs),
        "t14_s": t14, "t23_s": t23, "atmosphere_temperature_K": tatm,
        "mean_molecular_weight": system.mean_molecular_weight,
        "scale_height_m": h, "annulus": met.annulus_signal(h, rp, rs),
        "tsm": met.transmission_spectroscopy_metric(rp, mp, rs, teq0, s.magnitude("J")),
        "esm": met.emission_spectroscopy_metric(rp, rs, teq0, teff, s.magnitude("Ks")),
        "hz_position": met.habitable_zone_position(s_in, teff),
    }
    for lim, val in met.habitable_zone_fluxes(teff).items():
        out[f"hz_{lim}"] = val
    return out


def common_observation(system, key, default):
    """The value of a [planet.observation] key shared by every planet of ``system``.

    Parameters
    ----------
    system : snrkit.System
    key : str
        A key of :data:`OBSERVATION_KEYS`.
    default : object
        Value for planets that do not give the key.

    Raises
    ------
    InputError
        The planets give different values (run them separately).
    """
    names = [str(x) for x in system.names]
    values = [default if not ob or key not in ob else ob[key] for ob in system.observations]
    for v, name in zip(values[1:], names[1:]):
        if v != values[0]:
            raise InputError(f"planet.observation.{key} ({name})", v,
                             f"the same value as for {names[0]} ({values[0]!r}) in one run; "
                             "run the planets separately (--planet)")
    return values[0] if values else default
