"""Observing calendar: predicted transits, windows to schedule, observability.

From a linear ephemeris (T0 +- sigma_T0 and P +- sigma_P, BJD_TDB) this
module predicts every mid-transit time in a date range, the 1-sigma timing
uncertainty of each, the window an observer must schedule, the times of
that window as seen at the observer (UTC), and whether the window is
observable from a space observatory (solar-elongation range, optional
seasons) or a ground site (target altitude and night-time limits).

Methods
-------
* Linear ephemeris T_n = T0 + n P.  Its 1-sigma uncertainty, for
  uncorrelated T0 and P, is sigma_n^2 = sigma_T0^2 + n^2 sigma_P^2 (first-
  order error propagation of a linear function; the standard propagation
  used throughout transit-timing work, e.g. the ephemeris-decay discussions
  in timing papers -- common practice, no single source).  A negative n
  (a transit before T0) is handled the same way: epochs run backwards and
  the uncertainty grows with |n|.
* Window: T14 centred on the predicted mid-time, an out-of-transit
  baseline split equally before and after, and k sigma_n padding on each
  side.  The default baseline equals T14 (half before, half after): for a
  fixed total time the photon-limited depth error
  (1 - delta) sqrt(1/N_in + 1/N_out) is smallest when N_in = N_out.
  The default k = 3 is common practice, no source.
* Time scales.  BJD_TDB is the time at the solar-system barycentre.  The
  time at the observer is t_obs = t_BJD - Delta(t_obs), with Delta the
  barycentric light-travel-time correction for the target's direction
  (astropy ``Time.light_travel_time``, observer at the geocentre for a
  space observatory or at the site for a ground observatory; solved by two
  fixed-point iterations, converged to well below 1 ms since
  |dDelta/dt| < 1e-4).  TDB -> TT -> TAI -> UTC by astropy/ERFA with the
  bundled leap-second table.
* Solar elongation: angle between the geometric geocentric Sun direction
  (astropy's built-in ERFA ephemeris, ``get_body_barycentric``) and the
  target's ICRS direction.
* Altitudes: sin(alt) = sin(phi) sin(dec) + cos(phi) cos(dec) cos(H) with
  the CIO-based hour angle H = ERA + lambda - alpha_CIRS (Earth rotation
  angle from astropy, CIRS positions from astropy; Kaplan 2005, USNO
  Circular 179, ch. 6 -- chapter number from memory).  Geometric altitudes: no refraction, no horizon dip.
  The Sun's diurnal parallax (8.8 arcsec) is neglected.

Offline operation and precision
-------------------------------
Nothing is ever downloaded.  Every astropy call runs inside
:func:`offline_time`, which sets ``astropy.utils.iers.conf.auto_download =
False`` (bundled IERS-A/B tables from ``astropy-iers-data`` and the bundled
leap-second table only), ``auto_max_age = None`` (no staleness errors, so
results do not depend on today's date) and the ``builtin`` solar-system
ephemeris (ERFA epv00, good to a few km for the Earth; light time to well
below 1 ms).

* UTC needs only leap seconds (not UT1-UTC).  Within the bundled table's
  validity UTC is exact at the microsecond level.  After its expiry date
  (recorded in the table metadata) no further leap seconds are known; any
  leap second announced later would shift the UTC times by 1 s.
* UT1-UTC and polar motion enter only the ground-site light-time term
  (< 21 ms) and the altitudes.  Beyond the bundled IERS table astropy uses
  the last tabulated UT1-UTC (|UT1-UTC| < 0.9 s, i.e. < 14 arcsec of
  rotation) and a mean polar motion (< 1 arcsec): negligible for
  altitude and twilight limits.
* The space observer is placed at the geocentre; an observatory near the
  Sun-Earth L2 point (1.5e6 km away) sees the transit up to 5 s earlier or
  later and the Sun at an elongation differing by < 0.01 deg.

Observability constraints are sampled across each window (every
:data:`GROUND_SAMPLE_MINUTES` minutes at a ground site, every
:data:`SPACE_SAMPLE_HOURS` hours in space, and always at both ends).
"""

import contextlib
import dataclasses
import math
import re
import warnings

import numpy as np
import astropy.units as u

from .constants import AU, C_LIGHT, DAY, HOUR
from .errors import InputError, SnrkitWarning
from .units import to_si, check_range

__all__ = [
    "DEFAULT_ELONGATION_DEG", "DEFAULT_PADDING_SIGMA", "DEFAULT_BASELINE_T14",
    "DEFAULT_MIN_ALTITUDE_DEG", "DEFAULT_SUN_ALTITUDE_DEG", "GROUND_SAMPLE_MINUTES",
    "SPACE_SAMPLE_HOURS", "MAX_RANGE_YEARS", "MAX_WINDOWS", "MAX_LIGHT_TIME_S",
    "SpaceObservatory", "GroundSite", "parse_observatory", "parse_date", "parse_baseline",
    "offline_time", "epoch_grid", "timing_sigma", "window_half_width",
    "elongation_deg", "altitude_deg", "in_any_season",
    "observer_times", "bjd_to_utc", "altitudes_deg", "predict_transits", "transit_windows", "CalendarWarning",
]

