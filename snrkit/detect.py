"""Significance of spectral differences and the stacking of transits.

Compute layer (numpy, dimensionless depths, vectorized over any leading axes
such as planet and scenario; the last axis is wavelength):

* :func:`profiled_delta_chi2` -- the expected ("Asimov", noise-free)
  Delta chi^2 between a true spectrum and an alternative, with linear
  nuisance parameters (a vertical offset, optionally templates such as a
  stellar-contamination shape) profiled analytically (generalised least
  squares).  Cowan, Cranmer, Gross & Vitells 2011, Eur. Phys. J. C 71, 1554,
  Section 3.8: the Asimov data set gives the median significance.
* :func:`noise_per_bin` -- the per-bin standard deviation after N transits
  with white noise averaging as 1/sqrt(N) and a floor that does or does not
  average down.
* :func:`significance_from_delta_chi2` -- Z from a Delta chi^2 with nu degrees
  of freedom through the chi^2 tail probability, with the two-sided
  convention that makes Z = sqrt(Delta chi^2) for nu = 1 (Wilks 1938, Ann.
  Math. Stat. 9, 60; Cowan et al. 2011; equation numbers from memory).
* :func:`detection_probability` -- the probability that a noisy measurement
  reaches the target significance: the measured Delta chi^2 follows a
  noncentral chi^2 with nu degrees of freedom and noncentrality lambda =
  the Asimov Delta chi^2 (e.g. Cowan et al. 2011, Section 3.3).
* :func:`transits_needed` -- the smallest N that reaches a target, by
  vectorized bisection (Delta chi^2 never decreases with N).

For the flat-line rejection test the statistic is the chi^2 of the best flat
line, with nu = n_bins - 1 under the flat-line null.  Its "expected"
significance is taken at the median of the noncentral chi^2 (the value a
measurement exceeds half the time), which for nu = 1 equals the Asimov
value; so "transits needed" always means "reached with 50% probability",
and :func:`detection_probability` gives any other probability.
"""

from functools import lru_cache

import numpy as np

from .errors import InputError

__all__ = [
    "noise_per_bin", "profiled_delta_chi2", "significance_from_delta_chi2",
    "delta_chi2_for_significance", "critical_delta_chi2", "detection_probability",
    "noncentrality_for_probability", "expected_statistic", "transits_needed",
    "asymptotic_delta_chi2", "contamination_factor", "check_sigma", "check_probability",
    "stack_transits", "LIMITING_TERMS", "default_curve_transits",
]


def check_sigma(sigma, field="sigma"):
    """Validate a target significance (> 0, finite)."""
    s = np.asarray(sigma, dtype=np.float64)
    if s.ndim or not np.isfinite(s) or s <= 0 or s > 37:
        raise InputError(field, float(s) if s.ndim == 0 else sigma, "a significance in (0, 37] sigma")
    return float(s)


def check_probability(prob, field="probability"):
    """Validate a probability in the open interval (0, 1)."""
    p = np.asarray(prob, dtype=np.float64)
    if p.ndim or not np.isfinite(p) or not (0.0 < p < 1.0):
        raise InputError(field, prob, "a probability in (0, 1)")
    return float(p)


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


