"""The analytic solver's kernel: one root per (planet, bin, g-point), in chunks.

:func:`root_radius` is the production form of
:func:`snrkit.atmosphere.spectrum.analytic_radius` for line shapes that
depend on pressure.  The line cross-section of each g-point is given at a
few pressure nodes, uniform in ln P (:func:`snrkit.atmosphere.spectrum.line_shape_pressures`),
and is interpolated linearly in ln k against ln P, i.e. a local power law
``k ~ P**s`` between nodes (extrapolated with the end segments' slopes).
The root of the chord optical depth, ``tau(b) = exp(-gamma)`` (Heng &
Kitzmann 2017, MNRAS 470, 2972; Lecavelier des Etangs et al. 2008, A&A 481,
L83), is found by safeguarded Newton steps on ``ln tau(u) + gamma`` with
``u = 1/r``, re-reading the line shape at the pressure of each iterate, so
the line shape is the one at the root's own pressure (the correlated-k
assumption that the layered solver makes level by level).  The chord depth
of each absorber ``~ n**e`` carries ``sqrt(2 pi r H / e)``, with ``e = 1 +
s`` for the lines, 1 for the smooth continuum and 2 for collision-induced
absorption.  The floor term ``H E1(tau_floor)`` and the first-order terms in
``H/R`` are those of :func:`~snrkit.atmosphere.spectrum.analytic_radius`.

The opacity of a composition is tabulated once per process on a fixed
lattice of temperatures (:data:`LATTICE_NODES_PER_OCTAVE` nodes per
doubling, interpolated linearly in ln k against 1/T, the rule the species
tables use between their own temperatures); a node is built the first time
a planet needs it.  Because the lattice does not depend on which planets
are solved together, a planet's spectrum is the same alone and in any
chunk of a catalogue.

Elements are processed in chunks of :data:`CHUNK_ELEMENTS` so that the
work arrays stay in cache; the answer does not depend on the chunk size.
"""

import math
from collections import OrderedDict
from functools import lru_cache

import numpy as np

from ..constants import K_B, M_U
# the reference solver's constants and floor function (spectrum imports this module
# only inside functions, so there is no import cycle)
from .analytic import EULER_GAMMA, _TAU_THIN, _f_plane

__all__ = ["root_radius", "lattice_opacity", "lattice_bracket", "LATTICE_NODES_PER_OCTAVE",
           "CHUNK_ELEMENTS", "clear_lattice_cache", "lattice_temperatures", "worker_threads",
           "LATTICE_SUBDIVISIONS"]

#: Lattice steps (equal in 1/T) between two temperatures of the opacity tables.
LATTICE_SUBDIVISIONS = 8
#: Lattice nodes per doubling of T outside the tables' temperature range.
LATTICE_NODES_PER_OCTAVE = 24
#: Elements (planet x bin x g) per work chunk: some 25 work arrays of 128 kB stay in
#: the core's cache (measured: 16384 beat 8192 and 65536 on the 2-core test machine).
CHUNK_ELEMENTS = 1 << 14
#: Upper bound of the process-wide lattice cache [bytes].
LATTICE_CACHE_BYTES = 256 * 2**20
#: ln of an absent absorber's opacity (finite, so that exp() gives exactly 0).
_LN_ABSENT = -1e4
#: Below this chord optical depth at the floor the radius comes from the floor
#: (see snrkit.atmosphere.spectrum._TAU_THIN).
_LN_TAU_THIN = math.log(_TAU_THIN)
#: Newton steps at most; convergence is |dr| < 1e-7 H.
_MAX_STEPS = 40
_SLOPE_RANGE = (-0.9, 2.0)
#: e-folds of pressure (about one scale height, the reach of a chord above its
#: tangent point) over which the line exponent turns from the segment above a
#: node to the segment below it.
EXPONENT_BLEND = 1.0

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
        Opacity source (see :func:`snrkit.atmosphere.spectrum.mixture_opacity`);
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