#: Solar-elongation range [deg] of the generic "cold space telescope" class
#: (sunshield keeps the Sun behind the telescope) -- common practice, no source.
DEFAULT_ELONGATION_DEG = (85.0, 135.0)
#: Padding of each window side in units of the timing uncertainty sigma_n
#: -- common practice, no source.
DEFAULT_PADDING_SIGMA = 3.0
#: Total out-of-transit baseline in units of T14, split equally before and after.
DEFAULT_BASELINE_T14 = 1.0
#: Lowest target altitude [deg] at a ground site (airmass 2) -- common practice, no source.
DEFAULT_MIN_ALTITUDE_DEG = 30.0
#: Highest Sun altitude [deg] at a ground site: the Sun 12 deg below the horizon
#: is the definition of the end of nautical twilight.
DEFAULT_SUN_ALTITUDE_DEG = -12.0
#: Sampling step of the ground-site constraints across a window [min].
GROUND_SAMPLE_MINUTES = 5.0
#: Sampling step of the solar-elongation constraint across a window [h].
SPACE_SAMPLE_HOURS = 1.0
#: Longest accepted date range [years].
MAX_RANGE_YEARS = 30.0
#: Largest number of predicted transits in one call.
MAX_WINDOWS = 2_000_000
#: Largest barycentric light-travel-time correction [s]: aphelion distance
#: 1.0167 au over c (used as extra padding when the sky position is unknown).
MAX_LIGHT_TIME_S = 1.0167 * AU / C_LIGHT
#: Accepted calendar years (UTC with leap seconds starts in 1972; the
#: built-in ERFA ephemeris epv00 is valid 1900-2100).
_YEAR_RANGE = (1972, 2099)
#: Largest number of constraint samples per window (caps memory for windows
#: many days long; the step then grows beyond the nominal one).
_MAX_SAMPLES = 600


class CalendarWarning(SnrkitWarning):
    """A calendar input was missing and a documented fallback was used."""


# ----------------------------------------------------------------------------
# observatories


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


_DATE_RE = re.compile(r"^\s*\d{4}-\d{2}-\d{2}([ T]\d{2}:\d{2}(:\d{2}(\.\d*)?)?)?\s*(Z|UTC)?\s*$")


def parse_date(value, field, end_of_day=False):
    """Read a UTC date as an :class:`astropy.time.Time`.

    Parameters
    ----------
    value : str or astropy.time.Time
        ISO text ``YYYY-MM-DD``, ``YYYY-MM-DDTHH:MM[:SS]`` (a space may replace
        the ``T``; a trailing ``Z`` or ``UTC`` is accepted), in UTC; or a Time.
    field : str
        Name used in error messages.
    end_of_day : bool
        A date without a time means the end of that day (the next midnight)
        instead of its start, so ``--to 2026-03-31`` includes 31 March.

    Returns
    -------
    astropy.time.Time
        Scalar time in UTC.
    """
    from astropy.time import Time
    allowed = (f"a UTC date YYYY-MM-DD or YYYY-MM-DDTHH:MM[:SS] between "
               f"{_YEAR_RANGE[0]} and {_YEAR_RANGE[1]}")
    if isinstance(value, Time):
        if not value.isscalar:
            raise InputError(field, "an array of times", "one time")
        with offline_time():
            t = value.utc
    else:
        if not isinstance(value, str) or not _DATE_RE.match(value):
            raise InputError(field, value, allowed)
        text = value.strip().replace(" UTC", "").rstrip("Z").strip().replace(" ", "T")
        try:
            with offline_time():
                t = Time(text, format="isot", scale="utc")
        except ValueError:
            raise InputError(field, value, allowed, detail="not a valid calendar date") from None
    with offline_time():
        year = int(t.utc.ymdhms.year)
        shown = value if isinstance(value, str) else t.isot
    if not _YEAR_RANGE[0] <= year <= _YEAR_RANGE[1]:
        raise InputError(field, shown, allowed)
    if end_of_day and isinstance(value, str) and "T" not in text:
        with offline_time():
            t = Time(t.mjd + 1.0, format="mjd", scale="utc")
    return t


def parse_baseline(value):
    """Read a baseline: a bare number is a multiple of T14, else a duration.

    Parameters
    ----------
    value : float, str or Quantity
        ``1.0`` (times T14), ``"3 h"``, ``"3h"``, ``"90 min"`` or a time Quantity.
        The total out-of-transit time, split equally before and after.

    Returns
    -------
    (float, float)
        ``(multiple_of_t14, seconds)``; exactly one of them is non-zero
        (or both zero for no baseline).
    """
    field = "--baseline"
    allowed = "a multiple of T14 (e.g. 1.0) or a duration such as '3 h' (total, split before/after)"
    if isinstance(value, u.Quantity):
        return 0.0, float(to_si(value, field, u.h, 0.0, 240.0))
    if isinstance(value, str):
        text = value.strip()
        try:
            mult = float(text)
        except ValueError:
            m = re.match(r"^([0-9.eE+-]+)\s*([A-Za-z]+)$", text)
            if not m:
                raise InputError(field, value, allowed) from None
            return 0.0, float(to_si(f"{m.group(1)} {m.group(2)}", field, u.h, 0.0, 240.0))
    else:
        if isinstance(value, bool):
            raise InputError(field, value, allowed)
        try:
            mult = float(value)
        except (TypeError, ValueError):
            raise InputError(field, value, allowed) from None
    check_range(np.asarray(mult), field, 0.0, 20.0, unit_label="x T14")
    return mult, 0.0


