"""The instrument Mode: collecting area, spectrograph, detector, readout and systematics, in SI."""

from dataclasses import dataclass, field

import numpy as np
import astropy.units as u


__all__ = ["DEFAULT_FLOOR_REFERENCE_RESOLUTION", "Curve", "Mode"]


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


# size: a dataclass: one documented field per key of a mode file, and two one-line properties
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
