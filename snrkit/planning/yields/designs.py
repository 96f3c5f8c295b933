"""Designs: an instrument mode with a few overrides, and grids of them.

A *design* is what a trade study varies: one instrument mode (a preset or a
mode file, see :mod:`snrkit.photons.instruments`) with optional overrides
and a budget.  Keys (our own; the same in a design file and in
``snrkit yields --design KEY=VALUE,...``):

``name``
    Label of the design in every output (text; default built from the keys).
``mode``
    Instrument mode preset or file (default: the command's ``--mode``).
``aperture_m``
    Telescope diameter [m].  The collecting area scales as the diameter
    squared: a mode given by ``diameter_m`` keeps its
    ``obscured_area_fraction``; a mode given by ``collecting_area_m2`` is
    taken as a filled circular aperture of the same area (its equivalent
    diameter sqrt(4 A / pi) is the ``base_aperture_m`` in the outputs).
    Photon counts, the brightest pixel and so saturation follow the area;
    the image size on the detector (which shrinks as 1/D at fixed focal
    ratio) is kept, which is conservative for saturation.
``throughput_scale``
    Factor on the mode's throughput at every wavelength (the scaled
    throughput must stay at or below 1).
``floor_ppm``
    Systematics floor per transit [ppm], replacing the mode's (same
    reference resolving power).
``floor_averages_down``
    Whether the floor averages down with transits (true/false).
``hours``
    Programme hours allowed per planet: a planet counts when its target is
    reached within this many hours (transits, baselines and overheads).
``years``
    Mission years: a planet counts only when the transits it needs occur
    within this time (at most floor(years / period) transits; every transit
    taken, observability aside, so an upper bound).

A *design grid* is a TOML file with an optional ``[defaults]`` table (keys
shared by every design) and one ``[[design]]`` table per design::

    # snrkit design grid
    [defaults]
    mode = "cold6m-prism-lowres"
    hours = 300
    [[design]]
    name = "6 m"
    aperture_m = 6.0
    [[design]]
    name = "8 m, 20 ppm"
    aperture_m = 8.0
    floor_ppm = 20

Unknown keys are refused with the closest known key.
"""

import difflib
import math
from dataclasses import dataclass

from ...errors import InputError, UnknownKeyError
from ...units import parse_number
from ...io.tomlfile import read_toml
from ...photons.instruments import load_mode, parse_mode

__all__ = ["Design", "DESIGN_KEYS", "GRID_KEYS", "load_designs", "design_from_text",
           "designs_from_options", "build_mode", "design_coordinates"]

#: Design keys and what each takes (for messages and the doc above).
DESIGN_KEYS = {
    "name": "a text label",
    "mode": "an instrument mode preset or file",
    "aperture_m": "a telescope diameter in m, (0, 100]",
    "throughput_scale": "a factor in (0, 10]",
    "floor_ppm": "a floor in ppm, [0, 1e6]",
    "floor_averages_down": "true or false",
    "hours": "programme hours per planet, (0, 1e6]",
    "years": "mission years, (0, 100]",
}
#: Top-level keys of a design grid file.
GRID_KEYS = ("defaults", "design")
_NUMBERS = {"aperture_m": (0.0, 100.0), "throughput_scale": (0.0, 10.0),
            "floor_ppm": (0.0, 1.0e6), "hours": (0.0, 1.0e6), "years": (0.0, 100.0)}


@dataclass(frozen=True)
class Design:
    """One design of a trade study (see the module docstring for the keys).

    Attributes
    ----------
    name, mode : str
    aperture_m, throughput_scale, floor_ppm, hours, years : float or None
        None where the design keeps the mode's value or sets no budget.
    floor_averages_down : bool or None
    """

    name: str
    mode: str
    aperture_m: float = None
    throughput_scale: float = None
    floor_ppm: float = None
    floor_averages_down: bool = None
    hours: float = None
    years: float = None

    def as_dict(self):
        """The keys that are set, as a plain dict (JSON-ready)."""
        return {k: getattr(self, k) for k in DESIGN_KEYS if getattr(self, k) is not None}


def _unknown(key, value, allowed, where):
    close = difflib.get_close_matches(str(key), list(allowed), n=1, cutoff=0.5)
    raise UnknownKeyError(f"{where}{key}", value, "keys " + ", ".join(allowed),
                          detail=f"did you mean {close[0]!r}?" if close else "")


def _design(entry, default_mode, where, index):
    """A :class:`Design` from a mapping of design keys (validated)."""
    if not isinstance(entry, dict):
        raise InputError(where.rstrip("."), entry, "a table of design keys")
    vals = {}
    for key, value in entry.items():
        if key not in DESIGN_KEYS:
            _unknown(key, value, DESIGN_KEYS, where)
        field = f"{where}{key}"
        if key in _NUMBERS:
            lo, hi = _NUMBERS[key]
            vals[key] = float(parse_number(value, field, lo, hi, low_inclusive=key == "floor_ppm"))
        elif key == "floor_averages_down":
            if not isinstance(value, bool):
                raise InputError(field, value, "true or false")
            vals[key] = value
        elif not isinstance(value, str) or not value.strip():
            raise InputError(field, value, DESIGN_KEYS[key])
        else:
            vals[key] = value.strip()
    vals.setdefault("mode", default_mode)
    if not vals["mode"]:
        raise InputError(f"{where}mode", None, "an instrument mode (or the command's --mode)")
    if "name" not in vals:
        parts = [f"{k}={vals[k]:g}" for k in _NUMBERS if k in vals]
        vals["name"] = " ".join([vals["mode"]] + parts) if parts else vals["mode"]
    return Design(**vals)