# ----------------------------------------------------------------------------
# offline astropy context


@contextlib.contextmanager
def offline_time():
    """Run astropy time/coordinate code with no network and date-independent results.

    Sets ``iers.conf.auto_download = False`` (bundled IERS and leap-second
    tables only), ``iers.conf.auto_max_age = None`` (no staleness check
    against today's date) and the ``builtin`` solar-system ephemeris, and
    silences the three astropy/ERFA warnings about times beyond the bundled
    tables (their effect is documented in the module docstring and recorded
    in the table metadata by :func:`transit_windows`).
    """
    import erfa
    from astropy.utils import iers
    from astropy.utils.exceptions import AstropyWarning
    from astropy.coordinates import solar_system_ephemeris
    with contextlib.ExitStack() as stack:
        stack.enter_context(iers.conf.set_temp("auto_download", False))
        stack.enter_context(iers.conf.set_temp("auto_max_age", None))
        if hasattr(iers.conf, "iers_degraded_accuracy"):
            # beyond the bundled IERS table: some astropy versions raise instead of
            # assuming UT1-UTC = 0 and mean polar motion; ask for the same assumption
            stack.enter_context(iers.conf.set_temp("iers_degraded_accuracy", "warn"))
        stack.enter_context(solar_system_ephemeris.set("builtin"))
        stack.enter_context(warnings.catch_warnings())
        # beyond the leap-second table's expiry: UTC assumes no new leap second
        warnings.filterwarnings("ignore", message=r".*dubious year", category=erfa.ErfaWarning)
        # beyond the IERS table: mean polar motion (< 1 arcsec)
        warnings.filterwarnings("ignore", message=r"Tried to get polar motions",
                                category=AstropyWarning)
        # beyond the IERS table: UT1-UTC = 0 (< 0.9 s)
        warnings.filterwarnings("ignore", message=r".*Assuming UT1-UTC=0",
                                category=AstropyWarning)
        warnings.filterwarnings("ignore", message=r".*outside of range covered by IERS table",
                                category=AstropyWarning)
        yield


# ----------------------------------------------------------------------------
# compute layer (numpy; absolute times are Julian dates in days, intervals in s)


def epoch_grid(t0_jd, period_s, lo_jd, hi_jd):
    """Every epoch n with lo <= T0 + n P <= hi, flattened over planets.

    Parameters
    ----------
    t0_jd : numpy.ndarray, shape (n_planets,)
        Reference mid-transit times [JD, TDB].
    period_s : numpy.ndarray, shape (n_planets,)
        Periods [s].
    lo_jd, hi_jd : float
        Range [JD, TDB].

    Returns
    -------
    planet_index : numpy.ndarray of int, shape (n_windows,)
    epoch : numpy.ndarray of int64, shape (n_windows,)
        Sorted by planet, then epoch.  Negative epochs precede T0.
    """
    t0 = np.asarray(t0_jd, dtype=np.float64)
    p_d = np.asarray(period_s, dtype=np.float64) / DAY
    n_lo = np.ceil((lo_jd - t0) / p_d).astype(np.int64)
    n_hi = np.floor((hi_jd - t0) / p_d).astype(np.int64)
    # guard the float rounding at the range edges
    n_lo = np.where(t0 + (n_lo - 1) * p_d >= lo_jd, n_lo - 1, n_lo)
    n_hi = np.where(t0 + (n_hi + 1) * p_d <= hi_jd, n_hi + 1, n_hi)
    counts = np.maximum(n_hi - n_lo + 1, 0)
    total = int(counts.sum())
    if total > MAX_WINDOWS:
        raise InputError("date range", f"{total} transits", f"at most {MAX_WINDOWS} transits",
                         detail="narrow the range or select one planet")
    planet_index = np.repeat(np.arange(t0.size), counts)
    starts = np.cumsum(counts) - counts
    epoch = (np.arange(total, dtype=np.int64) - np.repeat(starts, counts)
             + np.repeat(n_lo, counts))
    return planet_index, epoch


def timing_sigma(sigma_t0_s, sigma_p_s, epoch):
    """1-sigma mid-time uncertainty of epoch n of a linear ephemeris [s].

    sigma_n = sqrt(sigma_T0^2 + n^2 sigma_P^2) (first-order propagation for
    uncorrelated T0 and P; common practice in transit timing).

    Parameters
    ----------
    sigma_t0_s, sigma_p_s : array_like
        Uncertainties of T0 and P [s].
    epoch : array_like of int
        Epoch numbers (may be negative).
    """
    n = np.asarray(epoch, dtype=np.float64)
    return np.sqrt(np.asarray(sigma_t0_s) ** 2 + n ** 2 * np.asarray(sigma_p_s) ** 2)


def window_half_width(t14_s, baseline_mult, baseline_s, sigma_s, k):
    """Half the scheduled window [s]: T14/2 + baseline/2 + k sigma.

    Parameters
    ----------
    t14_s : array_like
        Total transit duration [s].
    baseline_mult, baseline_s : float
        Total out-of-transit baseline as a multiple of T14 plus a fixed
        duration [s]; half goes before, half after.
    sigma_s : array_like
        Timing uncertainty [s].
    k : float
        Padding in units of sigma on each side.
    """
    t14 = np.asarray(t14_s, dtype=np.float64)
    return 0.5 * t14 * (1.0 + baseline_mult) + 0.5 * baseline_s + k * np.asarray(sigma_s)


