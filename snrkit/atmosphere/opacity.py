"""Molecular and atomic line opacity as k-distributions on spectral bins.

Inside a spectral bin the line spectrum is represented by its
k-distribution: the cross-section values k(g) sorted into ascending order,
sampled at Gauss-Legendre points g on (0, 1).  The transmission of a column
u [molecules m^-2] through the bin is ``sum_g w_g exp(-k_g u)``.

Molecules.  Each native bin (log-spaced, 0.3-30 um, R = 1000) carries the
Malkmus (1967, J. Opt. Soc. Am. 57, 323) random-band parameters read from
``data_tables/opacity/malkmus_bands.npz``: the mean line cross-section S and
an effective line density 1/d (d the mean line spacing), per table
temperature.  The line parameter follows from matching the strong-line
limit of Lorentz lines, B = 4 gamma eta / (pi d) with eta = <S^1/2>^2 / <S>
the line-strength dispersion factor; for exponentially distributed line
strengths (Goody 1952, Q. J. R. Meteorol. Soc. 78, 165) eta = pi / 4 and
B = gamma / d.  For H2O, CO2, CO and CH4 the tables come from the
narrow-band parameters of NASA SP-3080 as tabulated in NIST RADCAL
(``data_tables/opacity/sources/README.md``), whose effective 1/d belongs to
a Goody fit; the Malkmus B that keeps their weak- and strong-line limits is
B = (4/pi) gamma (1/d) (that README, section 4.7), so the table stores the
line density (4/pi)(1/d) for these species and B = gamma x density holds for
every species.  gamma is the Voigt half-width of the species' lines (Lorentz
width scaled with pressure and temperature, Doppler width at T, combined with
the Olivero & Longbothum 1977, JQSRT 17, 233 approximation).  The Malkmus k-distribution

    f(k) = 1/2 k^(-3/2) sqrt(B S) exp[(pi B / 4)(2 - k/S - S/k)]

is an inverse-Gaussian distribution with mean S and shape pi B S / 2, so its
quantiles k(g) = S q(g; pi B / 2) follow from one standardised quantile
function q, tabulated here once on a fine grid of its shape parameter.  The
band transmission it reproduces is

    T(u) = exp{-(pi B / 2) [sqrt(1 + 4 S u / (pi B)) - 1]}.

Line-free electronic continua (O3 Chappuis/Hartley, SO2 UV) are added to
every g point.

Atoms.  Na and K resonance doublets (``data_tables/opacity/alkali_lines.ecsv``)
are Voigt lines cut at a documented far-wing distance; their k-distribution
in each bin is built directly from the cross-section sampled finely in
wavenumber (dense near each line centre) and sorted.

On native bins the molecular k(g) are the Malkmus quantiles at the
Gauss-Legendre points.

Bins coarser than native.  The native sub-bins' distributions (each sampled
at 16 internal Gauss-Legendre points) are combined by resorting: the k
values of all sub-bins, weighted by sub-bin overlap (in wavenumber) and
quadrature weight, are sorted into one cumulative distribution, which is
rebinned onto the target g intervals (Lacis & Oinas 1991, JGR 96, 9027).
Each interval takes the geometric mean of k over it, exp(int ln k dg / w);
that keeps int ln k dg, and with it the effective height of an exponential
atmosphere, exact (derived here), where an arithmetic mean would bias the
transit radius low by up to ~0.1 scale height for spiky spectra.  Intervals
holding k = 0 take the arithmetic mean.  k is never averaged over
wavelength.  The same rebinning combines species by random overlap
(:func:`combine_random_overlap`) and builds the alkali distributions from
the finely sampled line profiles.  Bins narrower than a native bin take the
distribution of the native bin that contains them.

Temperature.  k(g) is computed at the table temperatures and interpolated
linearly in ln k versus 1/T.  Temperatures outside the table are clamped
with an :class:`OpacityRangeWarning`.

Pressure.  The k-distribution shape depends on pressure through the line
width.  By default it is evaluated at :data:`REFERENCE_PRESSURE_PA`; a
``pressure_Pa`` array selects bilinear interpolation (ln k versus ln P and
1/T) on a grid of one point per decade.
"""

