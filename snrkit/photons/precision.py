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

import warnings

import numpy as np
import astropy.units as u

from ..constants import H_PLANCK, C_LIGHT, HOUR
from ..errors import InputError, SnrkitWarning
from ..units import to_si, as_float_array, check_range
from .instruments import load_mode
from .binning import (native_bin_edges, resolution_bin_edges, rebin_rates, resolution_elements,
                      merge_narrow_bins, floor_per_bin)
from .readout import choose_readout, readout_candidates
from .sed import planck_spectrum, read_spectrum, StellarSpectrum, band_names

__all__ = [
    "SaturationWarning",
    "BinningNote",
    "IN_TRANSIT_CHOICES",
    "DEFAULT_RESOLUTION",
    "readout_candidates",
    "resolution_elements",
    "TERMS",
    "native_bin_edges",
    "resolution_bin_edges",
    "bin_photon_rates",
    "choose_readout",
    "depth_precision",
    "rebin_rates",
    "transit_precision",
    "system_precision",
    "limiting_magnitudes",
]

#: Names of the noise-budget terms, in the order of the ``term`` axis.
TERMS = ("photon", "background", "dark", "read", "floor")

#: Named choices of the in-transit time (see the module docstring).
IN_TRANSIT_CHOICES = ("weighted", "t14", "t23")

_SUBSAMPLES = 4  # midpoint sub-samples per bin for the photon integral

#: Default binning of every test (transits, contrast, rank): bins of this
#: resolving power, merged where the mode resolves less (common practice, no
#: source: the binning at which low-resolution transmission spectra are
#: usually shown; features span several such bins).
DEFAULT_RESOLUTION = 100.0


class SaturationWarning(SnrkitWarning):
    """The star is too bright for the mode: its brightest pixel saturates."""


# ----------------------------------------------------------------------------
# compute layer (numpy, SI)

def bin_photon_rates(mode, spectrum, edges_m):
    """Electron rates per native bin for each star.

    Parameters
    ----------
    mode : Mode
    spectrum : StellarSpectrum
        Normalised spectra, one row per star.
    edges_m : numpy.ndarray
        Bin edges [m], shape ``(n_bin + 1,)``.

    Returns
    -------
    dict of numpy.ndarray
        ``star`` (n_star, n_bin) detected stellar electrons s-1 per bin;
        ``peak_star`` (n_star, n_bin) stellar electrons s-1 in the bin's
        brightest pixel; ``n_pix`` (n_bin,) pixels in the bin's extraction
        box; ``sky`` (n_bin,) background electrons s-1 in the box;
        ``dark`` (n_bin,) dark electrons s-1 in the box; ``peak_other``
        (n_bin,) background + dark electrons s-1 in one pixel.
    """
    lo, hi = edges_m[:-1], edges_m[1:]
    width = hi - lo
    k = (np.arange(_SUBSAMPLES) + 0.5) / _SUBSAMPLES
    sub = lo[:, None] + width[:, None] * k[None, :]               # (n_bin, S)
    fl = spectrum.at(sub.ravel()).reshape(spectrum.n_star, *sub.shape)
    photons = fl * sub / (H_PLANCK * C_LIGHT) * mode.throughput(sub)   # per m per s per m2
    star = mode.area_m2 * photons.mean(axis=-1) * width            # (n_star, n_bin)
    centre = 0.5 * (lo + hi)
    n_resel = width / (centre / mode.resolving_power(centre))
    n_pix = mode.pixels_per_resel * n_resel * mode.extraction_width
    sky_pix = mode.background_rate(centre)
    fpk = mode.brightest_pixel_fraction(centre)
    return {
        "star": star,
        "peak_star": fpk * star / n_resel,
        "n_pix": n_pix,
        "sky": sky_pix * n_pix,
        "dark": mode.dark_rate * n_pix,
        "peak_other": sky_pix + mode.dark_rate,
    }