def elongation_deg(sun_vec, target_unit):
    """Angle between the Sun direction and a target direction [deg].

    Parameters
    ----------
    sun_vec : numpy.ndarray, shape (..., 3)
        Observer-to-Sun vector (any length unit).
    target_unit : numpy.ndarray, shape (..., 3)
        Unit vector towards the target (broadcast against ``sun_vec``).
    """
    s = np.asarray(sun_vec, dtype=np.float64)
    s = s / np.linalg.norm(s, axis=-1, keepdims=True)
    c = np.clip(np.sum(s * np.asarray(target_unit), axis=-1), -1.0, 1.0)
    return np.degrees(np.arccos(c))


def altitude_deg(latitude_rad, dec_rad, hour_angle_rad):
    """Geometric altitude [deg]: sin(a) = sin(phi) sin(d) + cos(phi) cos(d) cos(H).

    The standard spherical-astronomy relation (e.g. Meeus 1998,
    Astronomical Algorithms, 2nd ed., eq. 13.6 -- equation number from memory).
    """
    s = (np.sin(latitude_rad) * np.sin(dec_rad)
         + np.cos(latitude_rad) * np.cos(dec_rad) * np.cos(hour_angle_rad))
    return np.degrees(np.arcsin(np.clip(s, -1.0, 1.0)))


def in_any_season(start_jd, end_jd, season_lo_jd, season_hi_jd):
    """True where [start, end] lies wholly inside at least one season.

    Parameters
    ----------
    start_jd, end_jd : numpy.ndarray, shape (n_windows,)
    season_lo_jd, season_hi_jd : numpy.ndarray, shape (n_seasons,)
    """
    a = np.asarray(start_jd)[:, None]
    b = np.asarray(end_jd)[:, None]
    return np.any((a >= np.asarray(season_lo_jd)[None, :])
                  & (b <= np.asarray(season_hi_jd)[None, :]), axis=1)


def _sample_fractions(lengths_s, step_s):
    """Sample fractions 0..1 shared by all windows, step <= ``step_s`` for the longest."""
    longest = float(np.max(lengths_s)) if np.size(lengths_s) else 0.0
    m = int(min(max(math.ceil(longest / step_s) + 1, 3), _MAX_SAMPLES))
    return np.linspace(0.0, 1.0, m)


# ----------------------------------------------------------------------------
# astropy helpers (flat arrays of windows)


def _times(jd, location=None):
    from astropy.time import Time
    jd = np.asarray(jd, dtype=np.float64)
    whole = np.floor(jd)
    return Time(whole, jd - whole, format="jd", scale="tdb", location=location)


def observer_times(bary_jd, ra_rad, dec_rad, location=None):
    """Barycentric (BJD_TDB) times to TDB times at the observer.

    Solves t_obs = t_BJD - Delta(t_obs) with Delta from astropy
    ``Time.light_travel_time(kind="barycentric")`` (two fixed-point
    iterations).

    Parameters
    ----------
    bary_jd : numpy.ndarray
        BJD_TDB [days].
    ra_rad, dec_rad : numpy.ndarray
        Target ICRS position [rad], same shape.
    location : astropy.coordinates.EarthLocation, optional
        Observer; the geocentre when ``None``.

    Returns
    -------
    obs_jd : numpy.ndarray
        TDB Julian date at the observer [days].
    light_time_s : numpy.ndarray
        Delta [s] (positive when the observer is nearer the target than
        the barycentre, so the transit is seen before its BJD).
    """
    from astropy.coordinates import SkyCoord, EarthLocation
    bary = np.asarray(bary_jd, dtype=np.float64)
    if bary.size == 0:
        return bary.copy(), np.zeros(0)
    loc = location if location is not None else EarthLocation.from_geocentric(0, 0, 0, u.m)
    coord = SkyCoord(np.asarray(ra_rad) * u.rad, np.asarray(dec_rad) * u.rad, frame="icrs")
    obs = bary.copy()
    delta = np.zeros_like(bary)
    with offline_time():
        for _ in range(2):
            t = _times(obs, location=loc)
            delta = t.light_travel_time(coord, kind="barycentric", location=loc,
                                        ephemeris="builtin").to_value(u.s)
            obs = bary - delta / DAY
    return obs, np.asarray(delta)


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


def _utc_isot(jd_tdb, location=None):
    with offline_time():
        t = _times(jd_tdb, location=location).utc
        t.precision = 0
        return np.asarray(t.isot, dtype=str)


def _tdb_jd_of(time):
    with offline_time():
        tdb = time.tdb
        return float(tdb.jd1) + float(tdb.jd2)


def _target_unit_vectors(ra_rad, dec_rad):
    ra, dec = np.asarray(ra_rad), np.asarray(dec_rad)
    return np.stack([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)], axis=-1)


def _sun_geocentric(jd_tdb):
    """Geometric geocentric Sun vector [au], ICRS axes, shape jd.shape + (3,)."""
    from astropy.coordinates import get_body_barycentric
    with offline_time():
        t = _times(jd_tdb)
        sun = get_body_barycentric("sun", t, ephemeris="builtin")
        earth = get_body_barycentric("earth", t, ephemeris="builtin")
        d = (sun - earth).xyz.to_value(u.au)
    return np.moveaxis(d, 0, -1)


