"""Photon counts, detector noise, saturation, readout and per-bin transit-depth precision.

Method
------
For each spectral bin the detected stellar electrons per second out of
transit are

    r = A * integral[ F_lambda * T(lambda) * lambda / (h c) dlambda ]   (bin)

(flux density x area x throughput x bin width / photon energy).  Over an
elapsed in-transit time ``T_in`` and baseline ``T_out`` a fraction ``d`` of the
time (the duty cycle) collects light, so ``N_out = r d T_out`` and
``N_in = (1 - delta) r d T_in``.  With the depth estimated as
``delta = 1 - (N_in / T_in) / (N_out / T_out)``, error propagation gives

    sigma_delta^2 = (1 - delta)^2 [ V_in / N_in^2 + V_out / N_out^2 ],

where ``V`` is the variance of the counts: the star's Poisson variance ``N``
plus, per pixel of the extraction box and in quadrature, the background and
dark-current electrons and the read noise (first-order propagation of
independent errors through the ratio of two count rates; any statistics
text, e.g. Bevington & Robinson 2003, *Data Reduction and Error Analysis*,
3rd ed., ch. 3).  For pure photon noise this is
``sigma_delta = (1 - delta) sqrt(1/N_in + 1/N_out)``.

Up-the-ramp readout (Rauscher et al. 2007, PASP 119, 768): an integration
of ``n`` groups spaced ``t_group`` apart, followed by ``n_reset`` reset
frames, collects light for ``(n - 1) t_group`` of its elapsed
``n t_group + n_reset t_frame``; the duty cycle is their ratio (for one frame
per group and one reset, ``(n - 1) / (n + 1)``).  The read-noise variance of
the fitted ramp of one pixel is ``12 (n - 1) sigma_read^2 / (m n (n + 1))``
for ``m`` frames averaged per group (Rauscher et al. 2007, eq. 1, read term;
equation number from memory);
for ``n = 2`` this is the familiar ``2 sigma_read^2`` of a correlated double
sample.  The photon term is taken as pure Poisson; the ramp-fit excess of the
shot noise (the ``6 (n^2 + 1) / 5 n (n + 1)`` factor of the same equation) is
neglected, a documented simplification.

Saturation: the brightest pixel collects ``(f_peak r / n_resel + b + dark)``
electrons per second, ``f_peak`` being the fraction of a resolution
element's light in its brightest pixel.  At the last read of an integration
it holds that rate times ``n t_group``.  If this exceeds the usable full well
even for the shortest allowed integration (``min_groups``), the mode cannot
observe the star; the brightest usable magnitude follows by scaling the
stellar part of the rate by ``10^(-0.4 dm)``.  With ``"auto"`` readout the
largest ``n`` that stays below the usable well is chosen (up to
``max_groups``).  Scan readout trails the star along the detector, so no
saturation limit applies; its duty cycle is a fixed property of the mode.

Systematics floor: the mode's ``floor_ppm`` (or the ``floor_ppm``
argument) is the floor per transit in a bin of the stated reference
resolving power ``floor_reference_resolution`` (R = 100 unless the mode
says otherwise; floors are usually quoted for such channels).  It is taken
as white in wavelength, so a bin of resolving power R carries
``floor_ppm sqrt(R / R_ref)`` (:func:`snrkit.photons.binning.floor_per_bin`):
its covariance binned to any bins stays diagonal, and re-binning a resolved
signal neither creates nor destroys significance, in the photon-limited and
the floor-limited regime alike (convention: common practice, no source; a
floor correlated across wavelength would be partly absorbed by the free
level and is not modelled).  Bins narrower than one resolution element are
not independent and are merged (with a note).  Over ``N`` transits the white
terms fall as ``1/sqrt(N)``; the floor either stays fixed or also falls as
``1/sqrt(N)`` (the mode or the user chooses).

In-transit time: the depth of a spectral channel is measured from the whole
transit with its shape known from the white-light light curve, each moment
weighted by the square of the light curve's relative depth g(t) (the Fisher
information on a depth that scales a known profile, derived here; cf. the
Fisher analysis of trapezoidal transits by Carter, Yee, Eastman, Gaudi &
Winn 2008, ApJ 689, 499).  For a trapezoid, g rises linearly through the
ingress and falls through the egress, so the equivalent box lasts
``int g^2 dt = T23 + (T14 - T23) / 3 = (T14 + 2 T23) / 3``.  This is the
default (``in_transit="weighted"``); ``"t14"`` and ``"t23"`` remain
available.
"""

