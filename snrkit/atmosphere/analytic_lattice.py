"""The opacity lattice of the analytic solver: each composition on fixed temperatures.

The opacity of a composition is tabulated once per process on a fixed
lattice of temperatures: the species tables' own temperatures, each interval
cut into :data:`LATTICE_SUBDIVISIONS` equal steps in 1/T, extended by
:data:`LATTICE_NODES_PER_OCTAVE` nodes per doubling outside the tables'
range.  A planet's opacity is interpolated linearly in ln k against 1/T
between its two nodes (the rule the species tables use between their own
temperatures); a node is built the first time a planet needs it and kept in
a process-wide cache bounded by :data:`LATTICE_CACHE_BYTES`.  Because the
lattice does not depend on which planets are solved together, a planet's
spectrum is the same alone and in any chunk of a catalogue.
"""

from collections import OrderedDict
from functools import lru_cache

import numpy as np

__all__ = ["lattice_opacity", "lattice_bracket", "lattice_temperatures", "clear_lattice_cache",
           "LATTICE_SUBDIVISIONS", "LATTICE_NODES_PER_OCTAVE", "LATTICE_CACHE_BYTES"]

#: Lattice steps (equal in 1/T) between two temperatures of the opacity tables.
LATTICE_SUBDIVISIONS = 8
#: Lattice nodes per doubling of T outside the tables' temperature range.
LATTICE_NODES_PER_OCTAVE = 24
#: Upper bound of the process-wide lattice cache [bytes].
LATTICE_CACHE_BYTES = 256 * 2**20

_CACHE = OrderedDict()
_CACHE_SIZE = [0]


def clear_lattice_cache():
    """Empty the process-wide opacity lattice (for tests and benchmarks)."""
    _CACHE.clear()
    _CACHE_SIZE[0] = 0


def lattice_bracket(temperature_K):
    """Lower lattice node index and the weight of the upper node (linear in 1/T).

    Nodes (:func:`lattice_temperatures`) are the opacity tables' own
    temperatures, each interval divided into :data:`LATTICE_SUBDIVISIONS`
    equal steps in 1/T (so a single species is interpolated exactly as its
    table is), extended by :data:`LATTICE_NODES_PER_OCTAVE` nodes per doubling
    outside the tables' range.  A temperature on a node has weight 0 and needs
    that node only.
    """
    nodes = lattice_temperatures()
    t = np.asarray(temperature_K, dtype=np.float64)
    k = np.clip(np.searchsorted(nodes, t, side="right") - 1, 0, nodes.size - 2)
    t_lo, t_hi = nodes[k], nodes[k + 1]
    w = np.clip((1.0 / t - 1.0 / t_lo) / (1.0 / t_hi - 1.0 / t_lo), 0.0, 1.0)
    return k, w


def _node_t(k):
    return lattice_temperatures()[np.asarray(k)]


@lru_cache(maxsize=1)
def lattice_temperatures():
    """The fixed temperature lattice [K] (see :func:`lattice_bracket`)."""
    from .opacity import table_temperatures
    tab = np.asarray(table_temperatures(), dtype=np.float64)
    inner = [1.0 / np.linspace(1.0 / a, 1.0 / b, LATTICE_SUBDIVISIONS + 1)[:-1]
             for a, b in zip(tab[:-1], tab[1:])]
    step = 2.0 ** (1.0 / LATTICE_NODES_PER_OCTAVE)
    below = tab[0] / step ** np.arange(int(np.log(tab[0] / 1.0) / np.log(step)), 0, -1)
    above = tab[-1] * step ** np.arange(0, int(np.log(1e5 / tab[-1]) / np.log(step)) + 1)
    return np.concatenate([below] + inner + [above])


def _composition_key(mixing_ratios, haze, edges, n_g, exclude, p_nodes):
    mix = tuple(sorted((str(k), float(v)) for k, v in mixing_ratios.items()))
    return (mix, tuple(float(h) for h in haze), np.asarray(edges, np.float64).tobytes(),
            int(n_g), exclude, None if p_nodes is None else np.asarray(p_nodes).tobytes())


