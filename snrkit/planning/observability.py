"""Observability of windows: solar elongation in space, altitudes at a ground site.

Solar elongation from the geometric geocentric Sun direction (astropy's
builtin ERFA ephemeris); altitudes from sin(alt) = sin(phi) sin(dec) + cos(phi)
cos(dec) cos(H) with the CIO-based hour angle (Kaplan 2005, USNO Circular 179,
ch. 6 -- chapter number from memory).  Constraints are sampled across each
window (every :data:`GROUND_SAMPLE_MINUTES` at a site, every
:data:`SPACE_SAMPLE_HOURS` in space, and always at both ends).
"""

import math

import numpy as np
import astropy.units as u

from ..constants import DAY, HOUR
from .timescales import _tdb_jd_of, _times, offline_time

__all__ = ["GROUND_SAMPLE_MINUTES", "SPACE_SAMPLE_HOURS", "elongation_deg", "altitude_deg", "in_any_season",
           "altitudes_deg"]


#: Sampling step of the ground-site constraints across a window [min].
GROUND_SAMPLE_MINUTES = 5.0
#: Sampling step of the solar-elongation constraint across a window [h].
SPACE_SAMPLE_HOURS = 1.0
#: Largest number of constraint samples per window (caps memory for windows
#: many days long; the step then grows beyond the nominal one).
_MAX_SAMPLES = 600


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