from __future__ import annotations

import warnings
from typing import TYPE_CHECKING

import numpy as np
import astropy.units as u

from ..constants import HOUR
from ..errors import InputError, SnrkitWarning
from ..units import to_si, as_float_array, check_range
from .instruments import load_mode
from .binning import (native_bin_edges, resolution_bin_edges, rebin_rates, resolution_elements,
                      merge_narrow_bins, floor_per_bin)
from .readout import choose_readout, readout_candidates
from .sed import band_names
from .noise import bin_photon_rates
from .noise import _budget, _readout_options
from .inputs import _check_readout, _n_planets, _normalised_spectrum, _timing_inputs

__all__ = ["SaturationWarning", "BinningNote", "IN_TRANSIT_CHOICES", "DEFAULT_RESOLUTION",
           "readout_candidates", "resolution_elements", "TERMS", "native_bin_edges",
           "resolution_bin_edges", "choose_readout", "rebin_rates", "transit_precision"]

if TYPE_CHECKING:   # annotations only: not imported at run time
    from collections.abc import Sequence
    import numpy.typing as npt
    import xarray
    from ..labelled import Labelled
    from ..units import PathLike, QuantityLike
    from .mode import Mode
    from .stellar_spectrum import StellarSpectrum


#: Names of the noise-budget terms, in the order of the ``term`` axis.
TERMS = ("photon", "background", "dark", "read", "floor")

#: Named choices of the in-transit time (see the module docstring).
IN_TRANSIT_CHOICES = ("weighted", "t14", "t23")

#: Default binning of every test (transits, contrast, rank): bins of this
#: resolving power, merged where the mode resolves less (common practice, no
#: source: the binning at which low-resolution transmission spectra are
#: usually shown; features span several such bins).
DEFAULT_RESOLUTION = 100.0


class SaturationWarning(SnrkitWarning):
    """The star is too bright for the mode: its brightest pixel saturates."""


# ----------------------------------------------------------------------------
# compute layer (numpy, SI)

# ----------------------------------------------------------------------------
# public layer

def _output_edges(mode, native, resolution, bin_edges):
    lo, hi = mode.wavelength_min_m, mode.wavelength_max_m
    if resolution is not None and bin_edges is not None:
        raise InputError("resolution", resolution, "either resolution or bin_edges, not both")
    if resolution is not None:
        r = float(check_range(as_float_array(resolution, "resolution"), "resolution",
                              1.0, 1.0e6, low_inclusive=False))
        return _merged(mode, resolution_bin_edges(lo, hi, r), f"resolution {r:g}")
    if bin_edges is not None:
        e = np.atleast_1d(to_si(bin_edges, "bin_edges", u.um, 0.0, None, low_inclusive=False))
        if e.ndim != 1 or e.size < 2 or np.any(np.diff(e) <= 0):
            raise InputError("bin_edges", bin_edges, "at least two strictly increasing wavelengths")
        if e[0] < lo * (1 - 1e-9) or e[-1] > hi * (1 + 1e-9):
            raise InputError("bin_edges", f"{e[0]*1e6:.4g}-{e[-1]*1e6:.4g} um",
                             f"edges inside the mode range {lo*1e6:.4g}-{hi*1e6:.4g} um")
        return _merged(mode, np.clip(e, lo, hi), "bin_edges")
    return native


class BinningNote(SnrkitWarning):
    """Requested bins were merged to at least one resolution element each."""


def _merged(mode, edges, what):
    out, merged = merge_narrow_bins(mode, edges)
    if merged:
        warnings.warn(f"{what}: bins narrower than one resolution element of mode {mode.name} "
                      f"were merged ({edges.size - 1} requested, {out.size - 1} used)",
                      BinningNote, stacklevel=4)
    return out


