"""Model spectra shared by the instrument modes of one engine call.

:func:`snrkit.engine.engine.evaluate` solves a scenario's spectrum once for
all modes that observe it through the same bins: a model spectrum depends on
a mode only through its bins, the solver and the shape of its calibration
weights (the detected photons per bin, which aperture and throughput scale
uniformly), so designs that differ in aperture, throughput or floor share it.
"""

import numpy as np

from .observe import _noted

__all__ = ["scenario_spectrum"]


def scenario_spectrum(spectra, obs, sc, contributions, transmission_spectrum):
    """The scenario's spectrum on the observation's bins, reused from ``spectra`` where it can be.

    The spectrum depends on the mode only through the bins, the solver and
    the calibration weights, and on those only through their shape across
    the band (the model is calibrated to the weighted band average, so a
    uniform factor -- aperture, throughput -- cancels).  A stored spectrum is
    reused when every other input (planets, bins, solver, contributions) is
    equal and the normalised weights agree to 1e-12; the notes its solve
    raised are added again to this observation's notes.  A stored depth is
    read-only, since several modes' tests read the same array.

    Parameters
    ----------
    spectra : list or None
        The latest spectrum solved for these planets and this scenario (one
        list per scenario, kept by the caller; modes sharing bins come one
        after another, so only the latest is kept and a caller's memory
        holds one spectrum per scenario); None: solve, keep nothing.
    obs : dict
        The observation (:func:`snrkit.engine.observe.observe`).
    sc : Scenario
    contributions : list of str or False
        Species whose contribution is wanted (as in transmission_spectrum).
    transmission_spectrum : callable
        :func:`snrkit.atmosphere.spectrum.transmission_spectrum`.

    Returns
    -------
    snrkit.labelled.Labelled
        The spectrum's labelled arrays (depths in ppm).
    """
    kw = obs["spec_kw"]
    w = np.asarray(kw["calibration_weights"], dtype=np.float64)
    with np.errstate(invalid="ignore", divide="ignore"):
        shape = w / np.sum(w, axis=-1, keepdims=True)
    inputs = {k: v for k, v in kw.items() if k != "calibration_weights"}
    inputs.update(rp=obs["rp"], rs=obs["rs"], contributions=contributions)
    for other_inputs, other, ds, notes in (spectra or ()):
        if (_same_inputs(other_inputs, inputs) and other.shape == shape.shape
                and np.allclose(other, shape, rtol=1e-12, atol=0.0)):
            obs["notes"].extend(notes)
            return ds
    notes = []
    ds = _noted(notes, transmission_spectrum, sc, obs["rp"], obs["rs"], contributions=contributions,
                **kw)
    obs["notes"].extend(notes)
    if spectra is not None:
        depth = ds["transit_depth_ppm"]
        if isinstance(depth, np.ndarray):
            depth.setflags(write=False)
        spectra[:] = [(inputs, shape, ds, notes)]      # only the latest: memory of one
    return ds


def _same_inputs(a, b):
    """Equal keys and equal values (arrays element by element, NaN equal to NaN)."""
    if a.keys() != b.keys():
        return False
    for k, x in a.items():
        y = b[k]
        if isinstance(x, np.ndarray) or isinstance(y, np.ndarray):
            x, y = np.asarray(x), np.asarray(y)
            if x.shape != y.shape or not np.array_equal(
                    x, y, equal_nan=x.dtype.kind == "f" and y.dtype.kind == "f"):
                return False
        elif x != y:
            return False
    return True
