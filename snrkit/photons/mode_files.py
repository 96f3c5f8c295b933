"""Instrument mode files: every table and key read, checked and turned into a Mode."""

from functools import lru_cache
from pathlib import Path

import numpy as np
import astropy.units as u

from ..errors import InputError, UnknownKeyError
from ..units import to_si, check_range, as_float_array, parse_number, scalar_si
from .mode import DEFAULT_FLOOR_REFERENCE_RESOLUTION, _SCHEMA, _SCHEMES, Curve, Mode

__all__ = ["parse_mode"]


def _load_path(path):
    # the cache key includes the file's modification time and size, so a mode file
    # edited during a session (a notebook) is read again instead of served stale
    st = Path(path).stat()
    return _load_file(str(path), st.st_mtime_ns, st.st_size)


@lru_cache(maxsize=64)
def _load_file(path, mtime_ns=None, size=None):
    from ..io.tomlfile import read_toml
    data = read_toml(path, "mode", "an existing mode file (.toml)")
    return parse_mode(data, path=path)


def _curve(value, field, low, high, lam_range):
    if isinstance(value, dict):
        extra = set(value) - {"wavelength_um", "value"}
        if extra:
            raise UnknownKeyError(f"{field}.{sorted(extra)[0]}", value[sorted(extra)[0]],
                                  "keys wavelength_um and value")
        for k in ("wavelength_um", "value"):
            if k not in value:
                raise InputError(f"{field}.{k}", None, "a list of numbers",
                                 detail="required key missing")
        for k in ("wavelength_um", "value"):
            if not _numeric_list(value[k]):
                raise InputError(f"{field}.{k}", value[k], "a list of numbers")
        lam = np.atleast_1d(to_si(value["wavelength_um"], f"{field}.wavelength_um",
                                  u.um, 0.0, None, low_inclusive=False))
        val = np.atleast_1d(check_range(as_float_array(value["value"], f"{field}.value"),
                                        f"{field}.value", low, high))
        if lam.ndim != 1 or lam.shape != val.shape or lam.size < 2:
            raise InputError(field, value, "wavelength_um and value lists of equal "
                             "length (at least 2)")
        if np.any(np.diff(lam) <= 0):
            raise InputError(f"{field}.wavelength_um", value["wavelength_um"],
                             "strictly increasing wavelengths")
        lo, hi = lam_range
        if lam[0] > lo * (1 + 1e-9) or lam[-1] < hi * (1 - 1e-9):
            raise InputError(f"{field}.wavelength_um",
                             f"{lam[0]*1e6:.4g}-{lam[-1]*1e6:.4g} um",
                             f"a table covering the mode range {lo*1e6:.4g}-{hi*1e6:.4g} um")
        return Curve(lam, val)
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(field, value, "a number or {wavelength_um = [...], value = [...]}")
    x = parse_number(value, field)
    check_range(x, field, low, high)
    return Curve(np.zeros(0), np.array([x]))


def _numeric_list(v):
    return isinstance(v, list) and all(isinstance(x, (int, float)) and not isinstance(x, bool)
                                       for x in v)


