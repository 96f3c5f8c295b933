"""The shipped opacity tables and the k-distributions of their native bins.

Species, native grid and pressure grid of the tables; the Malkmus band
parameters (SP-3080 / RADCAL and published band intensities) and the alkali
resonance lines; the native k-distributions built from them per species and
pressure (kept in the per-user cache, :mod:`snrkit.atmosphere.kcache`).  The
public names are served by :mod:`snrkit.atmosphere.opacity`, where the
methods and sources are described.
"""

import json
from functools import lru_cache

import numpy as np

from ..constants import C_LIGHT, K_B, M_U
from ..errors import InputError, SnrkitError, SnrkitWarning, UnknownKeyError
from ..io.tables import data_path, read_columns
from .malkmus import _gl, malkmus_k_quantiles

__all__ = ["MOLECULAR_SPECIES", "ATOMIC_SPECIES", "OPACITY_SPECIES", "NATIVE_RESOLUTION",
           "REFERENCE_PRESSURE_PA", "PRESSURE_RANGE_PA", "OpacityRangeWarning",
           "native_wavelength_edges", "opacity_provenance", "table_temperatures",
           "native_mean_cross_section"]


#: Molecules with Malkmus band tables.
MOLECULAR_SPECIES = ("H2O", "CO2", "CH4", "CO", "NH3", "O3", "O2", "N2O", "SO2", "H2S", "HCN")
#: Atoms with resonance-line tables.
ATOMIC_SPECIES = ("Na", "K")
#: Every species with line opacity.
OPACITY_SPECIES = MOLECULAR_SPECIES + ATOMIC_SPECIES

_LAMBDA_MIN_M = 0.3e-6
_LAMBDA_MAX_M = 30.0e-6
_N_NATIVE = 4606
#: Native resolving power lambda / delta-lambda of the tables (1 / delta ln lambda).
NATIVE_RESOLUTION = _N_NATIVE / np.log(_LAMBDA_MAX_M / _LAMBDA_MIN_M)

#: Pressure [Pa] at which line widths are evaluated unless a pressure is given
#: (10 mbar: the middle of the range probed in transmission; common practice,
#: no source).
REFERENCE_PRESSURE_PA = 1.0e3

_PRESSURE_GRID_PA = 10.0 ** np.arange(-1.0, 7.01, 1.0)   # 0.1 Pa .. 100 bar
#: (lowest, highest) pressure [Pa] of the line-shape grid; outside it
#: ``pressure_Pa`` is clamped with a warning.
PRESSURE_RANGE_PA = (float(_PRESSURE_GRID_PA[0]), float(_PRESSURE_GRID_PA[-1]))
_N_INTERNAL_G = 16          # sub-bin g points used when combining native bins
_LN_K_FLOOR = np.log(1e-60)  # m^2; below any absorption that matters


class OpacityRangeWarning(SnrkitWarning):
    """A temperature or pressure lay outside the opacity tables and was clamped."""


def native_wavelength_edges():
    """Native bin edges of the opacity tables.

    Returns
    -------
    numpy.ndarray
        4607 edges [m], log-spaced from 0.3 um to 30 um (4606 bins,
        R = lambda / delta-lambda = 1000.2).
    """
    return _LAMBDA_MIN_M * (_LAMBDA_MAX_M / _LAMBDA_MIN_M) ** (
        np.arange(_N_NATIVE + 1) / _N_NATIVE)


@lru_cache(maxsize=1)
def _molecular_table():
    path = data_path("opacity", "malkmus_bands.npz")
    with np.load(path, allow_pickle=False) as z:
        data = {k: z[k] for k in z.files}
    edges = native_wavelength_edges()
    if data["wavelength_edges"].shape != edges.shape or not np.allclose(
            data["wavelength_edges"], edges, rtol=1e-12):
        raise SnrkitError(f"{path}: native grid differs from this version of snrkit; "
                          "regenerate it with data_tables/scripts/make_opacity_tables.py")
    names = [str(s) for s in data["species"]]
    out = {"temperature": data["temperature"].astype(np.float64),
           "provenance": json.loads(str(data["provenance"]))}
    for i, name in enumerate(names):
        out[name] = (data["mean_cross_section"][i].astype(np.float64),
                     data["line_density"][i].astype(np.float64),
                     data["smooth_cross_section"][i].astype(np.float64))
    return out


@lru_cache(maxsize=1)
def _band_parameters():
    t = read_columns("opacity", "bands.ecsv")
    out = {}
    for row in t.rows():
        out.setdefault(str(row["species"]), (float(row["lorentz_hwhm_1bar_296"]),
                                             float(row["lorentz_t_exponent"])))
    return out


