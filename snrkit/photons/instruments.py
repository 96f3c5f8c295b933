"""Instrument mode profiles: TOML files describing telescope, spectrograph and detector.

A mode file (shipped presets live in ``data_tables/instruments/``; users can
write their own) has these tables and keys.  A key ending in a unit
(``_um``, ``_s``, ``_m2``) takes a number in that unit or a string with its
own unit (``"25 m2"``).  Keys marked *table* take a number or an inline table
``{wavelength_um = [...], value = [...]}`` interpolated linearly in
wavelength; a table must cover the mode's wavelength range.

``name``, ``description``
    Preset name and one-line description (text).
``[telescope]``
    ``collecting_area_m2``, or ``diameter_m`` with optional
    ``obscured_area_fraction`` (fraction of the full disc's area blocked).
``[spectrograph]``
    ``wavelength_min_um``, ``wavelength_max_um``; ``resolving_power``
    (table, lambda / delta-lambda of one resolution element);
    ``throughput`` (table, total system efficiency in electrons per photon
    at the telescope, in [0, 1]); ``pixels_per_resolution_element`` (along
    the dispersion); ``extraction_width_pixels`` (across it); and
    ``brightest_pixel_fraction`` (table, fraction of one resolution
    element's light that falls in its brightest pixel; required for
    ``up-the-ramp`` readout).
``[detector]``
    ``full_well_electrons``, ``usable_well_fraction`` (up-the-ramp only),
    ``read_noise_electrons`` (per read), ``dark_current_electrons_per_s``
    (per pixel), ``background_electrons_per_s`` (table, sky or thermal
    background per pixel).
``[readout]``
    ``scheme = "up-the-ramp"``: ``frame_time_s``, optional
    ``frames_per_group`` (1), ``resets_per_integration`` (1),
    ``min_groups`` (2), ``max_groups`` (100), ``groups_per_integration``
    (``"auto"`` or a whole number); group counts are at least 2, since an
    integration collects light for ``(n_groups - 1)`` group times.
    ``scheme = "scan"`` (the source is trailed across the detector during
    each exposure, so no pixel saturates): ``exposure_time_s``,
    ``reads_per_exposure``, ``duty_cycle`` (fraction of the elapsed time
    spent collecting light, including any scheduling gaps).
``[systematics]``
    ``floor_ppm`` (per transit, in a bin of resolving power
    ``floor_reference_resolution``), optional ``floor_reference_resolution``
    (default :data:`DEFAULT_FLOOR_REFERENCE_RESOLUTION`), optional
    ``floor_averages_down`` (false).
``[sources]``
    Free text, one entry per numeric key above (``"detector.read_noise_electrons" =
    "..."``), naming the published source or saying "value from memory" or
    "common practice, no source".  Required in shipped presets (tested),
    optional in user files.
"""

from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path

import numpy as np
import astropy.units as u

from ..errors import InputError, UnknownKeyError
from ..units import to_si, check_range, as_float_array, parse_number, scalar_si

__all__ = ["DEFAULT_FLOOR_REFERENCE_RESOLUTION", "Mode", "Curve", "load_mode", "mode_names",
           "list_modes", "parse_mode"]

#: Resolving power of the bin in which a mode's floor applies when its file
#: does not say (floors are usually quoted for spectral channels of R ~ 100;
#: common practice, no source).
DEFAULT_FLOOR_REFERENCE_RESOLUTION = 100.0

_SCHEMES = ("up-the-ramp", "scan")