def parse_mode(data, path="<mapping>"):
    """Validate a mode mapping (as read from TOML) and build a :class:`Mode`.

    Parameters
    ----------
    data : dict
        The parsed TOML document.
    path : str
        Where it came from (for messages).
    """
    sources = _top_level(data, path)
    vals, lam_range = _section_values(data, path)
    area = _collecting_area(vals, path)
    scheme, min_g, max_g, fixed = _readout_settings(vals, path)
    nan = float("nan")
    const0 = Curve(np.zeros(0), np.array([nan]))
    return Mode(
        name=data["name"].strip(), description=data["description"].strip(),
        area_m2=float(area),
        wavelength_min_m=lam_range[0], wavelength_max_m=lam_range[1],
        resolving_power=vals["spectrograph.resolving_power"],
        throughput=vals["spectrograph.throughput"],
        pixels_per_resel=vals["spectrograph.pixels_per_resolution_element"],
        extraction_width=vals["spectrograph.extraction_width_pixels"],
        brightest_pixel_fraction=vals.get("spectrograph.brightest_pixel_fraction", const0),
        full_well=vals.get("detector.full_well_electrons", nan),
        usable_well_fraction=vals.get("detector.usable_well_fraction", nan),
        read_noise=vals["detector.read_noise_electrons"],
        dark_rate=vals["detector.dark_current_electrons_per_s"],
        background_rate=vals["detector.background_electrons_per_s"],
        scheme=scheme,
        frame_time_s=vals.get("readout.frame_time_s", nan),
        frames_per_group=vals.get("readout.frames_per_group", 1),
        resets_per_integration=vals.get("readout.resets_per_integration", 1),
        min_groups=min_g, max_groups=max_g, groups_per_integration=fixed,
        exposure_time_s=vals.get("readout.exposure_time_s", nan),
        reads_per_exposure=vals.get("readout.reads_per_exposure", 2),
        scan_duty_cycle=vals.get("readout.duty_cycle", nan),
        floor_ppm=vals["systematics.floor_ppm"],
        floor_averages_down=vals.get("systematics.floor_averages_down", False),
        floor_reference_resolution=vals.get("systematics.floor_reference_resolution",
                                            DEFAULT_FLOOR_REFERENCE_RESOLUTION),
        sources={str(k): str(v) for k, v in sources.items()},
        path=path,
    )


def _top_level(data, path):
    """Check the top-level keys, name and description; return the [sources] table."""
    allowed_top = {"name", "description", "sources", *_SCHEMA}
    for key in data:
        if key not in allowed_top:
            raise UnknownKeyError(key, data[key], "top-level keys " + ", ".join(sorted(allowed_top)))
    for key in ("name", "description"):
        if not isinstance(data.get(key), str) or not data[key].strip():
            raise InputError(key, data.get(key), "a non-empty text", detail=f"in {path}")
    sources = data.get("sources", {})
    if not isinstance(sources, dict):
        raise InputError("sources", sources, "a table of text entries")
    return sources


def _section_values(data, path):
    """Every key of every table, checked and in SI: {"table.key": value}, and the range [m]."""
    vals = {}
    spectro = data.get("spectrograph", {})
    lam_range = None
    for table, keys in _SCHEMA.items():
        section = data.get(table, {})
        if not isinstance(section, dict):
            raise InputError(table, section, f"a [{table}] table")
        for key in section:
            if key not in keys:
                raise UnknownKeyError(f"{table}.{key}", section[key],
                                      f"keys of [{table}]: " + ", ".join(keys))
        if table == "spectrograph":
            lam_range = _spectral_range(spectro, path)
        for key, (kind, unit, low, high, required) in keys.items():
            fname = f"{table}.{key}"
            if key not in section:
                if required:
                    raise InputError(fname, None, _describe(kind, unit, low, high),
                                     detail=f"required key missing in {path}")
                continue
            vals[fname] = _value(kind, section[key], fname, unit, low, high, lam_range)
    return vals, lam_range


def _spectral_range(spectro, path):
    """(shortest, longest) wavelength [m] of the spectrograph."""
    for k in ("wavelength_min_um", "wavelength_max_um"):
        if k not in spectro:
            raise InputError(f"spectrograph.{k}", None, "a wavelength in um",
                             detail=f"required key missing in {path}")
    lo = scalar_si(spectro["wavelength_min_um"], "spectrograph.wavelength_min_um",
                   u.um, 0.05, 1000.0)
    hi = scalar_si(spectro["wavelength_max_um"], "spectrograph.wavelength_max_um",
                   u.um, 0.05, 1000.0)
    if hi <= lo:
        raise InputError("spectrograph.wavelength_max_um", hi * 1e6,
                         f"greater than wavelength_min_um = {lo*1e6:.4g} um")
    return (lo, hi)


