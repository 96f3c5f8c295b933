"""Precision for the planets of a System, and the limiting magnitudes of a mode.

:func:`system_precision` takes Teff, magnitudes, T14, T23 and depths from a
:class:`snrkit.System` and the defaults of its ``[planet.observation]``
tables, then calls :func:`snrkit.photons.precision.transit_precision`;
:func:`limiting_magnitudes` gives the brightest usable and the floor-limited
magnitudes of a mode.
"""

from __future__ import annotations

from typing import TYPE_CHECKING


import numpy as np
import astropy.units as u

from ..constants import HOUR
from ..errors import InputError
from ..units import to_si, check_range
from .instruments import load_mode
from .binning import (native_bin_edges)
from .precision import IN_TRANSIT_CHOICES, transit_precision

__all__ = ["limiting_magnitudes", "system_precision"]

if TYPE_CHECKING:   # annotations only: not imported at run time
    from typing import Any
    import xarray
    from ..bodies.system import System
    from ..labelled import Labelled
    from ..units import PathLike, QuantityLike
    from .mode import Mode
    from .stellar_spectrum import StellarSpectrum


def limiting_magnitudes(mode: str | PathLike | Mode, teff: QuantityLike, band: str = "J", *,
                        transit_duration: QuantityLike = 3.0, baseline_factor: float = 1.0,
                        reference_wavelength: QuantityLike | None = None,
                        spectrum: StellarSpectrum | PathLike | None = None) -> dict[str, Any]:
    """Brightest usable magnitude and the magnitude where the floor equals photon noise.

    Parameters
    ----------
    mode : str, pathlib.Path or Mode
    teff : Quantity or float
        Stellar effective temperature; K (Planck spectrum unless ``spectrum``).
    band : str
        Band of the magnitudes.
    transit_duration : Quantity or float
        T14 used for the floor comparison; hours (default 3 h).
    baseline_factor : float
        Baseline as a multiple of T14 (default 1).
    reference_wavelength : Quantity or float, optional
        Reference bin (the native bin containing it); um.  Default: the
        geometric centre of the mode's range.
    spectrum : optional
        User stellar spectrum instead of Planck.

    Returns
    -------
    dict
        ``saturation_mag`` (brightest usable magnitude, NaN for scan modes),
        ``floor_mag`` (magnitude at which the photon term of one transit in
        the reference bin equals the floor; brighter stars are floor
        limited), ``reference_wavelength_um``, ``floor_ppm``.
    """
    m = load_mode(mode)
    lo, hi = m.wavelength_min_m, m.wavelength_max_m
    lam_ref = (np.sqrt(lo * hi) if reference_wavelength is None else
               float(to_si(reference_wavelength, "reference_wavelength", u.um, lo * 1e6,
                           hi * 1e6)))
    edges = native_bin_edges(m)
    k = int(np.clip(np.searchsorted(edges, lam_ref) - 1, 0, len(edges) - 2))
    mags = np.arange(-4.0, 26.0 + 1e-9, 0.05)
    ds = transit_precision(m, magnitude=mags, band=band, teff=teff,
                           transit_duration=transit_duration, baseline_factor=baseline_factor,
                           spectrum=spectrum, warn=False,
                           bin_edges=edges[k:k + 2] * 1e6, as_arrays=True)
    # photon term of one transit, recomputed without the saturation mask
    r = ds["photon_rate"][:, 0]
    duty = ds["duty_cycle"]
    t_in = ds["in_transit_time"] * HOUR
    t_out = ds["baseline_time"] * HOUR
    photon = np.sqrt(1.0 / (r * duty * t_in) + 1.0 / (r * duty * t_out)) * 1e6
    floor = m.floor_ppm
    above = photon > floor
    if floor <= 0 or above.all() or not above.any():
        floor_mag = np.nan
    else:
        j = int(np.argmax(above))   # first magnitude where photon noise exceeds the floor
        x0, x1 = np.log(photon[j - 1] / floor), np.log(photon[j] / floor)
        floor_mag = mags[j - 1] + (mags[j] - mags[j - 1]) * (0 - x0) / (x1 - x0)
    sat = ds["saturation_limit_mag"][0]
    return {"saturation_mag": float(sat), "floor_mag": float(floor_mag),
            "reference_wavelength_um": float(0.5 * (edges[k] + edges[k + 1]) * 1e6),
            "floor_ppm": float(floor)}