import warnings
from functools import lru_cache

import numpy as np

from ..errors import InputError
from .malkmus import _check_ng, _gl
from .bands import (_check_species, REFERENCE_PRESSURE_PA, _KDIST_DATA, _LAMBDA_MAX_M,
                    _LAMBDA_MIN_M, _LN_K_FLOOR, _N_INTERNAL_G, _N_NATIVE, _PRESSURE_GRID_PA,
                    _gl_edges, _grouped_rebin, _interval_means, _native_kdist,
                    native_wavelength_edges, table_temperatures)

# the public face of the opacity sources: names whose code lives in bands and malkmus
from .bands import (ATOMIC_SPECIES, MOLECULAR_SPECIES, NATIVE_RESOLUTION,  # noqa: F401
                    OPACITY_SPECIES, PRESSURE_RANGE_PA, OpacityRangeWarning,
                    native_mean_cross_section, opacity_provenance)
from .malkmus import (g_quadrature, malkmus_k_pdf, malkmus_k_quantiles,  # noqa: F401
                      malkmus_transmission)

__all__ = [
    "OPACITY_SPECIES", "MOLECULAR_SPECIES", "ATOMIC_SPECIES", "NATIVE_RESOLUTION",
    "REFERENCE_PRESSURE_PA", "PRESSURE_RANGE_PA", "OpacityRangeWarning",
    "native_wavelength_edges", "g_quadrature", "table_temperatures",
    "species_k_coefficients", "combine_random_overlap", "native_mean_cross_section",
    "malkmus_transmission", "malkmus_k_pdf", "malkmus_k_quantiles", "opacity_provenance",
]

# --------------------------------------------------------------------------
# k-tables on a spectral grid
# --------------------------------------------------------------------------

def _check_edges(wavelength_edges_m):
    e = np.asarray(wavelength_edges_m, dtype=np.float64)
    if e.ndim != 1 or e.size < 2:
        raise InputError("wavelength_edges_m", f"array of shape {e.shape}",
                         "a 1-D array of at least 2 bin edges [m]")
    if not np.all(np.isfinite(e)) or np.any(np.diff(e) <= 0):
        raise InputError("wavelength_edges_m", "unsorted, repeated or non-finite edges",
                         "strictly increasing finite edges [m]")
    lo, hi = _LAMBDA_MIN_M * (1 - 1e-9), _LAMBDA_MAX_M * (1 + 1e-9)
    if e[0] < lo or e[-1] > hi:
        raise InputError("wavelength_edges_m", f"{e[0]:.6g}..{e[-1]:.6g} m",
                         f"edges within the opacity tables, {_LAMBDA_MIN_M:g}..{_LAMBDA_MAX_M:g} m")
    return np.clip(e, _LAMBDA_MIN_M, _LAMBDA_MAX_M)


def _overlap(edges):
    """Sparse overlap of target bins with native bins, in wavenumber.

    Returns (target index, native index, weight) arrays with the weights of
    each target bin summing to one, sorted by target index.
    """
    nat = native_wavelength_edges()
    nu_nat = 1.0 / nat
    nu_t = 1.0 / edges
    n_t = edges.size - 1
    j0 = np.clip(np.searchsorted(nat, edges[:-1], side="right") - 1, 0, _N_NATIVE - 1)
    j1 = np.clip(np.searchsorted(nat, edges[1:], side="left") - 1, 0, _N_NATIVE - 1)
    counts = j1 - j0 + 1
    tgt = np.repeat(np.arange(n_t), counts)
    nat_idx = np.concatenate([np.arange(a, b + 1) for a, b in zip(j0, j1)]) if n_t else np.array([], int)
    # overlap in wavenumber of [edges[t], edges[t+1]] and [nat[j], nat[j+1]]
    hi = np.minimum(nu_t[:-1][tgt], nu_nat[nat_idx])
    lo = np.maximum(nu_t[1:][tgt], nu_nat[nat_idx + 1])
    w = np.maximum(hi - lo, 0.0) / (nu_t[:-1] - nu_t[1:])[tgt]
    keep = w > 1e-9
    tgt, nat_idx, w = tgt[keep], nat_idx[keep], w[keep]
    w = w / np.bincount(tgt, weights=w, minlength=n_t)[tgt]
    return tgt, nat_idx, w


