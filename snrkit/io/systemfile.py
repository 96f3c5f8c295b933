"""System files: a TOML description of one star and its planets.

Layout (every key is optional unless marked required)::

    [star]
    name = "Cedar"
    effective_temperature = 2900        # K (required)
    radius = 0.15                       # solar radii (required)
    mass = 0.13                         # solar masses (or log_gravity, cgs dex)
    metallicity = 0.0                   # [Fe/H], dex
    distance = "15 pc"
    right_ascension = 150.1             # deg, ICRS
    declination = -20.5                 # deg, ICRS
    [star.magnitudes]
    J = 10.5
    Ks = 9.6

    [[planet]]
    name = "Cedar b"                    # required, unique
    radius = "1.2 earthRad"             # Earth radii (required)
    period = "3.1 d"                    # days (required)
    mass = 1.6                          # Earth masses; omit to estimate
    mass_uncertainty = 0.3
    impact_parameter = 0.2              # or inclination (deg)
    transit_midtime = 2461000.25        # BJD_TDB
    [planet.atmosphere]                 # this planet's atmosphere scenario
    scenario = "n2-o2-temperate"        # a preset (snrkit presets) ...
    cloud_top_pressure = 0.1            # ... with overrides (bar), or a full
                                        # description: mixing_ratios, fill_gas, ...

Numbers are read in the documented default unit of their key; strings
such as ``"1.2 earthRad"`` or ``"3.1 d"`` carry an astropy unit, which must
have the right dimension.  Unknown keys are errors that suggest the
closest valid key.
"""

from __future__ import annotations

import difflib
import os
import warnings
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from ..errors import InputError, UnknownKeyError
from ..units import PathLike, parse_number, scalar_si
from .tomlfile import read_toml, loads_toml
from ..bodies.limits import BANDS
from ..bodies.planet import Planet
from ..bodies.star import Star
from ..bodies.system import System

__all__ = ["load_system", "read_system_text", "STAR_KEYS", "PLANET_KEYS", "OBSERVATION_KEYS", "TOP_KEYS",
           "OVERHEAD_MAX_HOURS"]

if TYPE_CHECKING:   # annotations only: not imported at run time
    from collections.abc import Sequence


TOP_KEYS = {"star": "table", "planet": "array of tables", "title": "text", "notes": "text"}

#: star key -> (Star argument, default unit or kind)
STAR_KEYS = {
    "name": ("name", "text"),
    "effective_temperature": ("teff", "K"),
    "radius": ("radius", "solRad"),
    "mass": ("mass", "solMass"),
    "log_gravity": ("logg", "dex (cgs)"),
    "metallicity": ("metallicity", "dex"),
    "distance": ("distance", "pc"),
    "right_ascension": ("ra", "deg"),
    "declination": ("dec", "deg"),
    "magnitudes": ("magnitudes", "table of band = magnitude"),
}

#: planet key -> (Planet argument, default unit or kind)
PLANET_KEYS = {
    "name": ("name", "text"),
    "radius": ("radius", "earthRad"),
    "period": ("period", "d"),
    "mass": ("mass", "earthMass"),
    "mass_uncertainty": ("mass_uncertainty", "earthMass"),
    "radius_uncertainty": ("radius_uncertainty", "earthRad"),
    "semi_major_axis": ("semi_major_axis", "AU"),
    "impact_parameter": ("impact_parameter", "stellar radii"),
    "inclination": ("inclination", "deg"),
    "eccentricity": ("eccentricity", "number"),
    "periastron_argument": ("periastron_argument", "deg"),
    "transit_midtime": ("transit_midtime", "BJD_TDB"),
    "transit_midtime_uncertainty": ("transit_midtime_uncertainty", "d"),
    "period_uncertainty": ("period_uncertainty", "d"),
    "albedo": ("albedo", "number"),
    "redistribution": ("redistribution", "number (1/4 full, 2/3 dayside)"),
    "atmosphere": (None, "table"),
    "observation": (None, "table"),
}


def _atmosphere_keys():
    """Keys of a planet's [planet.atmosphere] table: the scenario keys.

    The table is a scenario description (:mod:`snrkit.atmosphere.scenarios`):
    a preset named by ``scenario`` with optional overrides, or a full
    description of its own.
    """
    from ..atmosphere.scenarios import SCENARIO_KEYS
    return SCENARIO_KEYS


#: keys of a planet's [planet.observation] table (read by the noise layers).
OBSERVATION_KEYS = {
    "mode": "instrument mode preset or file",
    "transits": "number of transits",
    "in_transit": "'weighted' (default, (T14 + 2 T23) / 3), 't14', 't23' or a duration in h",
    "baseline": "out-of-transit time: multiple of T14, or a duration in h",
    "readout_groups": "groups per integration, or 'auto'",
    "noise_floor": "ppm",
    "floor_averages_down": "true/false (a TOML boolean)",
    "overhead": "h per visit, in [0, 100]",
}


#: Largest overhead per visit [h] (the limit the transit commands apply).
OVERHEAD_MAX_HOURS = 100.0


