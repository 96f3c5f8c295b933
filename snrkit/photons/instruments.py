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

from functools import lru_cache


from ..errors import InputError, UnknownKeyError
from .mode_files import _load_path
# public names whose code lives in mode and mode_files
from .mode import DEFAULT_FLOOR_REFERENCE_RESOLUTION, Curve, Mode  # noqa: F401
from .mode_files import parse_mode  # noqa: F401

__all__ = ["DEFAULT_FLOOR_REFERENCE_RESOLUTION", "Mode", "Curve", "load_mode", "mode_names",
           "list_modes", "parse_mode"]


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