class _Planets:
    """Per-planet constants of the isothermal atmosphere with g ~ 1/r**2."""

    def __init__(self, T, mu, r0, p0, g0, pf, pt):
        h0 = K_B * T / (mu * M_U * g0)
        self.B = r0 * r0 / h0                          # r**2 / H(r)  [m]
        self.lnn0 = np.log(p0 / (K_B * T)) - r0 / h0   # ln n = lnn0 + B u
        self.lnkT = np.log(K_B * T)                    # ln P = ln n + ln kT
        self.base = 0.5 * math.log(2.0 * math.pi) - 0.5 * np.log(self.B)
        with np.errstate(divide="ignore", invalid="ignore"):
            self.uf = (1.0 + np.log(pf / p0) * h0 / r0) / r0
            ut = (1.0 + np.log(pt / p0) * h0 / r0) / r0
        # where the isothermal gas would be unbound below the top, the top is put
        # where r/H(r) = 3 (the Laplace chord formula needs r >> H)
        self.ut = np.maximum(ut, 3.0 / self.B)
        self.capped = ~(ut >= 3.0 / self.B)
        self.r0 = r0
        self.lnpf = np.log(pf)


def _ln_tau(u, el, x0, dx, n_p, exact_slope=False):
    """ln tau(u) + gamma, d/du, and the shares (w1, w2, w3) and line exponent e at u.

    The derivative is that of the local power-law model (B times the mean
    exponent), as the H/R terms need; ``exact_slope`` gives the derivative of
    the piecewise function itself, for the Newton steps.
    """
    B = el["B"]
    bu = B * u
    lnn = el["lnn0"] + bu
    lk, e1, dlk, de = _line((lnn + el["lnkT"] - x0) * (1.0 / dx), el, dx, n_p)
    # absent absorbers carry ln values of about -1e4 (never -inf), so exp() gives 0
    l1 = lk + lnn + el["base"] - 0.5 * np.log(e1)
    l2 = el["a2"] + bu
    l3 = el["a3"] + 2.0 * bu
    top = np.maximum(np.maximum(l1, l2), l3)
    # exponents clipped at -60 (exp = 9e-27 next to the largest term's 1): results
    # between 1e-308 and 1e-324 are subnormal numbers, which cost 100 times more
    x1, x2, x3 = (np.exp(np.maximum(v - top, -60.0)) for v in (l1, l2, l3))
    tot = x1 + x2 + x3
    inv = 1.0 / tot
    w1, w2, w3 = x1 * inv, x2 * inv, x3 * inv
    f = top + np.log(tot) - 1.5 * np.log(u) + EULER_GAMMA
    if not exact_slope:
        return f, B * (w1 * e1 + w2 + 2.0 * w3) - 1.5 / u, (w1, w2, w3), e1
    # the exact derivative of this f (slope of ln k, change of e along it), for Newton
    dl1 = 1.0 + dlk - 0.5 * de / e1
    return f, B * (w1 * dl1 + w2 + 2.0 * w3) - 1.5 / u, (w1, w2, w3), e1


def _line(pos, el, dx, n_p):
    """ln k, the exponent e and d(ln k)/d(ln P), de/d(ln P) at ``pos`` (node units).

    Between nodes ln k is linear in ln P.  The chord through a tangent point
    crosses only lower pressures, so just below a node e is the exponent of
    the segment above; it turns linearly to the segment's own over
    :data:`EXPONENT_BLEND` e-folds of pressure (continuous, so tau(u) has no
    jumps, and no deeper segment is ever read).  Below the opaque floor
    (a root there stands for the floor term H E1(tau_floor)) the line keeps
    the floor's own power law, k ~ P**(e_floor - 1): the opacity hidden under
    a cloud deck or surface is never read.
    """
    pc = np.minimum(pos, el["posf"])
    m = np.clip(pc.astype(np.intp), 0, n_p - 2)      # floor for pos >= 0; clipped below
    rows = el["row"] + m
    la, lb = el["lnk"].take(rows), el["lnk"].take(rows + 1)
    ea, eb = el["e"].take(rows), el["e"].take(rows + 1)
    t = pc - m
    # ea: the segment above this one; eb: this segment's own exponent
    blend = t * (dx / EXPONENT_BLEND)
    tc = np.clip(blend, 0.0, 1.0)
    e1 = ea + tc * (eb - ea)
    below = pos - pc
    # outside the nodes (above the top one, below the deepest) the power law of the
    # end segment continues with its clipped exponent, never a raw slope (a g-point
    # absent at one node has ln k at the tables' floor there, and its raw slope is
    # not a line shape)
    inside = np.clip(t, 0.0, 1.0)
    outside = (t - inside) * dx
    lk = la + inside * (lb - la) + (e1 - 1.0) * (outside + below * dx)
    dlk = np.where((below > 0) | (outside != 0), e1 - 1.0, (lb - la) * (1.0 / dx))
    de = np.where((tc == blend) & (below <= 0) & (outside == 0),
                  (eb - ea) * (1.0 / EXPONENT_BLEND), 0.0)
    return lk, e1, dlk, de