def _build_nodes(source, mixing_ratios, haze, edges, n_g, exclude, p_nodes, ks):
    """ln k (node, n_p, nw, ng), ln continuum (node, nw), ln CIA (node, nw), g weights."""
    from .mixture import mixture_opacity
    tk = _node_t(ks)
    n_p = 1 if p_nodes is None else np.size(p_nodes)
    tt = np.broadcast_to(tk[:, None], (tk.size, n_p))
    op = mixture_opacity(source, mixing_ratios, edges, tt, n_g, haze[0], haze[1], exclude,
                         pressure_Pa=None if p_nodes is None else np.broadcast_to(p_nodes, tt.shape))
    with np.errstate(divide="ignore"):
        lnk = np.log(np.maximum(op["line"], 1e-300))
        ln_cont = np.log(np.asarray(op["continuum"])[:, 0])
        ln_cia = np.log(np.asarray(op["cia"])[:, 0])
    return lnk, ln_cont, ln_cia, np.asarray(op["g_weights"], dtype=np.float64)


def lattice_opacity(source, mixing_ratios, haze, edges, n_g, exclude, p_nodes, temperature_K,
                    memo=None):
    """Opacity of a well-mixed composition for each planet, through the temperature lattice.

    Parameters
    ----------
    source : object
        Opacity source (see :func:`snrkit.atmosphere.mixture.mixture_opacity`);
        the shipped tables are cached process-wide (``source`` carries
        ``cache_key``), any other source in ``memo`` only.
    mixing_ratios : dict of str to float
    haze : (float, float)
        Haze enhancement and slope.
    edges : numpy.ndarray
        Bin edges [m].
    n_g : int
    exclude : str or None
        Species left out.
    p_nodes : numpy.ndarray or None
        Pressure nodes [Pa] of the line shapes (uniform in ln P), or None for
        the tables' reference pressure.
    temperature_K : numpy.ndarray, shape (n_planet,)
    memo : dict, optional
        Per-call store for sources that are not cached process-wide.

    Returns
    -------
    dict
        ``lnk`` (n_planet, n_p, n_wave, n_g) [ln m2], ``ln_continuum`` and
        ``ln_cia`` (n_planet, n_wave) [ln m2, ln m5], ``g_weights``.
    """
    key = _composition_key(mixing_ratios, haze, edges, n_g, exclude, p_nodes)
    shared = getattr(source, "cache_key", None)
    store = _CACHE if shared is not None else (memo if memo is not None else {})
    key = (shared if shared is not None else "call",) + key
    k_lo, w = lattice_bracket(temperature_K)
    k_hi = np.where(w > 0, k_lo + 1, k_lo)
    need = np.unique(np.concatenate([k_lo, k_hi]))
    missing = [int(k) for k in need if (key, int(k)) not in store]
    if shared is not None:
        # the planets' own temperatures against the tables' range, on every call (a
        # node's build would warn once per process, and with the node's temperature)
        from .opacity import table_temperatures, _clamp
        tab = table_temperatures()
        _clamp(temperature_K, tab[0], tab[-1], "temperature_K", "K")
    if missing:
        import warnings
        with warnings.catch_warnings():
            if shared is not None:
                from .opacity import OpacityRangeWarning
                warnings.simplefilter("ignore", OpacityRangeWarning)
            lnk, lc, li, gw = _build_nodes(source, mixing_ratios, haze, edges, n_g, exclude,
                                           p_nodes, np.array(missing))
        for i, k in enumerate(missing):
            entry = (lnk[i], lc[i], li[i], gw)
            store[(key, k)] = entry
            if store is _CACHE:
                _CACHE_SIZE[0] += lnk[i].nbytes + lc[i].nbytes + li[i].nbytes
    if store is _CACHE:
        for k in need:
            _CACHE.move_to_end((key, int(k)))
        while _CACHE_SIZE[0] > LATTICE_CACHE_BYTES and len(_CACHE) > need.size:
            _, old = _CACHE.popitem(last=False)
            _CACHE_SIZE[0] -= old[0].nbytes + old[1].nbytes + old[2].nbytes
    pairs, inv = np.unique(np.stack([k_lo, k_hi], axis=1), axis=0, return_inverse=True)
    inv = inv.ravel()
    lo = [store[(key, int(a))] for a, _ in pairs]
    hi = [store[(key, int(b))] for _, b in pairs]
    ww = w[:, None, None, None]
    lnk = (1.0 - ww) * np.stack([e[0] for e in lo])[inv] + ww * np.stack([e[0] for e in hi])[inv]
    cia_lo, cia_hi = np.stack([e[2] for e in lo])[inv], np.stack([e[2] for e in hi])[inv]
    with np.errstate(invalid="ignore"):
        ln_cia = np.where(np.isfinite(cia_lo) & np.isfinite(cia_hi),
                          (1.0 - w[:, None]) * cia_lo + w[:, None] * cia_hi, -np.inf)
    return {"lnk": lnk, "ln_continuum": np.stack([e[1] for e in lo])[inv], "ln_cia": ln_cia,
            "g_weights": lo[0][3]}
