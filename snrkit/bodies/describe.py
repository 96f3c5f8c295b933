"""Describing a system: its inputs and derived quantities as plain records.

:func:`describe_system` is the public function behind ``snrkit describe``;
it returns dictionaries with unit-bearing key names, ready for JSON or a
printed table.  It performs no I/O.
"""

import numpy as np

from ..constants import R_SUN, M_SUN, R_EARTH, M_EARTH, AU, DAY, HOUR
from .system import derive

__all__ = ["describe_system", "PLANET_DERIVED_KEYS"]

#: derived per-planet keys, in display order: key -> (label, format)
PLANET_DERIVED_KEYS = {
    "mass_earth": ("mass [M_earth]", "{:.3f}"),
    "mass_estimated": ("mass estimated from radius", "{}"),
    "surface_gravity_m_s2": ("surface gravity [m/s^2]", "{:.2f}"),
    "semi_major_axis_au": ("semi-major axis [au]", "{:.5f}"),
    "a_over_rs": ("a / R_star", "{:.3f}"),
    "impact_parameter": ("impact parameter", "{:.3f}"),
    "inclination_deg": ("inclination [deg]", "{:.3f}"),
    "equilibrium_temperature_K": ("equilibrium temperature [K]", "{:.1f}"),
    "insolation_earth": ("insolation [S_earth]", "{:.4g}"),
    "transit_depth_ppm": ("transit depth [ppm]", "{:.1f}"),
    "t14_hours": ("T14 [h]", "{:.3f}"),
    "t23_hours": ("T23 [h]", "{:.3f}"),
    "mean_molecular_weight": ("mean molecular weight [g/mol]", "{:.3f}"),
    "atmosphere_temperature_K": ("atmosphere temperature [K]", "{:.1f}"),
    "scale_height_km": ("scale height [km]", "{:.2f}"),
    "annulus_ppm_per_scale_height": ("2 H Rp / Rs^2 [ppm]", "{:.2f}"),
    "tsm": ("TSM", "{:.2f}"),
    "esm": ("ESM", "{:.2f}"),
    "habitable_zone": ("habitable zone", "{}"),
}


def _f(x):
    x = float(x)
    return None if not np.isfinite(x) else x


def describe_system(system):
    """Inputs and derived quantities of every planet of a system.

    Parameters
    ----------
    system : snrkit.bodies.system.System

    Returns
    -------
    dict
        ``{"star": {...}, "planets": [{...}, ...]}``; key names carry their
        units (``t14_hours``, ``scale_height_km`` ...).  Missing values are
        ``None``.  The star's inputs are those of the first planet's host
        (a system file has one star).
    """
    d = derive(system)
    s, p = system.star, system.planet
    star = {
        "name": None if s.name is None else str(s.name[0]),
        "effective_temperature_K": _f(s.teff_K[0]),
        "radius_solar": _f(s.radius_m[0] / R_SUN),
        "mass_solar": _f(s.mass_kg[0] / M_SUN),
        "log_gravity_cgs": _f(s.logg[0]),
        "mass_from_log_gravity": bool(s.mass_from_logg),
        "metallicity_dex": _f(s.metallicity[0]),
        "distance_pc": _f(s.distance.value[0]),
        "right_ascension_deg": _f(s.ra.value[0]),
        "declination_deg": _f(s.dec.value[0]),
        "magnitudes": {b: _f(v[0]) for b, v in s.magnitudes.items()},
    }
    planets = []
    for i in range(len(system)):
        rec = {
            "name": str(p.name[i]),
            "radius_earth": _f(p.radius_m[i] / R_EARTH),
            "period_days": _f(p.period_s[i] / DAY),
            "radius_uncertainty_earth": _f(p._radius_sigma[i] / R_EARTH),
            "mass_uncertainty_earth": _f(d["mass_uncertainty_kg"][i] / M_EARTH),
            "eccentricity": _f(p.eccentricity[i]),
            "periastron_argument_deg": _f(np.degrees(p._omega[i])),
            "impact_parameter_assumed": bool(p.impact_parameter_assumed[i]),
            "transit_midtime_bjd_tdb": _f(p.transit_midtime[i]),
            "transit_midtime_uncertainty_days": _f(p._t0_sigma[i] / DAY),
            "period_uncertainty_days": _f(p._p_sigma[i] / DAY),
            "albedo": _f(p.albedo[i]),
            "redistribution": _f(p.redistribution[i]),
            "mass_earth": _f(d["mass_kg"][i] / M_EARTH),
            "mass_estimated": bool(d["mass_estimated"][i]),
            "surface_gravity_m_s2": _f(d["surface_gravity_m_s2"][i]),
            "semi_major_axis_au": _f(d["semi_major_axis_m"][i] / AU),
            "a_over_rs": _f(d["a_over_rs"][i]),
            "impact_parameter": _f(d["impact_parameter"][i]),
            "inclination_deg": _f(np.degrees(d["inclination_rad"][i])),
            "equilibrium_temperature_K": _f(d["equilibrium_temperature_K"][i]),
            "insolation_earth": _f(d["insolation_earth"][i]),
            "transit_depth_ppm": _f(d["transit_depth"][i] * 1e6),
            "t14_hours": _f(d["t14_s"][i] / HOUR),
            "t23_hours": _f(d["t23_s"][i] / HOUR),
            "grazing": bool(system.grazing[i]),
            "mean_molecular_weight": _f(d["mean_molecular_weight"][i]),
            "atmosphere_temperature_K": _f(d["atmosphere_temperature_K"][i]),
            "scale_height_km": _f(d["scale_height_m"][i] / 1e3),
            "annulus_ppm_per_scale_height": _f(d["annulus"][i] * 1e6),
            "tsm": _f(d["tsm"][i]),
            "esm": _f(d["esm"][i]),
            "habitable_zone": str(d["hz_position"][i]),
            "habitable_zone_limits_earth": {lim: _f(d[f"hz_{lim}"][i]) for lim in
                                            ("recent_venus", "runaway_greenhouse",
                                             "maximum_greenhouse", "early_mars")},
        }
        planets.append(rec)
    return {"star": star, "planets": planets}
