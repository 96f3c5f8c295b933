"""Forecasts: Fisher-matrix parameter errors, Monte Carlo over planet
parameters, and programme time.

* Fisher information F_ij = sum_l (dD/dtheta_i)(dD/dtheta_j) / sigma_l^2 for
  Gaussian per-bin errors (Tegmark, Taylor & Heavens 1997, ApJ 480, 22,
  eq. 15 for a parameter-independent covariance); marginal 1-sigma errors
  are sqrt(diag(F^-1)).  Derivatives are central finite differences of
  the spectrum model.
* Planet-parameter uncertainty: mass and radius are drawn (seeded) and the
  spectral features rescaled with the scale-height signal 2 H Rp / Rs^2,
  H proportional to T Rp^2 / (mu Mp), so the feature amplitude scales as
  Rp^3 / Mp at fixed temperature and composition (the features span a fixed
  number of scale heights: common practice, no source).  The transits
  needed are recomputed for every draw.
* Programme time: per transit, T14 + baseline + overhead.
"""

import numpy as np

from .detect import stack_transits, noise_per_bin
from ..errors import InputError

__all__ = ["fisher_matrix", "fisher_errors", "numerical_jacobian", "fisher_forecast",
           "feature_scale_draws", "transits_distribution", "spread_summary", "programme_hours",
           "DEFAULT_OVERHEAD_HOURS"]

#: Default per-visit overhead [h] (slew, settling, target acquisition):
#: common practice, no source.
DEFAULT_OVERHEAD_HOURS = 1.0


def fisher_matrix(jacobian, sigma):
    """Fisher matrix from a Jacobian (..., n_wl, n_par) and per-bin sigma (..., n_wl).

    Bins with non-finite sigma, or where the Jacobian is not finite, carry no
    information (zero weight).
    """
    j = np.asarray(jacobian, dtype=np.float64)
    sig = np.asarray(sigma, dtype=np.float64)
    ok = np.isfinite(sig) & (sig > 0) & np.all(np.isfinite(j), axis=-1)
    w = np.where(ok, 1.0 / np.where(ok, sig, 1.0) ** 2, 0.0)
    j = np.where(ok[..., None], j, 0.0)
    return np.einsum("...lp,...l,...lq->...pq", j, w, j)


def fisher_errors(fisher, rtol=1e-10):
    """Marginalised 1-sigma errors sqrt(diag(F^-1)).

    The matrix is first scaled to unit diagonal (Jacobi scaling).  Directions
    of (numerically) zero information -- eigenvalues below ``rtol`` times the
    largest -- make every parameter with a share in them unconstrained
    (error inf), as for two perfectly degenerate parameters; the covariance
    of the rest comes from the remaining eigen-directions.
    """
    f = np.asarray(fisher, dtype=np.float64)
    # Jacobi scaling: parameters in very different units must not make the
    # small eigenvalues of the well-measured ones look like "no information"
    d = np.sqrt(np.clip(np.diagonal(f, axis1=-2, axis2=-1), 0.0, None))
    scale = np.where(d > 0, d, 1.0)
    fs = f / (scale[..., :, None] * scale[..., None, :])
    vals, vecs = np.linalg.eigh(fs)
    top = np.max(np.abs(vals), axis=-1, keepdims=True)
    null = vals <= rtol * np.where(top > 0, top, 1.0)
    inv = np.where(null, 0.0, 1.0 / np.where(null, 1.0, vals))
    cov_diag = np.einsum("...ik,...k,...ik->...i", vecs, inv, vecs)
    share = np.einsum("...ik,...k->...i", vecs ** 2, null.astype(np.float64))
    err = np.sqrt(np.clip(cov_diag, 0.0, None)) / scale
    return np.where((share > 1e-8) | (d == 0), np.inf, err)


def numerical_jacobian(model, theta, steps):
    """Central-difference Jacobian of ``model(theta) -> (..., n_wl)``.

    Returns
    -------
    numpy.ndarray, shape (..., n_wl, n_par)
    """
    theta = np.asarray(theta, dtype=np.float64)
    cols = []
    for i, h in enumerate(np.asarray(steps, dtype=np.float64)):
        if not h > 0:
            raise InputError(f"step[{i}]", h, "a positive finite-difference step")
        up, dn = theta.copy(), theta.copy()
        up[i] += h
        dn[i] -= h
        cols.append((np.asarray(model(up)) - np.asarray(model(dn))) / (2 * h))
    return np.stack(cols, axis=-1)


