"""Where the observer is: a space observatory or a ground site, and their option strings.

A space observatory (geocentre) with a solar-elongation range and optional
seasons, or a ground site (longitude, latitude, elevation) with target- and
Sun-altitude limits; :func:`parse_observatory` reads ``space``,
``site:LON,LAT[,ELEV_M]`` or ``none``; :func:`bjd_to_utc` gives the UTC time
of a barycentric time as seen at the geocentre or at a site.
"""

import dataclasses

import numpy as np
import astropy.units as u

from ..errors import InputError
from ..units import check_range, to_si
from .ephemeris import parse_date
from .timescales import _times, observer_times, offline_time

__all__ = ["DEFAULT_ELONGATION_DEG", "DEFAULT_MIN_ALTITUDE_DEG", "DEFAULT_SUN_ALTITUDE_DEG",
           "SpaceObservatory", "GroundSite", "parse_observatory", "bjd_to_utc"]


#: Solar-elongation range [deg] of the generic "cold space telescope" class
#: (sunshield keeps the Sun behind the telescope) -- common practice, no source.
DEFAULT_ELONGATION_DEG = (85.0, 135.0)
#: Lowest target altitude [deg] at a ground site (airmass 2) -- common practice, no source.
DEFAULT_MIN_ALTITUDE_DEG = 30.0
#: Highest Sun altitude [deg] at a ground site: the Sun 12 deg below the horizon
#: is the definition of the end of nautical twilight.
DEFAULT_SUN_ALTITUDE_DEG = -12.0


@dataclasses.dataclass(frozen=True)
class SpaceObservatory:
    """A space observatory constrained by solar elongation.

    Parameters
    ----------
    elongation : (float, float)
        Allowed Sun-target angle [deg], min and max, within [0, 180].
    seasons : sequence of (Time, Time), optional
        Date ranges in which the observatory can observe at all; a window
        must lie wholly inside one of them.  ``None``: always.
    """

    elongation: tuple = DEFAULT_ELONGATION_DEG
    seasons: tuple = None

    def __post_init__(self):
        lo, hi = _pair(self.elongation, "elongation")
        check_range(np.array([lo, hi]), "elongation", 0.0, 180.0, unit_label="deg")
        if not lo < hi:
            raise InputError("elongation", f"{lo:g},{hi:g}", "MIN,MAX with MIN < MAX (deg)")
        object.__setattr__(self, "elongation", (lo, hi))
        if self.seasons is not None:
            seas = []
            for i, pair in enumerate(self.seasons):
                if len(pair) != 2:
                    raise InputError(f"seasons[{i}]", pair, "a (start, end) pair of dates")
                a = parse_date(pair[0], f"seasons[{i}] start")
                b = parse_date(pair[1], f"seasons[{i}] end", end_of_day=True)
                if not b > a:
                    with offline_time():
                        text = f"{a.isot} to {b.isot}"
                    raise InputError(f"seasons[{i}]", text, "an end after the start")
                seas.append((a, b))
            object.__setattr__(self, "seasons", tuple(seas))

    def describe(self):
        """One-line description."""
        s = f"space (geocentre), solar elongation {self.elongation[0]:g}-{self.elongation[1]:g} deg"
        if self.seasons:
            with offline_time():
                s += "; seasons " + ", ".join(f"{a.isot[:10]}..{b.isot[:10]}"
                                              for a, b in self.seasons)
        return s


@dataclasses.dataclass(frozen=True)
class GroundSite:
    """A ground site with altitude and night-time limits.

    Parameters
    ----------
    longitude : float
        East longitude [deg], -180 to 360.
    latitude : float
        Geodetic latitude [deg], -90 to 90.
    elevation : float
        Height above the WGS84 ellipsoid [m], -500 to 9000.
    min_altitude : float
        Lowest target altitude [deg] (default :data:`DEFAULT_MIN_ALTITUDE_DEG`).
    sun_altitude : float
        Highest Sun altitude [deg] (default :data:`DEFAULT_SUN_ALTITUDE_DEG`).
    """

    longitude: float
    latitude: float
    elevation: float = 0.0
    min_altitude: float = DEFAULT_MIN_ALTITUDE_DEG
    sun_altitude: float = DEFAULT_SUN_ALTITUDE_DEG

    def __post_init__(self):
        for name, lo, hi, unit in (("longitude", -180.0, 360.0, "deg"),
                                   ("latitude", -90.0, 90.0, "deg"),
                                   ("elevation", -500.0, 9000.0, "m"),
                                   ("min_altitude", -90.0, 90.0, "deg"),
                                   ("sun_altitude", -90.0, 90.0, "deg")):
            val = getattr(self, name)
            if isinstance(val, bool) or not isinstance(val, (int, float, np.floating, np.integer)):
                raise InputError(f"site.{name}", val, f"a number in {unit}")
            check_range(np.asarray(float(val)), f"site.{name}", lo, hi, unit_label=unit)
            object.__setattr__(self, name, float(val))

    def location(self):
        """The site as an :class:`astropy.coordinates.EarthLocation`."""
        from astropy.coordinates import EarthLocation
        return EarthLocation.from_geodetic(self.longitude * u.deg, self.latitude * u.deg,
                                           self.elevation * u.m)

    def describe(self):
        """One-line description."""
        return (f"ground site lon {self.longitude:g} deg, lat {self.latitude:g} deg, "
                f"{self.elevation:g} m; target above {self.min_altitude:g} deg, "
                f"Sun below {self.sun_altitude:g} deg")


