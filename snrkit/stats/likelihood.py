"""The likelihood-ratio statistic of two nested linear models on Asimov data.

Each side may carry linear nuisance parameters (a vertical level, always;
templates such as a stellar-contamination signature, with Gaussian priors),
profiled analytically by generalised least squares.  The statistic is
``Delta chi^2 = min chi^2(null) - min chi^2(alternative)``, both minima
including their prior terms (Cowan, Cranmer, Gross & Vitells 2011, Eur.
Phys. J. C 71, 1554).  Depths in one unit, any leading batch axes, the last
axis wavelength; the per-bin noise is diagonal.  See :mod:`snrkit.stats.detect`
for the whole picture.
"""


import numpy as np

from ..errors import InputError

__all__ = ["NO_SIGNAL_DEPTH_RTOL", "noise_per_bin", "profiled_delta_chi2", "nested_delta_chi2",
           "fitted_null"]


#: Two models whose depths differ by less than this fraction of the depths are
#: "no signal": identical within the spectrum solvers' numerical precision
#: (their root solves converge to ~1e-10 in radius).  A statistic below
#: NO_SIGNAL_DEPTH_RTOL^2 sum(w d^2) is set to exactly 0.
NO_SIGNAL_DEPTH_RTOL = 1e-7


def noise_per_bin(sigma1, n_transits, floor=0.0, floor_averages=False):
    """Standard deviation of the stacked depth per bin after N transits.

    sigma_N^2 = sigma_1^2 / N + floor^2 (a floor that does not average down:
    a systematic common to every transit), or (sigma_1^2 + floor^2) / N
    (an independent per-transit systematic).

    Parameters
    ----------
    sigma1 : array_like
        White (photon + detector) noise of one transit per bin, in depth
        units (dimensionless or ppm, as long as ``floor`` matches).
    n_transits : array_like
        Number of transits N (>= 1); broadcasts against ``sigma1``.
    floor : array_like
        Systematics floor per bin, same units as ``sigma1``.
    floor_averages : bool
        Whether the floor averages down with N.
    """
    s2 = np.asarray(sigma1, dtype=np.float64) ** 2
    f2 = np.asarray(floor, dtype=np.float64) ** 2
    n = np.asarray(n_transits, dtype=np.float64)
    if floor_averages:
        return np.sqrt((s2 + f2) / n)
    return np.sqrt(s2 / n + f2)


def _weights(sigma, shape):
    """1/sigma^2 broadcast to ``shape``; NaN or inf sigma gives weight 0."""
    sig = np.asarray(sigma, dtype=np.float64)
    if np.any(sig <= 0):
        raise InputError("sigma", float(np.nanmin(sig)), "per-bin noise > 0 (NaN or inf: bin not used)")
    fin = np.isfinite(sig)
    # noise below 1e-150 (in any depth unit) is treated as 1e-150: its weight stays finite
    w = np.where(fin, 1.0 / np.maximum(np.where(fin, sig, 1.0), 1e-150) ** 2, 0.0)
    return np.broadcast_to(w, shape)


def _prior_precision(template_sigma, k):
    """Per-template prior precision 1/s^2 (0: free), shape (k,)."""
    if template_sigma is None:
        return np.zeros(k)
    ts = np.broadcast_to(np.asarray(template_sigma, dtype=np.float64), (k,))
    if np.any(~(ts > 0)):
        raise InputError("template_sigma", ts.tolist(), "prior widths > 0 (inf: free)")
    return np.where(np.isfinite(ts), 1.0 / ts ** 2, 0.0)


def _gls(resid, w, columns=None, prior=None):
    """min_c sum_l w_l (r_l - sum_k X_lk c_k)^2 + sum_k p_k c_k^2 with X = [1, columns].

    Returns ``(chi2_min, coefficients)``; the first coefficient is the level.
    The solve uses a pseudo-inverse, so a column equal to the level or zero
    adds no freedom instead of failing.
    """
    r = np.where(w > 0, resid, 0.0)
    # centre on the weighted mean first (the level is profiled anyway): rounding is then
    # relative to the residual's own structure, not to an absolute depth of 1e4 ppm
    sw0 = np.sum(w, axis=-1, keepdims=True)
    r = np.where(w > 0, r - np.sum(w * r, axis=-1, keepdims=True) / np.where(sw0 > 0, sw0, 1.0),
                 0.0)
    wr = w * r
    chi2 = np.sum(wr * r, axis=-1)
    if columns is None:
        sw = np.sum(w, axis=-1)
        swr = np.sum(wr, axis=-1)
        good = sw > 0
        level = np.where(good, swr / np.where(good, sw, 1.0), 0.0)
        out = chi2 - level * swr
        return np.where(out <= 1e-12 * chi2, 0.0, out), level[..., None]
    cols = np.broadcast_to(np.asarray(columns, dtype=np.float64), r.shape + np.shape(columns)[-1:])
    x = np.concatenate([np.ones(r.shape + (1,)), np.where(np.isfinite(cols), cols, 0.0)], axis=-1)
    b = np.einsum("...l,...lk->...k", wr, x)
    a = np.einsum("...l,...lk,...lm->...km", w, x, x)
    if prior is not None:
        a = a + np.diag(np.concatenate([[0.0], prior]))
    coef = np.einsum("...km,...m->...k", np.linalg.pinv(a, hermitian=True), b)
    out = chi2 - np.einsum("...k,...k->...", b, coef)
    return np.where(out <= 1e-10 * chi2, 0.0, out), coef