# size: the docstring documents eighteen public parameters and the returned variables;
# the body is a short list of steps, each a helper
def transit_precision(mode: str | PathLike | Mode, *, magnitude: npt.ArrayLike, band: str = "J",
                      transit_duration: QuantityLike, teff: QuantityLike | None = None,
                      in_transit_time: QuantityLike | str | None = None, baseline: QuantityLike | None = None,
                      baseline_factor: float = 1.0, depth: npt.ArrayLike = 0.0, n_transits: int = 1,
                      readout: int | str = "auto", floor_ppm: float | None = None,
                      floor_averages_down: bool | None = None, resolution: float | str | None = None,
                      bin_edges: QuantityLike | None = None, spectrum: StellarSpectrum | PathLike | None = None,
                      planet: str | Sequence[str] | None = None, warn: bool = True,
                      readout_options: bool = False, as_arrays: bool = False) -> xarray.Dataset | Labelled:
    """Per-bin transit-depth precision of one transit (and of ``n_transits``).

    All per-planet inputs accept one value or one value per planet; bare
    numbers are read in the units given below.

    Parameters
    ----------
    mode : str, pathlib.Path or Mode
        Preset name (see :func:`snrkit.photons.instruments.mode_names`) or
        mode file.
    magnitude : float or array_like
        Stellar magnitude(s) in ``band``.
    band : str
        ``"J"``, ``"H"``, ``"Ks"`` or ``"V"`` (zero points: Cohen, Wheaton &
        Megeath 2003, AJ 126, 1090; Bessell, Castelli & Plez 1998, A&A 333, 231).
    transit_duration : Quantity or float
        Total transit duration T14; hours.
    teff : Quantity or float, optional
        Stellar effective temperature for a Planck spectrum; K.  Required
        unless ``spectrum`` is given.
    in_transit_time : Quantity or float, optional
        Time counted as in transit (for example T23); hours; default T14.
    baseline : Quantity or float, optional
        Out-of-transit baseline; hours.  Default ``baseline_factor * T14``.
    baseline_factor : float
        Baseline as a multiple of T14 when ``baseline`` is not given
        (default 1, common practice, no source).
    depth : float or array_like
        Transit depth as a fraction, for the ``(1 - delta)`` factor (default 0).
    n_transits : int
        Number of transits for ``noise_ppm`` (>= 1).
    readout : "auto" or int
        Groups per integration; ``"auto"`` (default) uses the mode file's
        choice (itself ``"auto"`` unless fixed there): the most groups below
        the usable full well.  Ignored for scan readout.
    floor_ppm : float, optional
        Systematics floor per transit [ppm] in a bin of the mode's reference
        resolving power (``floor_reference_resolution``); default the mode's.
    floor_averages_down : bool, optional
        Whether the floor falls as 1/sqrt(N_transits); default the mode's.
    resolution : float, optional
        Re-bin to this resolving power (lambda / delta-lambda per bin).
    bin_edges : Quantity or array_like, optional
        Re-bin to these edges; um.  Bins narrower than the mode's resolution
        element are allowed but are not independent.
    spectrum : str, pathlib.Path or StellarSpectrum, optional
        User stellar spectrum (see :func:`snrkit.photons.sed.read_spectrum`)
        instead of a Planck spectrum; must cover the mode's range.
    planet : str or list of str, optional
        Labels of the planet axis.
    warn : bool
        Issue a :class:`SaturationWarning` for stars too bright for the mode.
    readout_options : bool
        Also return, for automatic up-the-ramp readout, the white noise and
        saturation of each readout candidate
        (:func:`snrkit.photons.readout.readout_candidates`) on a
        ``readout_option`` axis, so that the chain can choose the readout
        that serves its test best.
    as_arrays : bool
        Return the same variables as a :class:`snrkit.labelled.Labelled`
        (numpy arrays; xarray is not imported), as the engine does.

    Returns
    -------
    xarray.Dataset or snrkit.labelled.Labelled
        Dims ``planet``, ``wavelength`` (bin centres, um) and ``term``.
        Variables: ``bin_width``, ``wavelength_low``, ``wavelength_high`` [um];
        ``photon_rate`` [electrons s-1 per bin, out of transit, while
        collecting light]; ``noise_ppm_per_transit``; ``noise_budget_ppm``
        (planet, term, wavelength) with terms photon, background, dark, read,
        floor; ``noise_ppm`` for ``n_transits``; ``saturated`` (planet,
        wavelength); ``star_too_bright``; ``groups_per_integration``;
        ``duty_cycle``; ``integration_time`` and ``effective_integration_time``
        [s]; ``brightest_pixel_fill``; ``saturation_limit_mag`` (brightest
        usable magnitude in ``band``, NaN when no limit applies);
        ``in_transit_time``, ``baseline_time`` [h].  Noise in saturated bins
        is NaN.

    Raises
    ------
    InputError
        Bad values (field named), unknown preset or band, a spectrum that
        does not cover the mode.
    """
    m = load_mode(mode)
    if band not in band_names():
        from ..errors import UnknownKeyError
        raise UnknownKeyError("band", band, "one of " + ", ".join(band_names()))
    n = _n_planets(magnitude, transit_duration, teff, in_transit_time, baseline, depth)
    mag, t14, t_in, t_out, dep, n_tr = _timing_inputs(magnitude, transit_duration,
                                                      in_transit_time, baseline, baseline_factor,
                                                      depth, n_transits, n)
    groups = _check_readout(readout, m, n)
    floor = m.floor_ppm if floor_ppm is None else float(
        check_range(as_float_array(floor_ppm, "floor_ppm"), "floor_ppm", 0.0, 1.0e6))
    floor_down = m.floor_averages_down if floor_averages_down is None else bool(floor_averages_down)
    spec = _normalised_spectrum(spectrum, teff, n, m, mag, band)

    native = native_bin_edges(m)
    rates = bin_photon_rates(m, spec, native)
    edges = _output_edges(m, native, resolution, bin_edges)
    # the floor per bin: quoted at the reference resolving power, white in wavelength
    floor_bins = floor_per_bin(floor, edges, m.floor_reference_resolution)
    budget, sat, ro = _budget(m, rates, native, edges, groups, t_in, t_out, dep, floor_bins)
    white2 = (budget[:, :4, :] ** 2).sum(axis=1)
    total1 = np.sqrt(white2 + budget[:, 4, :] ** 2)
    floor_n = floor_bins / np.sqrt(n_tr) if floor_down else floor_bins
    total_n = np.sqrt(white2 / n_tr + floor_n**2)
    total1 = np.where(sat, np.nan, total1)
    total_n = np.where(sat, np.nan, total_n)
    budget = np.where(sat[:, None, :], np.nan, budget)
    options = None
    if readout_options and groups is None and m.scheme != "scan":
        options = _readout_options(m, rates, native, edges, t_in, t_out, dep, floor_bins)

    limit_mag = mag + ro["limit_dmag"]
    if warn:
        _warn_saturation(m, band, ro, limit_mag, mag, planet, sat)

    out = _precision_arrays(m, band, spec, edges, planet, n, n_tr, mag, t_in, t_out, floor,
                            floor_down, floor_bins, ro, budget, total1, total_n, sat, limit_mag,
                            options)
    return out if as_arrays else out.to_dataset()


