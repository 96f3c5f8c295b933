"""The Planck function and synthetic photometry: band responses, zero points, band means.

The stellar spectra built on them (Planck or a user's file, normalised to a
magnitude) are in :mod:`snrkit.photons.stellar_spectrum`.

Compute functions work in SI: wavelengths in m, spectral flux density
``F_lambda`` in W m-3 (W m-2 per m of wavelength), temperatures in K.  They
broadcast a leading planet (star) axis against a trailing wavelength axis.

Synthetic photometry integrates the spectrum over the band's response curve
``R`` (``data_tables/photometry/response_<band>.ecsv``: J, H, Ks from Cohen,
Wheaton & Megeath 2003, AJ 126, 1090; V from Bessell 1990, PASP 102, 1181)
and compares the mean flux density with the zero-magnitude flux density in
``data_tables/photometry/zero_points.ecsv`` (J, H, Ks: Cohen et al. 2003;
V: Bessell, Castelli & Plez 1998, A&A 333, 231):

    <F_lambda> = integral(F_lambda w dlambda) / integral(w dlambda),
    m = -2.5 log10(<F_lambda> / F_lambda,0),

with ``w = R`` for curves tabulated as energy responses and ``w = lambda R``
for curves tabulated per photon (each curve file says which in its
``weighting`` metadata).  The shipped curves are all energy responses: the
published J, H, Ks curves of Cohen et al. 2003 already carry the factor
lambda of their photon-counting detectors (their bandwidths integral(R
dlambda) reproduce the paper's Table 2 only in that form), and Bessell's
1990 V passband is an energy response (Bessell & Murphy 2012, PASP 124, 140;
value from memory), the weighting of the V zero point of Bessell et al.
1998.  Both zero points are defined this way: Cohen et al. quote
F_lambda,0 at the isophotal wavelength, where the zero-magnitude spectrum
equals its band mean; Bessell et al. quote the band mean itself.  The data
script ``data_tables/scripts/make_response_curves.py`` documents the curves'
provenance and the size of the alternative conventions (<= 0.02 mag for a
2900 K star).
"""

from functools import lru_cache

import numpy as np
import astropy.units as u

from ..constants import H_PLANCK, C_LIGHT, K_B
from ..errors import InputError, UnknownKeyError
from ..units import si_scale

__all__ = ["planck_flambda", "zero_points", "band_names", "BandResponse", "band_response", "band_mean_flux_si",
           "synthetic_magnitude_si", "normalise_to_band_si"]

#: Wavelength range [m] of Planck spectra (sampled on 4000 log-spaced points
#: for display; :meth:`StellarSpectrum.at` evaluates Planck stars exactly).
_PLANCK_GRID_M = np.geomspace(0.1e-6, 100e-6, 4000)


def planck_flambda(wavelength_m, teff_k):
    """Surface flux density of a blackbody, pi B_lambda(T), in W m-3.

    Parameters
    ----------
    wavelength_m : array_like
        Wavelength [m].
    teff_k : array_like
        Temperature [K]; broadcast against ``wavelength_m`` (use shape
        ``(n_planet, 1)`` for a planet axis).

    Returns
    -------
    numpy.ndarray
        ``pi * B_lambda`` = ``2 pi h c^2 / lambda^5 / (exp(hc / lambda k T) - 1)``
        [W m-3], the flux leaving a unit area of the stellar surface per unit
        wavelength (Planck's law; e.g. Rybicki & Lightman 1979, *Radiative
        Processes in Astrophysics*, ch. 1).
    """
    lam = np.asarray(wavelength_m, dtype=np.float64)
    t = np.asarray(teff_k, dtype=np.float64)
    x = H_PLANCK * C_LIGHT / (lam * K_B * t)
    with np.errstate(over="ignore"):
        return 2.0 * np.pi * H_PLANCK * C_LIGHT**2 / lam**5 / np.expm1(x)


@lru_cache(maxsize=1)
def zero_points():
    """Zero-magnitude flux densities of the supported bands.

    Returns
    -------
    dict
        band -> ``(reference_wavelength_m, zero_point_flambda_W_m3, source)``.
        Sources: Cohen, Wheaton & Megeath 2003 (AJ 126, 1090) for J, H, Ks;
        Bessell, Castelli & Plez 1998 (A&A 333, 231) for V.
    """
    from ..io.tables import read_columns
    t = read_columns("photometry", "zero_points.ecsv")
    lam_si = si_scale(u.Unit(t.units["reference_wavelength"]))
    f0_si = si_scale(u.Unit(t.units["zero_point_flambda"]))
    out = {}
    for row in t.rows():
        lam = row["reference_wavelength"] * lam_si
        f0 = row["zero_point_flambda"] * f0_si
        out[str(row["band"])] = (float(lam), float(f0), str(row["source"]))
    return out