def _space_constraints(obs, start_jd, end_jd, ra, dec):
    lengths = (end_jd - start_jd) * DAY
    f = _sample_fractions(lengths, SPACE_SAMPLE_HOURS * HOUR)
    tgrid = start_jd[:, None] + (end_jd - start_jd)[:, None] * f[None, :]
    elong = elongation_deg(_sun_geocentric(tgrid), _target_unit_vectors(ra, dec)[:, None, :])
    emin, emax = elong.min(axis=1), elong.max(axis=1)
    lo, hi = obs.elongation
    ok_el = (emin >= lo) & (emax <= hi)
    reason = np.where(ok_el, "", np.char.add(np.char.add(
        np.char.add("solar elongation ", np.char.mod("%.1f", emin)),
        np.char.add("-", np.char.mod("%.1f", emax))), f" deg outside {lo:g}-{hi:g}"))
    ok = ok_el
    if obs.seasons:
        s_lo = np.array([_tdb_jd_of(a) for a, _ in obs.seasons])
        s_hi = np.array([_tdb_jd_of(b) for _, b in obs.seasons])
        ok_s = in_any_season(start_jd, end_jd, s_lo, s_hi)
        reason = _join(reason, np.where(ok_s, "", "outside the seasonal windows"))
        ok = ok & ok_s
    cols = {"min_elongation_deg": emin, "max_elongation_deg": emax}
    return ok, reason, cols


def altitudes_deg(site, jd_tdb, ra_rad, dec_rad, target_jd=None):
    """Geometric altitudes of the Sun and of a target at a ground site [deg].

    sin(alt) = sin(phi) sin(dec) + cos(phi) cos(dec) cos(H), with the CIO-based
    hour angle H = ERA + lambda - alpha_CIRS (Kaplan 2005, USNO Circular 179,
    ch. 6, chapter from memory); ERA, the Sun's apparent position (``get_sun``) and CIRS positions
    from astropy.  No refraction; the Sun's 8.8 arcsec parallax is neglected.

    Parameters
    ----------
    site : GroundSite
    jd_tdb : numpy.ndarray
        Times [JD, TDB], any shape S.
    ra_rad, dec_rad : numpy.ndarray
        Target ICRS position [rad], broadcastable to S (or to ``target_jd``).
    target_jd : numpy.ndarray, optional
        Times at which the target's CIRS position is evaluated (it moves by
        precession only, about 50 arcsec per year); shape of ``ra_rad``,
        broadcast against S.  Default: ``jd_tdb``.

    Returns
    -------
    sun_alt, target_alt : numpy.ndarray
        Shape S.
    """
    from astropy.coordinates import SkyCoord, CIRS, get_sun
    loc = site.location()
    lat = math.radians(site.latitude)
    tj = np.asarray(jd_tdb, dtype=np.float64)
    with offline_time():
        tg = _times(tj, location=loc)
        era = tg.earth_rotation_angle(site.longitude * u.deg).to_value(u.rad)
        sun = get_sun(tg).transform_to(CIRS(obstime=tg))
        if target_jd is None:
            ra_b, dec_b = np.broadcast_arrays(np.asarray(ra_rad), np.asarray(dec_rad), tj)[:2]
            t_t = tg
        else:
            ra_b, dec_b = np.asarray(ra_rad), np.asarray(dec_rad)
            t_t = _times(target_jd, location=loc)
        tgt = SkyCoord(ra_b * u.rad, dec_b * u.rad, frame="icrs").transform_to(CIRS(obstime=t_t))
    sun_alt = altitude_deg(lat, sun.dec.to_value(u.rad), era - sun.ra.to_value(u.rad))
    t_ra, t_dec = tgt.ra.to_value(u.rad), tgt.dec.to_value(u.rad)
    if target_jd is not None and np.ndim(t_ra) < era.ndim:
        t_ra = t_ra.reshape(t_ra.shape + (1,) * (era.ndim - t_ra.ndim))
        t_dec = t_dec.reshape(t_dec.shape + (1,) * (era.ndim - t_dec.ndim))
    tgt_alt = altitude_deg(lat, t_dec, era - t_ra)
    return sun_alt, tgt_alt


def _sun_cirs_unit(jd_tdb, location):
    """Unit vectors of the Sun's apparent geocentric CIRS direction, shape jd.shape + (3,)."""
    from astropy.coordinates import CIRS, get_sun
    with offline_time():
        t = _times(jd_tdb, location=location)
        sun = get_sun(t).transform_to(CIRS(obstime=t))
    return _target_unit_vectors(sun.ra.to_value(u.rad), sun.dec.to_value(u.rad))


