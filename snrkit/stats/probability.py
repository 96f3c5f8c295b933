"""Significances and probabilities of a Delta chi^2 statistic.

One degree of freedom in closed form (Cowan et al. 2011, Eur. Phys. J. C
71, 1554), more degrees of freedom through the noncentral chi^2
(scipy.special.chndtr and chndtrinc).  The quantities that depend only on the
settings (critical value, noncentrality for a probability) are computed once
per distinct (sigma, probability, dof) and memoised.  The input checks of
sigma and probability live here too.
"""

import functools

import numpy as np

from ..errors import InputError

__all__ = ["check_sigma", "check_probability", "significance_from_delta_chi2",
           "critical_delta_chi2", "delta_chi2_for_significance", "expected_statistic",
           "detection_probability", "noncentrality_for_probability",
           "significance_at_probability"]


def check_sigma(sigma, field="sigma"):
    """Validate a target significance: a finite number in (0, 37] sigma."""
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


def _z_from_logp(logp):
    """One-sided Z = -Phi^-1(p) from log p, accurate far into the tail (scipy.special.ndtri_exp)."""
    from scipy.special import ndtri_exp
    return -ndtri_exp(np.asarray(logp, dtype=np.float64))


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
                + np.log1p((s - 1) / y + ((s - 1) / y) * ((s - 2) / y)))   # no y**2: overflows past 1e154
        direct = np.log(np.where(sf > 0, sf, 1.0))
    return np.where(sf > 1e-300, direct, tail)


def significance_from_delta_chi2(delta_chi2, dof=1):
    """Significance Z (sigma) of a test statistic.

    One degree of freedom: the one-sided q0 test, Z = sqrt(Delta chi^2)
    (Wilks 1938, Ann. Math. Stat. 9, 60; C11, Sec. 3.5).  More degrees of
    freedom (goodness of fit): p = P(chi^2_dof > Delta chi^2) and
    Z = Phi^-1(1 - p), the usual one-sided Gaussian equivalent of a p-value
    (0 for p >= 1/2).
    """
    d = np.clip(np.asarray(delta_chi2, dtype=np.float64), 0.0, None)
    dof = np.asarray(dof, dtype=np.float64)
    if np.all(dof == 1):
        return np.sqrt(d)
    z = _z_from_logp(_chi2_logsf(d, dof))
    return np.where(dof == 1, np.sqrt(d), np.clip(z, 0.0, None))


def _per_distinct(fn, *args):
    """``fn`` evaluated once per distinct tuple of the broadcast ``args``, scattered back.

    ``fn`` takes and returns Python floats and is memoised (functools.lru_cache),
    so a quantity that depends only on a few settings (sigma, probability, dof)
    is computed once per process for each tuple instead of once per element.
    """
    arrs = np.broadcast_arrays(*(np.asarray(a, dtype=np.float64) for a in args))
    shape = arrs[0].shape
    if arrs[0].size == 1:
        return np.full(shape, fn(*(float(a.reshape(-1)[0]) for a in arrs)))
    cols = np.stack([a.reshape(-1) for a in arrs], axis=-1)
    uniq, inverse = np.unique(cols, axis=0, return_inverse=True)
    vals = np.array([fn(*map(float, row)) for row in uniq], dtype=np.float64)
    return vals[inverse.reshape(-1)].reshape(shape)


@functools.lru_cache(maxsize=4096)
def _critical_one(z, dof):
    """chi^2_dof quantile at the one-sided tail Phi(-Z) (scipy.special.chdtri), Z^2 at 1 dof."""
    from scipy import special
    if dof == 1:
        return float(np.float64(z) ** 2)
    with np.errstate(invalid="ignore"):
        return float(special.chdtri(max(dof, 1.0), special.ndtr(-z)))


@functools.lru_cache(maxsize=4096)
def _noncentrality_one(p, z, dof):
    """lambda with P(detection) = p: closed form at 1 dof, else scipy.special.chndtrinc."""
    from scipy import special
    root = z + special.ndtri(p)
    if dof == 1:
        return float(root ** 2) if root > 0 else 0.0
    with np.errstate(invalid="ignore"):
        return float(special.chndtrinc(_critical_one(z, dof), max(dof, 1.0), 1.0 - p))


def critical_delta_chi2(sigma, dof=1):
    """Delta chi^2 at which a test with ``dof`` degrees of freedom reaches ``sigma``.

    Z^2 for one degree of freedom; otherwise the chi^2_dof quantile at the
    one-sided tail probability Phi(-Z) (scipy.special.chdtri).  Depends only
    on (Z, dof): computed once per distinct pair and memoised.

    Parameters
    ----------
    sigma : array_like
        Target significance Z [sigma].
    dof : array_like
        Degrees of freedom (broadcasts against ``sigma``).

    Returns
    -------
    numpy.ndarray
        The critical Delta chi^2 (dimensionless).
    """
    return _per_distinct(_critical_one, sigma, dof)


delta_chi2_for_significance = critical_delta_chi2


_LAMBDA_GRID = np.logspace(-4.0, 8.0, 481)
_MEDIAN_TABLES = {}


def _median_table(dof):
    from scipy import special
    if dof not in _MEDIAN_TABLES:
        _MEDIAN_TABLES[dof] = np.log(special.chndtrix(0.5, dof, _LAMBDA_GRID))
    return _MEDIAN_TABLES[dof]


