"""Observing calendar: predicted transits, windows to schedule, observability.

This module gathers the calendar in one namespace and documents its methods;
the code lives in :mod:`snrkit.planning.timescales` (offline astropy time
scales), :mod:`snrkit.planning.ephemeris` (dates, epochs, timing
uncertainty, predicted transits), :mod:`snrkit.planning.observatories` and
:mod:`snrkit.planning.observability` (where the target can be seen from) and
:mod:`snrkit.planning.windows` (the windows table).  The timeline figure is
:func:`snrkit.output.figures.plot_timeline`.

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

from .ephemeris import (DEFAULT_BASELINE_T14, DEFAULT_PADDING_SIGMA, MAX_RANGE_YEARS, MAX_WINDOWS,
                        CalendarWarning, epoch_grid, parse_baseline, parse_date, predict_transits,
                        timing_sigma, window_half_width)
from .observability import (GROUND_SAMPLE_MINUTES, SPACE_SAMPLE_HOURS, altitude_deg, altitudes_deg,
                            elongation_deg, in_any_season)
from .observatories import (DEFAULT_ELONGATION_DEG, DEFAULT_MIN_ALTITUDE_DEG,
                            DEFAULT_SUN_ALTITUDE_DEG, GroundSite, SpaceObservatory,
                            bjd_to_utc, parse_observatory)
from .timescales import iso_strings, observer_times, offline_time, tdb_column, utc_column
from .windows import MAX_LIGHT_TIME_S, transit_windows

__all__ = [
    "DEFAULT_ELONGATION_DEG", "DEFAULT_PADDING_SIGMA", "DEFAULT_BASELINE_T14",
    "DEFAULT_MIN_ALTITUDE_DEG", "DEFAULT_SUN_ALTITUDE_DEG", "GROUND_SAMPLE_MINUTES",
    "SPACE_SAMPLE_HOURS", "MAX_RANGE_YEARS", "MAX_WINDOWS", "MAX_LIGHT_TIME_S",
    "SpaceObservatory", "GroundSite", "parse_observatory", "parse_date", "parse_baseline",
    "offline_time", "epoch_grid", "timing_sigma", "window_half_width",
    "elongation_deg", "altitude_deg", "in_any_season",
    "observer_times", "bjd_to_utc", "altitudes_deg", "predict_transits", "transit_windows",
    "CalendarWarning", "utc_column", "tdb_column", "iso_strings",
]
