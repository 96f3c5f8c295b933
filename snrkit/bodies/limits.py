"""The ranges of star and planet numbers: physical limits everywhere, usual ranges on system files."""

import contextvars

import numpy as np

from ..constants import R_SUN, M_SUN, R_EARTH, M_EARTH

__all__ = ["TEFF_RANGE_K", "BANDS", "DEFAULT_MEAN_MOLECULAR_WEIGHT", "KEPLER_TOLERANCE",
           "PLANET_RADIUS_MAX_EARTH", "LIMITS", "PLAUSIBLE", "allow_unusual", "check_plausible"]


#: Supported stellar effective temperatures [K] (the Planck/photometry layer
#: and the metrics are meaningful over this range).
TEFF_RANGE_K = (2000.0, 15000.0)
#: Photometric bands a star may carry magnitudes in.
BANDS = ("V", "J", "H", "Ks")
#: Mean molecular weight [g/mol] used when a planet has no atmosphere given
#: (solar H2/He; Kempton et al. 2018 use 2.3 for their TSM).
DEFAULT_MEAN_MOLECULAR_WEIGHT = 2.3
#: Relative difference between a given semi-major axis and Kepler's third
#: law (period, star + planet mass) above which System warns (common
#: practice, no source).
KEPLER_TOLERANCE = 0.10
#: Largest accepted planet radius [R_earth] (about 5.4 R_jup; larger values
#: are almost always a unit mistake).
PLANET_RADIUS_MAX_EARTH = 60.0
#: Accepted ranges of the sizes, masses and times of a system, in the default
#: unit of each field (closed intervals).  They lie far outside every known
#: transiting system, and they keep every derived quantity finite in float64
#: (a period of 1e300 d or a radius of 1e-300 R_earth is refused instead of
#: giving NaN or infinite outputs); common practice, no source.
LIMITS = {
    "planet.radius": (0.1, PLANET_RADIUS_MAX_EARTH),           # R_earth
    "planet.mass": (1e-4, 1e5),                                 # M_earth
    "planet.period": (0.01, 1e5),                               # d
    "planet.semi_major_axis": (1e-4, 1e4),                      # au
    "planet.radius_uncertainty": (0.0, PLANET_RADIUS_MAX_EARTH),  # R_earth
    "planet.mass_uncertainty": (0.0, 1e5),                      # M_earth
    "planet.period_uncertainty": (0.0, 1e5),                    # d
    "planet.transit_midtime_uncertainty": (0.0, 1e5),           # d
    "planet.impact_parameter": (0.0, 1e4),                      # stellar radii
    "planet.equilibrium_temperature": (1.0, 1e5),               # K
    "star.radius": (0.005, 100.0),                              # R_sun
    "star.mass": (0.005, 300.0),                                # M_sun
    "star.distance": (1e-3, 1e6),                               # pc
}


#: Ranges expected of a transiting planet and its host (common practice, no source):
#: a value outside is most often a unit mistake ("2.4 m" for a radius), so a system
#: file with one is refused unless unusual values are allowed (``--allow-unusual``,
#: :func:`allow_unusual`).  Radius 0.1 R_earth to 3 R_jup; mass up to 13 M_jup (the
#: deuterium-burning limit); surface gravity 0.5-1000 m s-2; hosts 0.08-100 R_sun
#: and 0.07-150 M_sun (the hydrogen-burning limit upwards).
PLAUSIBLE = {
    "planet.radius": (0.1, 33.6, "earthRad"),
    "planet.mass": (1e-3, 4130.0, "earthMass"),
    "planet.surface_gravity": (0.5, 1000.0, "m/s2"),
    "star.radius": (0.08, 100.0, "solRad"),
    "star.mass": (0.07, 150.0, "solMass"),
}

_ALLOW_UNUSUAL = contextvars.ContextVar("snrkit_allow_unusual", default=False)


def allow_unusual(allowed=True):
    """Context manager: accept values outside :data:`PLAUSIBLE` while it is active."""
    import contextlib

    @contextlib.contextmanager
    def ctx():
        token = _ALLOW_UNUSUAL.set(bool(allowed))
        try:
            yield
        finally:
            _ALLOW_UNUSUAL.reset(token)
    return ctx()


def check_plausible(system):
    """Refuse a system with a value outside :data:`PLAUSIBLE`, unless allowed.

    Raises
    ------
    snrkit.errors.UnusualValueError
        Naming the field and planet, the value and the expected range.
    """
    from ..errors import UnusualValueError
    if _ALLOW_UNUSUAL.get():
        return
    d = system.derived_arrays()
    names = [str(x) for x in system.names]
    measured = ~np.asarray(system.planet.mass_estimated, dtype=bool)
    values = {
        "planet.radius": d["radius_m"] / R_EARTH,
        "planet.mass": np.where(measured, d["mass_kg"] / M_EARTH, np.nan),
        "planet.surface_gravity": np.where(measured, d["surface_gravity_m_s2"], np.nan),
        "star.radius": np.broadcast_to(system.star.radius_m / R_SUN, (len(names),)),
        "star.mass": np.broadcast_to(system.star.mass_kg / M_SUN, (len(names),)),
    }
    for field, v in values.items():
        lo, hi, unit = PLAUSIBLE[field]
        bad = np.flatnonzero(np.isfinite(v) & ((v < lo) | (v > hi)))
        if bad.size:
            i = int(bad[0])
            raise UnusualValueError(f"{field} ({names[i]})", f"{float(v[i]):.4g} {unit}",
                                    f"[{lo:g}, {hi:g}] {unit}",
                                    detail="an unusual value, often a unit mistake; "
                                           "--allow-unusual lets it through")
