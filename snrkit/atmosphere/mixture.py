"""Opacity of a gas mixture on a wavelength grid.

Lines (k-distributions per bin and g-point), the continuum (Rayleigh
scattering and haze, per molecule) and collision-induced absorption (per
molecule squared) of a scenario's composition at each level, in SI with a
leading planet axis: the arrays both solvers take (see
:mod:`snrkit.atmosphere.spectrum`).
"""

import math

import numpy as np

from ..errors import InputError

__all__ = ["DEFAULT_WAVELENGTH_RANGE_M", "wavelength_bin_edges", "mixture_opacity"]


#: Default wavelength range of generated grids [m].
DEFAULT_WAVELENGTH_RANGE_M = (0.3e-6, 30e-6)
#: Collision pairs and the two species whose mixing ratios weight them.
_CIA_SPECIES = {"H2-H2": ("H2", "H2"), "H2-He": ("H2", "He"), "N2-N2": ("N2", "N2"),
                "O2-O2": ("O2", "O2"), "CO2-CO2": ("CO2", "CO2")}


def wavelength_bin_edges(resolution, wavelength_min_m=DEFAULT_WAVELENGTH_RANGE_M[0],
                         wavelength_max_m=DEFAULT_WAVELENGTH_RANGE_M[1]):
    """Log-spaced wavelength bin edges at resolving power ``R = lambda / d lambda`` [m].

    ``n = ceil(R ln(max/min))`` bins of equal ``d ln lambda = ln(max/min)/n``
    (so ``d lambda / lambda`` is at most ``1/R``) exactly span the range.

    Parameters
    ----------
    resolution : float
        Resolving power R (>= 1).
    wavelength_min_m, wavelength_max_m : float
        Range [m].

    Returns
    -------
    numpy.ndarray
        ``n + 1`` edges [m].
    """
    if isinstance(resolution, bool) or not isinstance(resolution, (int, float, np.number)) \
            or not (1 <= float(resolution) <= 1e6):
        raise InputError("resolution", resolution, "a resolving power in [1, 1e6]")
    lo, hi = float(wavelength_min_m), float(wavelength_max_m)
    if not (0 < lo < hi):
        raise InputError("wavelength range", f"{lo:.4g}-{hi:.4g} m", "0 < minimum < maximum")
    n = max(1, int(math.ceil(float(resolution) * math.log(hi / lo) - 1e-9)))
    return np.geomspace(lo, hi, n + 1)


def _default_opacity_source():
    from types import SimpleNamespace
    from . import opacity, continuum
    grid = getattr(opacity, "PRESSURE_RANGE_PA", None)
    if grid is None:
        grid = (0.1, 1e7)   # the k tables' pressure decades (0.1 Pa - 100 bar)
    # cache_key: the shipped tables' opacity lattice is kept for the whole process
    return SimpleNamespace(PRESSURE_RANGE_PA=tuple(grid), cache_key="shipped-tables",
                           **{k: getattr(opacity, k) for k in (
        "OPACITY_SPECIES", "g_quadrature", "species_k_coefficients", "combine_random_overlap")},
        **{k: getattr(continuum, k) for k in (
            "RAYLEIGH_SPECIES", "rayleigh_cross_section", "CIA_PAIRS", "cia_coefficient",
            "haze_cross_section")})


def mixture_opacity(source, mixing_ratios, wavelength_edges_m, temperature_K, n_g,
                    haze_enhancement=0.0, haze_slope=-4.0, exclude=None, pressure_Pa=None):
    """Opacity arrays of a well-mixed gas at the given temperatures.

    Parameters
    ----------
    source : object
        Opacity source with the functions of :mod:`snrkit.atmosphere.opacity`
        and :mod:`snrkit.atmosphere.continuum` (see ATMOSPHERE_INTERFACE).
    mixing_ratios : dict of str to float or numpy.ndarray
        Volume mixing ratios: one value per gas, or per level (arrays
        broadcast against ``temperature_K``, e.g. from
        :meth:`snrkit.atmosphere.scenarios.Scenario.level_mixing_ratios`);
        lines, Rayleigh scattering and CIA all use the local value.
    wavelength_edges_m : numpy.ndarray, shape (n_wave + 1,)
        Bin edges [m].
    temperature_K : numpy.ndarray, shape (n_planet, n_levels)
        Temperatures [K].
    n_g : int
        Number of g-points.
    haze_enhancement, haze_slope : float
        Haze (see :func:`snrkit.atmosphere.continuum.haze_cross_section`).
    exclude : str, optional
        Species whose opacity (lines, Rayleigh, CIA) is left out, for
        contribution spectra; the mean molecular weight is unchanged.
    pressure_Pa : numpy.ndarray, optional
        Level pressures (same shape as ``temperature_K``) for the pressure
        dependence of the line shapes; clipped to the source's
        ``PRESSURE_RANGE_PA`` if it has one (line widths below 0.1 Pa are
        Doppler-dominated, so clipping there changes nothing).  Default: the
        source's reference pressure.

    Returns
    -------
    dict
        ``line`` (n_planet, n_levels, n_wave, n_g) [m2], ``continuum``
        (n_planet, n_levels, n_wave) [m2], ``cia`` (n_planet, n_levels, n_wave)
        [m5], ``g_weights`` (n_g,).
    """
    edges = np.asarray(wavelength_edges_m, dtype=np.float64)
    centres = np.sqrt(edges[1:] * edges[:-1])
    T = np.asarray(temperature_K, dtype=np.float64)
    _, gw = source.g_quadrature(n_g)
    gw = np.asarray(gw, dtype=np.float64)
    x = {k: np.asarray(v, dtype=np.float64) for k, v in mixing_ratios.items()
         if k != exclude and np.any(np.asarray(v) > 0)}
    nw = centres.size
    ks, vs = [], []
    kw = {}
    if pressure_Pa is not None:
        lo, hi = getattr(source, "PRESSURE_RANGE_PA", (0.0, np.inf))
        kw["pressure_Pa"] = np.clip(np.asarray(pressure_Pa, dtype=np.float64), lo, hi)
    for sp in source.OPACITY_SPECIES:
        if sp in x:
            ks.append(np.asarray(source.species_k_coefficients(sp, edges, T, n_g=n_g, **kw)))
            vs.append(np.broadcast_to(x[sp], T.shape))
    if ks:
        line = np.asarray(source.combine_random_overlap(ks, vs, gw))
    else:
        line = np.zeros(T.shape + (nw, gw.size))
    ray = np.zeros(nw)
    for sp in source.RAYLEIGH_SPECIES:
        if sp in x:
            ray = ray + x[sp][..., None] * np.asarray(source.rayleigh_cross_section(sp, centres))
    if haze_enhancement > 0:
        ray = ray + np.asarray(source.haze_cross_section(centres, haze_enhancement, haze_slope))
    cia = np.zeros(T.shape + (nw,))
    for pair in source.CIA_PAIRS:
        a, b = _CIA_SPECIES.get(pair, (None, None))
        if a in x and b in x:
            cia = cia + (x[a] * x[b])[..., None] * np.asarray(source.cia_coefficient(pair, centres, T))
    return {"line": line, "continuum": np.broadcast_to(ray, T.shape + (nw,)),
            "cia": cia, "g_weights": gw}