def band_names():
    """Names of the bands with a shipped zero point and response curve (tuple of str)."""
    return tuple(zero_points())


def _band(band, field="band"):
    zp = zero_points()
    if isinstance(band, str) and band in zp:
        return zp[band]
    return zp[_band_name(band, field)]


def _band_name(band, field="band"):
    zp = zero_points()
    if isinstance(band, str):
        if band in zp:
            return band
        for name in zp:
            if name.lower() == band.strip().lower():
                return name
    raise UnknownKeyError(field, band, "one of " + ", ".join(zp))


#: Uniform points added across each response curve for the quadrature (on top
#: of the curve's own nodes).
_N_QUADRATURE = 800
#: Fraction of a curve's weight that may lie outside a spectrum at each end
#: (there the spectrum's end value is used).
_TAIL_WEIGHT = 1e-3


class BandResponse:
    """A band's response curve and the quadrature used to integrate over it.

    Attributes
    ----------
    band : str
        Band name.
    wavelength_m : numpy.ndarray
        Tabulated wavelengths [m] (increasing).
    response : numpy.ndarray
        Relative response, peak 1 (dimensionless).
    weighting : str
        ``"energy"`` (the integrand is ``F_lambda R``) or ``"photon"`` (the
        integrand is ``F_lambda lambda R``).
    source : str
        Publication of the curve.
    grid_m, weights : numpy.ndarray
        Quadrature nodes [m] (the curve's nodes plus ``_N_QUADRATURE``
        uniform points) and weights (trapezoid rule times ``R`` or
        ``lambda R``, summing to 1): ``<F_lambda> = F(grid_m) @ weights``.
    support_m : tuple of float
        The wavelength range [m] outside which the curve carries less than
        0.1 % of its weight at each end; a spectrum must cover it.
    """

    def __init__(self, band, wavelength_m, response, weighting, source):
        if weighting not in ("energy", "photon"):
            raise ValueError(f"response weighting must be 'energy' or 'photon', not {weighting!r}")
        self.band = band
        self.wavelength_m = np.asarray(wavelength_m, dtype=np.float64)
        self.response = np.asarray(response, dtype=np.float64)
        self.weighting = weighting
        self.source = source
        lo, hi = self.wavelength_m[0], self.wavelength_m[-1]
        self.grid_m = np.union1d(self.wavelength_m, np.linspace(lo, hi, _N_QUADRATURE))
        self.weights = self.kernel(self.grid_m) * _trapezoid_weights(self.grid_m)
        self.weights /= self.weights.sum()
        cum = np.cumsum(self.weights)
        i_lo = int(np.searchsorted(cum, _TAIL_WEIGHT))
        i_hi = int(np.searchsorted(cum, 1.0 - _TAIL_WEIGHT))
        self.support_m = (float(self.grid_m[i_lo]), float(self.grid_m[min(i_hi + 1,
                                                                          cum.size - 1)]))

    def kernel(self, wavelength_m):
        """Integrand weight ``R`` or ``lambda R`` at ``wavelength_m`` (0 outside the curve)."""
        lam = np.asarray(wavelength_m, dtype=np.float64)
        r = np.interp(lam, self.wavelength_m, self.response, left=0.0, right=0.0)
        return r * lam if self.weighting == "photon" else r


def _trapezoid_weights(x):
    """Weights ``t`` with ``sum(t * f) = trapezoid(f, x)``."""
    dx = np.diff(x)
    t = np.zeros_like(x)
    t[:-1] += 0.5 * dx
    t[1:] += 0.5 * dx
    return t


@lru_cache(maxsize=None)
def band_response(band):
    """The response curve of a band.

    Parameters
    ----------
    band : str
        A band name from :func:`band_names` (case-insensitive).

    Returns
    -------
    BandResponse
        Read from the file named in ``zero_points.ecsv`` (column
        ``response_file``, ``data_tables/photometry/response_<band>.ecsv``; J, H, Ks:
        Cohen, Wheaton & Megeath 2003, AJ 126, 1090; V: Bessell 1990, PASP
        102, 1181; provenance in each file's metadata).
    """
    name = _band_name(band)
    from ..io.tables import read_columns
    zp = read_columns("photometry", "zero_points.ecsv")
    row = list(zp["band"]).index(name)
    t = read_columns("photometry", str(zp["response_file"][row]))
    lam = (t["wavelength"] * u.Unit(t.units["wavelength"])).to_value(u.m)
    return BandResponse(name, lam, np.asarray(t["relative_response"], dtype=np.float64),
                        str(t.meta["weighting"]), str(t.meta["source"]))


