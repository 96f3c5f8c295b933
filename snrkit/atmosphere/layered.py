"""The layered solver: slant optical depth along chords through spherical shells.

Slant optical depth along chords at impact parameters ``b`` equal to the
level radii, through spherical shells in which the extinction varies
linearly with radius (closed-form chord integrals), and the effective
area ``A = pi r_floor**2 + 2 pi Int (1 - exp(-tau(b))) b db`` (trapezoid
rule).  The effective radius is ``sqrt(A / pi)``.

Transit depths are ``(R/R_s)**2`` computed per g-point and averaged over the
g-weights (the bin-average depth, not the depth of the bin-mean opacity).
"""

import numpy as np

from ..errors import InputError

__all__ = ["chord_weights", "layered_radius", "bin_average_depth"]


def chord_weights(radius_m):
    """Matrix giving slant optical depths from level extinction coefficients.

    ``tau(b_k) = sum_j W[k, j] alpha_j`` for impact parameters ``b_k`` equal
    to the level radii, with the extinction coefficient ``alpha`` varying
    linearly with radius inside each shell, using the closed forms
    ``Int r dr / sqrt(r^2 - b^2) = s`` and
    ``Int r^2 dr / sqrt(r^2 - b^2) = (r s + b^2 ln(r + s)) / 2``,
    ``s = sqrt(r^2 - b^2)``; the factor 2 counts both halves of the chord.

    Parameters
    ----------
    radius_m : numpy.ndarray, shape (n_planet, n_levels)
        Level radii [m], strictly increasing.

    Returns
    -------
    numpy.ndarray, shape (n_planet, n_levels, n_levels)
        Path weights [m].
    """
    r = np.asarray(radius_m, dtype=np.float64)
    npl, nl = r.shape
    b = r[:, :, None]                    # impact parameter index k
    ra = r[:, None, :-1]                 # shell lower radius, index j
    rb = r[:, None, 1:]
    k = np.arange(nl)[:, None]
    j = np.arange(nl - 1)[None, :]
    valid = (j >= k)[None, :, :]

    def s_of(rr):
        return np.sqrt(np.clip((rr - b) * (rr + b), 0.0, None))

    sa = np.where(valid, s_of(ra), 0.0)
    sb = np.where(valid, s_of(rb), 0.0)
    dj0 = sb - sa
    log_term = np.log1p(np.where(valid, (rb - ra + sb - sa) / (ra + sa), 0.0))
    dj1 = 0.5 * (rb * sb - ra * sa) + 0.5 * b * b * log_term
    upper = (dj1 - ra * dj0) / (rb - ra)
    upper = np.where(valid, upper, 0.0)
    lower = np.where(valid, dj0 - upper, 0.0)
    w = np.zeros((npl, nl, nl))
    w[:, :, :-1] += 2.0 * lower
    w[:, :, 1:] += 2.0 * upper
    return w


def layered_radius(extinction_m, radius_m, weights=None):
    """Effective radius from chord integration through layers (layered solver).

    Parameters
    ----------
    extinction_m : numpy.ndarray, shape (n_planet, n_levels, n_wave, n_g)
        Extinction coefficient ``alpha`` at each level [m-1].
    radius_m : numpy.ndarray, shape (n_planet, n_levels)
        Level radii [m], increasing; the first level is the opaque floor
        (rays with smaller impact parameters are blocked).
    weights : numpy.ndarray, optional
        Precomputed :func:`chord_weights` of ``radius_m``.

    Returns
    -------
    numpy.ndarray, shape (n_planet, n_wave, n_g)
        Effective radius [m], ``sqrt(A / pi)`` with
        ``A = pi r_0**2 + 2 pi Int (1 - exp(-tau(b))) b db``.
    """
    a = np.asarray(extinction_m, dtype=np.float64)
    r = np.asarray(radius_m, dtype=np.float64)
    npl, nl, nw, ng = a.shape
    w = chord_weights(r) if weights is None else weights
    tau = np.matmul(w, a.reshape(npl, nl, nw * ng))          # (p, k, w*g)
    f = -np.expm1(-tau) * r[:, :, None]
    db = np.diff(r, axis=1)[:, :, None]
    integral = np.sum(0.5 * (f[:, 1:] + f[:, :-1]) * db, axis=1)
    area = np.pi * r[:, :1] ** 2 + 2.0 * np.pi * integral
    return np.sqrt(area / np.pi).reshape(npl, nw, ng)


def bin_average_depth(radius_m, stellar_radius_m, g_weights):
    """Transit depth averaged over each bin's g-points.

    Parameters
    ----------
    radius_m : numpy.ndarray, shape (n_planet, n_wave, n_g)
        Effective radius per g-point [m].
    stellar_radius_m : array_like, shape (n_planet,)
        Stellar radius [m].
    g_weights : numpy.ndarray, shape (n_g,)
        Quadrature weights summing to one.

    Returns
    -------
    numpy.ndarray, shape (n_planet, n_wave)
        ``sum_g w_g (R_g / R_s)**2`` (dimensionless).
    """
    w = np.asarray(g_weights, dtype=np.float64)
    if w.ndim != 1 or w.shape[0] != np.shape(radius_m)[-1] or abs(w.sum() - 1.0) > 1e-9:
        raise InputError("g_weights", f"shape {w.shape}, sum {w.sum():.6g}",
                         "one weight per g-point, summing to 1")
    rs = np.asarray(stellar_radius_m, dtype=np.float64).reshape(-1, 1, 1)
    return np.sum((np.asarray(radius_m) / rs) ** 2 * w, axis=-1)