@lru_cache(maxsize=1)
def _molar_masses():
    t = read_columns("species.ecsv")
    return {str(s): float(m) for s, m in zip(t["species"], t["molar_mass"])}


def opacity_provenance():
    """Provenance metadata of the molecular opacity table (dict)."""
    return dict(_molecular_table()["provenance"])


@lru_cache(maxsize=1)
def _temperature_grid():
    # only this member of the archive: the start-up path needs the grid, not the bands
    with np.load(data_path("opacity", "malkmus_bands.npz"), allow_pickle=False) as z:
        temps = z["temperature"].astype(np.float64)
    temps.setflags(write=False)
    return temps


def table_temperatures():
    """Temperatures [K] at which the opacity tables are given."""
    return _temperature_grid().copy()


def _native_centres_wavenumber():
    e = native_wavelength_edges()
    return 0.5 * (1.0 / e[1:] + 1.0 / e[:-1])      # m^-1


def _doppler_hwhm(nu_m, temperature, species):
    mass = _molar_masses()[species] * M_U
    return nu_m / C_LIGHT * np.sqrt(2.0 * np.log(2.0) * K_B * temperature / mass)


def _voigt_hwhm(gamma_l, gamma_d):
    """Olivero & Longbothum 1977 (JQSRT 17, 233) Voigt half-width."""
    return 0.5346 * gamma_l + np.sqrt(0.2166 * gamma_l ** 2 + gamma_d ** 2)


def _molecular_native_quantiles(species, pressure, g_nodes):
    """k at g_nodes for every native bin: (n_T, n_native, n_nodes) [m^2]."""
    tab = _molecular_table()
    temps = tab["temperature"][:, None]
    s_mean, density, smooth = tab[species]
    gamma_1bar, n_gam = _band_parameters()[species]
    nu = _native_centres_wavenumber()[None, :]
    gamma_l = 100.0 * gamma_1bar * (pressure / 1.0e5) * (296.0 / temps) ** n_gam   # m^-1
    gamma_v = _voigt_hwhm(gamma_l, _doppler_hwhm(nu, temps, species))
    b_par = gamma_v * density            # B = 4 gamma eta / (pi d), eta = pi/4
    k = malkmus_k_quantiles(s_mean, np.maximum(b_par, 1e-30), g_nodes)
    k = np.where((s_mean > 0)[..., None], k, 0.0)
    return k + smooth[..., None]


@lru_cache(maxsize=1)
def _alkali_lines():
    t = read_columns("opacity", "alkali_lines.ecsv")
    out = {}
    for row in t.rows():
        out.setdefault(str(row["species"]), []).append((
            1.0 / (float(row["wavelength_vacuum"]) * 1e-9),      # m^-1
            float(row["oscillator_strength"]), float(row["einstein_a"]),
            100.0 * float(row["lorentz_hwhm_1bar_296"]), float(row["lorentz_t_exponent"]),
            100.0 * float(row["far_wing_cutoff"])))
    return out


_PI_RE = np.pi * 2.8179403262e-15     # pi e^2 / (m_e c^2) [m] (classical electron radius)


@lru_cache(maxsize=8)
def _alkali_samples(species):
    """Fine wavenumber samples in the bins touched by the lines.

    Returns midpoints [m^-1], weights (interval / bin width) and native bin
    index of each sample, sorted by bin.
    """
    lines = _alkali_lines()[species]
    nu_edges = 1.0 / native_wavelength_edges()[::-1]          # ascending m^-1
    lo = min(nu0 - cut for nu0, *_, cut in lines)
    hi = max(nu0 + cut for nu0, *_, cut in lines)
    i0 = max(int(np.searchsorted(nu_edges, lo)) - 1, 0)
    i1 = min(int(np.searchsorted(nu_edges, hi)) + 1, nu_edges.size - 1)
    e = nu_edges[i0:i1 + 1]
    pts = [e]
    frac = (np.arange(32) + 0.5) / 32.0
    pts.append((e[:-1, None] + np.diff(e)[:, None] * frac[None, :]).ravel())
    for nu0, *_rest, cut in lines:
        t = np.linspace(0.0, np.arcsinh(cut / 0.1), 4000)     # 0.1 m^-1 = 1e-3 cm^-1
        d = 0.1 * np.sinh(t)
        pts.append(nu0 + d)
        pts.append(nu0 - d)
    p = np.unique(np.concatenate(pts))
    p = p[(p >= e[0]) & (p <= e[-1])]
    mid = 0.5 * (p[1:] + p[:-1])
    width = np.diff(p)
    idx_asc = np.searchsorted(e, mid) - 1                     # bin in ascending-nu order
    bin_w = np.diff(e)[idx_asc]
    # native bins are indexed in ascending wavelength = descending wavenumber
    native_idx = (nu_edges.size - 2) - (i0 + idx_asc)
    order = np.argsort(native_idx, kind="stable")
    return mid[order], (width / bin_w)[order], native_idx[order]