def _check_names(designs, field):
    names = [d.name for d in designs]
    for i, n in enumerate(names):
        if n in names[:i]:
            raise InputError(field, n, "a different name for each design")
    if not designs:
        raise InputError(field, [], "at least one design")
    return designs


def load_designs(path, default_mode=None):
    """Read a design grid file (see the module docstring).

    Parameters
    ----------
    path : str or pathlib.Path
        A TOML file, read by :func:`snrkit.io.tomlfile.read_toml`.
    default_mode : str, optional
        Mode of designs that name none (after ``[defaults]``).

    Returns
    -------
    list of Design

    Raises
    ------
    UnknownKeyError
        An unknown key (the message suggests the closest one).
    InputError
        A bad value, a repeated name, or no design.
    """
    data = read_toml(path, "--designs", "an existing design grid file (.toml)")
    for key in data:
        if key not in GRID_KEYS:
            _unknown(key, data[key], GRID_KEYS, "")
    defaults = data.get("defaults", {})
    if not isinstance(defaults, dict):
        raise InputError("defaults", defaults, "a [defaults] table of design keys")
    for key in defaults:
        if key not in DESIGN_KEYS or key == "name":
            _unknown(key, defaults[key], [k for k in DESIGN_KEYS if k != "name"], "defaults.")
    entries = data.get("design", [])
    if not isinstance(entries, list):
        raise InputError("design", entries, "[[design]] tables")
    designs = [_design({**defaults, **e} if isinstance(e, dict) else e, default_mode,
                       f"design[{i}].", i) for i, e in enumerate(entries)]
    return _check_names(designs, "--designs")


def design_from_text(text, default_mode=None, index=0):
    """A design from ``KEY=VALUE,KEY=VALUE`` (values: numbers, true/false or text)."""
    entry = {}
    for part in str(text).split(","):
        if not part.strip():
            continue
        key, eq, value = part.partition("=")
        if not eq:
            raise InputError("--design", text, "KEY=VALUE pairs separated by commas, keys "
                             + ", ".join(DESIGN_KEYS))
        key, value = key.strip(), value.strip()
        if value.lower() in ("true", "false"):
            entry[key] = value.lower() == "true"
        elif key in _NUMBERS:
            try:
                entry[key] = float(value)
            except ValueError:
                raise InputError(f"--design {key}", value, DESIGN_KEYS[key]) from None
        else:
            entry[key] = value
    return _design(entry, default_mode, "--design ", index)


def designs_from_options(designs_file=None, design_texts=(), mode=None):
    """The designs of the command line: a grid file, repeated ``--design``, or the mode alone."""
    out = list(load_designs(designs_file, mode)) if designs_file else []
    out += [design_from_text(t, mode, i) for i, t in enumerate(design_texts or ())]
    if not out:
        if not mode:
            raise InputError("--mode", None, "an instrument mode, or --designs / --design")
        out = [Design(name=str(mode), mode=str(mode))]
    return _check_names(out, "--designs")


def _base_aperture(data):
    """(diameter [m], which key) of a mode mapping: its diameter or its area's equivalent."""
    tel = data.get("telescope", {})
    if "diameter_m" in tel:
        return float(tel["diameter_m"]), "diameter_m"
    mode = parse_mode(data, path="<base>")
    return math.sqrt(4.0 * mode.area_m2 / math.pi), "collecting_area_m2"


def build_mode(design):
    """The :class:`~snrkit.photons.instruments.Mode` of a design, overrides applied.

    The mode file is read again and its mapping changed, so the overridden
    values go through the mode's own validation (:func:`parse_mode`).

    Returns
    -------
    (Mode, float)
        The mode (named after the design) and its aperture [m] (the
        override, else the mode's diameter or equivalent diameter).
    """
    base = load_mode(design.mode)
    data = read_toml(base.path, "mode", "an existing mode file (.toml)")
    where = f"design {design.name!r}: "
    d0, key = _base_aperture(data)
    aperture = d0
    if design.aperture_m is not None:
        aperture = design.aperture_m
        tel = dict(data.get("telescope", {}))
        if key == "diameter_m":
            tel["diameter_m"] = aperture
        else:
            tel["collecting_area_m2"] = base.area_m2 * (aperture / d0) ** 2
        data["telescope"] = tel
    if design.throughput_scale is not None:
        s = design.throughput_scale
        top = float(max(base.throughput.value))
        if s * top > 1.0:
            raise InputError(where + "throughput_scale", s,
                             f"at most {1.0 / top:.4g} (mode {base.name} peaks at {top:g})")
        spec = dict(data["spectrograph"])
        t = spec["throughput"]
        spec["throughput"] = ({**t, "value": [v * s for v in t["value"]]} if isinstance(t, dict)
                              else t * s)
        data["spectrograph"] = spec
    if design.floor_ppm is not None or design.floor_averages_down is not None:
        sy = dict(data.get("systematics", {}))
        if design.floor_ppm is not None:
            sy["floor_ppm"] = design.floor_ppm
        if design.floor_averages_down is not None:
            sy["floor_averages_down"] = design.floor_averages_down
        data["systematics"] = sy
    data["name"] = design.name
    return parse_mode(data, path=f"{base.path} (design {design.name})"), aperture


def design_coordinates(designs, apertures):
    """Per-design coordinates for the yield Dataset (NaN where a key is not set)."""
    nan = float("nan")
    coords = {"mode": [d.mode for d in designs], "aperture_m": list(apertures)}
    for k in ("throughput_scale", "floor_ppm", "hours", "years"):
        coords[k] = [nan if getattr(d, k) is None else float(getattr(d, k)) for d in designs]
    return coords
