"""Time scales without downloads: BJD_TDB to UTC at the observer.

Every astropy time or coordinate call of the calendar runs inside
:func:`offline_time` (bundled leap seconds and Earth-orientation tables, the
builtin ERFA ephemeris; nothing is downloaded).  The time at the observer is
t_obs = t_BJD - Delta(t_obs), Delta the barycentric light-travel-time
correction (astropy ``Time.light_travel_time``), solved by two fixed-point
iterations.  Methods and precision: :mod:`snrkit.planning.calendar`.
"""

import contextlib
import warnings

import numpy as np
import astropy.units as u

from ..constants import DAY

__all__ = ["offline_time", "observer_times", "utc_column", "tdb_column", "iso_strings"]


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


def utc_column(jd_tdb, location=None):
    """TDB Julian dates [d] at the observer as a UTC Time column (ISO format, whole seconds shown).

    The column keeps the full two-part Julian date (``precision`` only sets how
    many decimals of the second are shown) and carries no location, so it
    writes to ECSV and FITS as it is.  Formatting UTC past the bundled
    leap-second table (about five years ahead) makes ERFA warn of a "dubious
    year": format such columns inside :func:`offline_time`.
    """
    from astropy.time import Time
    with offline_time():
        t = _times(jd_tdb, location=location).utc
        out = Time(t.jd1, t.jd2, format="jd", scale="utc")
    out.format = "isot"
    out.precision = 0
    return out


def tdb_column(jd_tdb):
    """BJD_TDB [d] as a TDB Time column in Julian-date format (no location: barycentric)."""
    return _times(jd_tdb)


def iso_strings(times):
    """ISO strings (UTC, as the column shows them) of a Time column, formatted offline.

    A column of strings (a windows table read from CSV) is returned as strings.
    """
    from astropy.time import Time
    if not isinstance(times, Time):
        return [str(x) for x in times]
    with offline_time():
        return [str(x) for x in np.atleast_1d(times.isot)]


def _tdb_jd_of(time):
    with offline_time():
        tdb = time.tdb
        return float(tdb.jd1) + float(tdb.jd2)