@lru_cache(maxsize=128)
def _k_table_cached(species, edges_bytes, n_g, pressure):
    """ln k (float32) of one species on the bins ``edges_bytes`` [m]: (n_T, n_bins, n_g).

    Kept in memory and in the per-user disk cache
    (:mod:`snrkit.atmosphere.kcache`; the stored float32 values are the
    built ones), one entry per species, grid, g points and pressure.
    """
    from .kcache import array_digest, cached_array, data_key
    edges = np.frombuffer(edges_bytes, dtype=np.float64)
    shape = (table_temperatures().size, edges.size - 1, n_g)
    label = f"ktab-{species}-{pressure:.6g}Pa-g{n_g}-{array_digest(edges)}"
    return cached_array(label, data_key(*_KDIST_DATA), shape,
                        lambda: _build_k_table(species, edges, n_g, pressure),
                        prune_prefix="ktab-")


def _build_k_table(species, edges, n_g, pressure):
    g, _ = _gl(n_g)
    tgt, nat_idx, w = _overlap(edges)
    n_t = edges.size - 1
    counts = np.bincount(tgt, minlength=n_t)
    single = counts == 1
    n_temp = table_temperatures().size
    out = np.zeros((n_temp, n_t, n_g))
    if np.any(single):
        kn = _native_kdist(species, pressure, n_g)               # (n_T, N, n_g)
        sel = np.flatnonzero(single)
        first = np.concatenate([[0], np.cumsum(counts)[:-1]])
        out[:, sel] = kn[:, nat_idx[first[sel]]]
    if np.any(~single):
        gi, wi = _gl(_N_INTERNAL_G)
        kn = _native_kdist(species, pressure, _N_INTERNAL_G)     # (n_T, N, n_int)
        multi = ~single[tgt]
        t_m, j_m, w_m = tgt[multi], nat_idx[multi], w[multi]
        vals = kn[:, j_m, :].reshape(n_temp, -1)                 # samples (bin-major)
        wts = (w_m[:, None] * wi[None, :]).ravel()
        grp = np.repeat(t_m, _N_INTERNAL_G)
        res = _grouped_rebin(vals, wts, grp, n_t, n_g)
        out[:, ~single] = res[:, ~single]
    return np.log(np.maximum(out, np.exp(_LN_K_FLOOR))).astype(np.float32)   # 1e-5 rel. in k


def _interp_weights(x, grid):
    i = np.clip(np.searchsorted(grid, x, side="right") - 1, 0, grid.size - 2)
    f = (x - grid[i]) / (grid[i + 1] - grid[i])
    return i, np.clip(f, 0.0, 1.0)