def _precision_arrays(m, band, spec, edges, planet, n, n_tr, mag, t_in, t_out, floor, floor_down,
                      floor_bins, ro, budget, total1, total_n, sat, limit_mag, options):
    """What :func:`transit_precision` returns, as labelled arrays (see there for its variables)."""
    from ..labelled import Labelled
    centres = 0.5 * (edges[:-1] + edges[1:]) * 1e6
    names = _planet_names(planet, n)
    um = {"units": "um"}
    ds = Labelled(
        variables={
            "bin_width": ("wavelength", np.diff(edges) * 1e6, um),
            "wavelength_low": ("wavelength", edges[:-1] * 1e6, um),
            "wavelength_high": ("wavelength", edges[1:] * 1e6, um),
            "photon_rate": (("planet", "wavelength"), ro["star"],
                            {"units": "electrons / s",
                             "long_name": "detected stellar electrons per second per bin "
                                          "out of transit, while collecting light"}),
            "noise_ppm_per_transit": (("planet", "wavelength"), total1,
                                      {"units": "ppm", "long_name": "transit-depth precision, "
                                       "one transit"}),
            "noise_budget_ppm": (("planet", "term", "wavelength"), budget,
                                 {"units": "ppm", "long_name": "noise terms of one transit "
                                  "(total = quadrature sum)"}),
            "noise_ppm": (("planet", "wavelength"), total_n,
                          {"units": "ppm", "long_name": f"transit-depth precision, "
                           f"{n_tr} transit(s)"}),
            "saturated": (("planet", "wavelength"), sat),
            "star_too_bright": ("planet", ro["too_bright"].copy()),
            "groups_per_integration": ("planet", ro["groups"].astype(np.int64)),
            "duty_cycle": ("planet", ro["duty"]),
            "integration_time": ("planet", ro["t_int"], {"units": "s"}),
            "effective_integration_time": ("planet", ro["t_eff"], {"units": "s"}),
            "brightest_pixel_fill": ("planet", ro["well_fill"],
                                     {"long_name": "brightest-pixel electrons at the last read "
                                      "over the usable full well"}),
            "saturation_limit_mag": ("planet", np.where(np.isfinite(limit_mag), limit_mag,
                                                        np.nan),
                                     {"units": "mag", "band": band,
                                      "long_name": "brightest usable magnitude"}),
            "magnitude": ("planet", np.array(mag, dtype=float), {"units": "mag", "band": band}),
            "in_transit_time": ("planet", np.array(t_in) / HOUR, {"units": "h"}),
            "baseline_time": ("planet", np.array(t_out) / HOUR, {"units": "h"}),
        },
        coords={"planet": names, "wavelength": ("wavelength", centres, um),
                "term": list(TERMS)},
        attrs={"instrument_mode": m.name, "mode_description": m.description,
               "readout_scheme": m.scheme, "band": band, "n_transits": n_tr,
               "floor_ppm": floor, "floor_averages_down": int(floor_down),
               "floor_reference_resolution": float(m.floor_reference_resolution),
               "floor_convention": "floor_ppm in a bin of resolving power "
                                   "floor_reference_resolution, white in wavelength: "
                                   "floor_ppm sqrt(R_bin / R_ref)",
               "stellar_spectrum": spec.origin,
               "method": "sigma = (1 - depth) sqrt(V_in/N_in^2 + V_out/N_out^2); up-the-ramp "
                         "read noise after Rauscher et al. 2007, PASP 119, 768"},
    )
    ds["resolution_elements"] = ("wavelength", resolution_elements(m, edges),
                                 {"long_name": "resolution elements per bin"})
    ds["floor_per_bin_ppm"] = ("wavelength", floor_bins,
                               {"units": "ppm", "long_name": "systematics floor of one transit "
                                "in each bin"})
    if options is not None:
        opt = ("readout_option", "planet")
        ds["option_groups"] = (opt, options["groups"])
        ds["option_duty_cycle"] = (opt, options["duty"])
        ds["option_white_noise_ppm"] = (opt + ("wavelength",), options["white"], {"units": "ppm"})
        ds["option_saturated"] = (opt + ("wavelength",), options["saturated"])
    return ds


