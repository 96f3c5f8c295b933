"""Users' cross-sections sorted into k-distributions per spectral bin.

Within each bin the tabulated ln sigma is piecewise linear in wavenumber;
the fraction of the bin below each value is summed segment by segment and
inverted at the g-points (the sorted k-distribution of the bin,
:func:`sorted_k_distribution`).
"""


import numpy as np


__all__ = ["sorted_k_distribution"]

_LN_FLOOR = float(np.log(1e-60))    # m^2; zero cross-sections, far below anything that matters
_FLAT = 1e-7                        # |d ln sigma| below which an interval counts as constant


def _segmented_cumsum(values, starts, group):
    c = np.cumsum(values)
    base = np.where(starts > 0, c[np.maximum(starts - 1, 0)], 0.0)
    return c - base[group]


def _layout(nu, wavenumber_edges):
    """Points, intervals and uncovered fractions of bins on a table grid.

    nu : ascending table wavenumbers; wavenumber_edges : ascending bin edges.
    Returns a dict: interpolation index/fraction of every point, the bin and
    weight (interval / bin width) of every interval between points, and the
    fraction of every bin outside the table.
    """
    e = np.asarray(wavenumber_edges, dtype=np.float64)
    n_b = e.size - 1
    lo, hi = max(nu[0], e[0]), min(nu[-1], e[-1])
    if hi > lo:
        inner = nu[(nu > lo) & (nu < hi)]
        ein = e[(e > lo) & (e < hi)]
        pts = np.unique(np.concatenate([[lo, hi], inner, ein]))
    else:
        pts = np.array([])
    if pts.size >= 2:
        mid = 0.5 * (pts[1:] + pts[:-1])
        grp = np.clip(np.searchsorted(e, mid) - 1, 0, n_b - 1)
        w = np.diff(pts) / np.diff(e)[grp]
        i = np.clip(np.searchsorted(nu, pts, side="right") - 1, 0, nu.size - 2)
        f = np.clip((pts - nu[i]) / (nu[i + 1] - nu[i]), 0.0, 1.0)
    else:
        grp = np.zeros(0, dtype=np.int64)
        w = np.zeros(0)
        i = np.zeros(0, dtype=np.int64)
        f = np.zeros(0)
    covered = np.bincount(grp, weights=w, minlength=n_b)
    uncovered = np.clip(1.0 - covered, 0.0, 1.0)
    uncovered[uncovered < 1e-9] = 0.0
    return {"i": i, "f": f, "group": grp, "weight": w, "uncovered": uncovered, "n_bins": n_b}