def _alkali_sigma(species, nu, temperature, pressure):
    """Cross-section [m^2] at wavenumbers nu [m^-1] for temperatures (n_T, 1)."""
    from scipy.special import voigt_profile
    mass = _molar_masses()[species] * M_U
    out = np.zeros(np.broadcast(nu, temperature).shape)
    for nu0, f, a_ki, g1bar, n_t, cut in _alkali_lines()[species]:
        sigma_d = nu0 / C_LIGHT * np.sqrt(K_B * temperature / mass)
        gamma = (a_ki / (4.0 * np.pi * C_LIGHT)
                 + g1bar * (pressure / 1.0e5) * (296.0 / temperature) ** n_t)
        d = nu - nu0
        prof = voigt_profile(d, sigma_d, gamma)
        out += np.where(np.abs(d) <= cut, _PI_RE * f * prof, 0.0)
    return out


_K_FLOOR = 1e-300


def _interval_means(c, v, w, edges_g, first, last, index_of):
    """Geometric (or, with zeros, arithmetic) means of sorted samples over g intervals.

    c : cumulative weight at the end of each sorted sample (within its group)
    v, w : sorted sample values and weights (flat)
    edges_g : (n_groups, n_g + 1) interval edges in cumulative weight
    first, last : (n_groups,) index of each group's first and last sample
    index_of : callable(edge array) -> index of the first sample with c >= edge
    Returns (n_groups, n_g).
    """
    lnv = np.log(np.maximum(v, _K_FLOOR))
    zero = (v <= 0).astype(np.float64)
    cum = {name: np.cumsum(w * f) for name, f in (("ln", lnv), ("k", v), ("z", zero))}
    base = {name: arr[first] - (w * f)[first] for (name, arr), f in
            zip(cum.items(), (lnv, v, zero))}
    n_groups, n_e = edges_g.shape
    out_f = {}
    inner = edges_g[:, 1:-1]
    idx = np.clip(index_of(inner), first[:, None], last[:, None])
    over = c[idx] - inner                       # part of sample idx beyond the edge
    for name, f in (("ln", lnv), ("k", v), ("z", zero)):
        val = np.empty((n_groups, n_e))
        val[:, 0] = 0.0
        val[:, -1] = cum[name][last] - base[name]
        val[:, 1:-1] = cum[name][idx] - base[name][:, None] - over * f[idx]
        out_f[name] = np.diff(val, axis=1)
    dg = np.diff(edges_g, axis=1)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        geo = np.exp(out_f["ln"] / dg)
        ari = out_f["k"] / dg
    return np.where(out_f["z"] > 1e-12 * dg, np.maximum(ari, 0.0), geo)


def _gl_edges(n_g):
    _, w = _gl(n_g)
    e = np.concatenate([[0.0], np.cumsum(w)])
    e[-1] = 1.0
    return e


def _grouped_rebin(values, weights, group, n_groups, n_g):
    """Resort weighted samples per group onto the n_g Gauss-Legendre intervals.

    values : (L, M) sample values for L independent rows (e.g. temperatures)
    weights : (M,) weights; within each group they sum to 1
    group : (M,) group (target bin) of each sample, non-decreasing
    Returns (L, n_groups, n_g): per g interval [G_i, G_i+1] (G = cumulative
    Gauss-Legendre weights) the geometric mean of k over the interval, i.e.
    exp(int ln k dg / w_i), or the arithmetic mean where the interval holds
    k = 0.  The geometric mean keeps int ln k dg exact, which is what sets
    the effective height of an exponential atmosphere (derived here);
    groups without samples give 0.
    """
    values = np.atleast_2d(values)
    L, M = values.shape
    counts = np.bincount(group, minlength=n_groups)
    has = counts > 0
    first = np.concatenate([[0], np.cumsum(counts)[:-1]])
    last = first + counts - 1
    first_c = np.clip(first, 0, M - 1)
    last_c = np.clip(last, 0, M - 1)
    edges = np.broadcast_to(_gl_edges(n_g), (n_groups, n_g + 1))
    gidx = np.arange(n_groups)[:, None]
    out = np.zeros((L, n_groups, n_g))
    # one float sort key per sample: group + (monotone map of ln k into
    # (1e-4, 0.9999)); k = 0 maps to 0.  Ties closer than ~1e-9 in ln k may
    # swap, which does not change the cumulative distribution.
    pos = values > 0
    lv = np.log(np.where(pos, values, 1.0))
    lo = lv[pos].min() if pos.any() else 0.0
    hi = lv[pos].max() if pos.any() else 1.0
    frac = np.where(pos, 1e-4 + 0.9998 * (lv - lo) / max(hi - lo, 1e-300), 0.0)
    orders = np.argsort(group[None, :] + frac, axis=1)
    for row in range(L):
        order = orders[row]
        v = values[row, order]
        w = weights[order]
        cw = np.cumsum(w)
        start = cw[first_c] - w[first_c]
        c = cw - start[group]
        key = group + c

        def index_of(inner, key=key):
            return np.searchsorted(key, gidx + inner, side="left")

        res = _interval_means(c, v, w, edges, first_c, last_c, index_of)
        out[row] = np.where(has[:, None], res, 0.0)
    return out