def species_k_coefficients(species, wavelength_edges_m, temperature_K, n_g=8, *,
                           pressure_Pa=None):
    """k-distribution of one species' line cross-section on spectral bins.

    Parameters
    ----------
    species : str
        One of :data:`OPACITY_SPECIES`.
    wavelength_edges_m : array_like
        Strictly increasing bin edges [m] inside 0.3-30 um.  Bins coarser
        than native combine their native sub-bins by resorting (Lacis & Oinas
        1991, JGR 96, 9027; see the module docstring); bins inside one native
        bin take its distribution.
    temperature_K : array_like
        Temperatures [K], any shape; clamped to the table range (with an
        :class:`OpacityRangeWarning`).  Interpolation is linear in ln k
        versus 1/T between table temperatures.
    n_g : int
        Number of Gauss-Legendre g points (:func:`g_quadrature`).
    pressure_Pa : array_like, optional
        Pressure [Pa] broadcast against ``temperature_K``, used for the line
        widths (ln k interpolated linearly in ln P between decades from 0.1 Pa
        to 100 bar; outside that range clamped with a warning).  Default:
        :data:`REFERENCE_PRESSURE_PA` everywhere.

    Returns
    -------
    numpy.ndarray
        Cross-section per molecule [m^2], shape
        ``temperature_K.shape + (n_bins, n_g)`` (with ``pressure_Pa``, the
        broadcast shape of both), ascending along the last axis.
    """
    _check_species(species)
    n_g = _check_ng(n_g)
    edges = _check_edges(wavelength_edges_m)
    temps = table_temperatures()
    t = _clamp(temperature_K, temps[0], temps[-1], "temperature_K", "K")
    if pressure_Pa is None:
        p = None
        lead = t.shape
    else:
        p = np.asarray(pressure_Pa, dtype=np.float64)
        if np.any(~(p > 0)):
            raise InputError("pressure_Pa", p[~(p > 0)].flat[0], "pressures > 0 Pa")
        p = _clamp(p, _PRESSURE_GRID_PA[0], _PRESSURE_GRID_PA[-1], "pressure_Pa", "Pa")
        t, p = np.broadcast_arrays(t, p)
        lead = t.shape
    key = np.ascontiguousarray(edges).tobytes()
    inv = 1.0 / temps[::-1]                          # ascending 1/T
    it, ft = _interp_weights(1.0 / t.ravel(), inv)
    jt0 = temps.size - 1 - it                        # index into ascending-T table
    jt1 = jt0 - 1
    ft = ft[:, None, None]

    if p is None:
        tab = _k_table_cached(species, key, n_g, REFERENCE_PRESSURE_PA)
        lnk = tab[jt0] * (1.0 - ft) + tab[jt1] * ft
    else:
        lp = np.log(p.ravel())
        ip, fp = _interp_weights(lp, np.log(_PRESSURE_GRID_PA))
        lnk = np.zeros((t.size, edges.size - 1, n_g))
        for i in np.unique(ip):
            sel = ip == i
            f = fp[sel][:, None, None]

            def at(node, sel=sel):
                tab = _k_table_cached(species, key, n_g, float(_PRESSURE_GRID_PA[node]))
                return tab[jt0[sel]] * (1.0 - ft[sel]) + tab[jt1[sel]] * ft[sel]
            # a pressure on a table node needs that node's table only
            if np.all(f == 0.0):
                lnk[sel] = at(i)
            elif np.all(f == 1.0):
                lnk[sel] = at(i + 1)
            else:
                lnk[sel] = at(i) * (1.0 - f) + at(i + 1) * f
    k = np.exp(lnk)
    k[lnk <= _LN_K_FLOOR + 1e-3] = 0.0
    return k.reshape(lead + (edges.size - 1, n_g))


# --------------------------------------------------------------------------
# mixing species
# --------------------------------------------------------------------------

def _resort_pair(ka, kb, w, chunk=2048):
    """Random overlap of two k-distributions, rows (R, n_g) -> (R, n_g).

    The n_g^2 sums k_a,i + k_b,j with weights w_i w_j are sorted per row and
    averaged geometrically over the n_g Gauss-Legendre g intervals (see
    :func:`_grouped_rebin`).  Rows are processed in chunks that stay in cache.
    """
    R, n = ka.shape
    out = np.empty((R, n))
    ww0 = (w[:, None] * w[None, :]).ravel()
    m = n * n
    edges = _gl_edges(n) if np.allclose(w, _gl(n)[1]) else np.concatenate(
        [[0.0], np.cumsum(w)[:-1], [1.0]])
    for c0 in range(0, R, chunk):
        a = ka[c0:c0 + chunk]
        b = kb[c0:c0 + chunk]
        r = a.shape[0]
        s = (a[:, :, None] + b[:, None, :]).reshape(r, m)
        order = np.argsort(s, axis=1)
        v = np.take_along_axis(s, order, axis=1)
        wv = ww0[order]
        cw = np.cumsum(wv, axis=1)
        inner = edges[1:-1]
        idx = np.stack([(cw < e).sum(axis=1) for e in inner], axis=1)   # (r, n-1)
        flat_off = (np.arange(r) * m)[:, None]
        first = np.arange(r) * m
        res = _interval_means(cw.ravel(), v.ravel(), wv.ravel(),
                              np.broadcast_to(edges, (r, n + 1)), first, first + m - 1,
                              lambda _inner, idx=idx, off=flat_off: np.minimum(idx, m - 1) + off)
        out[c0:c0 + r] = res
    return out


