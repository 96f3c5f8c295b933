"""The engine's first step: observe once per mode (precision, floor, readout candidates, spectrum keywords)."""

import numpy as np

from ..errors import InputError
from ..constants import R_EARTH, M_EARTH, R_SUN, AU

__all__ = ["observe"]


def _edges_from_precision(prec):
    lo = np.asarray(prec["wavelength_low"], dtype=np.float64)
    hi = np.asarray(prec["wavelength_high"], dtype=np.float64)
    if lo.ndim > 1:
        lo, hi = lo[0], hi[0]
    if not np.allclose(lo[1:], hi[:-1], rtol=1e-9):
        raise InputError("wavelength bins", "gaps between bins", "contiguous bins")
    return np.concatenate([lo, hi[-1:]])


def _resolution_arg(resolution):
    """None -> the shared default; "native" -> the mode's own bins (None downstream)."""
    from ..photons.precision import DEFAULT_RESOLUTION
    if resolution is None:
        return DEFAULT_RESOLUTION
    if isinstance(resolution, str) and resolution.strip().lower() == "native":
        return None
    return resolution


def observe(system, mode, resolution=None, bin_edges=None, floor_ppm=None,
            floor_averages_down=None, baseline=None, solver="analytic", readout=None):
    """Precision of the mode on the test's bins, and the keywords for spectra on them.

    ``resolution`` None uses :data:`snrkit.photons.precision.DEFAULT_RESOLUTION`
    (unless ``bin_edges`` are given); ``"native"`` the mode's own bins.
    With automatic readout the result carries every readout candidate
    (``options``), so the test can choose; ``readout="unsaturated"`` keeps
    only the largest unsaturated number of groups.

    Returns
    -------
    dict
        ``white``, ``floor`` and ``saturated`` (planet, bin) for the
        unsaturated readout; ``groups``, ``duty`` (planet); ``options`` or
        None; ``floor_averages``; ``precision`` (the precision's labelled
        arrays, :class:`snrkit.labelled.Labelled`); ``edges_um``,
        ``wl``; ``derived``; ``rp`` [R_earth], ``rs`` [R_sun]; ``spec_kw``;
        ``notes``; ``binning`` (a phrase for the outputs).
    """
    from ..photons.targets import system_precision
    from ..errors import SnrkitWarning
    import warnings
    d = system.derived_arrays()
    names = [str(x) for x in system.names]
    res_arg = None if bin_edges is not None else _resolution_arg(resolution)
    unsaturated = isinstance(readout, str) and readout == "unsaturated"
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", SnrkitWarning)
        prec = system_precision(system, mode, resolution=res_arg, bin_edges=bin_edges,
                                floor_ppm=floor_ppm, floor_averages_down=floor_averages_down,
                                baseline=baseline, readout="auto" if unsaturated else readout,
                                warn=True, readout_options=not unsaturated, as_arrays=True)
    budget = np.asarray(prec["noise_budget_ppm"], dtype=np.float64)      # (planet, term, wavelength)
    white_terms = [i for i, t in enumerate(prec["term"]) if t != "floor"]
    white = np.sqrt((budget[:, white_terms, :] ** 2).sum(axis=1))
    floor = np.broadcast_to(np.asarray(prec["floor_per_bin_ppm"], dtype=np.float64),
                            white.shape)
    edges_um = _edges_from_precision(prec)
    options = None
    if "option_groups" in prec:
        options = {"groups": np.asarray(prec["option_groups"], dtype=np.int64),
                   "duty": np.asarray(prec["option_duty_cycle"], dtype=np.float64),
                   "white": np.asarray(prec["option_white_noise_ppm"], dtype=np.float64),
                   "saturated": np.asarray(prec["option_saturated"], dtype=bool)}
    binning = ("bin edges given" if bin_edges is not None else
               "the mode's native bins" if res_arg is None else f"R = {float(res_arg):g}")
    return {
        "derived": d, "precision": prec, "notes": [str(w.message) for w in caught],
        "white": white, "floor": floor, "options": options,
        "groups": np.asarray(prec["groups_per_integration"], dtype=np.int64),
        "duty": np.asarray(prec["duty_cycle"], dtype=np.float64),
        "floor_averages": bool(prec.attrs.get("floor_averages_down", False)),
        "saturated": np.asarray(prec["saturated"], dtype=bool),          # (planet, wavelength)
        "edges_um": edges_um, "wl": np.sqrt(edges_um[1:] * edges_um[:-1]), "binning": binning,
        "rp": d["radius_m"] / R_EARTH, "rs": system.star.radius_m / R_SUN,
        # the model is calibrated to the observed depth as this mode measures it in white
        # light: the band average weighted by the detected photons per bin
        "spec_kw": dict(planet_mass=d["mass_kg"] / M_EARTH,
                        equilibrium_temperature=d["equilibrium_temperature_K"],
                        semi_major_axis=d["semi_major_axis_m"] / AU, wavelength_edges=edges_um,
                        planet_names=names, solver=solver,
                        calibration_weights=np.asarray(prec["photon_rate"], dtype=np.float64),
                        as_arrays=True),
    }


def _noted(notes, fn, *args, **kwargs):
    """``fn(*args, **kwargs)`` with snrkit's own warnings added to ``notes``."""
    import warnings
    from ..errors import SnrkitWarning
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", SnrkitWarning)
        out = fn(*args, **kwargs)
    for w in caught:
        if isinstance(w.message, SnrkitWarning):
            notes.append(str(w.message))
        else:
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    return out
