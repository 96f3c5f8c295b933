"""Photon rates per bin and the transit-depth noise budget (compute layer, SI).

Detected stellar, sky and dark electrons per native bin, and the depth
precision sigma = (1 - depth) sqrt(V_in/N_in^2 + V_out/N_out^2) term by term
(photon, background, dark, read, floor); read noise after Rauscher et al.
2007, PASP 119, 768.  The methods are described in
:mod:`snrkit.photons.precision`.
"""


import numpy as np

from ..constants import H_PLANCK, C_LIGHT
from .binning import rebin_rates
from .readout import choose_readout, readout_candidates

__all__ = ["bin_photon_rates", "depth_precision"]


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


_SUBSAMPLES = 4  # midpoint sub-samples per bin for the photon integral


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