def _observation_table(ob, name):
    """Each [planet.observation] key read with its own type and range.

    Numbers and durations are returned as floats (hours for durations given
    as text with a unit, or bare numbers for ``in_transit``); text choices in
    lower case.  ``floor_averages_down`` must be a TOML boolean: the text
    "no" is refused rather than read as true.
    """
    import astropy.units as u
    out = {}
    for key, v in ob.items():
        field = f"planet.observation.{key} ({name})"
        if key == "mode":
            if not isinstance(v, str) or not v.strip():
                raise InputError(field, v, "an instrument mode preset name or mode file")
            out[key] = v.strip()
        elif key == "transits":
            out[key] = parse_number(v, field, 1, 100000, integer=True)
        elif key == "in_transit":
            if isinstance(v, str) and v.strip().lower() in ("t14", "t23"):
                out[key] = v.strip().lower()
            else:
                out[key] = scalar_si(v, field, u.h, 0.0, 1000.0, low_inclusive=False) / 3600.0
        elif key == "baseline":
            if isinstance(v, str):
                out[key] = f"{scalar_si(v, field, u.h, 0.0, 1000.0, low_inclusive=False) / 3600.0!r} h"
            else:
                out[key] = parse_number(v, field, 0.0, 1000.0, low_inclusive=False,
                                        unit_label="x T14")
        elif key == "readout_groups":
            out[key] = "auto" if v == "auto" else parse_number(v, field, 1, 100000, integer=True)
        elif key == "noise_floor":
            out[key] = parse_number(v, field, 0.0, 1e6, unit_label="ppm")
        elif key == "floor_averages_down":
            if not isinstance(v, bool):
                raise InputError(field, v, "true or false (a TOML boolean, not text)")
            out[key] = v
        elif key == "overhead":
            out[key] = scalar_si(v, field, u.h, 0.0, OVERHEAD_MAX_HOURS) / 3600.0
    return out


def _check_keys(table, allowed, where):
    for key in table:
        if key not in allowed:
            close = difflib.get_close_matches(str(key), list(allowed), n=1, cutoff=0.5)
            hint = f"did you mean {close[0]!r}?" if close else ""
            raise UnknownKeyError(f"{where}.{key}", table[key],
                                  "keys " + ", ".join(allowed), detail=hint)


def _check_scalar(value, field):
    """A system file describes one star and one planet per entry: no arrays."""
    if isinstance(value, (list, dict)):
        raise InputError(field, value, "one value: a number or a '<number> <unit>' text")


def _star_from_table(tbl, source):
    if not isinstance(tbl, dict):
        raise InputError("star", tbl, "a [star] table")
    _check_keys(tbl, STAR_KEYS, "star")
    for req in ("effective_temperature", "radius"):
        if req not in tbl:
            raise InputError(f"star.{req}", None, f"a value ({STAR_KEYS[req][1]})",
                             detail=f"required in {source}")
    kwargs = {}
    for key, value in tbl.items():
        arg = STAR_KEYS[key][0]
        if key == "magnitudes":
            if not isinstance(value, dict):
                raise InputError("star.magnitudes", value, "a table such as { J = 9.1, Ks = 8.7 }")
            _check_keys(value, {b: None for b in BANDS}, "star.magnitudes")
            for band, mag in value.items():
                _check_scalar(mag, f"star.magnitudes.{band}")
        else:
            _check_scalar(value, f"star.{key}")
        kwargs[arg] = value
    return Star(**kwargs)


def _atmosphere_summary(atm, where):
    """(mu [g/mol], fixed temperature [K] or NaN, temperature factor) of an atmosphere table."""
    if atm is None:
        return np.nan, np.nan, 1.0
    if not isinstance(atm, dict):
        raise InputError(where, atm, "a table")
    from ..atmosphere.scenarios import load_scenario
    sc = load_scenario(atm, field=where)
    mu = sc.mean_molecular_weight if np.isfinite(sc.mean_molecular_weight) else np.nan
    temp = np.nan if sc.temperature_K is None else float(sc.temperature_K)
    return float(mu), temp, float(sc.temperature_factor)


def read_system_text(text: str, source: str = "<text>") -> System:
    """Build a :class:`~snrkit.bodies.system.System` from system-file text.

    Parameters
    ----------
    text : str
        TOML text in the system-file layout (see module docstring).
    source : str
        Name of the file, for messages.

    Returns
    -------
    System
    """
    return _system_from_doc(_parse(text, source), source)


def _parse(text, source):
    return loads_toml(text, "SYSTEM", source)


