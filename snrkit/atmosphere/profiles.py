"""Pressure grids, pressure-temperature profiles and hydrostatic altitudes.

Compute layer (SI, numpy, leading ``planet`` axis):

* :func:`pressure_levels` -- log-spaced level pressures from a bottom (deepest,
  opaque) pressure to a top pressure, ``n_layers + 1`` levels per planet;
* :class:`IsothermalProfile`, :class:`GreyTwoStreamProfile` and
  :class:`TabulatedProfile` -- temperature as a function of pressure (the
  second is the analytic irradiated grey atmosphere of Guillot 2010, A&A 520,
  A27, eq. 29; the third interpolates a user's pressure-temperature table);
* :func:`snrkit.atmosphere.standard_atmosphere.us_standard_atmosphere_1976`
  -- temperature and pressure of the U.S. Standard Atmosphere 1976 below
  86 km (the Earth reference of the tests), in its own module;
* :func:`hydrostatic_radius` -- radius of each level from hydrostatic
  equilibrium of an ideal gas with gravity falling off as ``1/r**2``;
* :func:`scale_height` -- ``H = k T / (mu m_u g)``.

Refraction (the refractivity of a mixture and the floor it sets) is in
:mod:`snrkit.atmosphere.refraction`.

All arrays carry a leading planet axis: parameters have shape ``(n_planet,)``
and level arrays ``(n_planet, n_levels)``.
"""

import numpy as np

from ..constants import K_B, M_U
from ..errors import InputError

__all__ = ["DEFAULT_N_LAYERS", "MIN_N_LAYERS", "pressure_levels", "scale_height", "IsothermalProfile",
           "GreyTwoStreamProfile", "TabulatedProfile", "hydrostatic_radius"]

#: Default number of layers of the chord-integration grid.
DEFAULT_N_LAYERS = 150
#: Smallest number of layers accepted (coarse grids are for quick tests only;
#: the accuracy quoted for the layered solver assumes >= 100 layers).
MIN_N_LAYERS = 10


def _planet_axis(x, name):
    a = np.atleast_1d(np.asarray(x, dtype=np.float64))
    if a.ndim != 1:
        raise InputError(name, f"array of shape {a.shape}", "a scalar or a 1-D array over planets")
    return a


def pressure_levels(bottom_pressure_Pa, top_pressure_Pa, n_layers=DEFAULT_N_LAYERS):
    """Log-spaced level pressures, deepest first.

    Parameters
    ----------
    bottom_pressure_Pa : float or array_like, shape (n_planet,)
        Pressure of the lowest level [Pa] (surface, cloud top or another opaque
        floor).
    top_pressure_Pa : float or array_like, shape (n_planet,)
        Pressure of the highest level [Pa]; must be below the bottom pressure.
    n_layers : int
        Number of layers (the grid has ``n_layers + 1`` levels).

    Returns
    -------
    numpy.ndarray, shape (n_planet, n_layers + 1)
        Level pressures [Pa], strictly decreasing along the last axis.
    """
    if isinstance(n_layers, bool) or not isinstance(n_layers, (int, np.integer)) \
            or n_layers < MIN_N_LAYERS:
        raise InputError("n_layers", n_layers, f"an integer >= {MIN_N_LAYERS}")
    pb = _planet_axis(bottom_pressure_Pa, "bottom_pressure")
    pt = _planet_axis(top_pressure_Pa, "top_pressure")
    pb, pt = np.broadcast_arrays(pb, pt)
    if np.any(~(pt > 0)) or np.any(~(pb > pt)):
        raise InputError("pressure grid", f"bottom {pb.min():.3g} Pa, top {pt.min():.3g} Pa",
                         "0 < top pressure < bottom pressure")
    f = np.linspace(0.0, 1.0, int(n_layers) + 1)
    lnp = np.log(pb)[:, None] + (np.log(pt) - np.log(pb))[:, None] * f
    return np.exp(lnp)


def scale_height(temperature_K, mu_g_mol, gravity_m_s2):
    """Pressure scale height ``H = k_B T / (mu m_u g)`` [m].

    Parameters
    ----------
    temperature_K : array_like
        Temperature [K].
    mu_g_mol : array_like
        Mean molecular weight [g/mol] (numerically the mean molecular mass in
        atomic mass units).
    gravity_m_s2 : array_like
        Gravitational acceleration [m s-2].

    Returns
    -------
    numpy.ndarray
        Scale height [m], broadcast over the inputs.

    Notes
    -----
    For the U.S. Standard Atmosphere 1976 sea-level values (288.15 K,
    28.9644 g/mol, 9.80665 m s-2) this gives 8.43 km.
    """
    return K_B * np.asarray(temperature_K, dtype=np.float64) / (
        np.asarray(mu_g_mol, dtype=np.float64) * M_U * np.asarray(gravity_m_s2, dtype=np.float64))


