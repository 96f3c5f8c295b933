"""Photon-noise precision: stellar spectra, instrument modes, detector limits.

* :mod:`snrkit.photons.sed` -- Planck and user spectra, band normalisation.
* :mod:`snrkit.photons.instruments` -- instrument mode files and presets.
* :mod:`snrkit.photons.precision` -- counts, noise budget, saturation,
  readout, binning; :func:`transit_precision` and :func:`system_precision`
  return xarray Datasets.
"""

from .instruments import Mode, load_mode, mode_names, list_modes
from .precision import (transit_precision, system_precision, limiting_magnitudes,
                        SaturationWarning)
from .sed import stellar_flux_density, synthetic_magnitude, read_spectrum, planck_spectrum

__all__ = ["Mode", "load_mode", "mode_names", "list_modes", "transit_precision",
           "system_precision", "limiting_magnitudes", "SaturationWarning",
           "stellar_flux_density", "synthetic_magnitude", "read_spectrum", "planck_spectrum"]
