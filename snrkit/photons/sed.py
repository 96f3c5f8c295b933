"""Stellar spectra: Planck spectra, user spectrum files and band normalisation.

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
from pathlib import Path

import numpy as np
import astropy.units as u

from ..constants import H_PLANCK, C_LIGHT, K_B
from ..errors import InputError, UnitMismatchError, UnknownKeyError
from ..units import to_si, check_range, as_float_array, si_scale

__all__ = [
    "planck_flambda",
    "zero_points",
    "band_names",
    "BandResponse",
    "band_response",
    "band_mean_flux_si",
    "synthetic_magnitude_si",
    "normalise_to_band_si",
    "StellarSpectrum",
    "planck_spectrum",
    "read_spectrum",
    "stellar_flux_density",
    "synthetic_magnitude",
]

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


def _planck_band_mean(teff_k, band):
    """Band-averaged ``pi B_lambda(T)`` [W m-3], exact up to the quadrature; shape of ``teff_k``."""
    curve = band_response(band)
    t = np.asarray(teff_k, dtype=np.float64)
    return planck_flambda(curve.grid_m, t[..., None]) @ curve.weights


class StellarSpectrum:
    """Observed stellar flux density on a wavelength grid, one row per star.

    Parameters
    ----------
    wavelength_m : numpy.ndarray
        Increasing wavelengths [m], shape ``(n_wave,)``.
    flambda : numpy.ndarray or None
        Flux density at the observer [W m-3], shape ``(n_star, n_wave)``;
        ``None`` for Planck stars (then ``teff_k`` is required).
    origin : str
        Plain description (``"Planck 5800 K"`` or a file name).
    teff_k, scale : numpy.ndarray, optional
        Planck stars: temperatures [K] and dilution factors; the spectrum is
        ``scale * pi B_lambda(teff)``, evaluated exactly at any wavelength.

    Notes
    -----
    Build one with :func:`planck_spectrum` or :func:`read_spectrum` followed
    by :meth:`normalised`.
    """

    def __init__(self, wavelength_m, flambda, origin, teff_k=None, scale=None):
        self.wavelength_m = np.asarray(wavelength_m, dtype=np.float64)
        self.origin = origin
        # Planck stars (flambda None) are evaluated analytically: scale * pi B_lambda(teff)
        self._teff = None if teff_k is None else np.atleast_1d(np.asarray(teff_k, float))
        self._scale = (None if self._teff is None else
                       np.ones(self._teff.shape) if scale is None else
                       np.broadcast_to(np.asarray(scale, float), self._teff.shape))
        self._flambda = (None if flambda is None else
                         np.atleast_2d(np.asarray(flambda, dtype=np.float64)))

    @property
    def n_star(self):
        """Number of stars (rows)."""
        return self._teff.size if self._teff is not None else self._flambda.shape[0]

    @property
    def flambda(self):
        """Flux density on ``wavelength_m`` [W m-3], shape ``(n_star, n_wave)``."""
        if self._flambda is None:
            return self._scale[:, None] * planck_flambda(self.wavelength_m[None, :],
                                                         self._teff[:, None])
        return self._flambda

    @property
    def range_m(self):
        """(shortest, longest) wavelength covered [m]."""
        return float(self.wavelength_m[0]), float(self.wavelength_m[-1])

    def normalised(self, magnitude, band):
        """Return a copy scaled so that its magnitude in ``band`` is ``magnitude``.

        The spectrum's mean flux density over the band's response curve
        (see the module notes) is set to ``F_0 10^(-0.4 magnitude)``.

        Parameters
        ----------
        magnitude : float or array_like
            One magnitude per star (broadcast against the star axis).
        band : str
            Band name (see :func:`band_names`).

        Raises
        ------
        InputError
            A sampled spectrum that does not cover the band's curve
            (:attr:`BandResponse.support_m`), or a magnitude count that
            matches neither 1 nor the number of stars.
        """
        mag = np.atleast_1d(as_float_array(magnitude, f"magnitude.{band}"))
        check_range(mag, f"magnitude.{band}", -5.0, 30.0, unit_label="mag")
        f0 = _band(band)[1]
        if self._teff is None:
            _check_covers(*self.range_m, band, self.origin)
        n = self.n_star
        if n != mag.size and 1 not in (n, mag.size):
            raise InputError(f"magnitude.{band}", f"{mag.size} values",
                             f"1 or {n} values (one per star)")
        n = max(n, mag.size)
        if self._teff is not None:
            teff = np.broadcast_to(self._teff, (n,))
            old = np.broadcast_to(self._scale, (n,))
            mean = old * _planck_band_mean(teff, band)
            scale = f0 * 10.0 ** (-0.4 * mag) / mean
            return StellarSpectrum(self.wavelength_m, None, self.origin,
                                   teff_k=teff, scale=old * scale)
        shape = np.broadcast_to(self.flambda, (n, self.wavelength_m.size))
        scale = normalise_to_band_si(self.wavelength_m, shape, mag, band)
        return StellarSpectrum(self.wavelength_m, shape * scale[:, None], self.origin)

    def magnitude(self, band):
        """Synthetic magnitude of each star in ``band``.

        Planck stars are integrated exactly (up to the quadrature); sampled
        spectra as in :func:`synthetic_magnitude_si`.

        Parameters
        ----------
        band : str
            Band name (see :func:`band_names`).

        Returns
        -------
        numpy.ndarray
            Magnitudes, shape ``(n_star,)``.
        """
        f0 = _band(band)[1]
        if self._teff is not None:
            mean = self._scale * _planck_band_mean(self._teff, band)
        else:
            _check_covers(*self.range_m, band, self.origin)
            mean = band_mean_flux_si(self.wavelength_m, self.flambda, band)
        return -2.5 * np.log10(mean / f0)

    def at(self, wavelength_m):
        """Flux density [W m-3] at ``wavelength_m`` (log-log interpolation).

        Raises
        ------
        InputError
            If ``wavelength_m`` reaches outside the spectrum.
        """
        lam = np.asarray(wavelength_m, dtype=np.float64)
        lo, hi = self.range_m
        if lam.size and (lam.min() < lo * (1 - 1e-12) or lam.max() > hi * (1 + 1e-12)):
            raise InputError(
                "spectrum", f"{self.origin} covering {lo*1e6:.4g}-{hi*1e6:.4g} um",
                f"a spectrum covering the requested {lam.min()*1e6:.4g}-"
                f"{lam.max()*1e6:.4g} um")
        if self._teff is not None:
            return self._scale[:, None] * planck_flambda(lam.reshape(1, -1),
                                                         self._teff[:, None]).reshape(
                (self._teff.size,) + lam.shape)
        return _loglog_interp(np.clip(lam, lo, hi), self.wavelength_m, self.flambda)


def planck_spectrum(teff):
    """Blackbody spectrum shape for one or more stars.

    Parameters
    ----------
    teff : float, array_like or Quantity
        Effective temperature(s); bare numbers in K, allowed 500-100000 K.

    Returns
    -------
    StellarSpectrum
        Surface flux ``pi B_lambda(Teff)`` [W m-3] on a 0.1-100 um grid, one
        row per star; call :meth:`StellarSpectrum.normalised` to scale it to
        a magnitude.
    """
    t = np.atleast_1d(to_si(teff, "star.teff", u.K, 500.0, 1.0e5))
    label = "Planck " + ", ".join(f"{x:.0f} K" for x in t[:4]) + (" ..." if t.size > 4 else "")
    return StellarSpectrum(_PLANCK_GRID_M, None, label, teff_k=t)


_FLUX_UNIT = u.W / u.m**3


def read_spectrum(path):
    """Read a user stellar spectrum file.

    Parameters
    ----------
    path : str or pathlib.Path
        A table readable by astropy (ECSV ``.ecsv``, FITS ``.fits``/``.fit``,
        CSV ``.csv``) with two columns: ``wavelength`` and ``flux``.  Their
        units come from the column metadata (ECSV, FITS); in a CSV file the
        column names carry the unit in brackets, for example
        ``wavelength [um]`` and ``flux [erg / (s cm2 Angstrom)]``.  ``flux``
        may be a flux density per unit wavelength or per unit frequency; its
        overall scale does not matter (the spectrum is normalised to the
        star's magnitude).

    Returns
    -------
    StellarSpectrum
        One row, sorted by wavelength.

    Raises
    ------
    InputError, UnitMismatchError
        Missing columns, missing or wrong units, fewer than two points,
        non-positive values.
    """
    from astropy.table import Table
    p = Path(path)
    if not p.is_file():
        raise InputError("spectrum", str(path), "an existing spectrum file")
    ext = p.suffix.lower()
    fmt = {".ecsv": "ascii.ecsv", ".csv": "ascii.csv", ".fits": "fits",
           ".fit": "fits"}.get(ext)
    if fmt is None:
        raise InputError("spectrum", str(path), "a .ecsv, .csv or .fits file")
    try:
        t = Table.read(str(p), format=fmt)
    except Exception as exc:  # astropy raises many types for malformed files
        raise InputError("spectrum", str(path), "a readable table",
                         detail=str(exc)) from None
    cols = {}
    for name in t.colnames:
        base, unit = name, t[name].unit
        if "[" in name and name.rstrip().endswith("]"):
            base, _, rest = name.partition("[")
            try:
                unit = u.Unit(rest.rstrip()[:-1].strip())
            except ValueError:
                raise UnitMismatchError(f"spectrum column {name!r}", rest[:-1],
                                        "an astropy unit string") from None
        cols[base.strip().lower()] = (np.asarray(t[name], dtype=np.float64), unit)
    for need in ("wavelength", "flux"):
        if need not in cols:
            raise InputError("spectrum", str(path),
                             "columns 'wavelength' and 'flux' with units",
                             detail=f"no column {need!r}; found {t.colnames}")
    lam_v, lam_u = cols["wavelength"]
    f_v, f_u = cols["flux"]
    if lam_u is None or f_u is None:
        raise UnitMismatchError("spectrum", str(path), "units on both columns",
                                detail="give units in the column metadata or as "
                                       "'wavelength [um]' in a CSV header")
    try:
        lam = (lam_v * u.Unit(lam_u)).to(u.m)
    except u.UnitConversionError:
        raise UnitMismatchError("spectrum wavelength", str(lam_u), "a length unit") from None
    try:
        flux = (f_v * u.Unit(f_u)).to(_FLUX_UNIT, equivalencies=u.spectral_density(lam))
    except u.UnitConversionError:
        raise UnitMismatchError("spectrum flux", str(f_u),
                                "a flux density per wavelength or per frequency") from None
    order = np.argsort(lam.value)
    lam_m = lam.value[order]
    fl = flux.value[order]
    if lam_m.size < 2 or not np.all(np.isfinite(lam_m)) or np.any(np.diff(lam_m) <= 0):
        raise InputError("spectrum", str(path),
                         "at least two distinct, finite wavelengths")
    check_range(lam_m, "spectrum wavelength", 0.0, None, low_inclusive=False, unit_label="m")
    check_range(fl, "spectrum flux", 0.0, None, low_inclusive=False, unit_label="W m-3")
    return StellarSpectrum(lam_m, fl[None, :], p.name)


def stellar_flux_density(wavelength, teff, magnitude, band, spectrum=None):
    """Observed stellar flux density normalised to a magnitude.

    Parameters
    ----------
    wavelength : float, array_like or Quantity
        Wavelength(s); bare numbers in um.
    teff : float, array_like or Quantity
        Effective temperature(s); bare numbers in K.  Ignored when
        ``spectrum`` is given.
    magnitude : float or array_like
        Magnitude(s) of the star(s) in ``band``.
    band : str
        Band name (``"J"``, ``"H"``, ``"Ks"``, ``"V"``).
    spectrum : str, pathlib.Path or StellarSpectrum, optional
        A user spectrum (file path, see :func:`read_spectrum`) used instead
        of the Planck spectrum.

    Returns
    -------
    astropy.units.Quantity
        ``F_lambda`` in W m-2 um-1, shape ``(n_star, n_wave)``.
    """
    lam = np.atleast_1d(to_si(wavelength, "wavelength", u.um, 0.0, None, low_inclusive=False))
    spec = _spectrum(spectrum, teff).normalised(magnitude, band)
    return (spec.at(lam) * _FLUX_UNIT).to(u.W / u.m**2 / u.um)


def _spectrum(spectrum, teff):
    if spectrum is None:
        return planck_spectrum(teff)
    if isinstance(spectrum, StellarSpectrum):
        return spectrum
    return read_spectrum(spectrum)


def synthetic_magnitude(wavelength, flux, band):
    """Synthetic magnitude of a spectrum in a band, integrated over its response curve.

    Parameters
    ----------
    wavelength : Quantity or array_like
        Increasing wavelengths; bare numbers in um.
    flux : Quantity
        Flux density per unit wavelength or frequency, shape ``(..., n_wave)``;
        bare numbers in W m-2 um-1.
    band : str
        Band name.

    Returns
    -------
    numpy.ndarray
        Magnitudes, shape ``flux.shape[:-1]``.
    """
    lam = to_si(wavelength, "wavelength", u.um, 0.0, None, low_inclusive=False)
    if isinstance(flux, u.Quantity):
        try:
            f = flux.to(_FLUX_UNIT, equivalencies=u.spectral_density(lam * u.m)).value
        except u.UnitConversionError:
            raise UnitMismatchError("flux", str(flux.unit), "a spectral flux density") from None
    else:
        f = to_si(flux, "flux", u.W / u.m**2 / u.um, 0.0, None, low_inclusive=False)
    return synthetic_magnitude_si(lam, f, band)
