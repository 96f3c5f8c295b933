"""The analytic solver's kernel: one root per (planet, bin, g-point), in chunks and threads.

:func:`root_radius` is the production form of
:func:`snrkit.atmosphere.analytic.analytic_radius` for line shapes that
depend on pressure: the opacity comes from the fixed temperature lattice
(:mod:`snrkit.atmosphere.analytic_lattice`) and each element's root from
safeguarded Newton steps with the line shape read at the iterate's pressure
(:mod:`snrkit.atmosphere.analytic_roots`).

Elements are processed in chunks of :data:`CHUNK_ELEMENTS` so that the
work arrays stay in cache, in up to :func:`worker_threads` threads; each
chunk writes its own slice, so the answer depends on neither the chunk size
nor the number of threads.
"""

import math

import numpy as np

from .analytic_lattice import lattice_opacity  # noqa: F401  (spectrum imports it from here)
from .analytic_roots import LN_ABSENT, Planets, shifted_chunk, solve_chunk
from .analytic_tau import node_exponents

__all__ = ["root_radius", "worker_threads", "CHUNK_ELEMENTS"]

#: Elements (planet x bin x g) per work chunk.  Measured on the 2-core test machine
#: (rank, 1500 planets x 4 scenarios, R = 100): with the default 2 threads 65536 ran
#: 8.0-9.5 s against 9.3-11.2 s for 16384 and 8.6-9.1 s for 32768 or 131072 (the
#: cause is not established: a shorter interpreter switch interval changed nothing);
#: on one thread 16384 was 6 % faster (the work arrays stay in cache).
CHUNK_ELEMENTS = 1 << 16
#: Per-element state kept for the calibration's shifted re-solve.
_STATE_KEYS = ("u", "d", "ln_tf", "dfu", "f_top")


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
        As in :func:`snrkit.atmosphere.analytic.analytic_radius`.
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
    job = _prepare(lnk, x_nodes, ln_continuum, ln_cia, (
        temperature_K, mu_g_mol, reference_radius_m, reference_pressure_Pa,
        reference_gravity_m_s2, floor_pressure_Pa, top_pressure_Pa), radius_start_m, previous)
    pl, npl, nw, ng = job["pl"], job["npl"], job["nw"], job["ng"]
    n_el = npl * nw * ng
    out = np.empty(n_el)
    sat = np.empty(n_el, dtype=bool)
    state = {k: np.empty(n_el) for k in _STATE_KEYS}
    step = int(chunk or CHUNK_ELEMENTS)
    slices = [slice(s0, min(n_el, s0 + step)) for s0 in range(0, n_el, step)]

    def run(sl):
        r, s, st = _run_chunk(job, sl)
        out[sl], sat[sl] = r, s
        for k in _STATE_KEYS:
            state[k][sl] = st[k]

    workers = min(worker_threads(), len(slices))
    if workers > 1:
        # numpy releases the GIL inside its loops, so chunks run in parallel; each
        # chunk writes its own slice, so the answer does not depend on the threads
        from concurrent.futures import ThreadPoolExecutor
        with ThreadPoolExecutor(max_workers=workers) as pool:
            list(pool.map(run, slices))
    else:
        for sl in slices:
            run(sl)
    radius, saturated = out.reshape(npl, nw, ng), sat.reshape(npl, nw, ng)
    if not return_state:
        return radius, saturated
    state.update(r0=pl.r0, B=pl.B, lnpf=pl.lnpf, capped=np.repeat(pl.capped, nw * ng))
    return radius, saturated, state