def fisher_forecast(model, parameters, sigma1, n_transits, *, floor=0.0, floor_averages=False,
                    fit_offset=True):
    """Expected 1-sigma constraints on model parameters after N transits.

    Parameters
    ----------
    model : callable
        ``model(dict of name -> value) -> spectrum (n_wl,)`` in the units of
        ``sigma1``.
    parameters : dict
        ``name -> (value, step)``; ``step`` is the finite-difference step.
        Parameters are whatever the model takes (log10 mixing ratios,
        temperature, log10 cloud-top pressure, reference radius ...).
    sigma1 : array_like (n_wl,)
        Noise of one transit per bin.
    n_transits : int or array_like of int
        Number(s) of transits.
    floor, floor_averages :
        See :func:`snrkit.stats.detect.noise_per_bin`.
    fit_offset : bool
        Include a free vertical offset (marginalised over).

    Returns
    -------
    dict
        ``names`` and ``errors`` (shape (len(n_transits), n_par)), plus
        ``fisher`` at each N.
    """
    names = list(parameters)
    if not names:
        raise InputError("parameters", parameters, "at least one parameter")
    theta0 = np.array([parameters[k][0] for k in names], dtype=np.float64)
    steps = np.array([parameters[k][1] for k in names], dtype=np.float64)

    def fn(theta):
        return model(dict(zip(names, theta)))

    jac = numerical_jacobian(fn, theta0, steps)
    if fit_offset:
        jac = np.concatenate([jac, np.ones(jac.shape[:-1] + (1,))], axis=-1)
    n = np.atleast_1d(np.asarray(n_transits, dtype=np.float64))
    sig = noise_per_bin(np.asarray(sigma1)[None, :], n[:, None], floor, floor_averages)
    fis = fisher_matrix(jac[None], sig)
    err = fisher_errors(fis)[..., :len(names)]
    return {"names": names, "transits": n.astype(int), "errors": err, "fisher": fis}


def feature_scale_draws(radius, radius_sigma, mass, mass_sigma, draws, rng,
                        mass_sigma_log10=None):
    """Seeded draws of the feature-amplitude factor (Rp^3/Mp) / (Rp0^3/Mp0).

    Radius and measured mass are drawn from normal distributions truncated
    at zero; an estimated mass is drawn log-normally with the relation's
    scatter ``mass_sigma_log10`` (dex).  Broadcasts over a leading planet
    axis; returns shape (draws, n_planets).
    """
    r0 = np.atleast_1d(np.asarray(radius, dtype=np.float64))
    m0 = np.atleast_1d(np.asarray(mass, dtype=np.float64))
    rs = np.nan_to_num(np.atleast_1d(np.asarray(radius_sigma, dtype=np.float64)), nan=0.0)
    ms = np.nan_to_num(np.atleast_1d(np.asarray(mass_sigma, dtype=np.float64)), nan=0.0)
    for name, v in (("radius", r0), ("mass", m0)):
        if not np.all(np.isfinite(v) & (v > 0)):
            raise InputError(name, v.tolist(), "positive values")
    for name, v in (("radius_uncertainty", rs), ("mass_uncertainty", ms)):
        if not np.all(np.isfinite(v) & (v >= 0)):
            raise InputError(name, v.tolist(), "uncertainties >= 0")
    shape = (int(draws),) + np.broadcast_shapes(r0.shape, m0.shape)

    def positive_normal(mu, sd):
        x = rng.normal(mu, sd, size=shape)
        bad = x <= 0
        while np.any(bad):
            x[bad] = rng.normal(np.broadcast_to(mu, shape)[bad], np.broadcast_to(sd, shape)[bad])
            bad = x <= 0
        return x

    r = positive_normal(r0, rs)
    if mass_sigma_log10 is not None:
        dex = np.nan_to_num(np.atleast_1d(np.asarray(mass_sigma_log10, dtype=np.float64)), nan=0.0)
        logn = m0 * 10 ** (dex * rng.standard_normal(shape))
        use_log = np.broadcast_to(dex > 0, shape)
        m = np.where(use_log, logn, positive_normal(m0, ms))
    else:
        m = positive_normal(m0, ms)
    return (r ** 3 / m) / (r0 ** 3 / m0)