def profiled_delta_chi2(residual, sigma, templates=None, template_sigma=None):
    """Min chi^2 of a residual with the level and optional templates profiled.

    Delta chi^2 = min_c sum_l (r_l - sum_k c_k X_lk)^2 / sigma_l^2 + prior
    = r^T W r - b^T (X^T W X + P)^-1 b, b = X^T W r (generalised least
    squares with Gaussian priors of zero mean; C11, Sec. 3.8 for the Asimov
    data set).  With Asimov data equal to the alternative, this is the
    statistic of the nested test whose null is ``data - residual``.

    Parameters
    ----------
    residual : array_like, shape (..., n_wl)
        Data minus the null model (same units as sigma).
    sigma : array_like, broadcastable to ``residual``
        Per-bin standard deviation (> 0); NaN or inf marks a bin that is not
        used (zero weight), e.g. a saturated one.
    templates : array_like, shape (..., n_wl, n_nuisance), optional
        Nuisance templates whose amplitudes are fitted; a constant column
        (the vertical level) is always included.
    template_sigma : array_like, shape (n_nuisance,), optional
        Gaussian prior width of each amplitude (in units of the template);
        default free.

    Returns
    -------
    numpy.ndarray, shape (...)
        The profiled chi^2 (>= 0).
    """
    r = np.asarray(residual, dtype=np.float64)
    w = _weights(sigma, r.shape)
    if templates is None:
        return _gls(r, w)[0]
    t = np.asarray(templates, dtype=np.float64)
    return _gls(r, w, t, _prior_precision(template_sigma, t.shape[-1]))[0]


def _shift(values, templates, mean):
    """``values - templates @ mean`` (the nuisances at their prior means)."""
    if templates is None or mean is None:
        return values
    return values - np.einsum("...lk,k->...l", np.asarray(templates, dtype=np.float64),
                              np.broadcast_to(np.asarray(mean, dtype=np.float64),
                                              np.shape(templates)[-1:]))


def nested_delta_chi2(data, null, sigma, *, alt=None, shape=None, null_templates=None,
                      alt_templates=None, template_sigma=None, template_mean=None,
                      null_scale=None):
    """Delta chi^2 = min chi^2(null) - min chi^2(alternative) on given data.

    Both models have a free level; each may have nuisance templates whose
    amplitudes carry Gaussian priors N(``template_mean``, ``template_sigma``)
    (the same priors on both sides).

    Parameters
    ----------
    data : array_like (..., n_wl)
        The (Asimov) data.
    null : array_like (..., n_wl)
        Fixed part of the null model (zeros for a flat line).
    sigma : array_like
        Per-bin noise (NaN: bin unused).
    alt : array_like (..., n_wl), optional
        Fixed part of the alternative.  With neither ``alt`` nor ``shape``
        the alternative reproduces the data exactly (min chi^2 = 0).
    shape : array_like (..., n_wl), optional
        The alternative is level + a * shape with a >= 0 (the atmosphere
        test); where the best a is negative the statistic is 0 (one-sided,
        C11 eq. for q0).
    null_templates, alt_templates : array_like (..., n_wl, k), optional
        Nuisance templates of each side.
    template_sigma, template_mean : array_like (k,), optional
        Prior widths (default free) and means (default 0) of the amplitudes.
    null_scale : (float, float), optional
        The null's fixed part is multiplied by a free factor b within these
        bounds (profiled: after the level and templates are profiled,
        chi^2(b) is a convex parabola, so the bounded minimum is at the
        clipped unconstrained b).  With a lower bound of 0 the flat line is
        a member of the null, so the statistic never exceeds that of the
        atmosphere test on the same data.

    Returns
    -------
    numpy.ndarray (...)
        Delta chi^2 >= 0; exactly 0 when the two models are identical
        within numerical precision (:data:`NO_SIGNAL_DEPTH_RTOL`).
    """
    d, w, prior, base = _null_side(data, null, sigma, null_templates, template_sigma,
                                   template_mean, null_scale)
    chi_null, _ = _gls(base, w, null_templates, prior)
    if shape is not None:
        s = np.broadcast_to(np.asarray(shape, dtype=np.float64), d.shape)[..., None]
        cols = s if alt_templates is None else np.concatenate(
            [s, np.broadcast_to(alt_templates, d.shape + np.shape(alt_templates)[-1:])], axis=-1)
        p_alt = None if prior is None else np.concatenate([[0.0], prior])
        chi_alt, coef = _gls(_shift(d, alt_templates, template_mean), w, cols, p_alt)
        chi_alt = np.where(coef[..., 1] < 0, chi_null, chi_alt)
    elif alt is not None:
        chi_alt, _ = _gls(_shift(d - np.asarray(alt, dtype=np.float64), alt_templates,
                                 template_mean), w, alt_templates, prior)
    else:
        # the alternative reproduces the data (with any templates at their prior means)
        chi_alt = 0.0
    delta = chi_null - chi_alt
    # identical within the models' numerical precision: depth differences below
    # NO_SIGNAL_DEPTH_RTOL of the depths themselves
    scale = np.sum(w * np.where(w > 0, d, 0.0) ** 2, axis=-1)
    return np.where(delta <= NO_SIGNAL_DEPTH_RTOL ** 2 * scale, 0.0, delta)