def profiled_delta_chi2(residual, sigma, templates=None, template_sigma=None):
    """Asimov Delta chi^2 with linear nuisance parameters profiled.

    Delta chi^2 = min_c sum_i (r_i - sum_k c_k X_ik)^2 / sigma_i^2
    = r^T W r - r^T W X (X^T W X)^-1 X^T W r, with W = diag(1/sigma^2).

    Parameters
    ----------
    residual : array_like, shape (..., n_wl)
        True spectrum minus alternative spectrum (same units as sigma).
    sigma : array_like, broadcastable to ``residual``
        Per-bin standard deviation (> 0); NaN or inf marks a bin that is not
        used (zero weight), e.g. a saturated one.
    templates : array_like, shape (..., n_wl, n_nuisance), optional
        Nuisance templates whose amplitudes are fitted; a constant column
        (the vertical offset) is always included.
    template_sigma : array_like, shape (n_nuisance,), optional
        Gaussian prior width of each template amplitude (in units of the
        template): the fit pays a^2 / s^2 for amplitude a.  Default: free
        (no prior).  A template scaled to the expected size of a systematic
        with s = 1 lets that systematic vary by its own size.

    Returns
    -------
    numpy.ndarray, shape (...)
        The profiled Delta chi^2 (>= 0).
    """
    r = np.asarray(residual, dtype=np.float64)
    sig = np.asarray(sigma, dtype=np.float64)
    if np.any(sig <= 0):
        raise InputError("sigma", float(np.min(sig)), "per-bin noise > 0 (NaN or inf: bin not used)")
    with np.errstate(divide="ignore"):
        w = np.where(np.isfinite(sig), 1.0 / np.where(np.isfinite(sig), sig, 1.0) ** 2, 0.0)
    r, w = np.broadcast_arrays(r, w)
    r = np.where(w > 0, r, 0.0)
    wr = w * r
    chi2 = np.sum(wr * r, axis=-1)
    if templates is None:
        # offset only: closed form sum w r^2 - (sum w r)^2 / sum w
        sw = np.sum(w, axis=-1)
        with np.errstate(invalid="ignore", divide="ignore"):
            out = chi2 - np.where(sw > 0, np.sum(wr, axis=-1) ** 2 / np.where(sw > 0, sw, 1.0), 0.0)
        # differences at the rounding level of chi2 are no signal
        return np.where(out <= 1e-12 * chi2, 0.0, out)
    ones = np.ones(r.shape + (1,))
    t = np.asarray(templates, dtype=np.float64)
    t = np.broadcast_to(t, r.shape + t.shape[-1:])
    x = np.concatenate([ones, np.where(np.isfinite(t), t, 0.0)], axis=-1)
    b = np.einsum("...l,...lk->...k", wr, x)
    a = np.einsum("...l,...lk,...lm->...km", w, x, x)
    if template_sigma is not None:
        ts = np.broadcast_to(np.asarray(template_sigma, dtype=np.float64), (t.shape[-1],))
        prior = np.concatenate([[0.0], np.where(np.isfinite(ts), 1.0 / ts ** 2, 0.0)])
        a = a + np.diag(prior)
    # Solve with a pseudo-inverse so degenerate templates (a template equal to
    # the offset, or zero) do not fail: they simply add no freedom.
    coef = np.einsum("...km,...m->...k", np.linalg.pinv(a, hermitian=True), b)
    out = chi2 - np.einsum("...k,...k->...", b, coef)
    return np.where(out <= 1e-10 * chi2, 0.0, out)


def _z_from_logp(logp):
    """Z = Phi^-1(1 - p) from log p, accurate for tiny p.

    Below p ~ 1e-304 the Gaussian tail log p = -Z^2/2 - ln Z - ln(2 pi)/2
    (Abramowitz & Stegun 1964, 26.2.12, leading term) is inverted by
    fixed-point iteration.
    """
    from scipy.special import ndtri
    logp = np.asarray(logp, dtype=np.float64)
    flat = np.atleast_1d(logp).ravel()
    z = np.empty_like(flat)
    ok = flat >= -700.0
    z[ok] = -ndtri(np.exp(flat[ok]))
    lp = flat[~ok]
    zz = np.sqrt(-2.0 * lp)
    for _ in range(8):
        zz = np.sqrt(-2.0 * lp - np.log(2 * np.pi) - 2.0 * np.log(zz))
    z[~ok] = zz
    return z.reshape(logp.shape)


