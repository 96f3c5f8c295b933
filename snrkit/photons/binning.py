"""Spectral bins of an instrument mode: native bins, bins of a resolving power,
their width in resolution elements, and re-binning of additive quantities.

A *resolution element* is lambda / R(lambda) wide.  The resolution-element
coordinate s(lambda) = integral R(lambda') / lambda' dlambda' counts them;
a bin [a, b] spans s(b) - s(a) of them.  Bins narrower than one element are
not independent measurements, so :func:`merge_narrow_bins` joins them.
"""

import numpy as np

from ..errors import InputError

__all__ = ["native_bin_edges", "resolution_bin_edges", "rebin_rates", "resolution_elements",
           "merge_narrow_bins", "floor_per_bin"]


def _element_coordinate(mode, points=4096):
    """(wavelengths [m], s) on a fine grid spanning the mode's range."""
    lo, hi = mode.wavelength_min_m, mode.wavelength_max_m
    fine = np.geomspace(lo, hi, points)
    dens = mode.resolving_power(fine) / fine
    s = np.concatenate([[0.0], np.cumsum(0.5 * (dens[1:] + dens[:-1]) * np.diff(fine))])
    return fine, s


def resolution_elements(mode, edges_m):
    """Width of each bin in resolution elements, s(b) - s(a) (same grid as the native bins)."""
    fine, s = _element_coordinate(mode)
    return np.diff(np.interp(np.asarray(edges_m, dtype=np.float64), fine, s))


def floor_per_bin(floor_ppm, edges_m, reference_resolution):
    """Systematics floor of each bin [ppm] for a floor quoted at a reference bin width.

    The floor is white in wavelength: ``floor_ppm`` in a bin of resolving
    power ``reference_resolution`` becomes ``floor_ppm sqrt(R_bin / R_ref)``
    in a bin of resolving power ``R_bin = centre / width``, so that its
    covariance binned to any bins is diagonal with the same information per
    unit wavelength (convention: common practice, no source).
    """
    e = np.asarray(edges_m, dtype=np.float64)
    r_bin = 0.5 * (e[1:] + e[:-1]) / np.diff(e)
    return float(floor_ppm) * np.sqrt(r_bin / float(reference_resolution))


def merge_narrow_bins(mode, edges_m, tolerance=1e-6):
    """Join consecutive bins until each spans at least one resolution element.

    Bins are taken from the blue end; a narrow remainder at the red end joins
    the last bin.  Returns ``(edges, merged)`` with ``merged`` True when any
    bin was joined.
    """
    e = np.asarray(edges_m, dtype=np.float64)
    fine, s = _element_coordinate(mode)
    se = np.interp(e, fine, s)
    keep = [0]
    for k in range(1, e.size):
        if se[k] - se[keep[-1]] >= 1.0 - tolerance:
            keep.append(k)
    if keep[-1] != e.size - 1:
        if len(keep) > 1:
            keep[-1] = e.size - 1
        else:
            keep.append(e.size - 1)
    out = e[keep]
    return out, out.size != e.size


def native_bin_edges(mode):
    """Edges [m] of the mode's native bins, one resolution element wide.

    The resolution-element coordinate ``s(lambda) = integral R(lambda) / lambda
    dlambda`` is cut into ``floor(s_total)`` equal steps spanning the mode's
    range exactly, so each bin is ``lambda / R(lambda)`` wide to within
    ``1 / s_total``.
    """
    lo, hi = mode.wavelength_min_m, mode.wavelength_max_m
    fine = np.geomspace(lo, hi, 4096)
    dens = mode.resolving_power(fine) / fine
    s = np.concatenate([[0.0], np.cumsum(0.5 * (dens[1:] + dens[:-1]) * np.diff(fine))])
    n = max(int(np.floor(s[-1])), 1)
    edges = np.interp(np.linspace(0.0, s[-1], n + 1), s, fine)
    edges[0], edges[-1] = lo, hi
    return edges


def resolution_bin_edges(low_m, high_m, resolving_power):
    """Edges [m] of bins with ``lambda_centre / width = resolving_power``.

    Consecutive edges have the ratio ``(2R + 1) / (2R - 1)``; bins start at
    ``low_m`` and the last whole bin ends at or below ``high_m``.
    """
    q = (2.0 * resolving_power + 1.0) / (2.0 * resolving_power - 1.0)
    n = int(np.floor(np.log(high_m / low_m) / np.log(q) + 1e-9))
    if n < 1:
        raise InputError("resolution", resolving_power,
                         f"a resolving power giving at least one bin in "
                         f"{low_m*1e6:.4g}-{high_m*1e6:.4g} um (R > "
                         f"{0.5 * (high_m + low_m) / (high_m - low_m):.3g})")
    return low_m * q ** np.arange(n + 1)


def rebin_rates(edges_native, values, edges_new):
    """Re-bin additive per-bin quantities onto new edges.

    Each native bin's content is spread uniformly over its width, so a new
    bin receives the overlapping fraction of every native bin it touches
    (interpolation of the cumulative sum).  Use for electrons, variances and
    pixel counts (additive, white); never for ppm values.

    Parameters
    ----------
    edges_native : numpy.ndarray
        (n + 1,) increasing edges.
    values : numpy.ndarray
        (..., n) per-bin contents.
    edges_new : numpy.ndarray
        (k + 1,) increasing edges inside ``edges_native``.

    Returns
    -------
    numpy.ndarray
        (..., k) contents of the new bins.
    """
    v = np.asarray(values, dtype=np.float64)
    x = np.asarray(edges_native, dtype=np.float64)
    xn = np.asarray(edges_new, dtype=np.float64)
    cum = np.concatenate([np.zeros(v.shape[:-1] + (1,)), np.cumsum(v, axis=-1)], axis=-1)
    # linear interpolation of the cumulative sum at the new edges, with weights shared
    # by every row (no Python loop over planets); clamped at the ends like numpy.interp
    idx = np.clip(np.searchsorted(x, xn, side="right") - 1, 0, x.size - 2)
    frac = np.clip((xn - x[idx]) / (x[idx + 1] - x[idx]), 0.0, 1.0)
    out = cum[..., idx] + frac * (cum[..., idx + 1] - cum[..., idx])
    return np.diff(out, axis=-1)

