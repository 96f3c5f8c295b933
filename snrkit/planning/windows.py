"""The transit windows table: predicted transits, observer times and observability.

:func:`transit_windows` joins the ephemeris, the time scales and the
observability into one astropy Table per system, with the settings and the
precision of the offline time scales in its metadata.  Methods:
:mod:`snrkit.planning.calendar`.
"""

import warnings

import numpy as np
import astropy.units as u

from ..constants import AU, C_LIGHT, DAY, HOUR
from ..errors import InputError
from ..units import check_range
from .timescales import _tdb_jd_of, observer_times, offline_time, tdb_column, utc_column
from .ephemeris import (CalendarWarning, DEFAULT_BASELINE_T14, DEFAULT_PADDING_SIGMA, _ephemeris,
                        _range, epoch_grid, parse_baseline, timing_sigma, window_half_width)
from .observability import _ground_constraints, _space_constraints
from .observatories import GroundSite, SpaceObservatory, parse_observatory

__all__ = ["MAX_LIGHT_TIME_S", "transit_windows"]


#: Largest barycentric light-travel-time correction [s]: aphelion distance
#: 1.0167 au over c (used as extra padding when the sky position is unknown).
MAX_LIGHT_TIME_S = 1.0167 * AU / C_LIGHT


# size: the docstring documents the options and every column; the body is a list of steps
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
        ``mid_bjd_tdb`` (astropy Time, scale TDB, format jd: barycentric),
        ``mid_utc``, ``start_utc``, ``end_utc`` (astropy Time, scale UTC,
        format isot shown to the second, at the observer; format them inside
        :func:`offline_time` past 2029), ``sigma_minutes`` [min], ``duration_hours`` [h],
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
    observatory, mult, base_s, k = _window_options(observatory, baseline, padding_sigma)

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

    location = observatory.location() if isinstance(observatory, GroundSite) else None
    lo, hi = _tdb_jd_of(t_start), _tdb_jd_of(t_end)
    idx, n, bary, sig, obs, ltt, ra, dec, known = _predicted(t0, per, s_t0, s_p, lo, hi, ra_all,
                                                             dec_all, no_pos, location)
    half = window_half_width(t14[idx], mult, base_s, sig, k) + np.where(known, 0.0,
                                                                       MAX_LIGHT_TIME_S)
    _warn_overlapping_windows(system, idx, half)
    start_jd = obs - half / DAY
    end_jd = obs + half / DAY

    ok, reason, extra = _observability(observatory, start_jd, end_jd, obs, ra, dec)
    return _windows_table(system, idx, n, bary, sig, obs, ltt, half, start_jd, end_jd, location, ok,
                          reason, extra, _meta(observatory, t_start, t_end, mult, base_s, k, obs))


def _window_options(observatory, baseline, padding_sigma):
    """The observatory (parsed), the baseline (multiple of T14, seconds) and the padding [sigma]."""
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
    return observatory, mult, base_s, k


def _predicted(t0, per, s_t0, s_p, lo, hi, ra_all, dec_all, no_pos, location):
    """Predicted transits whose observer time falls in [lo, hi] (TDB JD), in time order."""
    margin = 2.0 * MAX_LIGHT_TIME_S / DAY
    idx, n = epoch_grid(t0, per, lo - margin, hi + margin)
    bary = t0[idx] + n * (per[idx] / DAY)
    sig = timing_sigma(s_t0[idx], s_p[idx], n)
    ra, dec = ra_all[idx], dec_all[idx]
    known = ~no_pos[idx]

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
    return idx, n, bary, sig, obs, ltt, ra, dec, known


def _observability(observatory, start_jd, end_jd, obs, ra, dec):
    """Whether each window is observable, why not, and the extreme angles seen."""
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
    return ok, reason, extra


def _windows_table(system, idx, n, bary, sig, obs, ltt, half, start_jd, end_jd, location, ok,
                   reason, extra, meta):
    """The windows Table, one row per predicted transit, with the settings in its metadata."""
    from astropy.table import Table
    tab = Table()
    tab["planet"] = np.asarray(system.planet.name)[idx].astype(str)
    tab["epoch"] = n.astype(np.int64)
    tab["mid_bjd_tdb"] = tdb_column(bary)
    tab["mid_utc"] = utc_column(obs, location)
    tab["start_utc"] = utc_column(start_jd, location)
    tab["end_utc"] = utc_column(end_jd, location)
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
    tab.meta.update(meta)
    tab.meta["planets"] = [str(x) for x in system.planet.name]
    return tab


def _warn_overlapping_windows(system, idx, half):
    """Note planets whose windows (transit, baseline, timing padding) outlast the orbit."""
    from ..errors import ExtremeValueWarning
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
