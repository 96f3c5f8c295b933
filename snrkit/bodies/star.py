"""The validated, immutable Star (arrays over a leading entry axis)."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
import astropy.units as u

from ..constants import R_SUN, M_SUN, G
from ..errors import InputError
from ..units import QuantityLike, to_si, as_float_array, check_range
from .limits import BANDS, LIMITS, TEFF_RANGE_K

__all__ = ["Star"]

if TYPE_CHECKING:   # annotations only: these stay unimported at run time
    from collections.abc import Mapping, Sequence
    import numpy.typing as npt


def _readonly(a):
    a = np.array(a, dtype=a.dtype if isinstance(a, np.ndarray) else None, copy=True)
    a.flags.writeable = False
    return a


def _opt(value, field, unit, low=None, high=None, **kw):
    """Optional numeric field: None -> NaN."""
    if value is None:
        return np.asarray(np.nan)
    return to_si(value, field, unit, low, high, allow_nan=True, **kw)


class _Frozen:
    __slots__ = ()

    def __setattr__(self, name, value):
        raise AttributeError(f"{type(self).__name__} is immutable; build a new one")

    def _set(self, name, value):
        if isinstance(value, np.ndarray):
            value = _readonly(value)
        object.__setattr__(self, name, value)

    def __len__(self):
        return self._n

    def __repr__(self):
        return f"<{type(self).__name__}: {self._n} entr{'y' if self._n == 1 else 'ies'}>"


def _size(*arrays):
    try:
        shape = np.broadcast_shapes(*[np.shape(a) for a in arrays])
    except ValueError:
        raise InputError("arrays", [np.shape(a) for a in arrays],
                         "arrays of one common length (one entry per planet)") from None
    if len(shape) > 1:
        raise InputError("arrays", shape, "scalars or one-dimensional arrays")
    return shape[0] if shape else 1


# size: an immutable record: __init__ checks each field (57 lines), then one-line properties
class Star(_Frozen):
    """A host star.

    Parameters
    ----------
    teff : Quantity, float or array
        Effective temperature (default unit K), within :data:`TEFF_RANGE_K`.
    radius : Quantity, float or array
        Radius (default unit R_sun, IAU 2015 nominal).
    mass : Quantity, float or array, optional
        Mass (default unit M_sun).  Give ``mass`` or ``logg``.
    logg : float or array, optional
        log10 of the surface gravity in cm s-2; the mass follows from
        M = g R^2 / G.
    metallicity : float or array, optional
        [Fe/H] in dex (default 0).
    magnitudes : dict, optional
        Apparent magnitudes by band name (``"V"``, ``"J"``, ``"H"``, ``"Ks"``).
    distance : Quantity, float or array, optional
        Distance (default unit pc).
    ra, dec : Quantity, float or array, optional
        Sky position, ICRS (default unit deg).
    name : str or sequence of str, optional
        Star name.
    """

    __slots__ = ("_n", "_teff", "_radius", "_mass", "_metallicity", "_mags",
                 "_distance", "_ra", "_dec", "_name", "mass_from_logg")

    def __init__(self, teff: QuantityLike, radius: QuantityLike, mass: QuantityLike | None = None,
                 logg: npt.ArrayLike | None = None, metallicity: npt.ArrayLike = 0.0,
                 magnitudes: Mapping[str, npt.ArrayLike] | None = None,
                 distance: QuantityLike | None = None, ra: QuantityLike | None = None,
                 dec: QuantityLike | None = None, name: str | Sequence[str] | None = None) -> None:
        teff_a = to_si(teff, "star.effective_temperature", u.K, *TEFF_RANGE_K)
        rad = to_si(radius, "star.radius", u.R_sun, *LIMITS["star.radius"])
        if mass is None and logg is None:
            raise InputError("star.mass", None, "a mass (solar masses) or a log_gravity (cgs dex)")
        if mass is not None and logg is not None:
            raise InputError("star.log_gravity", logg, "only one of mass and log_gravity")
        if mass is not None:
            m = to_si(mass, "star.mass", u.M_sun, *LIMITS["star.mass"])
            from_logg = False
            # the same log g range as a given log_gravity (catches unit slips)
            _size(rad, m)  # a clear error for arrays of different lengths
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                lg_m = np.atleast_1d(np.log10(G * m / rad ** 2 * 100.0))
            bad = ~((lg_m >= 0.0) & (lg_m <= 9.0))
            if np.any(bad):
                i = int(np.flatnonzero(np.ravel(bad))[0])
                m_i = np.broadcast_to(m, lg_m.shape)[i]
                raise InputError("star.mass", f"{m_i / M_SUN:.4g} M_sun",
                                 "a mass giving a log g in [0, 9] (cgs) with the star's radius",
                                 detail=f"log g would be {lg_m[i]:.3g}")
        else:
            lg = as_float_array(logg, "star.log_gravity")
            check_range(lg, "star.log_gravity", 0.0, 9.0, unit_label="dex (cgs)")
            m = (10.0 ** lg * 1e-2) * rad ** 2 / G
            from_logg = True
        feh = as_float_array(metallicity, "star.metallicity")
        check_range(feh, "star.metallicity", -5.0, 1.5, unit_label="dex")
        mags = {}
        for band, val in (magnitudes or {}).items():
            if band not in BANDS:
                import difflib
                close = difflib.get_close_matches(str(band), BANDS, n=1)
                raise InputError(f"star.magnitudes.{band}", val, "bands " + ", ".join(BANDS),
                                 detail=f"did you mean {close[0]!r}?" if close else "")
            arr = as_float_array(val, f"star.magnitudes.{band}")
            check_range(arr, f"star.magnitudes.{band}", -2.0, 30.0, unit_label="mag", allow_nan=True)
            mags[band] = arr
        dist = _opt(distance, "star.distance", u.pc, *LIMITS["star.distance"])
        ra_a = _opt(ra, "star.right_ascension", u.deg, 0.0, 360.0, high_inclusive=False)
        dec_a = _opt(dec, "star.declination", u.deg, -90.0, 90.0)
        names = None if name is None else np.asarray(name, dtype=str)
        n = _size(teff_a, rad, m, feh, dist, ra_a, dec_a, *mags.values(),
                  *(() if names is None else (names,)))
        bc = lambda a: np.broadcast_to(a, (n,)).astype(np.float64)  # noqa: E731
        self._set("_n", n)
        self._set("_teff", bc(teff_a))
        self._set("_radius", bc(rad))
        self._set("_mass", bc(m))
        self._set("_metallicity", bc(feh))
        self._set("_mags", {b: _readonly(bc(v)) for b, v in mags.items()})
        self._set("_distance", bc(dist))
        self._set("_ra", bc(ra_a))
        self._set("_dec", bc(dec_a))
        self._set("_name", None if names is None else np.broadcast_to(names, (n,)).copy())
        self._set("mass_from_logg", from_logg)

    # SI arrays for the compute layer
    teff_K = property(lambda self: self._teff, doc="Teff [K] (array)")
    radius_m = property(lambda self: self._radius, doc="radius [m] (array)")
    mass_kg = property(lambda self: self._mass, doc="mass [kg] (array)")
    # Quantities for users
    teff = property(lambda self: self._teff * u.K, doc="effective temperature")
    radius = property(lambda self: (self._radius / R_SUN) * u.R_sun, doc="radius")
    mass = property(lambda self: (self._mass / M_SUN) * u.M_sun, doc="mass")
    logg = property(lambda self: np.log10(G * self._mass / self._radius ** 2 * 100.0),
                    doc="log10 surface gravity [cgs dex]")
    metallicity = property(lambda self: self._metallicity, doc="[Fe/H] [dex]")
    magnitudes = property(lambda self: dict(self._mags), doc="apparent magnitudes by band")
    distance = property(lambda self: (self._distance * u.m).to(u.pc), doc="distance")
    ra = property(lambda self: (self._ra * u.rad).to(u.deg), doc="right ascension (ICRS)")
    dec = property(lambda self: (self._dec * u.rad).to(u.deg), doc="declination (ICRS)")
    name = property(lambda self: self._name, doc="names (array of str) or None")

    def magnitude(self, band: str) -> np.ndarray:
        """Magnitudes in ``band`` (NaN array where not given)."""
        return self._mags.get(band, np.full(self._n, np.nan))

    def broadcast(self, n: int) -> Star:
        """Return this star repeated for ``n`` planets."""
        if n == self._n:
            return self
        if self._n != 1:
            raise InputError("star", f"{self._n} entries", f"1 or {n} entries (one per planet)")
        return Star(self._teff.repeat(n), self._radius.repeat(n) * u.m,
                    mass=self._mass.repeat(n) * u.kg, metallicity=self._metallicity.repeat(n),
                    magnitudes={b: v.repeat(n) for b, v in self._mags.items()},
                    distance=self._distance.repeat(n) * u.m, ra=self._ra.repeat(n) * u.rad,
                    dec=self._dec.repeat(n) * u.rad,
                    name=None if self._name is None else self._name.repeat(n))
