"""Stellar spectra: Planck or a user's file, normalised to a magnitude, with photometry through the bands."""

from __future__ import annotations

from typing import TYPE_CHECKING

from pathlib import Path

import numpy as np
import astropy.units as u

from ..errors import InputError, UnitMismatchError
from ..units import to_si, check_range, as_float_array
from .sed import (_PLANCK_GRID_M, _band, _check_covers, _loglog_interp, band_mean_flux_si,
                  band_response, normalise_to_band_si, planck_flambda, synthetic_magnitude_si)

__all__ = ["StellarSpectrum", "planck_spectrum", "read_spectrum", "stellar_flux_density",
           "synthetic_magnitude"]

if TYPE_CHECKING:   # annotations only: not imported at run time
    import numpy.typing as npt
    from ..units import PathLike


def _planck_band_mean(teff_k, band):
    """Band-averaged ``pi B_lambda(T)`` [W m-3], exact up to the quadrature; shape of ``teff_k``."""
    curve = band_response(band)
    t = np.asarray(teff_k, dtype=np.float64)
    return planck_flambda(curve.grid_m, t[..., None]) @ curve.weights


# size: a class of seven short methods (the longest 40 lines) over one spectrum's arrays
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

    def normalised(self, magnitude: npt.ArrayLike, band: str) -> StellarSpectrum:
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

    def magnitude(self, band: str) -> np.ndarray:
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


def read_spectrum(path: PathLike) -> StellarSpectrum:
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