def _prepare(lnk, x_nodes, ln_continuum, ln_cia, planet_args, radius_start_m, previous):
    """The job of :func:`root_radius`: planets' constants, element arrays, start and shift."""
    lnk = np.asarray(lnk, dtype=np.float64)
    npl, n_p, nw, ng = lnk.shape
    x = np.asarray(x_nodes, dtype=np.float64)
    if n_p == 1:                       # pressure-independent: two identical nodes
        lnk = np.concatenate([lnk, lnk], axis=1)
        x = np.array([x[0], x[0] + 1.0])
        n_p = 2
    pl = Planets(*(np.broadcast_to(np.asarray(v, dtype=np.float64), (npl,))
                   for v in planet_args))
    _warn_unbound(pl)
    # element order (planet, bin, g); line nodes contiguous per element
    lnk_n = np.ascontiguousarray(np.moveaxis(lnk, 1, -1))
    dx = float(x[1] - x[0])
    return {"pl": pl, "npl": npl, "x0": float(x[0]), "dx": dx, "n_p": n_p, "nw": nw, "ng": ng,
            "lnk": lnk_n.reshape(-1), "e": node_exponents(lnk_n, dx).reshape(-1),
            "lc": np.broadcast_to(np.asarray(ln_continuum, dtype=np.float64), (npl, nw)),
            "li": np.broadcast_to(np.asarray(ln_cia, dtype=np.float64), (npl, nw)),
            "start": (None if radius_start_m is None else
                      1.0 / np.asarray(radius_start_m, dtype=np.float64).reshape(-1)),
            "previous": previous, "du": _translation(previous, pl, npl * nw * ng)}


def _warn_unbound(pl):
    """Warn about planets whose isothermal gas is unbound already at the floor."""
    unbound = ~(pl.uf * pl.B >= 3.0)
    if np.any(unbound):
        import warnings
        from ..errors import SnrkitWarning
        warnings.warn(f"{int(unbound.sum())} planet(s): the isothermal atmosphere is unbound "
                      "already at its opaque floor (r/H < 3 there); their analytic spectra are "
                      "not meaningful", SnrkitWarning, stacklevel=5)


def _translation(previous, pl, n_el):
    """du = 1/R0' - 1/R0 per planet when only R0 moved since ``previous``, else None.

    The shifted re-solve needs G M and the floor pressure unchanged (a
    refraction floor moves with R0 and g0: then a full solve).
    """
    if previous is None or previous["u"].size != n_el:
        return None
    if not (np.allclose(previous["B"], pl.B, rtol=1e-9, atol=0.0)
            and np.array_equal(previous["lnpf"], pl.lnpf)):
        return None
    return 1.0 / pl.r0 - 1.0 / previous["r0"]


def _per_element(values, sl, per):
    """Per-planet ``values`` repeated over the elements of slice ``sl`` (``per`` per planet)."""
    p0, p1 = sl.start // per, (sl.stop - 1) // per
    counts = np.full(p1 - p0 + 1, per)
    counts[0] -= sl.start - p0 * per
    counts[-1] -= (p1 + 1) * per - sl.stop
    return np.repeat(values[p0:p1 + 1], counts)


def _run_chunk(job, sl):
    """Radii, top flags and solve state of the elements in slice ``sl``."""
    el = _elements(job, sl)
    n_p, x0, dx = job["n_p"], job["x0"], job["dx"]
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if job["du"] is not None:
            previous = job["previous"]
            prev = {k: previous[k][sl] for k in _STATE_KEYS}
            prev["capped"] = previous["capped"][sl]
            return shifted_chunk(el, prev, _per_element(job["du"], sl, job["nw"] * job["ng"]),
                                 x0, dx, n_p)
        start = job["start"]
        return solve_chunk(el, x0, dx, n_p, None if start is None else start[sl])


def _elements(job, sl):
    """The per-element constants of slice ``sl`` (the ``el`` of the root finder)."""
    pl, nw, ng, n_p, x0, dx = (job[k] for k in ("pl", "nw", "ng", "n_p", "x0", "dx"))
    per = nw * ng
    e = np.arange(sl.start, sl.stop)
    ip = e // per
    iw = (e // ng) % nw
    rep = lambda v: _per_element(v, sl, per)            # noqa: E731
    el = {"B": rep(pl.B), "lnn0": rep(pl.lnn0), "lnkT": rep(pl.lnkT), "base": rep(pl.base),
          "uf": rep(pl.uf), "ut": rep(pl.ut), "capped": rep(pl.capped),
          "lnut": rep(pl.lnut), "inv_ut": rep(pl.inv_ut),
          "posf": rep((pl.lnpf - x0) / dx), "lnk": job["lnk"], "e": job["e"], "row": e * n_p}
    el["a2"] = np.maximum(job["lc"][ip, iw], LN_ABSENT) + el["lnn0"] + el["base"]
    el["a3"] = (np.maximum(job["li"][ip, iw], LN_ABSENT) + 2.0 * el["lnn0"] + el["base"]
                - 0.5 * math.log(2.0))
    return el


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
