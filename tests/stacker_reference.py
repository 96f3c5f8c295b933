"""Slow reference for the stacker's transits needed: the bisection it replaced.

Kept out of the package on purpose.  ``tests/test_stacker_search.py`` checks
that :func:`snrkit.stats.detect.stack_transits` gives the same integers, and
``benchmarks/bench_stacker.py`` times it against the secant search.

The reference evaluates lambda(N) = :func:`snrkit.stats.detect.nested_delta_chi2`
with the per-bin noise of :func:`snrkit.stats.detect.noise_per_bin` on the whole
batch at every step, and finds the smallest N in [1, n_max] with
lambda(N) >= target by bisection over the integers (about log2(n_max) + 1
evaluations per element); where lambda(N) = N lambda(1) it uses the closed
form, as the stacker always has.
"""

import numpy as np

from snrkit.stats import likelihood

__all__ = ["bisection_transits_needed", "lambda_of_n", "reference_transits_needed",
           "scipy_noncentrality"]


def bisection_transits_needed(lambda_of_n, target_lambda, n_max):
    """Smallest integer N in [1, n_max] with lambda(N) >= target, by bisection (0: never).

    ``lambda_of_n(n)`` takes an integer array of the batch shape and returns
    lambda there, non-decreasing in n.
    """
    target = np.asarray(target_lambda, dtype=np.float64)
    shape = target.shape
    hi = np.full(shape, int(n_max), dtype=np.int64)
    reach = np.asarray(lambda_of_n(hi)) >= target
    lo = np.zeros(shape, dtype=np.int64)          # lambda(lo) < target (lo = 0 by convention)
    hi = np.where(reach, hi, 0)
    active = reach & (hi - lo > 1)
    while np.any(active):
        mid = np.where(active, (lo + hi) // 2, np.maximum(hi, 1))
        ok = np.asarray(lambda_of_n(mid)) >= target
        hi = np.where(active & ok, mid, hi)
        lo = np.where(active & ~ok, mid, lo)
        active = reach & (hi - lo > 1)
    return np.where(reach, hi, 0)


def scipy_noncentrality(probability, sigma, dof):
    """lambda with detection probability P straight from scipy.special, no memo.

    1 dof: (Z + Phi^-1(P))^2, 0 when negative (Cowan et al. 2011, Eur. Phys.
    J. C 71, 1554, Sec. 3.5); more: chndtrinc at the chi^2_dof quantile of
    the one-sided tail Phi(-Z).
    """
    from scipy import special
    if dof == 1:
        root = sigma + special.ndtri(probability)
        return float(root ** 2) if root > 0 else 0.0
    crit = special.chdtri(dof, special.ndtr(-sigma))
    return float(special.chndtrinc(crit, dof, 1.0 - probability))


class lambda_of_n:
    """lambda(N) over the whole batch, counting element evaluations in ``evaluations``."""

    def __init__(self, data, null, sigma1, floor, floor_averages, **kw):
        self.d = np.asarray(data, dtype=np.float64)
        self.nul = np.broadcast_to(np.asarray(null, dtype=np.float64), self.d.shape)
        self.s1 = np.broadcast_to(np.asarray(sigma1, dtype=np.float64), self.d.shape)
        self.fl = np.broadcast_to(np.asarray(floor, dtype=np.float64), self.d.shape)
        self.floor_averages = floor_averages
        self.kw = kw
        self.batch = self.d.shape[:-1]
        self.evaluations = 0

    def __call__(self, n):
        n = np.asarray(n, dtype=np.float64)
        sig = likelihood.noise_per_bin(self.s1, n[..., None], self.fl, self.floor_averages)
        self.evaluations += int(np.prod(self.batch, dtype=np.int64))
        return np.broadcast_to(likelihood.nested_delta_chi2(self.d, self.nul, sig, **self.kw), self.batch)


def reference_transits_needed(data, null, sigma1, *, floor=0.0, floor_averages=False, dof=1,
                              sigma=5.0, probability=0.5, n_max=1000, **kw):
    """Transits needed as the stacker computed them before the secant search.

    Returns ``(n, lam)`` with ``lam`` the :class:`lambda_of_n` used (its
    ``evaluations`` count the work).
    """
    lam = lambda_of_n(data, null, sigma1, floor, floor_averages, **kw)
    lam1 = lam(np.ones(lam.batch))
    ts = kw.get("template_sigma")
    has_prior = ts is not None and np.any(np.isfinite(np.asarray(ts, dtype=np.float64)))
    no_floor = not np.any(lam.fl ** 2 > 0)
    dof_arr = np.broadcast_to(np.asarray(dof, dtype=np.float64), lam.batch)
    target = np.empty(lam.batch)
    for k in np.unique(dof_arr):
        target[dof_arr == k] = scipy_noncentrality(probability, sigma, k)
    if (no_floor or floor_averages) and not has_prior:
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            n = np.ceil(target / lam1 * (1.0 - 1e-12))
        n = np.where((lam1 > 0) & np.isfinite(n), np.maximum(n, 1.0), np.inf)
        n = np.where(n <= n_max, n, 0).astype(np.int64)
    else:
        n = bisection_transits_needed(lam, target, n_max)
    return np.where(lam1 > 0, n, 0), lam
