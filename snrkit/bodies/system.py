"""The system model: a star, its transiting planets, and their derived quantities.

:class:`Star`, :class:`Planet` and :class:`System` are validated, immutable
objects.  Every numeric field accepts an astropy Quantity, a float in the
documented default unit, a ``"<number> <unit>"`` string, or an array of one
entry per planet; inside they are float64 arrays in SI.
:meth:`System.derived` computes, as whole arrays over the planet axis,
everything later stages need (gravity, a/Rs, Teq, T14/T23, depth, scale
height, TSM/ESM, habitable zone) and returns an astropy Table.
"""

import warnings

import contextvars

import numpy as np
import astropy.units as u

from . import geometry as geo
from . import metrics as met
from ..constants import R_SUN, M_SUN, R_EARTH, M_EARTH, G, AU, HOUR
from ..errors import InputError, NoTransitError, GrazingTransitWarning, SnrkitWarning
from ..units import to_si, as_float_array, check_range

__all__ = ["Star", "Planet", "System", "TEFF_RANGE_K", "BANDS",
           "DEFAULT_MEAN_MOLECULAR_WEIGHT", "PLANET_RADIUS_MAX_EARTH", "LIMITS", "PLAUSIBLE",
           "allow_unusual", "check_plausible", "KEPLER_TOLERANCE",
           "derive", "common_observation"]

#: Supported stellar effective temperatures [K] (the Planck/photometry layer
#: and the metrics are meaningful over this range).
TEFF_RANGE_K = (2000.0, 15000.0)
#: Photometric bands a star may carry magnitudes in.
BANDS = ("V", "J", "H", "Ks")
#: Mean molecular weight [g/mol] used when a planet has no atmosphere given
#: (solar H2/He; Kempton et al. 2018 use 2.3 for their TSM).
DEFAULT_MEAN_MOLECULAR_WEIGHT = 2.3
#: Relative difference between a given semi-major axis and Kepler's third
#: law (period, star + planet mass) above which System warns (common
#: practice, no source).
KEPLER_TOLERANCE = 0.10
#: Largest accepted planet radius [R_earth] (about 5.4 R_jup; larger values
#: are almost always a unit mistake).
PLANET_RADIUS_MAX_EARTH = 60.0
#: Accepted ranges of the sizes, masses and times of a system, in the default
#: unit of each field (closed intervals).  They lie far outside every known
#: transiting system, and they keep every derived quantity finite in float64
#: (a period of 1e300 d or a radius of 1e-300 R_earth is refused instead of
#: giving NaN or infinite outputs); common practice, no source.
LIMITS = {
    "planet.radius": (0.1, PLANET_RADIUS_MAX_EARTH),           # R_earth
    "planet.mass": (1e-4, 1e5),                                 # M_earth
    "planet.period": (0.01, 1e5),                               # d
    "planet.semi_major_axis": (1e-4, 1e4),                      # au
    "planet.radius_uncertainty": (0.0, PLANET_RADIUS_MAX_EARTH),  # R_earth
    "planet.mass_uncertainty": (0.0, 1e5),                      # M_earth
    "planet.period_uncertainty": (0.0, 1e5),                    # d
    "planet.transit_midtime_uncertainty": (0.0, 1e5),           # d
    "planet.impact_parameter": (0.0, 1e4),                      # stellar radii
    "planet.equilibrium_temperature": (1.0, 1e5),               # K
    "star.radius": (0.005, 100.0),                              # R_sun
    "star.mass": (0.005, 300.0),                                # M_sun
    "star.distance": (1e-3, 1e6),                               # pc
}


#: Ranges expected of a transiting planet and its host (common practice, no source):
#: a value outside is most often a unit mistake ("2.4 m" for a radius), so a system
#: file with one is refused unless unusual values are allowed (``--allow-unusual``,
#: :func:`allow_unusual`).  Radius 0.1 R_earth to 3 R_jup; mass up to 13 M_jup (the
#: deuterium-burning limit); surface gravity 0.5-1000 m s-2; hosts 0.08-100 R_sun
#: and 0.07-150 M_sun (the hydrogen-burning limit upwards).
PLAUSIBLE = {
    "planet.radius": (0.1, 33.6, "earthRad"),
    "planet.mass": (1e-3, 4130.0, "earthMass"),
    "planet.surface_gravity": (0.5, 1000.0, "m/s2"),
    "star.radius": (0.08, 100.0, "solRad"),
    "star.mass": (0.07, 150.0, "solMass"),
}