def _null_side(data, null, sigma, templates, template_sigma, template_mean, null_scale):
    """(data, weights, prior precision, data - b null - templates at their prior means)."""
    d = np.asarray(data, dtype=np.float64)
    w = _weights(sigma, d.shape)
    k = None if templates is None else np.shape(templates)[-1]
    prior = None if k is None else _prior_precision(template_sigma, k)
    nul = np.broadcast_to(np.asarray(null, dtype=np.float64), d.shape)
    b = _null_factor(d, nul, w, templates, prior, template_mean, null_scale)
    return d, w, prior, _shift(d - b * nul, templates, template_mean)


def _null_factor(d, nul, w, templates, prior, template_mean, null_scale):
    """The null's free factor b (..., 1): 1 without ``null_scale``, else profiled and clipped.

    After the level and templates are profiled, chi^2(b) is a convex
    parabola, so the bounded minimum is at the clipped unconstrained b.
    """
    if null_scale is None:
        return np.ones(d.shape[:-1] + (1,))
    k = None if templates is None else np.shape(templates)[-1]
    base = _shift(d, templates, template_mean)
    cols = nul[..., None] if templates is None else np.concatenate(
        [nul[..., None], np.broadcast_to(templates, d.shape + (k,))], axis=-1)
    _, coef = _gls(base, w, cols, None if prior is None else np.concatenate([[0.0], prior]))
    return np.clip(coef[..., 1], null_scale[0], null_scale[1])[..., None]


def fitted_null(data, null, sigma, *, null_templates=None, template_sigma=None,
                template_mean=None, null_scale=None):
    """The null model at its best fit to the data: what :func:`nested_delta_chi2` profiles.

    b x null + level + sum_k a_k template_k, with the level, the template
    amplitudes (Gaussian priors N(``template_mean``, ``template_sigma``))
    and, with ``null_scale``, the factor b (bounded) at their profiled
    values; the weighted residual data - fitted_null gives the null's
    min chi^2 (plus the priors' penalty).  Arguments as in
    :func:`nested_delta_chi2`.

    Returns
    -------
    numpy.ndarray (..., n_wl)
        The fitted null, in the data's unit (defined in every bin, used or not).
    """
    d, w, prior, base = _null_side(data, null, sigma, null_templates, template_sigma,
                                   template_mean, null_scale)
    _, coef = _gls(base, w, null_templates, prior)
    # _gls fits the residual after removing its weighted mean: the level is that mean plus
    # the fitted constant
    sw = np.sum(w, axis=-1, keepdims=True)
    mean = np.sum(w * np.where(w > 0, base, 0.0), axis=-1, keepdims=True) / np.where(sw > 0, sw,
                                                                                   1.0)
    fit = mean + coef[..., :1]
    if null_templates is not None:
        t = np.broadcast_to(np.asarray(null_templates, dtype=np.float64),
                            d.shape + np.shape(null_templates)[-1:])
        fit = fit + np.einsum("...lk,...k->...l", t, coef[..., 1:])
    return d - (base - fit)
