"""The U.S. Standard Atmosphere 1976 below 86 km: temperature and pressure (the Earth reference)."""

import numpy as np

from ..errors import InputError

__all__ = ["US1976_LAYERS", "us_standard_atmosphere_1976"]


#: U.S. Standard Atmosphere 1976 (NOAA/NASA/USAF 1976, Table 4): base
#: geopotential height [m'] and temperature gradient [K per m'] of the seven
#: layers below 84.852 km'.  The constants below are the standard's defining
#: values (sea level 288.15 K and 101325 Pa, g0 = 9.80665 m s-2,
#: R* = 8.31432 J mol-1 K-1, M0 = 28.9644 g/mol, r0 = 6356.766 km for the
#: geopotential conversion); they agree with the tabulations read at
#: crnslab.org/util/atmo.php and scipp.ucsc.edu (outreach page "US Standard
#: Atmosphere, 1976"), which cite the standard.
US1976_LAYERS = ((0.0, -0.0065), (11000.0, 0.0), (20000.0, 0.001), (32000.0, 0.0028),
                 (47000.0, 0.0), (51000.0, -0.0028), (71000.0, -0.002))
_US76_T0 = 288.15
_US76_P0 = 101325.0
_US76_G0 = 9.80665
_US76_R = 8.31432
_US76_M0 = 28.9644e-3
_US76_R0 = 6356766.0
_US76_TOP_GEOPOTENTIAL = 84852.0


def us_standard_atmosphere_1976(altitude_m, geopotential=False):
    """Temperature and pressure of the U.S. Standard Atmosphere 1976 below 86 km.

    Piecewise-linear temperature in geopotential height with hydrostatic
    pressure, ``P = P_b (T_b/T)^(g0 M0/(R* L))`` in gradient layers and
    ``P = P_b exp(-g0 M0 (h - h_b)/(R* T_b))`` in isothermal ones (NOAA, NASA
    & USAF 1976, "U.S. Standard Atmosphere, 1976", eqs. 23 and 33a-b, Table 4;
    equation numbers from memory).  Geometric altitude ``z`` converts to
    geopotential height ``h = r0 z / (r0 + z)``.  The molecular-weight
    correction above 80 km (at most 0.04 per cent in temperature) is left out.

    Parameters
    ----------
    altitude_m : float or array_like
        Altitude [m], 0 to 86 km geometric (84.852 km geopotential).
    geopotential : bool
        Altitudes are geopotential heights (default: geometric).

    Returns
    -------
    temperature_K, pressure_Pa : numpy.ndarray
        Same shape as ``altitude_m``.

    Examples
    --------
    >>> t, p = us_standard_atmosphere_1976(11000.0, geopotential=True)
    >>> round(float(t), 2), round(float(p))
    (216.65, 22632)
    """
    z = np.asarray(altitude_m, dtype=np.float64)
    h = z if geopotential else _US76_R0 * z / (_US76_R0 + z)
    if np.any(~np.isfinite(h)) or np.any(h < 0) or np.any(h > _US76_TOP_GEOPOTENTIAL + 0.1):
        raise InputError("altitude", float(np.max(z)) if np.all(np.isfinite(z)) else "non-finite",
                         "0 to 84.852 km geopotential (86 km geometric)")
    k = _US76_G0 * _US76_M0 / _US76_R
    tb, pb = [_US76_T0], [_US76_P0]
    for (h0, lapse), (h1, _) in zip(US1976_LAYERS[:-1], US1976_LAYERS[1:]):
        t1 = tb[-1] + lapse * (h1 - h0)
        pb.append(pb[-1] * ((tb[-1] / t1) ** (k / lapse) if lapse else
                            np.exp(-k * (h1 - h0) / tb[-1])))
        tb.append(t1)
    bases = np.array([b for b, _ in US1976_LAYERS])
    i = np.clip(np.searchsorted(bases, h, side="right") - 1, 0, bases.size - 1)
    lapse = np.array([g for _, g in US1976_LAYERS])[i]
    t_b, p_b = np.array(tb)[i], np.array(pb)[i]
    t = t_b + lapse * (h - bases[i])
    with np.errstate(divide="ignore", invalid="ignore"):
        p = np.where(lapse != 0, p_b * (t_b / t) ** (k / np.where(lapse != 0, lapse, 1.0)),
                     p_b * np.exp(-k * (h - bases[i]) / t_b))
    return t, p