def transits_distribution(truth, alternative, sigma1, scale_draws, *, floor=0.0,
                          floor_averages=False, dof=1, sigma=5.0, n_max=1000, templates=None,
                          template_sigma=None):
    """Distribution of the transits needed when the feature amplitude is uncertain.

    Parameters
    ----------
    truth, alternative : array_like (n_planets, n_wl) or (n_wl,)
    sigma1 : array_like
        Per-transit noise, broadcastable to ``truth``.
    scale_draws : array_like (draws, n_planets)
        Multiplicative factors on the feature (truth - alternative), e.g.
        from :func:`feature_scale_draws`.
    templates, template_sigma : optional
        Nuisance templates (n_planets, n_wl, k) and their priors, as in
        :func:`snrkit.stats.detect.stack_transits`.

    Returns
    -------
    dict
        ``median``, ``p16``, ``p84`` (per planet; a percentile is NaN when
        the draws beyond it do not reach the target within ``n_max``, e.g.
        ``p84`` once more than 16 % fail) and ``fraction_reachable``.
    """
    truth = np.atleast_2d(np.asarray(truth, dtype=np.float64))
    alt = np.broadcast_to(np.atleast_2d(np.asarray(alternative, dtype=np.float64)), truth.shape)
    s = np.asarray(scale_draws, dtype=np.float64)
    resid = (truth - alt)[None] * s[..., None]
    tm = None if templates is None else np.asarray(templates)[None]
    res = stack_transits(resid, np.zeros_like(resid), np.broadcast_to(sigma1, truth.shape)[None],
                         floor=floor, floor_averages=floor_averages, dof=dof, sigma=sigma,
                         probabilities=(), n_max=n_max, n_curve=[1], templates=tm,
                         template_sigma=template_sigma)
    return spread_summary(res["transits_needed"])


def spread_summary(transits_needed):
    """16th, 50th and 84th percentiles over draws (axis 0) of the transits needed.

    A draw that never reaches the target (0) counts as infinitely many
    transits, so a percentile beyond the reachable draws is NaN.
    """
    n = np.asarray(transits_needed, dtype=np.float64).copy()
    n[n == 0] = np.inf
    frac = np.mean(np.isfinite(n), axis=0)
    with np.errstate(invalid="ignore"):
        q = np.percentile(n, [16, 50, 84], axis=0, method="inverted_cdf")
    q = np.where(np.isfinite(q), q, np.nan)
    return {"p16": q[0], "median": q[1], "p84": q[2], "fraction_reachable": frac}


def programme_hours(t14_hours, n_transits, *, baseline=1.0, baseline_is_multiple=True,
                    overhead_hours=DEFAULT_OVERHEAD_HOURS):
    """Telescope time for a number of transits.

    hours = N (T14 + baseline + overhead), with the baseline (out-of-transit
    time per visit) either a multiple of T14 (default: equal to T14, common
    practice, no source) or a number of hours.

    Returns
    -------
    dict
        ``hours_per_transit`` and ``hours_total`` (NaN where N is 0, i.e.
        not reachable).
    """
    t14 = np.asarray(t14_hours, dtype=np.float64)
    base = t14 * baseline if baseline_is_multiple else np.asarray(baseline, dtype=np.float64)
    if np.any(~np.isfinite(np.asarray(base))) or np.any(np.asarray(base) < 0):
        raise InputError("baseline", float(np.min(base)), "a non-negative duration")
    if not (np.isfinite(overhead_hours) and overhead_hours >= 0):
        raise InputError("overhead", float(overhead_hours), "non-negative hours")
    per = t14 + base + overhead_hours
    n = np.asarray(n_transits, dtype=np.float64)
    total = np.where(n > 0, n * per, np.nan)
    return {"hours_per_transit": per, "hours_total": total}