def _observation_value(obs, key, default):
    if obs is None or key not in obs:
        return default
    return obs[key]


def _common(values, field, names):
    """The single value shared by all planets (mode and readout must agree)."""
    first = values[0]
    for v, name in zip(values[1:], names[1:]):
        if v != first:
            raise InputError(f"planet.observation.{field} ({name})", v,
                             f"the same value as for {names[0]} ({first!r}) in one run; "
                             "run the planets separately (--planet)")
    return first


def system_precision(system: System, mode: str | PathLike | Mode | None = None, *,
                     band: str | None = None, n_transits: int | None = None,
                     in_transit: str | None = None, baseline: QuantityLike | None = None,
                     readout: int | str | None = None, floor_ppm: float | None = None,
                     floor_averages_down: bool | None = None, resolution: float | str | None = None,
                     bin_edges: QuantityLike | None = None,
                     spectrum: StellarSpectrum | PathLike | None = None, warn: bool = True,
                     readout_options: bool = False,
                     as_arrays: bool = False) -> xarray.Dataset | Labelled:
    """Per-bin transit-depth precision for every planet of a :class:`snrkit.System`.

    A thin wrapper of :func:`transit_precision`: Teff, the magnitude in
    ``band``, T14, T23 and the depth come from the system; the planets'
    ``[planet.observation]`` tables (keys ``mode``, ``transits``,
    ``in_transit``, ``baseline``, ``readout_groups``, ``noise_floor``,
    ``floor_averages_down``) supply defaults that the arguments here override.

    Parameters
    ----------
    system : snrkit.System
    mode : str, pathlib.Path or Mode, optional
        Instrument mode; default the planets' ``observation.mode``.
    band : str, optional
        Band of the normalising magnitude; default the first of J, H, Ks, V
        that the star has.
    n_transits : int, optional
        Default ``observation.transits`` or 1.
    in_transit : {"weighted", "t14", "t23"} or Quantity or float, optional
        Time counted as in transit: ``"weighted"`` (the light curve weighted
        by the square of its relative depth, (T14 + 2 T23) / 3; see the module
        docstring), T14, T23, or a duration (hours); default
        ``observation.in_transit`` or ``"weighted"``.
    baseline : float, str or Quantity, optional
        A bare number is a multiple of T14; a Quantity or ``"<number> h"``
        string is a duration.  Default ``observation.baseline`` or 1 x T14.
    readout, floor_ppm, floor_averages_down, resolution, bin_edges, spectrum, warn, readout_options, as_arrays
        As in :func:`transit_precision` (``readout`` default
        ``observation.readout_groups`` or the mode's choice).

    Returns
    -------
    xarray.Dataset or snrkit.labelled.Labelled
        As :func:`transit_precision`, with the planet names on the
        ``planet`` axis and ``transit_depth`` (planet) added.
    """
    names = [str(x) for x in system.names]
    obs = list(system.observations)
    mode, readout, floor_ppm, floor_averages_down, n_transits = _observation_defaults(
        obs, names, mode, readout, floor_ppm, floor_averages_down, n_transits)
    star = system.star
    band, mag = _band_magnitudes(star, band, names)
    d = system.derived_arrays()
    t14 = np.asarray(d["t14_s"], dtype=np.float64)
    t23 = np.asarray(d["t23_s"], dtype=np.float64)
    t_in, base = _in_transit_and_baseline(obs, names, in_transit, baseline, t14, t23)
    ds = transit_precision(
        mode, magnitude=mag, band=band, teff=star.teff_K * u.K,
        transit_duration=t14 * u.s, in_transit_time=np.array(t_in) * u.s,
        baseline=np.array(base) * u.s, depth=np.asarray(d["transit_depth"], dtype=np.float64),
        n_transits=n_transits, readout=readout, floor_ppm=floor_ppm,
        floor_averages_down=floor_averages_down, resolution=resolution, bin_edges=bin_edges,
        spectrum=spectrum, planet=names, warn=warn, readout_options=readout_options,
        as_arrays=True)
    ds["transit_depth"] = ("planet", np.asarray(d["transit_depth"]) * 1e6, {"units": "ppm"})
    return ds if as_arrays else ds.to_dataset()