def _chi2_logsf(x, dof):
    """log P(chi^2_dof > x), finite far into the tail.

    Direct (scipy.special.chdtrc) while the tail exceeds 1e-300; beyond, the
    asymptotic expansion of the upper incomplete gamma function
    Gamma(s, y) ~ y^(s-1) e^-y [1 + (s-1)/y + (s-1)(s-2)/y^2] with s = dof/2,
    y = x/2 (Abramowitz & Stegun 1964, 6.5.32).
    """
    from scipy.special import chdtrc, gammaln
    x, dof = np.broadcast_arrays(np.asarray(x, dtype=np.float64), np.asarray(dof, dtype=np.float64))
    sf = chdtrc(dof, x)
    s, y = dof / 2.0, np.maximum(x / 2.0, 1e-300)
    with np.errstate(divide="ignore", invalid="ignore"):
        tail = ((s - 1) * np.log(y) - y - gammaln(s)
                + np.log1p((s - 1) / y + (s - 1) * (s - 2) / y ** 2))
        direct = np.log(np.where(sf > 0, sf, 1.0))
    return np.where(sf > 1e-300, direct, tail)


def significance_from_delta_chi2(delta_chi2, dof=1):
    """Significance Z (in sigma) of a Delta chi^2 with ``dof`` degrees of freedom.

    p = P(chi^2_dof > Delta chi^2) and Z = Phi^-1(1 - p/2), the two-sided
    convention under which Z = sqrt(Delta chi^2) exactly for dof = 1 (Wilks'
    theorem; Cowan et al. 2011, Eur. Phys. J. C 71, 1554, the q0 test).
    """
    d = np.clip(np.asarray(delta_chi2, dtype=np.float64), 0.0, None)
    dof = np.asarray(dof, dtype=np.float64)
    logp = _chi2_logsf(d, dof)
    z = _z_from_logp(logp - np.log(2.0))
    return np.where(dof == 1, np.sqrt(d), np.clip(z, 0.0, None))


def critical_delta_chi2(sigma, dof=1):
    """Delta chi^2 at which a test with ``dof`` degrees of freedom reaches ``sigma``."""
    from scipy import special
    p = 2.0 * special.ndtr(-np.asarray(sigma, dtype=np.float64))
    return special.chdtri(dof, p)


delta_chi2_for_significance = critical_delta_chi2


_LAMBDA_GRID = np.logspace(-4.0, 8.0, 481)
#: Up to this many values per dof the median is computed directly, beyond
#: that through the per-dof table (the table costs ~0.1 s to build).
_DIRECT_MEDIAN_MAX = 2000


@lru_cache(maxsize=256)
def _median_table(dof):
    from scipy import special
    return np.log(special.chndtrix(0.5, dof, _LAMBDA_GRID))


def expected_statistic(noncentrality, dof=1):
    """Median of the measured statistic: the noncentral chi^2 median (nu, lambda).

    For dof = 1 the Asimov value lambda itself is used (Cowan et al. 2011:
    the Asimov data set gives the median significance), which is what makes
    Z = sqrt(lambda).  For dof > 1 the median is interpolated (log-log) in a
    table computed once per dof with scipy.special.chndtrix (relative error below
    1e-4); below lambda = 1e-4 the central chi^2 median is used, above 1e8
    lambda + nu.
    """
    from scipy import special
    lam = np.asarray(np.clip(np.asarray(noncentrality, dtype=np.float64), 0.0, None))
    dof = np.broadcast_to(np.asarray(dof, dtype=np.float64), lam.shape)
    out = np.array(lam, dtype=np.float64, copy=True)
    for d in np.unique(dof):
        if d == 1:
            continue
        sel = dof == d
        x = lam[sel]
        if x.size <= _DIRECT_MEDIAN_MAX:
            # few values: evaluate the quantile directly
            med = special.chndtrix(0.5, d, np.clip(x, _LAMBDA_GRID[0], _LAMBDA_GRID[-1]))
        else:
            logx = np.log(np.clip(x, _LAMBDA_GRID[0], _LAMBDA_GRID[-1]))
            med = np.exp(np.interp(logx, np.log(_LAMBDA_GRID), _median_table(float(d))))
        med = np.where(x < _LAMBDA_GRID[0], special.chdtri(d, 0.5), med)
        med = np.where(x > _LAMBDA_GRID[-1], x + d, med)
        out[sel] = med
    return out