class IsothermalProfile:
    """Constant temperature at every pressure.

    Parameters
    ----------
    temperature_K : float or array_like, shape (n_planet,)
        Temperature [K].
    """

    kind = "isothermal"
    is_isothermal = True

    def __init__(self, temperature_K):
        self.temperature_K = _planet_axis(temperature_K, "temperature")
        if np.any(~(self.temperature_K > 0)):
            raise InputError("temperature", float(np.min(self.temperature_K)), "> 0 K")

    @property
    def n_planet(self):
        return self.temperature_K.shape[0]

    def temperature(self, pressure_Pa):
        """Temperature [K] at ``pressure_Pa`` (shape ``(n_planet, ...)``)."""
        p = np.asarray(pressure_Pa, dtype=np.float64)
        t = self.temperature_K.reshape((-1,) + (1,) * (p.ndim - 1))
        return np.broadcast_to(t, np.broadcast_shapes(t.shape, p.shape)).copy()

    def reference_temperature(self):
        """Temperature used for the scale height quoted with a spectrum [K]."""
        return self.temperature_K.copy()


# size: the Guillot 2010 profile with its equation in the docstring; four short methods
class GreyTwoStreamProfile:
    """Analytic irradiated grey atmosphere of Guillot (2010, A&A 520, A27, eq. 29).

    .. math::

        T^4 = \\frac{3 T_{int}^4}{4}\\left(\\frac{2}{3} + \\tau\\right)
            + \\frac{3 T_{irr}^4}{4} f \\left[\\frac{2}{3} + \\frac{1}{\\gamma\\sqrt{3}}
            + \\left(\\frac{\\gamma}{\\sqrt{3}} - \\frac{1}{\\gamma\\sqrt{3}}\\right)
              e^{-\\gamma\\tau\\sqrt{3}}\\right],

    with thermal optical depth ``tau = kappa_th P / g`` and
    ``gamma = kappa_v / kappa_th``.  We write ``f T_irr^4 = T_eq^4`` where
    ``T_eq`` is the equilibrium temperature for the chosen redistribution
    (``f = 1/4`` and ``T_irr = T_* sqrt(R_*/a)`` give the usual
    full-redistribution ``T_eq``).  The equation was transcribed from memory
    of the paper; its limits are checked in the tests (``gamma = 1`` with
    ``T_int = 0`` is isothermal; deep layers follow the Eddington
    ``T^4 = 3/4 T_int^4 tau``).

    Parameters
    ----------
    equilibrium_temperature_K : float or array_like, shape (n_planet,)
        ``(f T_irr^4)^(1/4)`` [K].
    gravity_m_s2 : float or array_like, shape (n_planet,)
        Gravity used to convert pressure to optical depth [m s-2].
    internal_temperature_K : float or array_like
        Intrinsic temperature ``T_int`` [K]; default 0.
    thermal_opacity_m2_kg : float or array_like
        Grey thermal opacity ``kappa_th`` [m2 kg-1]; default 1e-3
        (0.01 cm2 g-1, the fiducial hot-giant value of Guillot 2010, value
        from memory).
    visible_to_thermal_ratio : float or array_like
        ``gamma = kappa_v / kappa_th``; default 0.4 (Guillot 2010 fiducial
        value, from memory).
    """

    kind = "grey-two-stream"
    is_isothermal = False

    def __init__(self, equilibrium_temperature_K, gravity_m_s2, internal_temperature_K=0.0,
                 thermal_opacity_m2_kg=1e-3, visible_to_thermal_ratio=0.4):
        teq = _planet_axis(equilibrium_temperature_K, "equilibrium_temperature")
        g = _planet_axis(gravity_m_s2, "gravity")
        tint = _planet_axis(internal_temperature_K, "internal_temperature")
        kth = _planet_axis(thermal_opacity_m2_kg, "thermal_opacity")
        gam = _planet_axis(visible_to_thermal_ratio, "visible_to_thermal_ratio")
        teq, g, tint, kth, gam = np.broadcast_arrays(teq, g, tint, kth, gam)
        for name, a, ok in (("equilibrium_temperature", teq, teq > 0),
                            ("gravity", g, g > 0),
                            ("internal_temperature", tint, tint >= 0),
                            ("thermal_opacity", kth, kth > 0),
                            ("visible_to_thermal_ratio", gam, gam > 0)):
            if np.any(~ok):
                raise InputError(name, float(a[~ok].flat[0]), "> 0" if name != "internal_temperature" else ">= 0")
        self.equilibrium_temperature_K = teq.copy()
        self.gravity_m_s2 = g.copy()
        self.internal_temperature_K = tint.copy()
        self.thermal_opacity_m2_kg = kth.copy()
        self.visible_to_thermal_ratio = gam.copy()

    @property
    def n_planet(self):
        return self.equilibrium_temperature_K.shape[0]

    def temperature(self, pressure_Pa):
        """Temperature [K] at ``pressure_Pa`` (shape ``(n_planet, ...)``)."""
        p = np.asarray(pressure_Pa, dtype=np.float64)
        shape = (-1,) + (1,) * (p.ndim - 1)
        teq = self.equilibrium_temperature_K.reshape(shape)
        tint = self.internal_temperature_K.reshape(shape)
        gam = self.visible_to_thermal_ratio.reshape(shape)
        tau = self.thermal_opacity_m2_kg.reshape(shape) * p / self.gravity_m_s2.reshape(shape)
        s3 = np.sqrt(3.0)
        irr = 2.0 / 3.0 + 1.0 / (gam * s3) + (gam / s3 - 1.0 / (gam * s3)) * np.exp(-gam * tau * s3)
        t4 = 0.75 * tint**4 * (2.0 / 3.0 + tau) + 0.75 * teq**4 * irr
        return t4**0.25

    def reference_temperature(self):
        """Temperature used for the scale height quoted with a spectrum [K].

        The equilibrium temperature (the profile's photospheric value is within
        a few per cent of it for the default ``gamma``).
        """
        return self.equilibrium_temperature_K.copy()


