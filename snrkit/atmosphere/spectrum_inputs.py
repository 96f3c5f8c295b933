"""The inputs of transmission_spectrum, checked: scenarios, planet arrays on one axis, grids."""

import numpy as np

from ..errors import InputError
from .mixture import wavelength_bin_edges

__all__ = ["DEFAULT_TOP_PRESSURE_PA"]

#: Default top of the model atmosphere [Pa] (1e-11 bar; high enough above the
#: strongest band centres of the presets at R = 1000).
DEFAULT_TOP_PRESSURE_PA = 1e-6


def _checked_scenarios(scenario):
    """(several given?, the loaded scenarios, their names), each with gases and a distinct name."""
    from .scenarios import load_scenario
    many = isinstance(scenario, (list, tuple))
    specs = list(scenario) if many else [scenario]
    if not specs:
        raise InputError("scenario", scenario, "at least one scenario")
    scenarios = [load_scenario(s) for s in specs]
    for sc in scenarios:
        if not sc.featureless and not sc.mixing_ratios:
            raise InputError(f"scenario {sc.name!r}: mixing_ratios", None,
                             "a table of species = volume mixing ratio (a spectrum needs the "
                             "gases, not only a mean molecular weight)")
    names = [s.name for s in scenarios]
    if len(set(names)) != len(names):
        raise InputError("scenario", names, "scenarios with distinct names")
    return many, scenarios, names


def _planet_arrays(planet_radius, stellar_radius, planet_mass, gravity, equilibrium_temperature,
                   semi_major_axis, refraction):
    """Planet radius, star radius [m], gravity [m s-2], Teq [K], a [m]: checked, one common axis."""
    import astropy.units as u
    from ..constants import G
    from ..units import to_si
    rp = np.atleast_1d(to_si(planet_radius, "planet_radius", u.earthRad, 0.0, None,
                             low_inclusive=False))
    rs = np.atleast_1d(to_si(stellar_radius, "stellar_radius", u.solRad, 0.0, None,
                             low_inclusive=False))
    if (planet_mass is None) == (gravity is None):
        raise InputError("planet_mass/gravity", None, "exactly one of planet_mass or gravity")
    if gravity is not None:
        g0 = np.atleast_1d(to_si(gravity, "gravity", u.m / u.s**2, 0.0, None, low_inclusive=False))
    else:
        mp = np.atleast_1d(to_si(planet_mass, "planet_mass", u.earthMass, 0.0, None,
                                 low_inclusive=False))
        g0 = G * mp / np.broadcast_to(rp, np.broadcast_shapes(rp.shape, mp.shape)) ** 2
    teq = (np.atleast_1d(to_si(equilibrium_temperature, "equilibrium_temperature", u.K, 0.0,
                               None, low_inclusive=False))
           if equilibrium_temperature is not None else np.array([np.nan]))
    a_m = (np.atleast_1d(to_si(semi_major_axis, "semi_major_axis", u.AU, 0.0, None,
                               low_inclusive=False))
           if semi_major_axis is not None else np.array([np.nan]))
    if refraction and semi_major_axis is None:
        raise InputError("semi_major_axis", None, "a distance (needed for refraction=True)")
    try:
        rp, rs, g0, teq, a_m = (np.array(v, dtype=np.float64) for v in
                                np.broadcast_arrays(rp, rs, g0, teq, a_m))
    except ValueError:
        raise InputError("planet arrays", "shapes " + ", ".join(
            str(np.shape(v)) for v in (rp, rs, g0, teq, a_m)), "arrays of one common length") from None
    if rp.ndim != 1:
        raise InputError("planet_radius", f"shape {rp.shape}", "a scalar or 1-D array")
    return rp, rs, g0, teq, a_m


def _grids(wavelength_edges, resolution, n_g, n_layers, top_pressure):
    """Wavelength bin edges [m], the number of layers and the top pressure [Pa], checked."""
    import astropy.units as u
    from ..units import to_si
    from .profiles import DEFAULT_N_LAYERS
    if wavelength_edges is None:
        edges = wavelength_bin_edges(resolution)
    else:
        edges = to_si(wavelength_edges, "wavelength_edges", u.um, 0.0, None, low_inclusive=False)
        if edges.ndim != 1 or edges.size < 2 or np.any(np.diff(edges) <= 0):
            raise InputError("wavelength_edges", f"{edges.size} values",
                             "at least 2 strictly increasing wavelengths")
    if isinstance(n_g, bool) or not isinstance(n_g, (int, np.integer)) or not 1 <= n_g <= 64:
        raise InputError("n_g", n_g, "an integer in [1, 64]")
    n_layers = DEFAULT_N_LAYERS if n_layers is None else n_layers
    p_top = (DEFAULT_TOP_PRESSURE_PA if top_pressure is None else
             float(to_si(top_pressure, "top_pressure", u.Pa, 0.0, None, low_inclusive=False)))
    return edges, n_layers, p_top