def _planet_names(planet, n):
    if planet is None:
        return [f"planet{i}" for i in range(n)] if n > 1 else ["planet"]
    names = [planet] if isinstance(planet, str) else [str(p) for p in planet]
    if len(names) != n:
        raise InputError("planet", planet, f"{n} name(s)")
    return names


def _warn_saturation(m, band, ro, limit_mag, mag, planet, sat):
    bad = np.flatnonzero(ro["too_bright"])
    names = _planet_names(planet, len(mag))
    if bad.size:
        i = bad[0]
        others = f" (and {bad.size - 1} more)" if bad.size > 1 else ""
        warnings.warn(
            f"star of {names[i]}{others} is too bright for mode {m.name}: {band} = "
            f"{mag[i]:.2f}, but the brightest usable {band} is {limit_mag[i]:.2f} "
            f"(brightest pixel over the usable full well in the shortest integration of "
            f"{m.min_groups} groups x {m.group_time_s:.4g} s)", SaturationWarning, stacklevel=3)
        return
    part = np.flatnonzero(sat.any(axis=1))
    if part.size:
        i = part[0]
        warnings.warn(
            f"{names[i]}: {int(sat[i].sum())} bin(s) saturate in mode {m.name} with "
            f"{int(ro['groups'][i])} groups per integration; use fewer groups or \"auto\"",
            SaturationWarning, stacklevel=3)