def depth_precision(star, sky, dark, read_var_rate, duty, t_in, t_out, depth, floor_ppm):
    """Single-transit depth precision per bin and its budget.

    Parameters
    ----------
    star, sky, dark : numpy.ndarray
        Electrons s-1 per bin (while collecting light): star (n_star, n_bin),
        background and dark (n_bin,) or (n_star, n_bin).
    read_var_rate : numpy.ndarray
        Read-noise variance per second of elapsed time [e-^2 s-1], (n_star, n_bin).
    duty : numpy.ndarray
        Duty cycle (n_star,).
    t_in, t_out : numpy.ndarray
        Elapsed in-transit and baseline times [s] (n_star,).
    depth : numpy.ndarray
        Transit depth (fraction) (n_star,).
    floor_ppm : float
        Systematics floor per bin per transit [ppm], scalar or (n_bin,).

    Returns
    -------
    numpy.ndarray
        Budget in ppm, shape (n_star, 5, n_bin) in the order of :data:`TERMS`
        (the total is the quadrature sum along axis 1).
    """
    d = np.asarray(duty)[:, None]
    tin = np.asarray(t_in)[:, None]
    tout = np.asarray(t_out)[:, None]
    one_m = 1.0 - np.asarray(depth)[:, None]
    n_in = one_m * star * d * tin
    n_out = star * d * tout
    with np.errstate(divide="ignore", invalid="ignore"):
        inv_in2 = 1.0 / n_in**2
        inv_out2 = 1.0 / n_out**2
        photon = one_m * np.sqrt(1.0 / n_in + 1.0 / n_out)
        bkg = one_m * np.sqrt(sky * d * (tin * inv_in2 + tout * inv_out2))
        drk = one_m * np.sqrt(dark * d * (tin * inv_in2 + tout * inv_out2))
        rd = one_m * np.sqrt(read_var_rate * (tin * inv_in2 + tout * inv_out2))
    floor = np.broadcast_to(np.asarray(floor_ppm, dtype=np.float64), photon.shape)
    return np.stack([photon * 1e6, bkg * 1e6, drk * 1e6, rd * 1e6, floor], axis=1)


# ----------------------------------------------------------------------------
# public layer

def _per_planet(value, field, unit, n, low=None, high=None, low_inclusive=True):
    arr = np.atleast_1d(to_si(value, field, unit, low, high, low_inclusive=low_inclusive))
    if arr.ndim != 1 or arr.size not in (1, n):
        raise InputError(field, f"shape {arr.shape}", f"one value or {n} values (one per planet)")
    return np.broadcast_to(arr, (n,)).astype(np.float64)


def _n_planets(*values):
    n = 1
    for v in values:
        if v is None or isinstance(v, str):
            continue
        size = np.size(v.value if isinstance(v, u.Quantity) else v)
        if size != 1:
            if n != 1 and size != n:
                raise InputError("inputs", f"lengths {n} and {size}",
                                 "per-planet inputs of equal length (or single values)")
            n = size
    return n


def _star_spectrum(spectrum, teff, n):
    if spectrum is None:
        if teff is None:
            raise InputError("star.teff", None, "an effective temperature in K "
                             "(or a stellar spectrum file)")
        t = _per_planet(teff, "star.teff", u.K, n, 500.0, 1.0e5)
        return planck_spectrum(t)
    if isinstance(spectrum, StellarSpectrum):
        return spectrum
    return read_spectrum(spectrum)


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


def _check_readout(readout, m, n):
    """None (automatic) or an int array of groups per planet, range-checked."""
    if isinstance(readout, str) and readout == "auto":
        fixed = m.groups_per_integration
        return None if fixed is None else np.full(n, int(fixed))
    arr = np.atleast_1d(np.asarray(readout, dtype=object))
    ok = arr.size in (1, n) and all(isinstance(x, (int, np.integer)) and not isinstance(x, bool)
                                    and m.min_groups <= int(x) <= m.max_groups for x in arr)
    if not ok:
        raise InputError("readout", readout, f"\"auto\" or a whole number of groups in "
                         f"[{m.min_groups}, {m.max_groups}] (one, or one per planet)")
    return np.broadcast_to(arr.astype(np.int64), (n,)).copy()