def _alkali_native_kdist(species, pressure, n_g):
    """Alkali k on every native bin from the finely sampled cross-section."""
    temps = _molecular_table()["temperature"][:, None]
    mid, w, idx = _alkali_samples(species)
    sig = _alkali_sigma(species, mid[None, :], temps, pressure)
    return _grouped_rebin(sig, w, idx, _N_NATIVE, n_g)


#: Data files whose contents key the disk cache of the native k-distributions.
_KDIST_DATA = ("opacity/malkmus_bands.npz", "opacity/bands.ecsv", "opacity/alkali_lines.ecsv",
               "species.ecsv")


@lru_cache(maxsize=16)
def _native_kdist(species, pressure, n_g):
    """(n_T, n_native, n_g) k-distributions of the native bins [m^2].

    Kept in memory and, as ln k in float32 (1e-7 relative in ln k; k below
    1e-300 m^2 is stored as 1e-300, far below the tables' floor), in the
    per-user disk cache (:mod:`snrkit.atmosphere.kcache`).
    """
    from .kcache import cached_array, data_key

    def build():
        if species in ATOMIC_SPECIES:
            k = _alkali_native_kdist(species, pressure, n_g)
        else:
            k = _molecular_native_quantiles(species, pressure, _gl(n_g)[0])
        return np.log(np.maximum(k, 1e-300))
    shape = (table_temperatures().size, _N_NATIVE, n_g)
    lnk = cached_array(f"lnk-{species}-{pressure:.6g}Pa-g{n_g}", data_key(*_KDIST_DATA),
                       shape, build)
    k = np.exp(lnk.astype(np.float64))
    k.setflags(write=False)
    return k


def native_mean_cross_section(species, temperature_K=296.0, pressure_Pa=None):
    """Mean cross-section of each native bin at a table temperature.

    Parameters
    ----------
    species : str
        One of :data:`OPACITY_SPECIES`.
    temperature_K : float
        Must be one of :func:`table_temperatures`.
    pressure_Pa : float, optional
        Pressure for the alkali line widths (default
        :data:`REFERENCE_PRESSURE_PA`); the molecular mean does not depend on it.

    Returns
    -------
    numpy.ndarray
        Shape (4606,), m^2 per molecule, on :func:`native_wavelength_edges`.
    """
    _check_species(species)
    temps = table_temperatures()
    j = np.flatnonzero(np.isclose(temps, float(temperature_K)))
    if j.size != 1:
        raise InputError("temperature_K", temperature_K,
                         "one of the table temperatures " + ", ".join(f"{t:g}" for t in temps))
    p = REFERENCE_PRESSURE_PA if pressure_Pa is None else float(pressure_Pa)
    if species in ATOMIC_SPECIES:
        mid, w, idx = _alkali_samples(species)
        sig = _alkali_sigma(species, mid, temps[j[0]], p)
        return np.bincount(idx, weights=sig * w, minlength=_N_NATIVE)
    s_mean, _, smooth = _molecular_table()[species]
    return s_mean[j[0]] + smooth[j[0]]


def _check_species(species):
    if species not in OPACITY_SPECIES:
        import difflib
        close = difflib.get_close_matches(str(species), OPACITY_SPECIES, n=1)
        raise UnknownKeyError("species", species, "one of " + ", ".join(OPACITY_SPECIES),
                              detail=f"did you mean {close[0]!r}?" if close else "")