def expected_statistic(noncentrality, dof=1):
    """Median of the measured statistic for noncentrality lambda.

    One degree of freedom: lambda itself (the Asimov data set gives the
    median of q0; C11, Sec. 3.8).  More: the noncentral chi^2 median
    (scipy.special.chndtrix), interpolated log-log in a table per dof
    (481 values over 1e-4 to 1e8; relative error below 1e-4), for every call,
    so that a value never depends on the size of its batch.

    Parameters
    ----------
    noncentrality : array_like
        Asimov Delta chi^2 lambda (dimensionless).
    dof : array_like
        Degrees of freedom.

    Returns
    -------
    numpy.ndarray
        The median statistic (dimensionless).
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
        clipped = np.clip(x, _LAMBDA_GRID[0], _LAMBDA_GRID[-1])
        # always through the table, so that a value does not depend on how many
        # others share the call (one planet alone or inside a catalogue chunk)
        med = np.exp(np.interp(np.log(clipped), np.log(_LAMBDA_GRID), _median_table(float(d))))
        med = np.where(x < _LAMBDA_GRID[0], special.chdtri(d, 0.5), med)
        med = np.where(x > _LAMBDA_GRID[-1], x + d, med)
        out[sel] = med
    return out


def detection_probability(noncentrality, sigma, dof=1):
    """Probability that a measurement reaches ``sigma`` when the Asimov statistic is lambda.

    One degree of freedom (q0): the fitted amplitude is Gaussian about its
    true value, so P = Phi(sqrt(lambda) - Z) (C11, Sec. 3.5; 1/2 at
    lambda = Z^2).  More degrees of freedom: the survival function of the
    noncentral chi^2 at the critical value, 1 - scipy.special.chndtr.
    """
    from scipy import special
    lam = np.clip(np.asarray(noncentrality, dtype=np.float64), 0.0, None)
    dof = np.asarray(dof, dtype=np.float64)
    z = np.asarray(sigma, dtype=np.float64)
    one = special.ndtr(np.sqrt(lam) - z)
    if np.all(dof == 1):
        return one
    crit = critical_delta_chi2(z, dof)
    with np.errstate(invalid="ignore"):
        many = 1.0 - special.chndtr(crit, np.maximum(dof, 1.0), np.clip(lam, 1e-12, None))
    return np.where(dof == 1, one, many)


def noncentrality_for_probability(probability, sigma, dof=1):
    """The Asimov lambda at which the detection probability equals ``probability``.

    One degree of freedom: (Z + Phi^-1(P))^2 (0 when P <= Phi(-Z)); more:
    scipy.special.chndtrinc at the critical value.  Depends only on
    (P, Z, dof): computed once per distinct tuple and memoised.

    Parameters
    ----------
    probability : array_like
        Detection probability P in (0, 1).
    sigma : array_like
        Target significance Z [sigma].
    dof : array_like
        Degrees of freedom.

    Returns
    -------
    numpy.ndarray
        The noncentrality lambda (dimensionless Delta chi^2).
    """
    return _per_distinct(_noncentrality_one, probability, sigma, dof)


def significance_at_probability(noncentrality, probability, dof=1):
    """Significance reached or exceeded with ``probability`` when the Asimov statistic is lambda.

    The quantile of the measured significance: a real data set reaches at
    least this Z with the given probability.  One degree of freedom (q0): the
    fitted amplitude is Gaussian about sqrt(lambda) with unit width, so
    Z_P = sqrt(lambda) - Phi^-1(P), 0 where that is negative (C11, Sec. 3.5;
    the inverse of :func:`detection_probability`).  More degrees of freedom:
    the statistic is noncentral chi^2 (Johnson, Kotz & Balakrishnan 1995,
    *Continuous Univariate Distributions* vol. 2, ch. 29), its lower
    1 - P quantile (scipy.special.chndtrix) turned into Z by
    :func:`significance_from_delta_chi2`.  At P = 1/2 the median of
    :func:`expected_statistic` is used, so that the 50 % curve is the expected
    (median) curve itself.

    Parameters
    ----------
    noncentrality : array_like
        Asimov Delta chi^2 lambda (dimensionless); inf gives inf.
    probability : float
        Probability P in (0, 1).
    dof : array_like
        Degrees of freedom (broadcasts against ``noncentrality``).

    Returns
    -------
    numpy.ndarray
        Z_P [sigma], never above the median significance for P >= 1/2.
    """
    from scipy import special
    p = check_probability(probability)
    lam = np.clip(np.asarray(noncentrality, dtype=np.float64), 0.0, None)
    dof = np.broadcast_to(np.asarray(dof, dtype=np.float64), lam.shape)
    finite = np.where(np.isinf(lam), 0.0, lam)
    one = np.clip(np.sqrt(finite) - special.ndtri(p), 0.0, None)
    if np.all(dof == 1):
        z = one
    elif p == 0.5:
        z = significance_from_delta_chi2(expected_statistic(finite, dof), dof)
    else:
        with np.errstate(invalid="ignore"):
            q = special.chndtrix(1.0 - p, np.maximum(dof, 1.0), np.clip(finite, 1e-12, None))
        z = np.where(dof == 1, one, significance_from_delta_chi2(q, dof))
    return np.where(np.isinf(lam), np.inf, np.where(lam > 0, z, 0.0))