class TabulatedProfile:
    """Temperature interpolated in a pressure-temperature table.

    ``T(P)`` is linear in ``ln P`` between the table's points and constant
    (isothermal) beyond its ends (common practice, no source).  An optional
    factor per planet multiplies the whole table (the scenario key
    ``temperature_factor``; 1 reproduces the table).

    Parameters
    ----------
    pressure_Pa : array_like, shape (n_points,)
        Table pressures [Pa], > 0, strictly monotonic (either order).
    temperature_K : array_like, shape (n_points,)
        Table temperatures [K], > 0.
    factor : float or array_like, shape (n_planet,)
        Multiplier of the table temperatures (default 1).
    reference_pressure_Pa : float or array_like, shape (n_planet,)
        Pressure whose temperature is quoted as the reference temperature
        (the scale height at the reference radius); default 1e5 Pa.
    """

    kind = "tabulated"
    is_isothermal = False

    def __init__(self, pressure_Pa, temperature_K, factor=1.0, reference_pressure_Pa=1e5):
        p = np.asarray(pressure_Pa, dtype=np.float64).ravel()
        t = np.asarray(temperature_K, dtype=np.float64).ravel()
        if p.size < 2 or p.size != t.size:
            raise InputError("temperature_table", f"{p.size} pressures and {t.size} temperatures",
                             "at least 2 pressures with one temperature each")
        if np.any(~(p > 0)) or np.any(~(t > 0)):
            raise InputError("temperature_table", "a pressure or temperature <= 0",
                             "pressures > 0 and temperatures > 0 K")
        order = np.argsort(p)
        p, t = p[order], t[order]
        if np.any(np.diff(p) <= 0):
            raise InputError("temperature_table.pressure", "repeated pressure",
                             "strictly monotonic pressures")
        self._lnp = np.log(p)
        self._t = t
        f = _planet_axis(factor, "temperature_factor")
        pr = _planet_axis(reference_pressure_Pa, "reference_pressure")
        f, pr = np.broadcast_arrays(f, pr)
        if np.any(~(f > 0)):
            raise InputError("temperature_factor", float(np.min(f)), "> 0")
        self.factor = f.copy()
        self.reference_pressure_Pa = pr.copy()

    @property
    def n_planet(self):
        return self.factor.shape[0]

    def temperature(self, pressure_Pa):
        """Temperature [K] at ``pressure_Pa`` (shape ``(n_planet, ...)``)."""
        p = np.asarray(pressure_Pa, dtype=np.float64)
        t = np.interp(np.log(p), self._lnp, self._t)
        return self.factor.reshape((-1,) + (1,) * max(p.ndim - 1, 0)) * t

    def reference_temperature(self):
        """Temperature at the reference pressure [K], shape (n_planet,)."""
        return self.factor * np.interp(np.log(self.reference_pressure_Pa), self._lnp, self._t)