def _node_exponents(lnk_nodes, dx):
    """Line-extinction exponent 1 + s seen from each pressure node (last axis).

    A chord with its tangent point at a node crosses only lower pressures, so
    the exponent there is that of the segment above the node (the first
    segment's at the top node); within a segment it turns to the segment's own
    slope over :data:`EXPONENT_BLEND` e-folds of pressure (about one scale
    height, the chord's reach), see :func:`_line`.  Slopes are clipped to a
    physical range.
    """
    seg = np.clip(np.diff(lnk_nodes, axis=-1) / dx, *_SLOPE_RANGE)
    return 1.0 + np.concatenate([seg[..., :1], seg], axis=-1)


def _take(el, idx):
    out = {k: v[idx] for k, v in el.items() if k not in ("lnk", "e", "row")}
    out["lnk"], out["e"], out["row"] = el["lnk"], el["e"], el["row"][idx]
    return out


def _dominant_start(u, el, x0, dx, n_p):
    """A start just below the root: the highest of the single-absorber roots.

    Each absorber alone, with its extinction ~ n**e extrapolated from u, would
    reach ln tau = -gamma at ``u - (l_i + gamma) / (e_i B)``; together they
    reach it higher (smaller u), by at most ln 3 / B.  Starting at the highest
    single root (F >= 0 there, to first order) the Newton steps on the convex
    ln tau(u) then converge monotonically and quadratically.
    """
    B = el["B"]
    lnn = el["lnn0"] + B * u
    lk, e1, _, _ = _line((lnn + el["lnkT"] - x0) / dx, el, dx, n_p)
    c = EULER_GAMMA - 1.5 * np.log(u)
    u1 = u - (lk + lnn + el["base"] - 0.5 * np.log(e1) + c) / (e1 * B)
    u2 = u - (el["a2"] + B * u + c) / B
    u3 = u - (el["a3"] + 2.0 * B * u + c) / (2.0 * B)
    start = np.minimum(np.minimum(u1, u2), u3)
    return np.clip(start, el["ut"], np.maximum(u, el["ut"]))


def _newton(u, el, x0, dx, n_p):
    """Safeguarded Newton on ln tau(u) + gamma = 0.

    Bracketed: a step that leaves the interval known to hold the root is
    replaced by the false-position point of the bracket.
    """
    n = u.size
    u_root = u.copy()
    d_root = np.ones(n)
    lo, f_lo = el["ut"].copy(), np.full(n, -1.0)
    hi, f_hi = np.full(n, np.inf), np.full(n, np.nan)
    act = np.arange(n)
    cur = el
    live = np.ones(n, dtype=bool)
    for _ in range(_MAX_STEPS):
        f, d, _, _ = _ln_tau(u, cur, x0, dx, n_p, exact_slope=True)
        below = f < 0
        lo, f_lo = np.where(below, np.maximum(lo, u), lo), np.where(below, f, f_lo)
        hi, f_hi = np.where(below, hi, np.minimum(hi, u)), np.where(below, f_hi, f)
        new = u - f / d
        # a Newton step under 1e-4 H: the updated root is good to ~1e-8 H (quadratic)
        done = live & (np.abs(f / d * cur["B"]) < 1e-4)
        bad = (~((new > lo) & (new < hi)) | ~np.isfinite(new)) & ~done
        if np.any(bad):
            fp = lo - f_lo * (hi - lo) / (f_hi - f_lo)          # false position
            ok_fp = np.isfinite(hi) & np.isfinite(fp) & (fp > lo) & (fp < hi)
            new = np.where(bad, np.where(ok_fp, fp, np.where(np.isfinite(hi), 0.5 * (lo + hi),
                                                             u + 1.0 / cur["B"])), new)
        u_root[act[done]] = (u - f / d)[done]
        d_root[act[done]] = d[done]
        live &= ~done
        u = new
        if not live.any():
            return u_root, d_root
        if live.sum() * 2 < live.size:                            # compact the work arrays
            act, u, lo, hi, f_lo, f_hi = (v[live] for v in (act, u, lo, hi, f_lo, f_hi))
            cur = _take(cur, live)
            live = np.ones(act.size, dtype=bool)
    u_root[act[live]] = u[live]                       # not converged (not expected)
    d_root[act[live]] = d[live]
    return u_root, d_root