def _ground_constraints(site, start_jd, end_jd, mid_jd, ra, dec):
    from astropy.coordinates import SkyCoord, CIRS
    loc = site.location()
    lengths = (end_jd - start_jd) * DAY
    f = _sample_fractions(lengths, GROUND_SAMPLE_MINUTES * 60.0)
    tgrid = start_jd[:, None] + (end_jd - start_jd)[:, None] * f[None, :]
    lat = math.radians(site.latitude)
    # The Sun's CIRS direction moves ~1 deg/day almost uniformly: it is found at
    # both window ends and interpolated (chord, renormalised; < 0.005 deg error
    # for windows up to 2 days).  The Earth rotation angle is taken at every
    # sample, the target's CIRS position at the window mid (precession only).
    ends = _sun_cirs_unit(np.stack([start_jd, end_jd], axis=1), loc)
    vec = ends[:, :1, :] * (1.0 - f)[None, :, None] + ends[:, 1:, :] * f[None, :, None]
    vec /= np.linalg.norm(vec, axis=-1, keepdims=True)
    with offline_time():
        era = _times(tgrid, location=loc).earth_rotation_angle(
            site.longitude * u.deg).to_value(u.rad)
        tgt = SkyCoord(ra * u.rad, dec * u.rad, frame="icrs").transform_to(
            CIRS(obstime=_times(mid_jd, location=loc)))
    sun_alt = altitude_deg(lat, np.arcsin(np.clip(vec[..., 2], -1, 1)),
                           era - np.arctan2(vec[..., 1], vec[..., 0]))
    tgt_alt = altitude_deg(lat, tgt.dec.to_value(u.rad)[:, None],
                           era - tgt.ra.to_value(u.rad)[:, None])
    amin = tgt_alt.min(axis=1)
    smax = sun_alt.max(axis=1)
    ok_t = amin >= site.min_altitude
    ok_s = smax <= site.sun_altitude
    r1 = np.where(ok_t, "", np.char.add(np.char.add("target down to ", np.char.mod("%.1f", amin)),
                                        f" deg altitude (limit {site.min_altitude:g})"))
    r2 = np.where(ok_s, "", np.char.add(np.char.add("Sun up to ", np.char.mod("%.1f", smax)),
                                        f" deg altitude (limit {site.sun_altitude:g})"))
    cols = {"min_target_altitude_deg": amin, "max_sun_altitude_deg": smax}
    return ok_t & ok_s, _join(r1, r2), cols


def _join(a, b):
    a = np.asarray(a, dtype=str)
    b = np.asarray(b, dtype=str)
    sep = np.where((np.char.str_len(a) > 0) & (np.char.str_len(b) > 0), "; ", "")
    return np.char.add(np.char.add(a, sep), b)


# ----------------------------------------------------------------------------
# public layer


def _ephemeris(system):
    """Validated ephemeris arrays of a System (T0 [JD], P [s], sigmas [s])."""
    from .system import System
    if not isinstance(system, System):
        raise InputError("system", type(system).__name__, "a snrkit.System")
    p = system.planet
    t0 = np.asarray(p.transit_midtime, dtype=np.float64)
    missing = np.isnan(t0)
    if missing.any():
        name = p.name[np.flatnonzero(missing)[0]]
        raise InputError(f"planet.transit_midtime ({name})", None,
                         "a mid-transit time in BJD_TDB (days), e.g. 2461000.3241",
                         detail="the calendar needs a reference transit")
    s_t0 = np.asarray(p._t0_sigma, dtype=np.float64)
    s_p = np.asarray(p._p_sigma, dtype=np.float64)
    no_sig = np.isnan(s_t0) | np.isnan(s_p)
    if no_sig.any():
        names = ", ".join(p.name[no_sig])
        warnings.warn(f"{names}: transit_midtime_uncertainty or period_uncertainty not given; "
                      "taken as 0, so the windows carry no timing padding", CalendarWarning,
                      stacklevel=3)
    return t0, p.period_s, np.nan_to_num(s_t0), np.nan_to_num(s_p)


def _range(start, end):
    t_start = parse_date(start, "start (--from)")
    t_end = parse_date(end, "end (--to)", end_of_day=True)
    with offline_time():
        shown = end if isinstance(end, str) else t_end.isot
        if not t_end > t_start:
            raise InputError("end (--to)", shown, f"a time after the start ({t_start.isot})")
        if (t_end.mjd - t_start.mjd) > MAX_RANGE_YEARS * 365.25:
            raise InputError("end (--to)", shown, f"a range of at most {MAX_RANGE_YEARS:g} years")
    return t_start, t_end


def predict_transits(system, start, end):
    """Predicted barycentric mid-transit times in a date range.

    Parameters
    ----------
    system : snrkit.System
        Planets with ``transit_midtime`` (BJD_TDB) and, ideally,
        ``transit_midtime_uncertainty`` and ``period_uncertainty``.
    start, end : str or astropy.time.Time
        UTC range (see :func:`parse_date`; a date-only ``end`` includes that day).
        A reference time after the range is fine: epochs are then negative.

    Returns
    -------
    astropy.table.Table
        One row per transit whose BJD_TDB lies in the range: ``planet``,
        ``epoch``, ``mid_bjd_tdb`` [d], ``sigma_minutes`` [min].

    Raises
    ------
    InputError
        Missing ``planet.transit_midtime``, unreadable dates, end not after start.
    """
    from astropy.table import Table
    t0, per, s_t0, s_p = _ephemeris(system)
    t_start, t_end = _range(start, end)
    lo, hi = _tdb_jd_of(t_start), _tdb_jd_of(t_end)
    idx, n = epoch_grid(t0, per, lo, hi)
    mid = t0[idx] + n * (per[idx] / DAY)
    sig = timing_sigma(s_t0[idx], s_p[idx], n)
    tab = Table()
    tab["planet"] = np.asarray(system.planet.name)[idx].astype(str)
    tab["epoch"] = n
    tab["mid_bjd_tdb"] = mid
    tab["mid_bjd_tdb"].unit = u.day
    tab["sigma_minutes"] = sig / 60.0
    tab["sigma_minutes"].unit = u.min
    tab.meta["method"] = ("linear ephemeris T0 + n P; sigma_n^2 = sigma_T0^2 + n^2 sigma_P^2 "
                          "(first-order propagation, uncorrelated T0 and P)")
    return tab


