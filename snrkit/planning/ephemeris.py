"""Linear ephemeris: dates, epochs in a range, timing uncertainty, predicted transits.

T_n = T0 + n P with sigma_n^2 = sigma_T0^2 + n^2 sigma_P^2 (first-order
propagation for uncorrelated T0 and P -- common practice, no single source);
the window half-width is T14/2 plus half the baseline plus k sigma_n.
Methods: :mod:`snrkit.planning.calendar`.
"""

import re
import warnings

import numpy as np
import astropy.units as u

from ..constants import DAY
from ..errors import InputError, SnrkitWarning
from ..units import to_si, check_range
from .timescales import _tdb_jd_of, offline_time, tdb_column

__all__ = ["DEFAULT_PADDING_SIGMA", "DEFAULT_BASELINE_T14", "MAX_RANGE_YEARS", "MAX_WINDOWS",
           "CalendarWarning", "parse_date", "parse_baseline", "epoch_grid", "timing_sigma",
           "window_half_width", "predict_transits"]


#: Padding of each window side in units of the timing uncertainty sigma_n
#: -- common practice, no source.
DEFAULT_PADDING_SIGMA = 3.0
#: Total out-of-transit baseline in units of T14, split equally before and after.
DEFAULT_BASELINE_T14 = 1.0
#: Longest accepted date range [years].
MAX_RANGE_YEARS = 30.0
#: Largest number of predicted transits in one call.
MAX_WINDOWS = 2_000_000
#: Accepted calendar years (UTC with leap seconds starts in 1972; the
#: built-in ERFA ephemeris epv00 is valid 1900-2100).
_YEAR_RANGE = (1972, 2099)


class CalendarWarning(SnrkitWarning):
    """A calendar input was missing and a documented fallback was used."""


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


def _ephemeris(system):
    """Validated ephemeris arrays of a System (T0 [JD], P [s], sigmas [s])."""
    from ..bodies.system import System
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
        ``epoch``, ``mid_bjd_tdb`` (astropy Time, scale TDB, format jd),
        ``sigma_minutes`` [min].

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
    tab["mid_bjd_tdb"] = tdb_column(mid)
    tab["sigma_minutes"] = sig / 60.0
    tab["sigma_minutes"].unit = u.min
    tab.meta["method"] = ("linear ephemeris T0 + n P; sigma_n^2 = sigma_T0^2 + n^2 sigma_P^2 "
                          "(first-order propagation, uncorrelated T0 and P)")
    return tab