# table -> {key: (kind, unit, low, high, required)}; kind "num", "int", "curve", "text", "bool"
_SCHEMA = {
    "telescope": {
        "collecting_area_m2": ("num", u.m**2, 0.0, None, False),
        "diameter_m": ("num", u.m, 0.0, None, False),
        "obscured_area_fraction": ("num", None, 0.0, 0.99, False),
    },
    "spectrograph": {
        "wavelength_min_um": ("num", u.um, 0.05, 1000.0, True),
        "wavelength_max_um": ("num", u.um, 0.05, 1000.0, True),
        "resolving_power": ("curve", None, 1.0, 1.0e6, True),
        "throughput": ("curve", None, 0.0, 1.0, True),
        "pixels_per_resolution_element": ("num", None, 0.1, 1000.0, True),
        "extraction_width_pixels": ("num", None, 1.0, 1.0e5, True),
        "brightest_pixel_fraction": ("curve", None, 0.0, 1.0, False),
    },
    "detector": {
        "full_well_electrons": ("num", None, 1.0, 1.0e9, False),
        "usable_well_fraction": ("num", None, 0.01, 1.0, False),
        "read_noise_electrons": ("num", None, 0.0, 1.0e4, True),
        "dark_current_electrons_per_s": ("num", None, 0.0, 1.0e6, True),
        "background_electrons_per_s": ("curve", None, 0.0, 1.0e9, True),
    },
    "readout": {
        "scheme": ("text", None, None, None, True),
        "frame_time_s": ("num", u.s, 0.0, 1.0e5, False),
        "frames_per_group": ("int", None, 1, 10000, False),
        "resets_per_integration": ("int", None, 0, 100, False),
        # at least two groups: the light-collecting time of an integration is
        # (n_groups - 1) t_group, so one group collects nothing
        "min_groups": ("int", None, 2, 100000, False),
        "max_groups": ("int", None, 2, 100000, False),
        "groups_per_integration": ("groups", None, 2, 100000, False),
        "exposure_time_s": ("num", u.s, 0.0, 1.0e5, False),
        "reads_per_exposure": ("int", None, 2, 100000, False),
        "duty_cycle": ("num", None, 0.0, 1.0, False),
    },
    "systematics": {
        "floor_ppm": ("num", None, 0.0, 1.0e6, True),
        "floor_reference_resolution": ("num", None, 1.0, 1.0e6, False),
        "floor_averages_down": ("bool", None, None, None, False),
    },
}


@dataclass(frozen=True)
class Curve:
    """A quantity that is constant or tabulated against wavelength.

    Attributes
    ----------
    wavelength_m : numpy.ndarray
        Table wavelengths [m] (empty for a constant).
    value : numpy.ndarray
        Table values (one value for a constant).
    """

    wavelength_m: np.ndarray
    value: np.ndarray

    def __post_init__(self):
        # Modes are cached and shared between callers: make the tables immutable
        for name in ("wavelength_m", "value"):
            arr = np.array(getattr(self, name), dtype=np.float64)
            arr.setflags(write=False)
            object.__setattr__(self, name, arr)

    def __call__(self, wavelength_m):
        """Value at ``wavelength_m`` (linear interpolation in wavelength)."""
        lam = np.asarray(wavelength_m, dtype=np.float64)
        if self.wavelength_m.size == 0:
            return np.full(lam.shape, float(self.value[0]))
        return np.interp(lam, self.wavelength_m, self.value)


@dataclass(frozen=True)
class Mode:
    """An instrument mode, all quantities in SI.

    Attributes
    ----------
    name, description : str
        Preset name and description.
    area_m2 : float
        Collecting area [m2].
    wavelength_min_m, wavelength_max_m : float
        Wavelength range [m].
    resolving_power, throughput, brightest_pixel_fraction, background_rate : Curve
        Resolving power; total efficiency [electrons/photon]; fraction of a
        resolution element's light in its brightest pixel; background
        [electrons s-1 pixel-1].
    pixels_per_resel, extraction_width : float
        Pixels along and across the dispersion per resolution element.
    full_well, usable_well_fraction : float
        Full well [electrons] and the usable fraction of it.
    read_noise : float
        Read noise per read [electrons].
    dark_rate : float
        Dark current [electrons s-1 pixel-1].
    scheme : str
        ``"up-the-ramp"`` or ``"scan"``.
    frame_time_s, frames_per_group, resets_per_integration, min_groups, max_groups
        Up-the-ramp readout parameters.
    groups_per_integration : int or None
        Fixed groups per integration, ``None`` for automatic choice.
    exposure_time_s, reads_per_exposure, scan_duty_cycle
        Scan readout parameters.
    floor_ppm : float
        Systematics floor per transit [ppm] in a bin of resolving power
        ``floor_reference_resolution``.
    floor_reference_resolution : float
        Resolving power lambda / delta-lambda of the bin in which
        ``floor_ppm`` applies (the floor is white in wavelength: see
        :mod:`snrkit.photons.precision`).
    floor_averages_down : bool
        Whether the floor averages down as 1/sqrt(N_transits).
    sources : dict
        Provenance text per key.
    path : str
        File the mode was read from.
    """

    name: str
    description: str
    area_m2: float
    wavelength_min_m: float
    wavelength_max_m: float
    resolving_power: Curve
    throughput: Curve
    pixels_per_resel: float
    extraction_width: float
    brightest_pixel_fraction: Curve
    full_well: float
    usable_well_fraction: float
    read_noise: float
    dark_rate: float
    background_rate: Curve
    scheme: str
    frame_time_s: float
    frames_per_group: int
    resets_per_integration: int
    min_groups: int
    max_groups: int
    groups_per_integration: object
    exposure_time_s: float
    reads_per_exposure: int
    scan_duty_cycle: float
    floor_ppm: float
    floor_averages_down: bool
    floor_reference_resolution: float = 100.0
    sources: dict = field(default_factory=dict)
    path: str = ""

    @property
    def group_time_s(self):
        """Time between groups [s] (frame time x frames per group)."""
        return self.frame_time_s * self.frames_per_group

    @property
    def usable_well(self):
        """Usable full well [electrons]."""
        return self.full_well * self.usable_well_fraction


