"""The transits needed where the statistic grows with N: closed form, or a secant search with an exact integer check."""

import numpy as np

from ..errors import InputError
from .likelihood import nested_delta_chi2

__all__ = ["transits_needed", "asymptotic_delta_chi2", "contamination_factor"]


def transits_needed(lambda_of_n, target_lambda, n_max, *, lambda_one=None):
    """Smallest integer N in [1, n_max] with lambda(N) >= target.

    A few vectorized secant (regula falsi) steps on 1/lambda against 1/N,
    which is a straight line when the floor-to-white ratio is the same in
    every bin (lambda(N) = N lambda_w / (1 + N k)), then an exact integer
    check: the answer is the N with lambda(N - 1) < target <= lambda(N), the
    same integer as a bisection over N for any lambda non-decreasing in N.

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
    lambda_one : array_like, optional
        lambda(1) if already known (saves one evaluation).

    Returns
    -------
    numpy.ndarray of int
        N, or 0 where even ``n_max`` transits do not reach the target.
    """
    target = np.asarray(target_lambda, dtype=np.float64)
    shape = target.shape

    def at(pos, n):
        # one call per layer of distinct elements (an element may be asked at two N)
        out = np.empty(pos.size)
        left = np.arange(pos.size)
        while left.size:
            take = left[np.unique(pos[left], return_index=True)[1]]
            full = np.ones(target.size, dtype=np.int64)
            full[pos[take]] = n[take]
            out[take] = np.asarray(lambda_of_n(full.reshape(shape)),
                                   dtype=np.float64).reshape(-1)[pos[take]]
            left = np.setdiff1d(left, take)
        return out

    every = np.arange(target.size)
    one = (at(every, np.ones(target.size, np.int64)) if lambda_one is None
           else np.broadcast_to(np.asarray(lambda_one, dtype=np.float64), shape).reshape(-1))
    n, _ = _search_transits(at, target.reshape(-1), int(n_max), one)
    return n.reshape(shape)


#: Secant rounds before an element falls back to halving its bracket (a
#: safeguard for lambda(N) far from the 1/lambda-linear form; common practice,
#: no source).
_SECANT_ROUNDS = 6