def detection_probability(noncentrality, sigma, dof=1):
    """Probability that a measurement reaches ``sigma``.

    P = P(chi'^2_{dof}(lambda) > Delta chi^2_crit), the survival function of
    the noncentral chi^2 (scipy.special.chndtr, the distribution function
    behind scipy.stats.ncx2) at the critical value of the
    target significance.  For dof = 1 it equals
    Phi(sqrt(lambda) - Z) + Phi(-sqrt(lambda) - Z): the two-sided tail, so
    at lambda = Z^2 it is slightly above 1/2 (by Phi(-2Z), which matters
    only for targets below about 2 sigma), whereas the "expected" answer
    uses the Asimov value Z = sqrt(lambda).
    """
    from scipy import special
    lam = np.clip(np.asarray(noncentrality, dtype=np.float64), 0.0, None)
    crit = critical_delta_chi2(sigma, dof)
    return 1.0 - special.chndtr(crit, dof, np.clip(lam, 1e-12, None))


def noncentrality_for_probability(probability, sigma, dof=1):
    """The lambda at which the detection probability equals ``probability``."""
    # Bisection on a bracket (the probability rises monotonically with lambda);
    # scipy.optimize is not needed for one monotone scalar.
    lo, hi = 0.0, max(float(critical_delta_chi2(sigma, dof)), 1.0)
    while detection_probability(hi, sigma, dof) < probability:
        hi *= 2.0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if detection_probability(mid, sigma, dof) < probability:
            lo = mid
        else:
            hi = mid
        if hi - lo <= 1e-12 * hi:
            break
    return 0.5 * (lo + hi)