def _budget(m, rates, native, edges, groups, t_in, t_out, dep, floor_bins):
    """Noise budget (planet, term, bin), saturation (planet, bin) and readout for ``groups``."""
    ro = choose_readout(m, rates["peak_star"], rates["peak_other"], groups)
    read_rate_native = (rates["n_pix"][None, :] * ro["read_var"][:, None]
                        / ro["t_int"][:, None])
    if edges is native:
        star, sky, dark = rates["star"], rates["sky"], rates["dark"]
        read_rate, sat = read_rate_native, ro["saturated"]
    else:
        star = rebin_rates(native, rates["star"], edges)
        sky = rebin_rates(native, rates["sky"], edges)
        dark = rebin_rates(native, rates["dark"], edges)
        read_rate = rebin_rates(native, read_rate_native, edges)
        sat = rebin_rates(native, ro["saturated"].astype(float), edges) > 0
    budget = depth_precision(star, sky, dark, read_rate, ro["duty"], t_in, t_out, dep, floor_bins)
    ro["star"] = star
    return budget, sat, ro


def _readout_options(m, rates, native, edges, t_in, t_out, dep, floor_bins):
    """White noise, saturation, groups and duty cycle for each readout candidate."""
    cand = readout_candidates(m, rates["peak_star"], rates["peak_other"])
    white, sats, duty = [], [], []
    for groups in cand:
        budget, sat, ro = _budget(m, rates, native, edges, groups, t_in, t_out, dep, floor_bins)
        white.append(np.where(sat, np.nan, np.sqrt((budget[:, :4, :] ** 2).sum(axis=1))))
        sats.append(sat)
        duty.append(ro["duty"])
    return {"groups": cand, "white": np.stack(white), "saturated": np.stack(sats),
            "duty": np.stack(duty)}


class BinningNote(SnrkitWarning):
    """Requested bins were merged to at least one resolution element each."""


def _merged(mode, edges, what):
    out, merged = merge_narrow_bins(mode, edges)
    if merged:
        warnings.warn(f"{what}: bins narrower than one resolution element of mode {mode.name} "
                      f"were merged ({edges.size - 1} requested, {out.size - 1} used)",
                      BinningNote, stacklevel=4)
    return out