# size: one secant search with its integer check; split, the iteration would not read as one
def _search_transits(lam_at, target, n_max, lam_one, lam_limit=None):
    """Smallest N in [1, n_max] with lambda(N) >= target, per element (flat arrays).

    ``lam_at(pos, n)`` returns lambda at the integers ``n`` for the elements
    ``pos`` only (an element may appear twice), so converged elements cost
    nothing.  ``lam_one`` is lambda(1); ``lam_limit``, if given, lambda as
    N -> infinity (inf: unbounded).

    Keeps the bracket lambda(lo) < target <= lambda(hi) with integers
    lo < hi, where hi = n_max + 1 stands for "not reached" and carries
    lambda(inf) (at 1/N = 0) until a probe replaces it; without
    ``lam_limit`` lambda(n_max) is evaluated first.  The next N comes from
    the secant through the bracket on 1/lambda against 1/N, and the pair
    (c - 1, c) around the proposal c is evaluated, so that a proposal within
    one transit ends the search; a limit below the target sends the probe
    to n_max.  After :data:`_SECANT_ROUNDS` rounds the bracket is halved
    instead.  The search stops when hi = lo + 1, with lambda evaluated
    exactly at both integers.

    Returns
    -------
    (numpy.ndarray of int, numpy.ndarray)
        N (0: not reached at n_max) and lambda(N) (lambda(1) where N = 0).
    """
    t = np.asarray(target, dtype=np.float64)
    lam_one = np.asarray(lam_one, dtype=np.float64)
    n_out = np.zeros(t.shape, dtype=np.int64)
    lam_out = lam_one.copy()
    first = lam_one >= t
    n_out[first] = 1
    pos = np.flatnonzero(~first)
    if n_max <= 1 or pos.size == 0:
        return n_out, lam_out
    lo = np.ones(pos.size, dtype=np.int64)
    f_lo = lam_one[pos]
    if lam_limit is None:
        top = lam_at(pos, np.full(pos.size, n_max))
        reach = top >= t[pos]
        hi = np.where(reach, n_max, n_max + 1)
        f_hi = np.where(reach, top, np.inf)
        lo = np.where(reach, lo, n_max)                 # not reached: settled
        f_lo = np.where(reach, f_lo, top)
    else:
        hi = np.full(pos.size, n_max + 1, dtype=np.int64)
        f_hi = np.asarray(lam_limit, dtype=np.float64)[pos].copy()
    tt = t[pos]
    rounds = 0
    while True:
        a = np.flatnonzero(hi - lo > 1)
        if a.size == 0:
            break
        lo_a, hi_a = lo[a], hi[a]
        if rounds < _SECANT_ROUNDS:
            virtual = hi_a > n_max
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                x_lo = 1.0 / lo_a
                x_hi = np.where(virtual, 0.0, 1.0 / hi_a)
                y_lo, y_hi, y_t = 1.0 / f_lo[a], 1.0 / f_hi[a], 1.0 / tt[a]
                x = x_lo + (y_t - y_lo) * (x_hi - x_lo) / (y_hi - y_lo)
                guess = np.ceil(1.0 / x)
            guess = np.where(np.isfinite(guess), guess, (lo_a + hi_a) // 2)
            # a limit below the target: only n_max can still show it reached
            guess = np.where(virtual & ~(f_hi[a] >= tt[a]), hi_a, guess)
            c = np.clip(guess, lo_a + 2, hi_a).astype(np.int64)
            # the pair (c - 1, c): both inside the open bracket unless c = hi
            inner = c < hi_a
            b = a[inner]
            vals = lam_at(pos[np.concatenate([a, b])], np.concatenate([c - 1, c[inner]]))
            v1, v2 = vals[:a.size], vals[a.size:]
            ok1 = v1 >= tt[a]
            # c - 1 reached: it is the new hi, c says nothing more
            hi[a[ok1]], f_hi[a[ok1]] = c[ok1] - 1, v1[ok1]
            lo[a[~ok1]], f_lo[a[~ok1]] = c[~ok1] - 1, v1[~ok1]
            go = ~ok1[inner]
            b, v2, c2 = b[go], v2[go], c[inner][go]
            ok2 = v2 >= tt[b]
            hi[b[ok2]], f_hi[b[ok2]] = c2[ok2], v2[ok2]
            lo[b[~ok2]], f_lo[b[~ok2]] = c2[~ok2], v2[~ok2]
        else:
            mid = (lo_a + hi_a) // 2
            v = lam_at(pos[a], mid)
            ok = v >= tt[a]
            hi[a[ok]], f_hi[a[ok]] = mid[ok], v[ok]
            lo[a[~ok]], f_lo[a[~ok]] = mid[~ok], v[~ok]
        rounds += 1
    reached = hi <= n_max
    n_out[pos[reached]] = hi[reached]
    lam_out[pos[reached]] = f_hi[reached]
    return n_out, lam_out


def _linear_transits_needed(lam1, target, n_max):
    """N = ceil(target / lambda_1) where lambda(N) = N lambda_1 (0: beyond n_max)."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        n = np.ceil(target / lam1 * (1.0 - 1e-12))
    n = np.where((lam1 > 0) & np.isfinite(n), np.maximum(n, 1.0), np.inf)
    return np.where(n <= n_max, n, 0).astype(np.int64)


def asymptotic_delta_chi2(residual, floor, templates=None, usable=None, template_sigma=None):
    """Delta chi^2 as N -> infinity with a floor that does not average down.

    Per element of the batch: infinite where a used bin carrying signal has
    zero floor; otherwise the profiled chi^2 with sigma = floor on the
    bins with a floor (the white noise has averaged away).

    Parameters
    ----------
    residual : array_like (..., n_wl)
        Data minus null.
    floor : array_like, broadcastable
    templates, template_sigma : optional, see :func:`profiled_delta_chi2`
    usable : array_like of bool, optional
        Bins taking part (default: all).
    """
    r = np.asarray(residual, dtype=np.float64)
    use = np.ones(r.shape, dtype=bool) if usable is None else np.broadcast_to(usable, r.shape)
    return _asymptote(r, np.zeros_like(r), floor, use,
                      dict(null_templates=templates, template_sigma=template_sigma))


def _asymptote(data, null, floor, usable, kw):
    """Nested Delta chi^2 with the noise at the floor alone (white noise averaged away).

    Infinite where a used bin in which data and null differ has no floor.
    """
    f = np.broadcast_to(np.asarray(floor, dtype=np.float64), data.shape)
    unbounded = np.any(usable & (f == 0) & (data != null), axis=-1)
    sig = np.where(usable & (f > 0), f, np.nan)
    lam = np.broadcast_to(nested_delta_chi2(data, null, sig, **kw), data.shape[:-1])
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
