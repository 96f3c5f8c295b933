"""The Malkmus random-band model and the g quadrature (compute layer).

Band transmission T(u) = exp{-(pi B/2)[sqrt(1 + 4 S u/(pi B)) - 1]} and its
analytic k-distribution (Malkmus 1967, J. Opt. Soc. Am. 57, 323), the
standardised quantile table (kept in the per-user cache), and the
Gauss-Legendre g-points of every k-distribution.  The methods are described
in :mod:`snrkit.atmosphere.opacity`.
"""

from functools import lru_cache

import numpy as np

from ..errors import InputError

__all__ = ["g_quadrature", "malkmus_transmission", "malkmus_k_pdf", "malkmus_k_quantiles"]


@lru_cache(maxsize=16)
def _gl(n_g):
    x, w = np.polynomial.legendre.leggauss(n_g)
    g = 0.5 * (x + 1.0)
    w = 0.5 * w
    g.setflags(write=False)
    w.setflags(write=False)
    return g, w


def g_quadrature(n_g=8):
    """Gauss-Legendre points and weights on (0, 1).

    Parameters
    ----------
    n_g : int
        Number of points (1-64).

    Returns
    -------
    g, w : numpy.ndarray
        Points in (0, 1), ascending, and weights summing to one.
    """
    n_g = _check_ng(n_g)
    g, w = _gl(n_g)
    return g.copy(), w.copy()


def _check_ng(n_g):
    if isinstance(n_g, bool) or not isinstance(n_g, (int, np.integer)) or not 1 <= n_g <= 64:
        raise InputError("n_g", n_g, "an integer from 1 to 64")
    return int(n_g)


def malkmus_transmission(u, S, B):
    """Malkmus band transmission T(u) (Malkmus 1967, J. Opt. Soc. Am. 57, 323).

    Parameters
    ----------
    u : array_like
        Column density [molecules m^-2].
    S : array_like
        Mean line cross-section of the band [m^2].
    B : array_like
        Line parameter (dimensionless): 4 gamma eta / (pi d) for lines of
        half-width gamma, mean spacing d and strength dispersion factor
        eta = <S^1/2>^2 / <S>.

    Returns
    -------
    numpy.ndarray
        exp{-(pi B/2)[sqrt(1 + 4 S u/(pi B)) - 1]}.
    """
    u, S, B = (np.asarray(a, dtype=np.float64) for a in (u, S, B))
    x = 4.0 * S * u / (np.pi * B)
    # sqrt(1+x) - 1 written as x / (sqrt(1+x) + 1) to keep the weak limit exact
    return np.exp(-(np.pi * B / 2.0) * x / (np.sqrt(1.0 + x) + 1.0))


def malkmus_k_pdf(k, S, B):
    """Malkmus k-distribution f(k) [m^-2] (Domoto 1974, JQSRT 14, 935).

    f(k) = 1/2 k^(-3/2) sqrt(B S) exp[(pi B/4)(2 - k/S - S/k)]
    """
    k, S, B = (np.asarray(a, dtype=np.float64) for a in (k, S, B))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        out = 0.5 * k ** -1.5 * np.sqrt(B * S) * np.exp(
            (np.pi * B / 4.0) * (2.0 - k / S - S / k))
    return np.where(k > 0, out, 0.0)


def _ig_cdf(x, phi):
    """CDF of the inverse-Gaussian distribution of mean 1 and shape phi."""
    from scipy.special import log_ndtr, ndtr
    s = np.sqrt(phi / x)
    return ndtr(s * (x - 1.0)) + np.exp(2.0 * phi + log_ndtr(-s * (x + 1.0)))


_LOG10_PHI = np.arange(-9.0, 9.0001, 0.05)


@lru_cache(maxsize=16)
def _quantile_table(g_nodes):
    """ln q(g; phi) on the ln-phi grid for the given g nodes (bisection in ln x).

    Kept in memory and, in float64 (bit-identical to a fresh build), in the
    per-user disk cache (:mod:`snrkit.atmosphere.kcache`).
    """
    from .kcache import array_digest, cached_array, data_key
    g = np.asarray(g_nodes, dtype=np.float64)
    label = f"quantiles-{array_digest(g)}-{array_digest(_LOG10_PHI)}"
    return cached_array(label, data_key(), (_LOG10_PHI.size, g.size),
                        lambda: _build_quantile_table(g), dtype=np.float64)


def _build_quantile_table(g_nodes):
    g = np.asarray(g_nodes)[None, :]
    phi = (10.0 ** _LOG10_PHI)[:, None]
    lo = np.full((phi.size, g.size), -200.0)
    hi = np.full_like(lo, 50.0)
    for _ in range(90):
        mid = 0.5 * (lo + hi)
        below = _ig_cdf(np.exp(mid), phi) < g
        lo = np.where(below, mid, lo)
        hi = np.where(below, hi, mid)
    return 0.5 * (lo + hi)


def _std_quantiles(phi, g_nodes):
    """q(g; phi) for an array phi (any shape) -> phi.shape + (n_nodes,)."""
    table = _quantile_table(tuple(float(v) for v in g_nodes))
    lphi = np.log10(np.maximum(np.asarray(phi, dtype=np.float64), 1e-300))
    pos = (lphi - _LOG10_PHI[0]) / 0.05
    i0 = np.clip(np.floor(pos).astype(np.int64), 0, _LOG10_PHI.size - 2)
    f = np.clip(pos - i0, 0.0, 1.0)[..., None]
    lnq = table[i0] * (1.0 - f) + table[i0 + 1] * f
    # asymptotes outside the grid: Levy limit q ~ phi (small phi), normal
    # limit q - 1 ~ phi^-1/2 (large phi)
    low = lphi < _LOG10_PHI[0]
    if np.any(low):
        lnq = np.where(low[..., None], table[0] + np.log(10.0) * (lphi[..., None] - _LOG10_PHI[0]),
                       lnq)
    high = lphi > _LOG10_PHI[-1]
    if np.any(high):
        q_top = np.exp(table[-1])
        qh = 1.0 + (q_top - 1.0) * 10.0 ** (-0.5 * (lphi[..., None] - _LOG10_PHI[-1]))
        lnq = np.where(high[..., None], np.log(np.maximum(qh, 1e-300)), lnq)
    return np.exp(lnq)


def malkmus_k_quantiles(S, B, g):
    """k(g) of the Malkmus distribution at cumulative probabilities g.

    Parameters
    ----------
    S, B : array_like
        Mean cross-section [m^2] and line parameter (broadcast together).
    g : array_like
        1-D cumulative probabilities in (0, 1).

    Returns
    -------
    numpy.ndarray
        Shape ``broadcast(S, B).shape + (len(g),)`` [m^2].  Computed from the
        inverse-Gaussian quantile function q(g; pi B / 2), tabulated on a grid
        of 20 points per decade of pi B / 2 (relative interpolation error
        below 1e-3).
    """
    S, B = np.broadcast_arrays(np.asarray(S, dtype=np.float64), np.asarray(B, dtype=np.float64))
    return S[..., None] * _std_quantiles(np.pi * B / 2.0, np.asarray(g, dtype=np.float64))