_ALLOW_UNUSUAL = contextvars.ContextVar("snrkit_allow_unusual", default=False)


def allow_unusual(allowed=True):
    """Context manager: accept values outside :data:`PLAUSIBLE` while it is active."""
    import contextlib

    @contextlib.contextmanager
    def ctx():
        token = _ALLOW_UNUSUAL.set(bool(allowed))
        try:
            yield
        finally:
            _ALLOW_UNUSUAL.reset(token)
    return ctx()


def check_plausible(system):
    """Refuse a system with a value outside :data:`PLAUSIBLE`, unless allowed.

    Raises
    ------
    snrkit.errors.UnusualValueError
        Naming the field and planet, the value and the expected range.
    """
    from ..errors import UnusualValueError
    if _ALLOW_UNUSUAL.get():
        return
    from ..constants import R_EARTH, M_EARTH, R_SUN, M_SUN
    d = system.derived_arrays()
    names = [str(x) for x in system.names]
    measured = ~np.asarray(system.planet.mass_estimated, dtype=bool)
    values = {
        "planet.radius": d["radius_m"] / R_EARTH,
        "planet.mass": np.where(measured, d["mass_kg"] / M_EARTH, np.nan),
        "planet.surface_gravity": np.where(measured, d["surface_gravity_m_s2"], np.nan),
        "star.radius": np.broadcast_to(system.star.radius_m / R_SUN, (len(names),)),
        "star.mass": np.broadcast_to(system.star.mass_kg / M_SUN, (len(names),)),
    }
    for field, v in values.items():
        lo, hi, unit = PLAUSIBLE[field]
        bad = np.flatnonzero(np.isfinite(v) & ((v < lo) | (v > hi)))
        if bad.size:
            i = int(bad[0])
            raise UnusualValueError(f"{field} ({names[i]})", f"{float(v[i]):.4g} {unit}",
                                    f"[{lo:g}, {hi:g}] {unit}",
                                    detail="an unusual value, often a unit mistake; "
                                           "--allow-unusual lets it through")


def _readonly(a):
    a = np.array(a, dtype=a.dtype if isinstance(a, np.ndarray) else None, copy=True)
    a.flags.writeable = False
    return a


def _opt(value, field, unit, low=None, high=None, **kw):
    """Optional numeric field: None -> NaN."""
    if value is None:
        return np.asarray(np.nan)
    return to_si(value, field, unit, low, high, allow_nan=True, **kw)


class _Frozen:
    __slots__ = ()

    def __setattr__(self, name, value):
        raise AttributeError(f"{type(self).__name__} is immutable; build a new one")

    def _set(self, name, value):
        if isinstance(value, np.ndarray):
            value = _readonly(value)
        object.__setattr__(self, name, value)

    def __len__(self):
        return self._n

    def __repr__(self):
        return f"<{type(self).__name__}: {self._n} entr{'y' if self._n == 1 else 'ies'}>"


def _size(*arrays):
    try:
        shape = np.broadcast_shapes(*[np.shape(a) for a in arrays])
    except ValueError:
        raise InputError("arrays", [np.shape(a) for a in arrays],
                         "arrays of one common length (one entry per planet)") from None
    if len(shape) > 1:
        raise InputError("arrays", shape, "scalars or one-dimensional arrays")
    return shape[0] if shape else 1