def _corrections(ur, el, ln_tf, x0, dx, n_p):
    """First-order H/R terms and the floor term at the root (see analytic_radius)."""
    from scipy.special import exp1
    _, d1, (w1, w2, w3), e1 = _ln_tau(ur, el, x0, dx, n_p)
    B = el["B"]
    mean_e = w1 * e1 + w2 + 2.0 * w3
    d2 = B * B * (w1 * e1 * e1 + w2 + 4.0 * w3 - mean_e ** 2) + 1.5 / ur ** 2
    h_a = 1.0 / (ur ** 2 * d1)
    curv = 0.5 * (ur ** 4 * d2 + 2.0 * ur ** 3 * d1)
    beta = B * ur
    corr = (h_a * np.log1p(9.0 / (8.0 * beta) * (w1 / e1 + w2 + 0.5 * w3))
            + (math.pi ** 2 / 12.0) * h_a ** 2 * ur + (math.pi ** 2 / 6.0) * curv * h_a ** 3)
    near = ln_tf < math.log(40.0)                      # E1(40) < 1e-19
    if np.any(near):
        corr[near] += h_a[near] * exp1(np.exp(ln_tf[near]))
    return corr


def _thin_radius(el, it, ln_tf, dfu):
    """Radius where the floor is nearly transparent: r_floor + H [E1 + gamma + ln](tau_f)."""
    uf = el["uf"][it]
    heff = 1.0 / (uf ** 2 * dfu[it])
    return 1.0 / uf + heff * _f_plane(np.exp(ln_tf[it]))


def _solve_chunk(el, x0, dx, n_p, u_start):
    """Radii, top flags and the solve's state (for a shifted re-solve) of one chunk."""
    f_floor, dfu, _, _ = _ln_tau(el["uf"], el, x0, dx, n_p)
    ln_tf = f_floor - EULER_GAMMA
    f_top, _, _, _ = _ln_tau(el["ut"], el, x0, dx, n_p)
    saturated = f_top >= 0.0
    thin = (ln_tf < _LN_TAU_THIN) & ~saturated
    out = np.empty(el["B"].size)
    it = np.flatnonzero(thin)
    if it.size:
        out[it] = _thin_radius(el, it, ln_tf, dfu)
    state = {"u": np.full(out.size, np.nan), "d": np.full(out.size, np.nan), "ln_tf": ln_tf,
             "dfu": dfu, "f_top": f_top}
    ik = np.flatnonzero(~thin & ~saturated)
    if ik.size:
        sub = _take(el, ik)
        u0 = sub["uf"]
        if u_start is not None:
            us = u_start[ik]
            u0 = np.where(np.isfinite(us) & (us > 0), np.clip(us, sub["ut"], sub["uf"]), u0)
        else:
            u0 = _dominant_start(u0, sub, x0, dx, n_p)
        ur, dr = _newton(u0, sub, x0, dx, n_p)
        state["u"][ik], state["d"][ik] = ur, dr
        out[ik] = 1.0 / ur + _corrections(ur, sub, ln_tf[ik], x0, dx, n_p)
    out[saturated] = 1.0 / el["ut"][saturated]
    return out, saturated, state