def band_mean_flux_si(wavelength_m, flambda, band):
    """Band-averaged flux density of sampled spectra.

    Parameters
    ----------
    wavelength_m : numpy.ndarray
        Increasing wavelengths [m], shape ``(n_wave,)``; must cover the
        band's :attr:`BandResponse.support_m` (outside the spectrum, within
        the curve, its end value is used).
    flambda : numpy.ndarray
        Flux density [W m-3], shape ``(..., n_wave)``, positive.
    band : str
        Band name.

    Returns
    -------
    numpy.ndarray
        ``integral(F w dlambda) / integral(w dlambda)`` [W m-3] with ``w`` the
        band's :meth:`BandResponse.kernel`, shape ``flambda.shape[:-1]``.  The
        integral runs over the union of the curve's quadrature nodes and the
        spectrum's own points inside the curve (the spectrum interpolated
        linearly in log F - log lambda, the curve linearly), so narrow
        spectral features are not skipped.
    """
    curve = band_response(band)
    lam = np.asarray(wavelength_m, dtype=np.float64)
    inside = lam[(lam > curve.wavelength_m[0]) & (lam < curve.wavelength_m[-1])]
    grid = np.union1d(curve.grid_m, inside)
    w = curve.kernel(grid) * _trapezoid_weights(grid)
    w /= w.sum()
    f = _loglog_interp(np.clip(grid, lam[0], lam[-1]), lam, flambda)
    return f @ w


def _check_covers(lo, hi, band, origin):
    curve = band_response(band)
    s_lo, s_hi = curve.support_m
    if lo > s_lo * (1 + 1e-12) or hi < s_hi * (1 - 1e-12):
        raise InputError(
            "spectrum", f"{origin} covering {lo*1e6:.4g}-{hi*1e6:.4g} um",
            f"a spectrum covering the {curve.band} response curve "
            f"{s_lo*1e6:.4g}-{s_hi*1e6:.4g} um")


def _loglog_interp(x_new, x, y):
    """Interpolate ``y(x)`` linearly in log-log at ``x_new`` (y > 0).

    ``y`` may carry leading axes; interpolation is along the last axis.
    """
    lx = np.log(np.asarray(x, dtype=np.float64))
    lxn = np.log(np.asarray(x_new, dtype=np.float64))
    ly = np.log(np.asarray(y, dtype=np.float64))
    if ly.ndim == 1:
        return np.exp(np.interp(lxn, lx, ly))
    # weights shared by every row (no Python loop over stars); clamped like numpy.interp
    flat_x = np.atleast_1d(lxn).ravel()
    idx = np.clip(np.searchsorted(lx, flat_x, side="right") - 1, 0, lx.size - 2)
    frac = np.clip((flat_x - lx[idx]) / (lx[idx + 1] - lx[idx]), 0.0, 1.0)
    res = ly[..., idx] + frac * (ly[..., idx + 1] - ly[..., idx])
    return np.exp(res.reshape(ly.shape[:-1] + np.shape(lxn)))


def synthetic_magnitude_si(wavelength_m, flambda, band):
    """Synthetic magnitude of sampled spectra, integrated over the band's curve.

    Parameters
    ----------
    wavelength_m : numpy.ndarray
        Increasing wavelengths [m], shape ``(n_wave,)``, covering the band
        (see :func:`band_mean_flux_si`).
    flambda : numpy.ndarray
        Flux density at the observer [W m-3], shape ``(..., n_wave)``.
    band : str
        A band name from :func:`band_names`.

    Returns
    -------
    numpy.ndarray
        ``-2.5 log10(<F_lambda> / F_0)``, shape ``flambda.shape[:-1]``
        (zero points: Cohen, Wheaton & Megeath 2003; Bessell, Castelli &
        Plez 1998).
    """
    lam = np.asarray(wavelength_m, dtype=np.float64)
    _check_covers(lam[0], lam[-1], band, "spectrum")
    f0 = _band(band)[1]
    return -2.5 * np.log10(band_mean_flux_si(lam, flambda, band) / f0)


def normalise_to_band_si(wavelength_m, flambda_shape, magnitude, band):
    """Scale factors making a spectrum's synthetic magnitude equal ``magnitude``.

    Parameters
    ----------
    wavelength_m : numpy.ndarray
        Increasing wavelengths [m], shape ``(n_wave,)``, covering the band.
    flambda_shape : numpy.ndarray
        Spectrum of any normalisation, shape ``(..., n_wave)``.
    magnitude : numpy.ndarray
        Target magnitudes, broadcastable to ``flambda_shape.shape[:-1]``.
    band : str
        Band name.

    Returns
    -------
    numpy.ndarray
        Multiply ``flambda_shape`` by ``scale[..., None]`` to normalise it
        (``F_0 10^(-0.4 m) / <F_lambda>``).
    """
    f0 = _band(band)[1]
    mean = band_mean_flux_si(wavelength_m, flambda_shape, band)
    return f0 * 10.0 ** (-0.4 * np.asarray(magnitude, dtype=np.float64)) / mean