def _presets_dir():
    from ..io.tables import data_path
    return data_path("instruments")


@lru_cache(maxsize=1)
def mode_names():
    """Names of the shipped instrument presets (sorted tuple of str)."""
    return tuple(sorted(p.stem for p in _presets_dir().glob("*.toml")))


def list_modes():
    """The shipped instrument presets, for ``snrkit presets --json``.

    Returns
    -------
    list of dict
        ``[{"name": ..., "description": ...}, ...]`` sorted by name.
    """
    return [{"name": m.name, "description": m.description}
            for m in (load_mode(n) for n in mode_names())]


def load_mode(mode):
    """Return a :class:`Mode` from a preset name, a TOML file path or a Mode.

    Parameters
    ----------
    mode : str, pathlib.Path or Mode
        A preset name (see :func:`mode_names`) or the path of a mode file.

    Raises
    ------
    UnknownKeyError
        Unknown preset (the message lists the valid ones) or unknown key.
    InputError
        Missing required key (named), out-of-range value, unreadable file.
    """
    if isinstance(mode, Mode):
        return mode
    text = str(mode)
    if text in mode_names():
        return _load_path(_presets_dir() / f"{text}.toml")
    from ..io.tomlfile import check_input_path
    p = check_input_path(text, "mode", "a mode file (.toml) or a preset name")
    if p.suffix.lower() == ".toml" or p.is_file():
        if not p.is_file():
            raise InputError("mode", text, "an existing mode file (.toml) or one of "
                             + ", ".join(mode_names()))
        return _load_path(p.resolve())
    raise UnknownKeyError("mode", text, "a mode file (.toml) or one of "
                          + ", ".join(mode_names()))


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
            lam_range = (lo, hi)
        for key, (kind, unit, low, high, required) in keys.items():
            fname = f"{table}.{key}"
            if key not in section:
                if required:
                    raise InputError(fname, None, _describe(kind, unit, low, high),
                                     detail=f"required key missing in {path}")
                continue
            v = section[key]
            if kind == "num":
                if isinstance(v, bool) or not isinstance(v, (int, float, str)):
                    raise InputError(fname, v, _describe(kind, unit, low, high))
                vals[fname] = scalar_si(v, fname, unit or u.dimensionless_unscaled,
                                          low, high)
            elif kind == "int":
                if isinstance(v, bool) or not isinstance(v, int):
                    raise InputError(fname, v, _describe(kind, unit, low, high))
                check_range(parse_number(v, fname, integer=True), fname, low, high)
                vals[fname] = int(v)
            elif kind == "groups":
                if v == "auto":
                    vals[fname] = None
                elif isinstance(v, int) and not isinstance(v, bool):
                    check_range(parse_number(v, fname, integer=True), fname, low, high)
                    vals[fname] = int(v)
                else:
                    raise InputError(fname, v, "\"auto\" or a whole number >= 2")
            elif kind == "curve":
                vals[fname] = _curve(v, fname, low, high, lam_range)
            elif kind == "bool":
                if not isinstance(v, bool):
                    raise InputError(fname, v, "true or false")
                vals[fname] = v
            elif kind == "text":
                if v not in _SCHEMES:
                    raise InputError(fname, v, "one of " + ", ".join(_SCHEMES))
                vals[fname] = v

    # collecting area
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