def combine_random_overlap(k_list, vmr_list, g_weights):
    """Mixture cross-section k-distribution by random overlap with resort-rebin.

    Parameters
    ----------
    k_list : list of numpy.ndarray
        Per-species k-distributions [m^2], each ``(..., n_bins, n_g)`` and
        ascending along the last axis.
    vmr_list : list of array_like
        Volume mixing ratios, each broadcast against ``k[..., 0, 0]``.
    g_weights : numpy.ndarray
        The n_g Gauss-Legendre weights used for the k-distributions.

    Returns
    -------
    numpy.ndarray
        Cross-section per molecule of the mixture, sum_i vmr_i k_i combined
        as statistically independent (random overlap) distributions: the
        n_g x n_g sums are sorted with weights w_i w_j and rebinned onto the
        n_g g intervals (Lacis & Oinas 1991, JGR 96, 9027; Amundsen et al.
        2017, A&A 598, A97), taking in each interval the geometric mean of k
        (exact int ln k dg, hence exact effective height of an exponential
        atmosphere; derived here).  Where one gas's largest k is below 1e-4 of the other
        gas's smallest k, its mean is added instead (exact to that order).
    """
    if len(k_list) != len(vmr_list) or not k_list:
        raise InputError("k_list", f"{len(k_list)} arrays and {len(vmr_list)} mixing ratios",
                         "one mixing ratio per k array, at least one species")
    w = np.asarray(g_weights, dtype=np.float64)
    n_g = w.size
    scaled = []
    for k, x in zip(k_list, vmr_list):
        k = np.asarray(k, dtype=np.float64)
        if k.ndim < 2 or k.shape[-1] != n_g:
            raise InputError("k_list", f"array of shape {k.shape}",
                             f"arrays of shape (..., n_bins, {n_g})")
        x = np.asarray(x, dtype=np.float64)
        if np.any(x < 0) or not np.all(np.isfinite(x)):
            raise InputError("vmr_list", "negative or non-finite mixing ratio",
                             "mixing ratios >= 0")
        scaled.append(k * x[..., None, None])
    shape = np.broadcast_shapes(*(s.shape for s in scaled))
    mix = np.broadcast_to(scaled[0], shape).reshape(-1, n_g).copy()
    for s in scaled[1:]:
        b = np.broadcast_to(s, shape).reshape(-1, n_g)
        a_min, a_max = mix[:, 0], mix[:, -1]
        b_min, b_max = b[:, 0], b[:, -1]
        b_neg = b_max <= 1e-4 * a_min
        a_neg = (a_max <= 1e-4 * b_min) & ~b_neg
        out = np.empty_like(mix)
        out[b_neg] = mix[b_neg] + (b[b_neg] @ w)[:, None]
        out[a_neg] = b[a_neg] + (mix[a_neg] @ w)[:, None]
        full = np.flatnonzero(~(a_neg | b_neg))
        if full.size:
            out[full] = _resort_pair(mix[full], b[full], w)
        mix = out
    return mix.reshape(shape)


def _clamp(values, lo, hi, field, unit):
    v = np.asarray(values, dtype=np.float64)
    if not np.all(np.isfinite(v)):
        raise InputError(field, "non-finite value", f"finite values in {unit}")
    if np.any(v < lo) or np.any(v > hi):
        warnings.warn(OpacityRangeWarning(
            f"{field}: values outside the opacity tables' range {lo:g}-{hi:g} {unit} "
            f"(got {v.min():g}-{v.max():g}); clamped to the range"), stacklevel=3)
        v = np.clip(v, lo, hi)
    return v