def _pair(value, field):
    if isinstance(value, str):
        parts = value.split(",")
    else:
        try:
            parts = list(value)
        except TypeError:
            raise InputError(field, value, "MIN,MAX (two numbers)") from None
    if len(parts) != 2:
        raise InputError(field, value, "MIN,MAX (two numbers)")
    try:
        return float(parts[0]), float(parts[1])
    except (TypeError, ValueError):
        raise InputError(field, value, "MIN,MAX (two numbers)") from None


def parse_observatory(text, elongation=None, min_altitude=None, sun_altitude=None, seasons=None):
    """Build an observatory from its command-line text.

    Parameters
    ----------
    text : str
        ``"space"``, ``"site:LON,LAT"`` or ``"site:LON,LAT,ELEV_M"`` (degrees,
        east longitude, metres), or ``"none"`` (no observability constraint).
    elongation : str or (float, float), optional
        Solar-elongation range [deg] for ``space``.
    min_altitude, sun_altitude : float, optional
        Limits [deg] for a site.
    seasons : sequence of (str, str), optional
        Seasonal windows for ``space``.

    Returns
    -------
    SpaceObservatory, GroundSite or None
    """
    allowed = "'space', 'site:LON,LAT[,ELEV_M]' (deg, deg, m) or 'none'"
    t = str(text).strip().lower()
    if t == "none":
        if elongation is not None or seasons:
            raise InputError("--elongation", elongation or seasons, "only with --observatory space")
        return None
    if t == "space":
        if min_altitude is not None or sun_altitude is not None:
            raise InputError("--min-altitude", min_altitude if min_altitude is not None
                             else sun_altitude, "only with --observatory site:...")
        el = DEFAULT_ELONGATION_DEG if elongation is None else _pair(elongation, "elongation")
        return SpaceObservatory(elongation=el, seasons=tuple(seasons) if seasons else None)
    if t.startswith("site:"):
        if elongation is not None or seasons:
            raise InputError("--elongation", elongation or seasons, "only with --observatory space")
        parts = t[5:].split(",")
        if len(parts) not in (2, 3):
            raise InputError("--observatory", text, allowed)
        try:
            vals = [float(p) for p in parts]
        except ValueError:
            raise InputError("--observatory", text, allowed) from None
        kw = {}
        if min_altitude is not None:
            kw["min_altitude"] = float(min_altitude)
        if sun_altitude is not None:
            kw["sun_altitude"] = float(sun_altitude)
        return GroundSite(*vals, **kw)
    raise InputError("--observatory", text, allowed)


def bjd_to_utc(bjd_tdb, ra, dec, location=None):
    """Convert BJD_TDB to the UTC time at which the event is seen by the observer.

    Parameters
    ----------
    bjd_tdb : float or array_like
        Barycentric Julian dates in TDB [days].
    ra, dec : Quantity, float or array_like
        Target ICRS position (default unit deg).
    location : astropy.coordinates.EarthLocation or GroundSite, optional
        Observer; the geocentre when ``None``.

    Returns
    -------
    utc : astropy.time.Time
        UTC times at the observer.
    light_time : astropy.units.Quantity
        Barycentric light-travel-time correction removed [s] (UTC_obs =
        BJD - light_time, before the TDB -> UTC scale change).
    """
    ra_r = to_si(ra, "star.right_ascension", u.deg, 0.0, 360.0, high_inclusive=False)
    dec_r = to_si(dec, "star.declination", u.deg, -90.0, 90.0)
    bary = np.asarray(bjd_tdb, dtype=np.float64)
    check_range(bary, "bjd_tdb", 2.0e6, 3.0e6, unit_label="d")
    bary, ra_r, dec_r = np.broadcast_arrays(bary, ra_r, dec_r)
    loc = location.location() if isinstance(location, GroundSite) else location
    obs, delta = observer_times(bary.ravel(), ra_r.ravel(), dec_r.ravel(), loc)
    with offline_time():
        utc = _times(obs.reshape(bary.shape), location=loc).utc
    return utc, delta.reshape(bary.shape) * u.s