def _quantiles_on_layout(ln_sigma, layout, g):
    """k at cumulative probabilities g in every bin: (n_bins, n_g), ascending wavenumber."""
    n_b = layout["n_bins"]
    g = np.asarray(g, dtype=np.float64)
    i, f = layout["i"], layout["f"]
    ev_x, ev_ds, ev_j, ev_grp = [], [], [], []
    if i.size:
        v = ln_sigma[i] * (1.0 - f) + ln_sigma[i + 1] * f
        a = np.minimum(v[:-1], v[1:])
        b = np.maximum(v[:-1], v[1:])
        w = layout["weight"]
        grp = layout["group"]
        flat = (b - a) < _FLAT
        s = np.where(flat, 0.0, w / np.where(flat, 1.0, b - a))
        sl = ~flat
        ev_x += [a[sl], b[sl], 0.5 * (a + b)[flat]]
        ev_ds += [s[sl], -s[sl], np.zeros(int(flat.sum()))]
        ev_j += [np.zeros(int(sl.sum())), np.zeros(int(sl.sum())), w[flat]]
        ev_grp += [grp[sl], grp[sl], grp[flat]]
    unc = np.flatnonzero(layout["uncovered"] > 0)
    ev_x.append(np.full(unc.size, _LN_FLOOR))
    ev_ds.append(np.zeros(unc.size))
    ev_j.append(layout["uncovered"][unc])
    ev_grp.append(unc)
    x, ds, jump, grp = (np.concatenate(a) for a in (ev_x, ev_ds, ev_j, ev_grp))
    # one float sort key per event: bin index + position of ln k mapped into
    # [0, 1); events closer than ~1e-10 in ln k may swap, which moves the
    # cumulative distribution by less than that (clipped increments below)
    x_lo, x_hi = float(x.min()), float(x.max())
    frac = (x - x_lo) * ((1.0 - 1e-6) / max(x_hi - x_lo, 1e-300))
    order = np.argsort(grp + frac)
    x, ds, jump, grp = x[order], ds[order], jump[order], grp[order]
    counts = np.bincount(grp, minlength=n_b)
    starts_g = np.concatenate([[0], np.cumsum(counts)[:-1]])
    last_g = starts_g + counts - 1
    starts = starts_g[grp]
    is_first = np.arange(x.size) == starts
    # slope of the cumulative distribution (per unit ln k) after each event
    slope = np.maximum(_segmented_cumsum(ds, starts_g, grp), 0.0)
    slope_prev = np.where(is_first, 0.0, np.roll(slope, 1))
    x_prev = np.where(is_first, x, np.roll(x, 1))
    inc = slope_prev * np.maximum(x - x_prev, 0.0) + jump
    cdf = _segmented_cumsum(inc, starts_g, grp)
    total = cdf[last_g]
    cdf = cdf / total[grp]
    slope_prev = slope_prev / total[grp]
    key = 2.0 * grp + cdf
    target = 2.0 * np.arange(n_b)[:, None] + g[None, :]
    idx = np.searchsorted(key, target.ravel(), side="left").reshape(n_b, g.size)
    idx = np.clip(idx, starts_g[:, None], last_g[:, None])
    cdf_prev = np.where(is_first[idx], 0.0, cdf[np.maximum(idx - 1, 0)])
    sp = slope_prev[idx]
    with np.errstate(divide="ignore", invalid="ignore"):
        xq = x_prev[idx] + (g[None, :] - cdf_prev) / sp
    xq = np.where((sp > 0) & (xq <= x[idx]), np.maximum(xq, x_prev[idx]), x[idx])
    k = np.exp(xq)
    k[xq <= _LN_FLOOR + 1e-6] = 0.0
    return k


def sorted_k_distribution(wavenumber_m, cross_section_m2, wavelength_edges_m, g_points):
    """k-distribution of a tabulated cross-section in wavelength bins (compute layer).

    The cross-section is interpolated linearly in ln sigma between the
    table's points (zeros count as 1e-60 m2) and sorted, exactly, into its
    cumulative distribution over wavenumber in each bin (Lacis & Oinas 1991,
    JGR 96, 9027; see the module docstring); the parts of a bin outside the
    table have zero cross-section.

    Parameters
    ----------
    wavenumber_m : numpy.ndarray, shape (n,)
        Strictly increasing wavenumbers [m-1], n >= 2.
    cross_section_m2 : numpy.ndarray, shape (..., n)
        Cross-sections >= 0 [m2]; leading axes (e.g. temperatures) are
        handled one by one.
    wavelength_edges_m : numpy.ndarray, shape (n_bins + 1,)
        Strictly increasing wavelength bin edges [m].
    g_points : numpy.ndarray, shape (n_g,)
        Cumulative probabilities in (0, 1), e.g. Gauss-Legendre points.

    Returns
    -------
    numpy.ndarray, shape (..., n_bins, n_g)
        k(g) [m2], ascending along the last axis.
    """
    nu = np.asarray(wavenumber_m, dtype=np.float64)
    sig = np.asarray(cross_section_m2, dtype=np.float64)
    edges = np.asarray(wavelength_edges_m, dtype=np.float64)
    lay = _layout(nu, 1.0 / edges[::-1])
    lead = sig.shape[:-1]
    ln_s = np.log(np.maximum(sig, np.exp(_LN_FLOOR))).reshape(-1, nu.size)
    out = np.stack([_quantiles_on_layout(row, lay, g_points)[::-1] for row in ln_s])
    return out.reshape(lead + (edges.size - 1, np.size(g_points)))