def transit_windows(system, start, end, observatory="space", baseline=DEFAULT_BASELINE_T14,
                    padding_sigma=DEFAULT_PADDING_SIGMA):
    """Windows to schedule for every predicted transit in a date range.

    Parameters
    ----------
    system : snrkit.System
        Planets with ``transit_midtime`` [BJD_TDB]; the star's
        ``right_ascension``/``declination`` are needed for the light-time
        correction and any observability constraint.
    start, end : str or astropy.time.Time
        UTC range; a transit belongs to it when its mid-time seen at the
        observer (UTC) lies in [start, end].  A date-only ``end`` includes
        that day.  T0 may lie after the range (negative epochs).
    observatory : "space", SpaceObservatory, GroundSite, str or None
        ``"space"``: :class:`SpaceObservatory` with default elongation.
        A string is read by :func:`parse_observatory`.  ``None`` or
        ``"none"``: no observability constraint (every window observable),
        observer at the geocentre.
    baseline : float, str or Quantity
        Total out-of-transit time, split equally before and after: a bare
        number is a multiple of T14 (default 1.0), else a duration ("3 h").
    padding_sigma : float
        k: each side is padded by k sigma_n (default 3).

    Returns
    -------
    astropy.table.Table
        One row per window, in time order: ``planet``, ``epoch``,
        ``mid_bjd_tdb`` [d], ``mid_utc``, ``start_utc``, ``end_utc`` (ISO,
        at the observer), ``sigma_minutes`` [min], ``duration_hours`` [h],
        ``light_time_s`` [s] (barycentric correction removed),
        ``observable`` (bool), ``reason`` (empty when observable), and the
        constraint values (``min_elongation_deg``/``max_elongation_deg`` in
        space, ``min_target_altitude_deg``/``max_sun_altitude_deg`` at a
        site).  ``meta`` records the observatory, the parameters and the
        precision notes.

    Raises
    ------
    InputError
        Missing ``planet.transit_midtime``; missing
        ``star.right_ascension``/``star.declination`` with an observability
        constraint; unreadable dates; end not after start; bad options.

    Warns
    -----
    CalendarWarning
        Missing timing uncertainties (taken as 0), or a missing sky position
        without a constraint (light time not removed; windows widened by
        :data:`MAX_LIGHT_TIME_S` on each side).
    """
    from astropy.table import Table
    if isinstance(observatory, str):
        observatory = parse_observatory(observatory)
    if observatory is not None and not isinstance(observatory, (SpaceObservatory, GroundSite)):
        raise InputError("observatory", observatory,
                         "'space', 'site:LON,LAT[,ELEV_M]', 'none', a SpaceObservatory or GroundSite")
    mult, base_s = parse_baseline(baseline)
    if isinstance(padding_sigma, bool):
        raise InputError("padding_sigma", padding_sigma, "a number of sigma in [0, 10]")
    try:
        k = float(padding_sigma)
    except (TypeError, ValueError):
        raise InputError("padding_sigma", padding_sigma, "a number of sigma in [0, 10]") from None
    check_range(np.asarray(k), "padding_sigma", 0.0, 10.0, unit_label="sigma")

    t0, per, s_t0, s_p = _ephemeris(system)
    t_start, t_end = _range(start, end)
    ra_all = np.asarray(system.star._ra, dtype=np.float64)
    dec_all = np.asarray(system.star._dec, dtype=np.float64)
    no_pos = np.isnan(ra_all) | np.isnan(dec_all)
    if no_pos.any():
        name = system.planet.name[np.flatnonzero(no_pos)[0]]
        field = "star.right_ascension" if np.isnan(ra_all[no_pos][0]) else "star.declination"
        if observatory is not None:
            raise InputError(f"{field} ({name})", None,
                             "a sky position (star.right_ascension and star.declination, deg ICRS)",
                             detail="needed for the observability constraint and the "
                                    "barycentric light-time correction")
        warnings.warn(f"{', '.join(system.planet.name[no_pos])}: no sky position "
                      "(star.right_ascension / star.declination); the barycentric light-time "
                      f"correction is not removed and windows are widened by "
                      f"{MAX_LIGHT_TIME_S:.0f} s on each side", CalendarWarning, stacklevel=2)
    t14 = np.asarray(system.derived_arrays()["t14_s"], dtype=np.float64)

    margin = 2.0 * MAX_LIGHT_TIME_S / DAY
    lo, hi = _tdb_jd_of(t_start), _tdb_jd_of(t_end)
    idx, n = epoch_grid(t0, per, lo - margin, hi + margin)
    bary = t0[idx] + n * (per[idx] / DAY)
    sig = timing_sigma(s_t0[idx], s_p[idx], n)
    ra, dec = ra_all[idx], dec_all[idx]
    known = ~no_pos[idx]

    location = observatory.location() if isinstance(observatory, GroundSite) else None
    obs = bary.copy()
    ltt = np.zeros_like(bary)
    if known.any():
        obs[known], ltt[known] = observer_times(bary[known], ra[known], dec[known], location)
    keep = (obs >= lo) & (obs <= hi)
    idx, n, bary, sig, obs, ltt, ra, dec, known = (a[keep] for a in
                                                   (idx, n, bary, sig, obs, ltt, ra, dec, known))
    order = np.argsort(obs, kind="stable")
    idx, n, bary, sig, obs, ltt, ra, dec, known = (a[order] for a in
                                                   (idx, n, bary, sig, obs, ltt, ra, dec, known))

    half = window_half_width(t14[idx], mult, base_s, sig, k) + np.where(known, 0.0,
                                                                       MAX_LIGHT_TIME_S)
    _warn_overlapping_windows(system, idx, half)
    start_jd = obs - half / DAY
    end_jd = obs + half / DAY

    extra = {}
    if observatory is None or obs.size == 0:
        ok = np.ones(obs.size, dtype=bool)
        reason = np.full(obs.size, "", dtype=str)
        if isinstance(observatory, SpaceObservatory):
            extra = {"min_elongation_deg": np.zeros(0), "max_elongation_deg": np.zeros(0)}
        elif isinstance(observatory, GroundSite):
            extra = {"min_target_altitude_deg": np.zeros(0), "max_sun_altitude_deg": np.zeros(0)}
    elif isinstance(observatory, SpaceObservatory):
        ok, reason, extra = _space_constraints(observatory, start_jd, end_jd, ra, dec)
    else:
        ok, reason, extra = _ground_constraints(observatory, start_jd, end_jd, obs, ra, dec)

    tab = Table()
    tab["planet"] = np.asarray(system.planet.name)[idx].astype(str)
    tab["epoch"] = n.astype(np.int64)
    tab["mid_bjd_tdb"] = bary
    tab["mid_bjd_tdb"].unit = u.day
    tab["mid_utc"] = _utc_isot(obs, location)
    tab["start_utc"] = _utc_isot(start_jd, location)
    tab["end_utc"] = _utc_isot(end_jd, location)
    tab["sigma_minutes"] = sig / 60.0
    tab["sigma_minutes"].unit = u.min
    tab["duration_hours"] = 2.0 * half / HOUR
    tab["duration_hours"].unit = u.h
    tab["light_time_s"] = ltt
    tab["light_time_s"].unit = u.s
    tab["observable"] = np.asarray(ok, dtype=bool)
    tab["reason"] = np.asarray(reason, dtype=str)
    for name, col in extra.items():
        tab[name] = np.asarray(col, dtype=np.float64)
        tab[name].unit = u.deg
    tab.meta.update(_meta(observatory, t_start, t_end, mult, base_s, k, obs))
    tab.meta["planets"] = [str(x) for x in system.planet.name]
    return tab