def _value(kind, v, fname, unit, low, high, lam_range):
    """One key's value, checked against its kind and range."""
    if kind == "num":
        if isinstance(v, bool) or not isinstance(v, (int, float, str)):
            raise InputError(fname, v, _describe(kind, unit, low, high))
        return scalar_si(v, fname, unit or u.dimensionless_unscaled, low, high)
    elif kind == "int":
        if isinstance(v, bool) or not isinstance(v, int):
            raise InputError(fname, v, _describe(kind, unit, low, high))
        check_range(parse_number(v, fname, integer=True), fname, low, high)
        return int(v)
    elif kind == "groups":
        if v == "auto":
            return None
        elif isinstance(v, int) and not isinstance(v, bool):
            check_range(parse_number(v, fname, integer=True), fname, low, high)
            return int(v)
        else:
            raise InputError(fname, v, "\"auto\" or a whole number >= 2")
    elif kind == "curve":
        return _curve(v, fname, low, high, lam_range)
    elif kind == "bool":
        if not isinstance(v, bool):
            raise InputError(fname, v, "true or false")
        return v
    elif kind == "text":
        if v not in _SCHEMES:
            raise InputError(fname, v, "one of " + ", ".join(_SCHEMES))
        return v


def _collecting_area(vals, path):
    """Collecting area [m2] from collecting_area_m2, or from diameter_m and the obscured fraction."""
    if "telescope.collecting_area_m2" in vals:
        if "telescope.diameter_m" in vals:
            raise InputError("telescope", "collecting_area_m2 and diameter_m",
                             "only one of collecting_area_m2 or diameter_m")
        area = vals["telescope.collecting_area_m2"]
    elif "telescope.diameter_m" in vals:
        d = vals["telescope.diameter_m"]
        area = np.pi * d**2 / 4.0 * (1.0 - vals.get("telescope.obscured_area_fraction", 0.0))
    else:
        raise InputError("telescope.collecting_area_m2", None,
                         "an area in m2 (or telescope.diameter_m)",
                         detail=f"required key missing in {path}")
    if area <= 0:
        raise InputError("telescope.collecting_area_m2", area, "a positive area")

    return area


def _readout_settings(vals, path):
    """The readout scheme, its required keys, and the range of groups per integration."""
    scheme = vals["readout.scheme"]
    need = (["readout.frame_time_s", "detector.full_well_electrons",
             "detector.usable_well_fraction", "spectrograph.brightest_pixel_fraction"]
            if scheme == "up-the-ramp" else
            ["readout.exposure_time_s", "readout.reads_per_exposure", "readout.duty_cycle"])
    for fname in need:
        if fname not in vals:
            table, key = fname.split(".")
            kind, unit, low, high, _ = _SCHEMA[table][key]
            raise InputError(fname, None, _describe(kind, unit, low, high),
                             detail=f"required for readout.scheme = \"{scheme}\" in {path}")
    for fname in ("readout.frame_time_s", "readout.exposure_time_s"):
        if fname in vals and vals[fname] <= 0:
            raise InputError(fname, vals[fname], "a positive time in s")
    if "readout.duty_cycle" in vals and vals["readout.duty_cycle"] <= 0:
        raise InputError("readout.duty_cycle", vals["readout.duty_cycle"],
                         "a fraction in (0, 1] (no light is collected at 0)")
    min_g = vals.get("readout.min_groups", 2)
    max_g = vals.get("readout.max_groups", 100)
    if max_g < min_g:
        raise InputError("readout.max_groups", max_g, f">= readout.min_groups = {min_g}")
    fixed = vals.get("readout.groups_per_integration")
    if fixed is not None and not (min_g <= fixed <= max_g):
        raise InputError("readout.groups_per_integration", fixed,
                         f"between min_groups = {min_g} and max_groups = {max_g}")
    return scheme, min_g, max_g, fixed


def _describe(kind, unit, low, high):
    if kind == "curve":
        return f"a number in [{low}, {high}] or {{wavelength_um = [...], value = [...]}}"
    if kind == "int":
        return f"a whole number in [{low}, {high}]"
    if kind == "bool":
        return "true or false"
    if kind == "text":
        return "one of " + ", ".join(_SCHEMES)
    hi = "inf" if high is None else f"{high:g}"
    return f"a number in [{low:g}, {hi}]" + (f" {unit}" if unit is not None else "")