def transit_precision(mode, *, magnitude, band="J", transit_duration, teff=None,
                      in_transit_time=None, baseline=None, baseline_factor=1.0,
                      depth=0.0, n_transits=1, readout="auto", floor_ppm=None,
                      floor_averages_down=None, resolution=None, bin_edges=None,
                      spectrum=None, planet=None, warn=True, readout_options=False):
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

    Returns
    -------
    xarray.Dataset
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
    import xarray as xr
    m = load_mode(mode)
    if band not in band_names():
        from ..errors import UnknownKeyError
        raise UnknownKeyError("band", band, "one of " + ", ".join(band_names()))
    n = _n_planets(magnitude, transit_duration, teff, in_transit_time, baseline, depth)
    mag = np.broadcast_to(np.atleast_1d(check_range(as_float_array(magnitude, "magnitude"),
                                                    "magnitude", -5.0, 30.0, unit_label="mag")),
                          (n,))
    t14 = _per_planet(transit_duration, "transit_duration", u.h, n, 0.0, None,
                      low_inclusive=False)
    t_in = (t14 if in_transit_time is None else
            _per_planet(in_transit_time, "in_transit_time", u.h, n, 0.0, None,
                        low_inclusive=False))
    if baseline is None:
        bf = float(check_range(as_float_array(baseline_factor, "baseline_factor"),
                               "baseline_factor", 0.0, 1000.0, low_inclusive=False))
        t_out = bf * t14
    else:
        t_out = _per_planet(baseline, "baseline", u.h, n, 0.0, None, low_inclusive=False)
    dep = np.broadcast_to(np.atleast_1d(check_range(as_float_array(depth, "depth"), "depth",
                                                    0.0, 1.0, high_inclusive=False)), (n,))
    try:
        whole = not isinstance(n_transits, bool) and float(n_transits).is_integer()
    except (TypeError, ValueError):
        whole = False
    if not whole:
        raise InputError("n_transits", n_transits, "a whole number >= 1")
    n_tr = int(check_range(float(n_transits), "n_transits", 1, 1.0e6))
    groups = _check_readout(readout, m, n)
    floor = m.floor_ppm if floor_ppm is None else float(
        check_range(as_float_array(floor_ppm, "floor_ppm"), "floor_ppm", 0.0, 1.0e6))
    floor_down = m.floor_averages_down if floor_averages_down is None else bool(floor_averages_down)

    spec = _star_spectrum(spectrum, teff, n)
    if spec.n_star not in (1, n):
        raise InputError("spectrum", f"{spec.n_star} rows", f"1 or {n} spectra")
    lo, hi = spec.range_m
    if lo > m.wavelength_min_m or hi < m.wavelength_max_m:
        raise InputError("spectrum", f"{spec.origin} covering {lo*1e6:.4g}-{hi*1e6:.4g} um",
                         f"a spectrum covering the mode {m.name} range "
                         f"{m.wavelength_min_m*1e6:.4g}-{m.wavelength_max_m*1e6:.4g} um")
    spec = spec.normalised(mag, band)

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

    centres = 0.5 * (edges[:-1] + edges[1:]) * 1e6
    names = _planet_names(planet, n)
    um = {"units": "um"}
    ds = xr.Dataset(
        data_vars={
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


def limiting_magnitudes(mode, teff, band="J", *, transit_duration=3.0,
                        baseline_factor=1.0, reference_wavelength=None, spectrum=None):
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
                           bin_edges=edges[k:k + 2] * 1e6)
    # photon term of one transit, recomputed without the saturation mask
    r = ds["photon_rate"].values[:, 0]
    duty = ds["duty_cycle"].values
    t_in = ds["in_transit_time"].values * HOUR
    t_out = ds["baseline_time"].values * HOUR
    photon = np.sqrt(1.0 / (r * duty * t_in) + 1.0 / (r * duty * t_out)) * 1e6
    floor = m.floor_ppm
    above = photon > floor
    if floor <= 0 or above.all() or not above.any():
        floor_mag = np.nan
    else:
        j = int(np.argmax(above))   # first magnitude where photon noise exceeds the floor
        x0, x1 = np.log(photon[j - 1] / floor), np.log(photon[j] / floor)
        floor_mag = mags[j - 1] + (mags[j] - mags[j - 1]) * (0 - x0) / (x1 - x0)
    sat = ds["saturation_limit_mag"].values[0]
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


def system_precision(system, mode=None, *, band=None, n_transits=None, in_transit=None,
                     baseline=None, readout=None, floor_ppm=None, floor_averages_down=None,
                     resolution=None, bin_edges=None, spectrum=None, warn=True,
                     readout_options=False):
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
    readout, floor_ppm, floor_averages_down, resolution, bin_edges, spectrum, warn, readout_options
        As in :func:`transit_precision` (``readout`` default
        ``observation.readout_groups`` or the mode's choice).

    Returns
    -------
    xarray.Dataset
        As :func:`transit_precision`, with the planet names on the
        ``planet`` axis and ``transit_depth`` (planet) added.
    """
    names = [str(x) for x in system.names]
    obs = list(system.observations)
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
    star = system.star
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
    d = system.derived_arrays()
    t14 = np.asarray(d["t14_s"], dtype=np.float64)
    t23 = np.asarray(d["t23_s"], dtype=np.float64)
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
    ds = transit_precision(
        mode, magnitude=mag, band=band, teff=star.teff_K * u.K,
        transit_duration=t14 * u.s, in_transit_time=np.array(t_in) * u.s,
        baseline=np.array(base) * u.s, depth=np.asarray(d["transit_depth"], dtype=np.float64),
        n_transits=n_transits, readout=readout, floor_ppm=floor_ppm,
        floor_averages_down=floor_averages_down, resolution=resolution, bin_edges=bin_edges,
        spectrum=spectrum, planet=names, warn=warn, readout_options=readout_options)
    ds["transit_depth"] = ("planet", np.asarray(d["transit_depth"]) * 1e6, {"units": "ppm"})
    return ds