def _warn_overlapping_windows(system, idx, half):
    """Note planets whose windows (transit, baseline, timing padding) outlast the orbit."""
    from .errors import ExtremeValueWarning
    period = np.asarray(system.planet.period_s, dtype=np.float64)[idx]
    over = 2.0 * half > period
    if np.any(over):
        names = sorted(set(np.asarray(system.planet.name)[idx][over].astype(str)))
        j = int(np.flatnonzero(over)[0])
        warnings.warn(f"{', '.join(names)}: each window ({2 * half[j] / HOUR:.1f} h) is longer "
                      f"than the orbit ({period[j] / HOUR:.1f} h), so consecutive windows "
                      "overlap; the baseline or the timing padding cannot all be taken",
                      ExtremeValueWarning, stacklevel=3)


def _meta(observatory, t_start, t_end, mult, base_s, k, obs_jd):
    import erfa
    from astropy.utils import iers
    from astropy.time import Time
    with offline_time():
        leap_exp = erfa.leap_seconds.expires  # updated from astropy-iers-data on first UTC use
        tab = iers.earth_orientation_table.get()
        iers_end_mjd = float(np.max(tab["MJD"].to_value(u.day)))
        iers_end = Time(iers_end_mjd, format="mjd", scale="utc").isot[:10]
        from_utc, to_utc = t_start.isot, t_end.isot
    notes = [
        "times at the observer: BJD_TDB minus the barycentric light-travel time "
        "(astropy Time.light_travel_time, builtin ERFA ephemeris); TDB->UTC by astropy/ERFA",
        f"leap seconds from the bundled table, valid to {leap_exp:%Y-%m-%d}; later UTC times "
        "assume no new leap second (any would shift them by 1 s)",
    ]
    if isinstance(observatory, GroundSite):
        notes.append(f"Earth orientation from the bundled IERS table (to {iers_end}); later "
                     "times use the last UT1-UTC and a mean polar motion (< 15 arcsec effect "
                     "on altitudes); geometric altitudes, no refraction")
    elif isinstance(observatory, SpaceObservatory):
        notes.append("space observer at the geocentre (an observatory near Sun-Earth L2 "
                     "differs by <= 5 s in time and < 0.01 deg in elongation)")
    baseline = (f"{mult:g} x T14" if base_s == 0.0 else f"{base_s / HOUR:g} h") + \
        " total, split before/after"
    return {
        "observatory": "none (no observability constraint)" if observatory is None
        else observatory.describe(),
        "from_utc": from_utc, "to_utc": to_utc,
        "baseline": baseline, "padding_sigma": k,
        "window": "T14 centred on the mid-time + baseline + k sigma_n on each side",
        "method": ("linear ephemeris T0 + n P; sigma_n^2 = sigma_T0^2 + n^2 sigma_P^2 "
                   "(first-order propagation, uncorrelated T0 and P)"),
        "notes": notes,
    }