class Star(_Frozen):
    """A host star.

    Parameters
    ----------
    teff : Quantity, float or array
        Effective temperature (default unit K), within :data:`TEFF_RANGE_K`.
    radius : Quantity, float or array
        Radius (default unit R_sun, IAU 2015 nominal).
    mass : Quantity, float or array, optional
        Mass (default unit M_sun).  Give ``mass`` or ``logg``.
    logg : float or array, optional
        log10 of the surface gravity in cm s-2; the mass follows from
        M = g R^2 / G.
    metallicity : float or array, optional
        [Fe/H] in dex (default 0).
    magnitudes : dict, optional
        Apparent magnitudes by band name (``"V"``, ``"J"``, ``"H"``, ``"Ks"``).
    distance : Quantity, float or array, optional
        Distance (default unit pc).
    ra, dec : Quantity, float or array, optional
        Sky position, ICRS (default unit deg).
    name : str or sequence of str, optional
        Star name.
    """

    __slots__ = ("_n", "_teff", "_radius", "_mass", "_metallicity", "_mags",
                 "_distance", "_ra", "_dec", "_name", "mass_from_logg")

    def __init__(self, teff, radius, mass=None, logg=None, metallicity=0.0,
                 magnitudes=None, distance=None, ra=None, dec=None, name=None):
        teff_a = to_si(teff, "star.effective_temperature", u.K, *TEFF_RANGE_K)
        rad = to_si(radius, "star.radius", u.R_sun, *LIMITS["star.radius"])
        if mass is None and logg is None:
            raise InputError("star.mass", None, "a mass (solar masses) or a log_gravity (cgs dex)")
        if mass is not None and logg is not None:
            raise InputError("star.log_gravity", logg, "only one of mass and log_gravity")
        if mass is not None:
            m = to_si(mass, "star.mass", u.M_sun, *LIMITS["star.mass"])
            from_logg = False
            # the same log g range as a given log_gravity (catches unit slips)
            _size(rad, m)  # a clear error for arrays of different lengths
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                lg_m = np.atleast_1d(np.log10(G * m / rad ** 2 * 100.0))
            bad = ~((lg_m >= 0.0) & (lg_m <= 9.0))
            if np.any(bad):
                i = int(np.flatnonzero(np.ravel(bad))[0])
                m_i = np.broadcast_to(m, lg_m.shape)[i]
                raise InputError("star.mass", f"{m_i / M_SUN:.4g} M_sun",
                                 "a mass giving a log g in [0, 9] (cgs) with the star's radius",
                                 detail=f"log g would be {lg_m[i]:.3g}")
        else:
            lg = as_float_array(logg, "star.log_gravity")
            check_range(lg, "star.log_gravity", 0.0, 9.0, unit_label="dex (cgs)")
            m = (10.0 ** lg * 1e-2) * rad ** 2 / G
            from_logg = True
        feh = as_float_array(metallicity, "star.metallicity")
        check_range(feh, "star.metallicity", -5.0, 1.5, unit_label="dex")
        mags = {}
        for band, val in (magnitudes or {}).items():
            if band not in BANDS:
                import difflib
                close = difflib.get_close_matches(str(band), BANDS, n=1)
                raise InputError(f"star.magnitudes.{band}", val, "bands " + ", ".join(BANDS),
                                 detail=f"did you mean {close[0]!r}?" if close else "")
            arr = as_float_array(val, f"star.magnitudes.{band}")
            check_range(arr, f"star.magnitudes.{band}", -2.0, 30.0, unit_label="mag", allow_nan=True)
            mags[band] = arr
        dist = _opt(distance, "star.distance", u.pc, *LIMITS["star.distance"])
        ra_a = _opt(ra, "star.right_ascension", u.deg, 0.0, 360.0, high_inclusive=False)
        dec_a = _opt(dec, "star.declination", u.deg, -90.0, 90.0)
        names = None if name is None else np.asarray(name, dtype=str)
        n = _size(teff_a, rad, m, feh, dist, ra_a, dec_a, *mags.values(),
                  *(() if names is None else (names,)))
        bc = lambda a: np.broadcast_to(a, (n,)).astype(np.float64)  # noqa: E731
        self._set("_n", n)
        self._set("_teff", bc(teff_a))
        self._set("_radius", bc(rad))
        self._set("_mass", bc(m))
        self._set("_metallicity", bc(feh))
        self._set("_mags", {b: _readonly(bc(v)) for b, v in mags.items()})
        self._set("_distance", bc(dist))
        self._set("_ra", bc(ra_a))
        self._set("_dec", bc(dec_a))
        self._set("_name", None if names is None else np.broadcast_to(names, (n,)).copy())
        self._set("mass_from_logg", from_logg)

    # SI arrays for the compute layer
    teff_K = property(lambda self: self._teff, doc="Teff [K] (array)")
    radius_m = property(lambda self: self._radius, doc="radius [m] (array)")
    mass_kg = property(lambda self: self._mass, doc="mass [kg] (array)")
    # Quantities for users
    teff = property(lambda self: self._teff * u.K, doc="effective temperature")
    radius = property(lambda self: (self._radius / R_SUN) * u.R_sun, doc="radius")
    mass = property(lambda self: (self._mass / M_SUN) * u.M_sun, doc="mass")
    logg = property(lambda self: np.log10(G * self._mass / self._radius ** 2 * 100.0),
                    doc="log10 surface gravity [cgs dex]")
    metallicity = property(lambda self: self._metallicity, doc="[Fe/H] [dex]")
    magnitudes = property(lambda self: dict(self._mags), doc="apparent magnitudes by band")
    distance = property(lambda self: (self._distance * u.m).to(u.pc), doc="distance")
    ra = property(lambda self: (self._ra * u.rad).to(u.deg), doc="right ascension (ICRS)")
    dec = property(lambda self: (self._dec * u.rad).to(u.deg), doc="declination (ICRS)")
    name = property(lambda self: self._name, doc="names (array of str) or None")

    def magnitude(self, band):
        """Magnitudes in ``band`` (NaN array where not given)."""
        return self._mags.get(band, np.full(self._n, np.nan))

    def broadcast(self, n):
        """Return this star repeated for ``n`` planets."""
        if n == self._n:
            return self
        if self._n != 1:
            raise InputError("star", f"{self._n} entries", f"1 or {n} entries (one per planet)")
        return Star(self._teff.repeat(n), self._radius.repeat(n) * u.m,
                    mass=self._mass.repeat(n) * u.kg, metallicity=self._metallicity.repeat(n),
                    magnitudes={b: v.repeat(n) for b, v in self._mags.items()},
                    distance=self._distance.repeat(n) * u.m, ra=self._ra.repeat(n) * u.rad,
                    dec=self._dec.repeat(n) * u.rad,
                    name=None if self._name is None else self._name.repeat(n))


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

    def __init__(self, radius, period, mass=None, mass_uncertainty=None, radius_uncertainty=None,
                 semi_major_axis=None,
                 impact_parameter=None, inclination=None, eccentricity=0.0,
                 periastron_argument=90.0, transit_midtime=None,
                 transit_midtime_uncertainty=None, period_uncertainty=None,
                 albedo=0.0, redistribution=0.25, name=None):
        rad = to_si(radius, "planet.radius", u.R_earth, *LIMITS["planet.radius"])
        per = to_si(period, "planet.period", u.day, *LIMITS["planet.period"])
        rsig = _opt(radius_uncertainty, "planet.radius_uncertainty", u.R_earth,
                    *LIMITS["planet.radius_uncertainty"])
        mass_a = _opt(mass, "planet.mass", u.M_earth, *LIMITS["planet.mass"])
        msig = _opt(mass_uncertainty, "planet.mass_uncertainty", u.M_earth,
                    *LIMITS["planet.mass_uncertainty"])
        a_a = _opt(semi_major_axis, "planet.semi_major_axis", u.au,
                   *LIMITS["planet.semi_major_axis"])
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

    def __init__(self, star, planet, mean_molecular_weight=None, atmosphere_temperature=None,
                 atmosphere_temperature_factor=1.0, atmospheres=None, observations=None,
                 warn_kepler=False):
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
        given = ~miss
        a_kep = geo.semi_major_axis_from_period(planet._period, ms + planet._mass)
        self._set("kepler_mismatch", given & (np.abs(a / a_kep - 1) > KEPLER_TOLERANCE))
        if warn_kepler and self.kepler_mismatch.any():
            off = self.kepler_mismatch
            names_off = planet.name[off]
            shown = ", ".join(names_off[:5]) + (f" and {off.sum() - 5} more" if off.sum() > 5 else "")
            warnings.warn(f"semi-major axis of {shown} differs by more than "
                          f"{KEPLER_TOLERANCE:.0%} from Kepler's third law with the period "
                          "and the star's mass; the given value is used", SnrkitWarning,
                          stacklevel=2)
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
                          "depth is less than (Rp/Rs)^2", GrazingTransitWarning, stacklevel=2)
        self._set("_a", a)
        self._set("_b", b)
        self._set("_inc", inc)
        self._set("grazing", grazing)

    names = property(lambda self: self.planet.name, doc="planet names")
    semi_major_axis_m = property(lambda self: self._a, doc="semi-major axis [m]")
    impact_parameter = property(lambda self: self._b, doc="impact parameter [R_star]")
    inclination_rad = property(lambda self: self._inc, doc="inclination [rad]")
    mean_molecular_weight = property(lambda self: self._mu, doc="mu used for H [g/mol]")

    def select(self, name):
        """Return the sub-system holding only the planet called ``name``."""
        idx = np.flatnonzero(self.planet.name == name)
        if idx.size == 0:
            raise InputError("--planet", name, "one of " + ", ".join(self.planet.name))
        return self.take(idx)

    def take(self, idx):
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

    def derived_arrays(self):
        """All derived quantities as a dict of SI numpy arrays (compute layer).

        See :meth:`derived` for the list and the published methods.
        """
        return derive(self)

    def derived(self):
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
