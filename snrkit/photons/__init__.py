"""Photon-noise precision: stellar spectra, instrument modes, detector limits.

* :mod:`snrkit.photons.sed` -- Planck and user spectra, band normalisation.
* :mod:`snrkit.photons.instruments` -- instrument mode files and presets.
* :mod:`snrkit.photons.noise` -- photon rates per bin and the depth-precision
  budget (photon, background, dark, read, floor);
* :mod:`snrkit.photons.binning`, :mod:`snrkit.photons.readout` -- bins and
  up-the-ramp readout;
* :mod:`snrkit.photons.precision` -- :func:`transit_precision`, an xarray
  Dataset per bin (inputs checked in :mod:`snrkit.photons.inputs`);
* :mod:`snrkit.photons.targets` -- :func:`system_precision` for the planets of
  a System, and :func:`limiting_magnitudes` of a mode.
"""

from .instruments import Mode, load_mode, mode_names, list_modes
from .precision import transit_precision, SaturationWarning
from .targets import system_precision, limiting_magnitudes
from .stellar_spectrum import stellar_flux_density, synthetic_magnitude, read_spectrum, planck_spectrum

__all__ = ["Mode", "load_mode", "mode_names", "list_modes", "transit_precision",
           "system_precision", "limiting_magnitudes", "SaturationWarning",
           "stellar_flux_density", "synthetic_magnitude", "read_spectrum", "planck_spectrum"]