def _shifted_chunk(el, prev, du, x0, dx, n_p):
    """Re-solve after the reference radius moved with G M fixed (the calibration's second solve).

    With g0 R0**2 fixed, B = R0**2 / H0 does not change and every absorber's
    ln n(u) is translated by du = 1/R0' - 1/R0, so the new ln tau is the old
    one at u - du plus 1.5 ln((u - du)/u) -- exactly.  The floor and top values
    follow without new evaluations (the top is evaluated again only where it
    is set by r/H = 3, which does not translate), each old root gives the new
    one in two Newton steps (the first from the stored slope, without a new
    evaluation; the shift of the -1.5 ln u term is ~1e-2 H), and the H/R terms
    are evaluated at the new root.
    """
    uf, ut = el["uf"], el["ut"]
    ln_tf = prev["ln_tf"] - 1.5 * np.log(uf / (uf - du))
    dfu = prev["dfu"] + 1.5 / (uf - du) - 1.5 / uf
    f_top = prev["f_top"] - 1.5 * np.log(ut / (ut - du))
    capped = el["capped"] | prev["capped"]
    if np.any(capped):
        ic = np.flatnonzero(capped)
        f_top[ic] = _ln_tau(ut[ic], _take(el, ic), x0, dx, n_p)[0]
    saturated = f_top >= 0.0
    thin = (ln_tf < _LN_TAU_THIN) & ~saturated
    out = np.empty(uf.size)
    it = np.flatnonzero(thin)
    if it.size:
        out[it] = _thin_radius(el, it, ln_tf, dfu)
    state = {"u": np.full(out.size, np.nan), "d": np.full(out.size, np.nan), "ln_tf": ln_tf,
             "dfu": dfu, "f_top": f_top}
    thick = ~thin & ~saturated
    easy = np.flatnonzero(thick & np.isfinite(prev["u"]))
    if easy.size:
        u_old = prev["u"][easy]
        u_s = u_old + du[easy]
        slope = prev["d"][easy] + 1.5 / u_old - 1.5 / u_s
        ur = u_s - 1.5 * np.log(u_old / u_s) / slope
        sub = _take(el, easy)
        f, slope, _, _ = _ln_tau(ur, sub, x0, dx, n_p, exact_slope=True)
        step = f / slope
        ur = ur - step                                 # a second step: ~1e-8 H
        slow = np.flatnonzero(np.abs(step * sub["B"]) > 1e-3)
        if slow.size:                                  # not yet quadratic (near the r/H = 3 cap)
            ur[slow], slope[slow] = _newton(ur[slow], _take(sub, slow), x0, dx, n_p)
        state["u"][easy], state["d"][easy] = ur, slope
        out[easy] = 1.0 / ur + _corrections(ur, sub, ln_tf[easy], x0, dx, n_p)
    hard = np.flatnonzero(thick & ~np.isfinite(prev["u"]))
    if hard.size:                                     # newly thick: a full solve
        sub = _take(el, hard)
        ur, dr = _newton(_dominant_start(sub["uf"], sub, x0, dx, n_p), sub, x0, dx, n_p)
        state["u"][hard], state["d"][hard] = ur, dr
        out[hard] = 1.0 / ur + _corrections(ur, sub, ln_tf[hard], x0, dx, n_p)
    out[saturated] = 1.0 / ut[saturated]
    return out, saturated, state