def _system_from_doc(doc, source):
    _check_keys(doc, TOP_KEYS, "file")
    if "star" not in doc:
        raise InputError("star", None, "a [star] table", detail=f"missing in {source}")
    planets = doc.get("planet")
    if not planets or not isinstance(planets, list):
        raise InputError("planet", planets, "one or more [[planet]] tables",
                         detail=f"missing in {source}")
    star = _star_from_table(doc["star"], source)
    names = []
    mus, temps, factors, atms, obs = [], [], [], [], []
    for i, tbl in enumerate(planets):
        if not isinstance(tbl, dict):
            raise InputError(f"planet[{i}]", tbl, "a table")
        _check_keys(tbl, PLANET_KEYS, f"planet[{i}]")
        name = tbl.get("name")
        if not isinstance(name, str) or not name.strip():
            raise InputError(f"planet[{i}].name", name, "a non-empty text name")
        if name in names:
            raise InputError(f"planet[{i}].name", name, "a name not used by another planet")
        names.append(name)
        for key, value in tbl.items():
            if PLANET_KEYS[key][0] is not None:
                _check_scalar(value, f"planet.{key} ({name})")
        for req in ("radius", "period"):
            if req not in tbl:
                raise InputError(f"planet.{req} ({name})", None,
                                 f"a value ({PLANET_KEYS[req][1]})")
        mu, temp, factor = _atmosphere_summary(tbl.get("atmosphere"), f"planet.atmosphere ({name})")
        mus.append(mu)
        temps.append(temp)
        factors.append(factor)
        atms.append(tbl.get("atmosphere"))
        ob = tbl.get("observation")
        if ob is not None:
            if not isinstance(ob, dict):
                raise InputError(f"planet.observation ({name})", ob, "a table")
            _check_keys(ob, OBSERVATION_KEYS, f"planet.observation ({name})")
            ob = _observation_table(ob, name)
        obs.append(ob)
    # Build one Planet per entry (validation names the planet), then stack.
    singles = []
    for tbl, name in zip(planets, names):
        kwargs = {PLANET_KEYS[k][0]: v for k, v in tbl.items()
                  if PLANET_KEYS[k][0] is not None}
        try:
            singles.append(Planet(**kwargs))
        except InputError as exc:
            raise type(exc)(f"{exc.field} ({name})", exc.value, exc.allowed, exc.detail) from None
    planet = _stack_planets(singles)
    system = System(star, planet, mean_molecular_weight=np.array(mus),
                    atmosphere_temperature=np.array(temps),
                    atmosphere_temperature_factor=np.array(factors),
                    atmospheres=atms, observations=obs, warn_kepler=True)
    from ..bodies.limits import check_plausible
    check_plausible(system)            # unusual values (often a unit mistake) refused
    return system


def _stack_planets(singles):
    """Concatenate single-planet objects into one (values are re-validated)."""
    import astropy.units as u
    cat = lambda attr: np.concatenate([getattr(p, attr) for p in singles])  # noqa: E731
    est = cat("_mass_est")
    assumed = cat("_b_assumed")
    return Planet(cat("_radius") * u.m, cat("_period") * u.s,
                  mass=np.where(est, np.nan, cat("_mass")) * u.kg,
                  mass_uncertainty=np.where(est, np.nan, cat("_mass_sigma")) * u.kg,
                  radius_uncertainty=cat("_radius_sigma") * u.m,
                  semi_major_axis=cat("_a") * u.m,
                  impact_parameter=np.where(assumed, np.nan, cat("_b")),
                  inclination=cat("_inc") * u.rad,
                  eccentricity=cat("_ecc"), periastron_argument=cat("_omega") * u.rad,
                  transit_midtime=cat("_t0"), transit_midtime_uncertainty=cat("_t0_sigma") * u.s,
                  period_uncertainty=cat("_p_sigma") * u.s, albedo=cat("_albedo"),
                  redistribution=cat("_redist"), name=cat("_name"))


def load_system(path: PathLike, planet: str | Sequence[str] | None = None) -> System:
    """Read a system file.

    Parameters
    ----------
    path : str or pathlib.Path
        The TOML system file.
    planet : str, optional
        Keep only the planet of this name.

    Returns
    -------
    System
    """
    path = Path(path)
    doc = read_toml(path, "SYSTEM", "an existing system file")
    _resolve_scenario_paths(doc, path.parent)
    if planet is None:
        return _system_from_doc(doc, str(path))
    # Validate the whole file quietly (errors anywhere in it are errors), then
    # build only the chosen planet, so that warnings are about it alone.
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        _system_from_doc(doc, str(path)).select(planet)
    doc["planet"] = [p for p in doc["planet"] if p.get("name") == planet]
    return _system_from_doc(doc, str(path))


def _resolve_scenario_paths(doc, folder):
    """Make a relative ``[planet.atmosphere] scenario`` path relative to the file's folder.

    A preset name is left alone; a relative path that names a file next to the
    system file is replaced by that file's path, so that the system file reads
    the same from any working folder.
    """
    from ..atmosphere.scenarios import preset_names
    planets = doc.get("planet")
    if not isinstance(planets, list):
        return
    for tbl in planets:
        atm = tbl.get("atmosphere") if isinstance(tbl, dict) else None
        spec = atm.get("scenario") if isinstance(atm, dict) else None
        if not isinstance(spec, str) or spec in preset_names():
            continue
        p = Path(spec).expanduser()
        if p.is_absolute() or len(os.fsencode(spec)) > 4095:
            continue
        atm["scenario"] = str(Path(folder) / p)