def _gauss_legendre(n):
    x, w = np.polynomial.legendre.leggauss(n)
    return 0.5 * (x + 1.0), 0.5 * w


def hydrostatic_radius(pressure_levels_Pa, profile, mu_g_mol, reference_radius_m,
                       reference_pressure_Pa, reference_gravity_m_s2):
    """Radius of each pressure level from hydrostatic equilibrium with ``g = GM/r**2``.

    For an ideal gas ``dP/dr = -P mu m_u G M / (k T r**2)``, so
    ``d(1/r) = k T / (mu m_u G M) d ln P`` and

    .. math:: \\frac{1}{r(P)} = \\frac{1}{R_0} + \\int_{\\ln P_0}^{\\ln P}
              \\frac{k T(P')}{\\mu m_u G M} \\, d\\ln P',

    with ``G M = g_0 R_0**2``.  The integral runs by the trapezoid rule on the
    level grid and by 16-point Gauss-Legendre from the reference pressure to the
    grid's bottom level (exact for an isothermal profile).

    Parameters
    ----------
    pressure_levels_Pa : numpy.ndarray, shape (n_planet, n_levels)
        Level pressures [Pa], decreasing.
    profile : IsothermalProfile or GreyTwoStreamProfile
        Temperature profile.
    mu_g_mol : array_like, shape (n_planet,) or (n_planet, n_levels)
        Mean molecular weight [g/mol]: constant with height (well-mixed gas),
        or one value per level (a composition that varies with height; then
        the bridge from the reference pressure to the grid's bottom level
        uses the bottom level's value).
    reference_radius_m, reference_pressure_Pa, reference_gravity_m_s2 : array_like, shape (n_planet,)
        Radius ``R_0`` [m] at which the pressure is ``P_0`` [Pa], and gravity
        there [m s-2].

    Returns
    -------
    numpy.ndarray, shape (n_planet, n_levels)
        Level radii [m].  Levels the hydrostatic solution cannot reach (the
        gas would be unbound, ``1/r <= 0``) are NaN.
    """
    p = np.asarray(pressure_levels_Pa, dtype=np.float64)
    mu_arr = np.asarray(mu_g_mol, dtype=np.float64)
    if mu_arr.ndim == 2:
        if mu_arr.shape[1] != p.shape[-1]:
            raise InputError("mean_molecular_weight", f"shape {mu_arr.shape}",
                             f"(n_planet,) or (n_planet, {p.shape[-1]}) values")
        mu_lv, mu = mu_arr, mu_arr[:, :1]
    else:
        mu = _planet_axis(mu_g_mol, "mean_molecular_weight")[:, None]
        mu_lv = mu
    r0 = _planet_axis(reference_radius_m, "reference_radius")[:, None]
    p0 = _planet_axis(reference_pressure_Pa, "reference_pressure")[:, None]
    g0 = _planet_axis(reference_gravity_m_s2, "reference_gravity")[:, None]
    gm = g0 * r0**2
    lnp = np.log(p)

    def q(pressure, m=mu):
        return K_B * profile.temperature(pressure) / (m * M_U * gm)

    # bridge from ln P0 to the grid's first level
    x, w = _gauss_legendre(16)
    ln_a = np.log(p0)
    ln_b = lnp[:, :1]
    lnq = ln_a + (ln_b - ln_a) * x[None, :]
    bridge = np.sum(q(np.exp(lnq)) * w[None, :], axis=1, keepdims=True) * (ln_b - ln_a)
    qi = q(p, mu_lv)
    steps = 0.5 * (qi[:, 1:] + qi[:, :-1]) * np.diff(lnp, axis=1)
    cum = np.concatenate([np.zeros_like(bridge), np.cumsum(steps, axis=1)], axis=1)
    inv_r = 1.0 / r0 + bridge + cum
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.where(inv_r > 0, 1.0 / inv_r, np.nan)
    return r