def root_radius(lnk, x_nodes, ln_continuum, ln_cia, temperature_K, mu_g_mol,
                reference_radius_m, reference_pressure_Pa, reference_gravity_m_s2,
                floor_pressure_Pa, top_pressure_Pa, radius_start_m=None, chunk=None,
                previous=None, return_state=False):
    """Effective radius per (planet, bin, g-point) with line shapes at the root's pressure.

    Parameters
    ----------
    lnk : numpy.ndarray, shape (n_planet, n_p, n_wave, n_g)
        ln of the line cross-section per molecule [m2] at the pressure nodes.
    x_nodes : numpy.ndarray, shape (n_p,)
        ln of the node pressures [ln Pa], uniformly spaced (n_p >= 2), or one
        node for pressure-independent lines.
    ln_continuum, ln_cia : numpy.ndarray, shape (n_planet, n_wave)
        ln of the smooth continuum cross-section [m2] and of the CIA
        coefficient [m5] (-inf where absent).
    temperature_K, mu_g_mol, reference_radius_m, reference_pressure_Pa,
    reference_gravity_m_s2, floor_pressure_Pa, top_pressure_Pa : numpy.ndarray, shape (n_planet,)
        As in :func:`snrkit.atmosphere.spectrum.analytic_radius`.
    radius_start_m : numpy.ndarray, shape (n_planet, n_wave, n_g), optional
        Starting radii (for example the roots of a nearby solve).
    chunk : int, optional
        Elements per work chunk (default :data:`CHUNK_ELEMENTS`).
    previous : dict, optional
        The state of an earlier call for the same planets, opacity,
        temperature and G M, with only the reference radius moved (the
        calibration's second solve): solved by translation
        (:func:`_shifted_chunk`) instead of from scratch.
    return_state : bool
        Also return that state.

    Returns
    -------
    radius : numpy.ndarray, shape (n_planet, n_wave, n_g)
        Effective radius [m].
    saturated : numpy.ndarray of bool, same shape
        Where the atmosphere is still opaque at the top.
    state : dict
        Only with ``return_state``.
    """
    lnk = np.asarray(lnk, dtype=np.float64)
    npl, n_p, nw, ng = lnk.shape
    x = np.asarray(x_nodes, dtype=np.float64)
    if n_p == 1:                       # pressure-independent: two identical nodes
        lnk = np.concatenate([lnk, lnk], axis=1)
        x = np.array([x[0], x[0] + 1.0])
        n_p = 2
    x0, dx = float(x[0]), float(x[1] - x[0])
    pl = _Planets(*(np.broadcast_to(np.asarray(v, dtype=np.float64), (npl,)) for v in (
        temperature_K, mu_g_mol, reference_radius_m, reference_pressure_Pa,
        reference_gravity_m_s2, floor_pressure_Pa, top_pressure_Pa)))
    unbound = ~(pl.uf * pl.B >= 3.0)
    if np.any(unbound):
        import warnings
        from ..errors import SnrkitWarning
        warnings.warn(f"{int(unbound.sum())} planet(s): the isothermal atmosphere is unbound "
                      "already at its opaque floor (r/H < 3 there); their analytic spectra are "
                      "not meaningful", SnrkitWarning, stacklevel=3)
    # element order (planet, bin, g); line nodes contiguous per element
    lnk_n = np.ascontiguousarray(np.moveaxis(lnk, 1, -1))
    lnk_e = lnk_n.reshape(-1)
    e_e = _node_exponents(lnk_n, dx).reshape(-1)
    n_el = npl * nw * ng
    lc = np.broadcast_to(np.asarray(ln_continuum, dtype=np.float64), (npl, nw))
    li = np.broadcast_to(np.asarray(ln_cia, dtype=np.float64), (npl, nw))
    start = (None if radius_start_m is None else
             1.0 / np.asarray(radius_start_m, dtype=np.float64).reshape(-1))
    out = np.empty(n_el)
    sat = np.empty(n_el, dtype=bool)
    state = {k: np.empty(n_el) for k in ("u", "d", "ln_tf", "dfu", "f_top")}
    step = int(chunk or CHUNK_ELEMENTS)
    du = None
    if previous is not None and previous["u"].size == n_el and np.allclose(
            previous["B"], pl.B, rtol=1e-9, atol=0.0) and np.array_equal(previous["lnpf"], pl.lnpf):
        # only R0 moved, with G M and the floor pressure fixed (a refraction floor
        # moves with R0 and g0: then a full solve)
        du = 1.0 / pl.r0 - 1.0 / previous["r0"]

    def run(s0):
        e = np.arange(s0, min(n_el, s0 + step))
        ip = e // (nw * ng)
        iw = (e // ng) % nw
        el = {"B": pl.B[ip], "lnn0": pl.lnn0[ip], "lnkT": pl.lnkT[ip], "base": pl.base[ip],
              "uf": pl.uf[ip], "ut": pl.ut[ip], "capped": pl.capped[ip],
              "posf": (pl.lnpf[ip] - x0) / dx, "lnk": lnk_e, "e": e_e,
              "row": e * n_p}
        el["a2"] = np.maximum(lc[ip, iw], _LN_ABSENT) + el["lnn0"] + el["base"]
        el["a3"] = (np.maximum(li[ip, iw], _LN_ABSENT) + 2.0 * el["lnn0"] + el["base"]
                    - 0.5 * math.log(2.0))
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            if du is not None:
                prev = {k: previous[k][e] for k in state}
                prev["capped"] = previous["capped"][e]
                out[e], sat[e], st = _shifted_chunk(el, prev, du[ip], x0, dx, n_p)
            else:
                out[e], sat[e], st = _solve_chunk(el, x0, dx, n_p,
                                                  None if start is None else start[e])
        for k in state:
            state[k][e] = st[k]

    starts = range(0, n_el, step)
    workers = min(worker_threads(), len(starts))
    if workers > 1:
        # numpy releases the GIL inside its loops, so chunks run in parallel; each
        # chunk writes its own slice, so the answer does not depend on the threads
        from concurrent.futures import ThreadPoolExecutor
        with ThreadPoolExecutor(max_workers=workers) as pool:
            list(pool.map(run, starts))
    else:
        for s0 in starts:
            run(s0)
    radius, saturated = out.reshape(npl, nw, ng), sat.reshape(npl, nw, ng)
    if not return_state:
        return radius, saturated
    ip_all = np.arange(n_el) // (nw * ng)
    state.update(r0=pl.r0, B=pl.B, lnpf=pl.lnpf, capped=pl.capped[ip_all])
    return radius, saturated, state


def worker_threads():
    """Threads for the kernel's chunks: ``$SNRKIT_THREADS``, else up to 2 of the machine's cores."""
    import os
    text = os.environ.get("SNRKIT_THREADS", "").strip()
    if text:
        try:
            return max(1, int(text))
        except ValueError:
            from ..errors import InputError
            raise InputError("SNRKIT_THREADS", text, "a whole number >= 1") from None
    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:                 # not on every platform
        cores = os.cpu_count() or 1
    return max(1, min(2, cores))
