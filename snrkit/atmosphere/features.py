"""Band amplitudes in scale heights: the N_H of the quick feature estimate.

The full model's band amplitude of each scenario on a documented reference
planet, in scale heights (:func:`feature_scale_heights`); the preset script
writes it into each scenario (``feature_scale_heights``).
"""

from ..errors import InputError
from .mixture import wavelength_bin_edges
from .spectrum import transmission_spectrum

__all__ = ["FEATURE_REFERENCE_PLANETS", "FEATURE_WAVELENGTH_RANGE_UM", "FEATURE_RESOLUTION",
           "band_amplitude_scale_heights", "feature_scale_heights"]


#: Invented generic reference planets on which preset band amplitudes are computed.
FEATURE_REFERENCE_PLANETS = {
    "hot-giant": dict(planet_radius="1.2 jupiterRad", planet_mass="0.8 jupiterMass",
                      stellar_radius="1.0 solRad", equilibrium_temperature="1300 K"),
    "warm-sub-neptune": dict(planet_radius="2.6 earthRad", planet_mass="7.5 earthMass",
                             stellar_radius="0.72 solRad", equilibrium_temperature="600 K"),
    "temperate-rocky": dict(planet_radius="1.0 earthRad", planet_mass="1.0 earthMass",
                            stellar_radius="1.0 solRad", equilibrium_temperature="280 K"),
}
#: Wavelength range [um] and resolving power of the band-amplitude definition
#: (a low-resolution near-infrared spectrum; common practice, no source).
FEATURE_WAVELENGTH_RANGE_UM = (0.6, 5.0)
FEATURE_RESOLUTION = 100


def band_amplitude_scale_heights(spectrum):
    """Peak-to-trough effective height of each spectrum in scale heights.

    Parameters
    ----------
    spectrum : xarray.Dataset
        Output of :func:`transmission_spectrum`.

    Returns
    -------
    xarray.DataArray
        ``(max - min of effective_height) / scale_height`` over ``wavelength``.
    """
    eh = spectrum["effective_height_km"]
    amp = (eh.max("wavelength") - eh.min("wavelength")) / spectrum["scale_height_km"]
    amp.attrs = {"units": "scale heights", "long_name": "band amplitude (peak to trough)"}
    return amp


def feature_scale_heights(scenario, reference="hot-giant", opacity_source=None):
    """Band amplitude of a scenario in scale heights on a reference planet.

    The analytic spectrum of the scenario on one of
    :data:`FEATURE_REFERENCE_PLANETS` at R = :data:`FEATURE_RESOLUTION`
    over :data:`FEATURE_WAVELENGTH_RANGE_UM`; the peak-to-trough effective
    height divided by the scale height.  This is the N_H of the quick
    estimate ``N_H * 2 H Rp / Rs**2`` (so the two agree by construction on the
    reference planet).

    Parameters
    ----------
    scenario : str, dict or Scenario
    reference : str
        Key of :data:`FEATURE_REFERENCE_PLANETS`.
    opacity_source : object, optional
        See :func:`transmission_spectrum`.

    Returns
    -------
    float
    """
    if reference not in FEATURE_REFERENCE_PLANETS:
        raise InputError("reference", reference, ", ".join(FEATURE_REFERENCE_PLANETS))
    lo, hi = FEATURE_WAVELENGTH_RANGE_UM
    edges = wavelength_bin_edges(FEATURE_RESOLUTION, lo * 1e-6, hi * 1e-6) * 1e6
    ds = transmission_spectrum(scenario, wavelength_edges=edges, opacity_source=opacity_source,
                               **FEATURE_REFERENCE_PLANETS[reference])
    return float(band_amplitude_scale_heights(ds).values[0])
