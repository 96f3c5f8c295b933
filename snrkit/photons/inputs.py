"""Per-planet inputs of the precision functions: broadcast, range-checked, in SI."""


import numpy as np
import astropy.units as u

from ..errors import InputError
from ..units import to_si, as_float_array, check_range
from .stellar_spectrum import planck_spectrum, read_spectrum, StellarSpectrum

__all__ = []


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


def _timing_inputs(magnitude, transit_duration, in_transit_time, baseline, baseline_factor, depth,
                   n_transits, n):
    """Checked per-planet magnitudes, times [s], depths and the number of transits."""
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
    return mag, t14, t_in, t_out, dep, n_tr


def _normalised_spectrum(spectrum, teff, n, m, mag, band):
    """The stellar spectrum, checked against the mode's range and normalised to ``mag``."""
    spec = _star_spectrum(spectrum, teff, n)
    if spec.n_star not in (1, n):
        raise InputError("spectrum", f"{spec.n_star} rows", f"1 or {n} spectra")
    lo, hi = spec.range_m
    if lo > m.wavelength_min_m or hi < m.wavelength_max_m:
        raise InputError("spectrum", f"{spec.origin} covering {lo*1e6:.4g}-{hi*1e6:.4g} um",
                         f"a spectrum covering the mode {m.name} range "
                         f"{m.wavelength_min_m*1e6:.4g}-{m.wavelength_max_m*1e6:.4g} um")
    spec = spec.normalised(mag, band)
    return spec