def transits_needed(lambda_of_n, target_lambda, n_max):
    """Smallest integer N in [1, n_max] with lambda(N) >= target, by bisection.

    Parameters
    ----------
    lambda_of_n : callable
        ``lambda_of_n(n)`` with ``n`` an integer array of the batch shape
        returns the Asimov Delta chi^2 after ``n`` transits (non-decreasing
        in n).
    target_lambda : array_like
        The value to reach (batch shape).
    n_max : int
        Largest N considered.

    Returns
    -------
    numpy.ndarray of int
        N, or 0 where even ``n_max`` transits do not reach the target.
    """
    target = np.asarray(target_lambda, dtype=np.float64)
    shape = target.shape
    hi = np.full(shape, int(n_max), dtype=np.int64)
    reach = np.asarray(lambda_of_n(hi)) >= target
    lo = np.zeros(shape, dtype=np.int64)          # lambda(lo) < target (lo = 0 by convention)
    hi = np.where(reach, hi, 0)
    # invariant where reach: lambda(hi) >= target, lambda(lo) < target or lo == 0
    active = reach & (hi - lo > 1)
    while np.any(active):
        mid = np.where(active, (lo + hi) // 2, np.maximum(hi, 1))
        ok = np.asarray(lambda_of_n(mid)) >= target
        hi = np.where(active & ok, mid, hi)
        lo = np.where(active & ~ok, mid, lo)
        active = reach & (hi - lo > 1)
    return np.where(reach, hi, 0)


def asymptotic_delta_chi2(residual, floor, templates=None, usable=None, template_sigma=None):
    """Delta chi^2 as N -> infinity with a floor that does not average down.

    Per element of the batch: infinite where a used bin carrying signal has
    zero floor; otherwise the profiled Delta chi^2 with sigma = floor on the
    bins with a floor.

    Parameters
    ----------
    residual : array_like (..., n_wl)
    floor : array_like, broadcastable
    templates : optional, see :func:`profiled_delta_chi2`
    usable : array_like of bool, optional
        Bins taking part (default: all).
    """
    r = np.asarray(residual, dtype=np.float64)
    f = np.broadcast_to(np.asarray(floor, dtype=np.float64), r.shape)
    use = np.ones(r.shape, dtype=bool) if usable is None else np.broadcast_to(usable, r.shape)
    unbounded = np.any(use & (f == 0) & (r != 0), axis=-1)
    sig = np.where(use & (f > 0), f, np.inf)
    lam = profiled_delta_chi2(r, sig, templates, template_sigma)
    return np.where(unbounded, np.inf, lam)


def contamination_factor(spot_fraction, spot_contrast, facula_fraction=0.0, facula_contrast=1.0):
    """Transit-light-source factor of unocculted active regions.

    epsilon = 1 / [1 - f_spot (1 - F_spot/F_phot) - f_fac (1 - F_fac/F_phot)]
    (Rackham, Apai & Giampapa 2018, ApJ 853, 122, Section 2; equation
    number from memory: their spot-only form, with the faculae term added the
    same way).  The observed depth is epsilon times the true depth.

    Parameters
    ----------
    spot_fraction, facula_fraction : array_like
        Unocculted covering fractions (0..1).
    spot_contrast, facula_contrast : array_like
        Flux ratios F_region/F_photosphere per wavelength bin (spots < 1,
        faculae > 1).
    """
    fs = np.asarray(spot_fraction, dtype=np.float64)
    ff = np.asarray(facula_fraction, dtype=np.float64)
    for name, v in (("spot_fraction", fs), ("facula_fraction", ff)):
        if np.any(~np.isfinite(v)) or np.any(v < 0) or np.any(v >= 1):
            raise InputError(name, v.tolist(), "a covering fraction in [0, 1)")
    if np.any(fs + ff >= 1):
        raise InputError("spot_fraction + facula_fraction", (fs + ff).tolist(), "a sum below 1")
    for name, v in (("spot_contrast", spot_contrast), ("facula_contrast", facula_contrast)):
        if np.any(np.asarray(v, dtype=np.float64) < 0):
            raise InputError(name, "negative", "flux ratios >= 0")
    denom = 1.0 - fs * (1.0 - np.asarray(spot_contrast)) - ff * (1.0 - np.asarray(facula_contrast))
    return 1.0 / denom


# ---------------------------------------------------------------------------
# Stacker: the public layer
# ---------------------------------------------------------------------------

#: Words used in ``limiting_term``.
LIMITING_TERMS = ("white noise", "noise floor", "stellar contamination", "transit limit",
                  "no signal")


def _lambda_function(residual, sigma1, floor, floor_averages, templates, template_sigma=None):
    """Closure lambda(N) over the batch shape of ``residual`` (..., n_wl)."""
    r = np.asarray(residual, dtype=np.float64)
    s2 = np.broadcast_to(np.asarray(sigma1, dtype=np.float64), r.shape) ** 2
    f2 = np.broadcast_to(np.asarray(floor, dtype=np.float64), r.shape) ** 2
    white_only = np.all(f2 == 0)
    lam1 = profiled_delta_chi2(r, np.sqrt(s2 + f2), templates, template_sigma)
    if (white_only or floor_averages) and template_sigma is None:
        # sigma_N^2 = (sigma_1^2 + floor^2) / N exactly: lambda(N) = N lambda(1)
        return lambda n: np.asarray(n, dtype=np.float64) * lam1, lam1

    def lam(n):
        n = np.asarray(n, dtype=np.float64)[..., None]
        if floor_averages:
            return profiled_delta_chi2(r, np.sqrt((s2 + f2) / n), templates, template_sigma)
        return profiled_delta_chi2(r, np.sqrt(s2 / n + f2), templates, template_sigma)
    return lam, lam1


def default_curve_transits(n_max, points=40):
    """About ``points`` log-spaced integers from 1 to n_max (for curves and plots)."""
    return np.unique(np.round(np.geomspace(1, max(int(n_max), 1), points)).astype(np.int64))


def stack_transits(truth, alternative, sigma1, *, floor=0.0, floor_averages=False,
                   dof=1, templates=None, template_sigma=None, sigma=5.0,
                   probabilities=(0.5, 0.9),
                   n_max=1000, n_curve=None):
    """Significance versus number of transits, and the transits needed.

    All spectra are depths on one wavelength grid, in one unit (ppm or
    dimensionless), with any leading batch axes (planet, scenario, ...).

    Parameters
    ----------
    truth : array_like, shape (..., n_wl)
        The spectrum assumed true (the noise-free "Asimov" data).
    alternative : array_like, shape (..., n_wl)
        The model to reject (the flat line, the scenario without a species,
        another scenario), already at its best-fitting non-linear parameters
        if any; its vertical offset and any ``templates`` are profiled here.
    sigma1 : array_like, shape (..., n_wl)
        White noise of one transit per bin.
    floor : float or array_like
        Systematics floor per bin (same unit).
    floor_averages : bool
        True: the floor averages down as 1/sqrt(N); False: it does not.
    dof : int or array_like
        Degrees of freedom of the test (1 for a template test, n_bins - 1
        for flat-line rejection).
    templates : array_like, shape (..., n_wl, k), optional
        Extra linear nuisance shapes (for example a stellar-contamination
        signature) whose amplitudes are fitted.
    template_sigma : array_like (k,), optional
        Prior widths of those amplitudes (see :func:`profiled_delta_chi2`);
        with a prior, lambda(N) is not N lambda(1), so it is recomputed per N.
    sigma : float
        Target significance.
    probabilities : sequence of float
        Detection probabilities for which N is also reported.
    n_max : int
        Largest number of transits considered.
    n_curve : array_like of int, optional
        N values for the returned curve (default :func:`default_curve_transits`).

    Returns
    -------
    dict
        ``transits_needed`` (int array; 0 = not reachable),
        ``reachable`` (bool), ``limiting_term`` (str array),
        ``significance_per_transit`` (Z at N = 1), ``asymptotic_significance``
        (Z as N -> infinity; inf without a non-averaging floor),
        ``transits_for_probability`` ({p: int array}), ``curve_transits``,
        ``curve_significance`` (..., n_curve), ``curve_probability``
        (..., n_curve) for the first probability's target, ``delta_chi2_per_transit``.
    """
    sigma = check_sigma(sigma)
    probabilities = tuple(check_probability(p, "probability") for p in probabilities)
    if int(n_max) < 1:
        raise InputError("n_max", n_max, "an integer >= 1")
    n_max = int(n_max)
    truth = np.asarray(truth, dtype=np.float64)
    alternative = np.asarray(alternative, dtype=np.float64)
    resid = truth - alternative
    dof_arr = np.broadcast_to(np.asarray(dof, dtype=np.float64), resid.shape[:-1])
    lam_fn, lam1 = _lambda_function(resid, sigma1, floor, floor_averages, templates,
                                    template_sigma)
    fl = np.broadcast_to(np.asarray(floor, dtype=np.float64), resid.shape)
    used = np.isfinite(np.broadcast_to(np.asarray(sigma1, dtype=np.float64), resid.shape))
    if (floor_averages or np.all(fl == 0)) and template_sigma is None:
        lam_inf = np.where(lam1 > 0, np.inf, 0.0)
    elif floor_averages or np.all(fl == 0):
        # white noise -> 0 with a prior on the templates: the prior alone limits them
        lam_inf = np.where(lam1 > 0, np.inf, 0.0)
    else:
        lam_inf = asymptotic_delta_chi2(resid, fl, templates, usable=used,
                                        template_sigma=template_sigma)

    # the lambda to reach: expected (median) statistic at the target, and per probability
    def target_lambda(prob):
        out = np.empty(dof_arr.shape)
        for d in np.unique(dof_arr):
            if prob is None and d == 1:
                val = sigma ** 2
            else:
                val = noncentrality_for_probability(0.5 if prob is None else prob, sigma, d)
            out[dof_arr == d] = val
        return out

    need_expected = target_lambda(None)
    n_needed = transits_needed(lam_fn, need_expected, n_max)
    n_prob = {p: transits_needed(lam_fn, target_lambda(p), n_max) for p in probabilities}

    # No signal at all is 0 sigma (for dof > 1 the noncentral median would give
    # the null's median, 0.67 sigma, for any lambda -> 0+).
    z1 = np.where(lam1 > 0, significance_from_delta_chi2(expected_statistic(lam1, dof_arr), dof_arr),
                  0.0)
    z_inf = np.where(np.isinf(lam_inf), np.inf,
                     significance_from_delta_chi2(expected_statistic(np.where(np.isinf(lam_inf), 0, lam_inf),
                                                                     dof_arr), dof_arr))
    reachable = n_needed > 0
    limiting = np.full(resid.shape[:-1], "white noise", dtype="<U24")
    if templates is not None:
        lam1_free = profiled_delta_chi2(resid, noise_per_bin(np.broadcast_to(sigma1, resid.shape),
                                                             1.0, fl, floor_averages))
        # (lam1 already includes the templates and their prior)
        # "masked" when the fitted signature removes three quarters of the
        # signal (threshold: common practice, no source)
        masked = (lam1 < 0.25 * lam1_free)
    else:
        masked = np.zeros(resid.shape[:-1], dtype=bool)
    floor_limited = lam_inf < need_expected
    limiting = np.where(~reachable & floor_limited, "noise floor", limiting)
    limiting = np.where(~reachable & ~floor_limited, "transit limit", limiting)
    limiting = np.where(~reachable & masked, "stellar contamination", limiting)
    limiting = np.where((lam1 <= 0) & ~masked, "no signal", limiting)
    # For reachable targets: which noise term dominates at the N needed
    if np.any(reachable) and not np.all(fl == 0):
        n_at = np.maximum(n_needed, 1)[..., None].astype(np.float64)
        s1 = np.broadcast_to(np.asarray(sigma1, dtype=np.float64), resid.shape)
        # rows with no usable bin are unreachable anyway: give them zeros
        use = used | ~np.any(used, axis=-1, keepdims=True)
        with np.errstate(all="ignore"):
            white = np.nanmedian(np.where(use, np.nan_to_num(s1 ** 2 / n_at), np.nan), axis=-1)
            flr = np.nanmedian(np.where(use, fl ** 2 / (n_at if floor_averages else 1.0), np.nan),
                               axis=-1)
        limiting = np.where(reachable & (flr > white), "noise floor", limiting)

    if n_curve is None:
        n_curve = default_curve_transits(n_max)
    n_curve = np.asarray(n_curve, dtype=np.int64)
    lam_curve = np.stack([np.broadcast_to(lam_fn(np.full(resid.shape[:-1], n)), resid.shape[:-1])
                          for n in n_curve], axis=-1)
    dof_c = dof_arr[..., None]
    z_curve = np.where(lam_curve > 0,
                       significance_from_delta_chi2(expected_statistic(lam_curve, dof_c), dof_c), 0.0)
    p_curve = np.empty_like(lam_curve)
    for d in np.unique(dof_arr):
        sel = dof_arr == d
        p_curve[sel] = detection_probability(lam_curve[sel], sigma, d)
    return {
        "transits_needed": n_needed, "reachable": reachable, "limiting_term": limiting,
        "significance_per_transit": z1, "asymptotic_significance": z_inf,
        "delta_chi2_per_transit": lam1, "transits_for_probability": n_prob,
        "curve_transits": n_curve, "curve_significance": z_curve,
        "curve_probability": p_curve, "target_sigma": sigma, "dof": dof_arr,
    }