def _observation_defaults(obs, names, mode, readout, floor_ppm, floor_averages_down, n_transits):
    """The arguments left None, from the planets' ``[planet.observation]`` tables."""
    if mode is None:
        modes = [_observation_value(o, "mode", None) for o in obs]
        mode = _common(modes, "mode", names)
        if mode is None:
            from .instruments import mode_names
            raise InputError("mode", None, "an instrument mode (--mode, or observation.mode "
                             "in the system file): one of " + ", ".join(mode_names()))
    if readout is None:
        readout = _common([_observation_value(o, "readout_groups", "auto") for o in obs],
                          "readout_groups", names)
    if floor_ppm is None:
        floor_ppm = _common([_observation_value(o, "noise_floor", None) for o in obs],
                            "noise_floor", names)
    if floor_averages_down is None:
        floor_averages_down = _common([_observation_value(o, "floor_averages_down", None)
                                       for o in obs], "floor_averages_down", names)
    if n_transits is None:
        n_transits = _common([_observation_value(o, "transits", 1) for o in obs],
                             "transits", names)
    return mode, readout, floor_ppm, floor_averages_down, n_transits


def _band_magnitudes(star, band, names):
    """The normalising band (default the first of J, H, Ks, V the star has) and its magnitudes."""
    if band is None:
        have = [b for b in ("J", "H", "Ks", "V")
                if np.all(np.isfinite(star.magnitude(b)))]
        if not have:
            raise InputError("star.magnitudes", star.magnitudes,
                             "a magnitude in one of J, H, Ks, V for every star")
        band = have[0]
    mag = np.asarray(star.magnitude(band), dtype=np.float64)
    if np.any(np.isnan(mag)):
        i = int(np.flatnonzero(np.isnan(mag))[0])
        raise InputError(f"star.magnitudes.{band} ({names[i]})", None,
                         f"a {band} magnitude (or choose another band)")
    return band, mag


def _in_transit_and_baseline(obs, names, in_transit, baseline, t14, t23):
    """In-transit and baseline times [s] per planet, from the arguments or the observation tables."""
    t_in = []
    base = []
    for i, o in enumerate(obs):
        choice = (in_transit if in_transit is not None
                  else _observation_value(o, "in_transit", "weighted"))
        key = choice.strip().lower() if isinstance(choice, str) else None
        if key in IN_TRANSIT_CHOICES:
            val = {"t14": t14[i], "t23": t23[i], "weighted": (t14[i] + 2.0 * t23[i]) / 3.0}[key]
            if not val > 0:
                raise InputError(f"in_transit ({names[i]})", choice,
                                 "'t14' or 'weighted' for a grazing transit (T23 = 0)")
            t_in.append(val)
        else:
            t_in.append(float(to_si(choice, f"in_transit ({names[i]})", u.h, 0.0, None,
                                    low_inclusive=False)))
        b = baseline if baseline is not None else _observation_value(o, "baseline", 1.0)
        if isinstance(b, (int, float, np.integer, np.floating)) and not isinstance(b, bool):
            f = float(check_range(float(b), f"baseline ({names[i]})", 0.0, 1000.0,
                                  low_inclusive=False, unit_label="x T14"))
            base.append(f * t14[i])
        else:
            base.append(float(to_si(b, f"baseline ({names[i]})", u.h, 0.0, None,
                                    low_inclusive=False)))
    return t_in, base
