"""Planet draws of one block of stars: every planet, or only the transiting ones.

Both samplers draw from the same distribution (see :mod:`.generate`): per
star, a Poisson number of planets over the period-radius cells of the host's
occurrence table, period and radius log-uniform within a cell, isotropic
circular orbits, masses from the mass-radius relation with its scatter.

* :func:`draw_all` draws every planet, with cos i uniform in [0, 1]; the
  transit cut b < 1 + Rp/R* is applied afterwards.
* :func:`draw_transiting` draws the transiting planets only, by thinning the
  Poisson process (the same law, far fewer draws): in each cell, planets are
  drawn at the rate ``rate x p_max``, where ``p_max`` bounds the transit
  probability (R* + Rp) / a over the host's spectral class and the cell
  (largest radius, shortest period, a from the star's mass alone), and each
  is kept with probability p / p_max, p = (R* + Rp) / a being its own
  transit probability (Winn 2010, eq. 9 with e = 0).  A kept planet's impact
  parameter is uniform in [0, 1 + Rp/R*], as cos i uniform in [0, p] gives.
  Thinning a Poisson process by an independent probability gives a Poisson
  process with the product intensity, so the kept planets are distributed
  exactly as the transiting planets of :func:`draw_all`, though not the
  same planets for a given seed.
"""

from functools import lru_cache

import numpy as np

from ...bodies import geometry as geo
from ...bodies import metrics as met
from ...constants import DAY, M_EARTH, M_JUP, M_SUN, R_EARTH, R_SUN
from ...errors import SnrkitError
from . import model

__all__ = ["draw_all", "draw_transiting", "masses", "transit_bounds", "TABLE_OF_CLASS",
           "GIANT_MASS_JUP"]

#: Occurrence table (0 = FGK, 1 = M) of each spectral class of :data:`.model.SPECTRAL_CLASSES`.
TABLE_OF_CLASS = np.array([0 if model.HOST_CLASS[c] == "FGK" else 1
                           for c in model.SPECTRAL_CLASSES])
#: Mass range [M_jup] drawn log-uniformly where radius does not fix the mass
#: (R >= 14.26 R_earth): the Chen & Kipping 2017 Jovian transition (value from
#: memory) to the deuterium-burning limit (common practice, no source).
GIANT_MASS_JUP = (0.414, 13.0)
_TABLES = ("FGK", "M")


def masses(radius_earth, z, u_giant):
    """Planet masses [M_earth] for radii [R_earth], standard-normal deviates ``z``
    and uniform deviates ``u_giant``: Chen & Kipping 2017 (ApJ 834, 17) times
    10^(sigma z), or log-uniform in :data:`GIANT_MASS_JUP` beyond the relation."""
    m_kg, sigma = met.mass_from_radius(np.asarray(radius_earth) * R_EARTH)
    lo, hi = np.log10(GIANT_MASS_JUP)
    giant = 10.0 ** (lo + np.asarray(u_giant) * (hi - lo)) * M_JUP
    with np.errstate(invalid="ignore"):
        m = np.where(np.isnan(m_kg), giant, m_kg * 10.0 ** (np.nan_to_num(sigma) * z))
    return m / M_EARTH


def _cells(weights_of_class, cls, u):
    """Cell of each planet: categorical with the class's weights; returns cell arrays."""
    out = {k: np.empty(cls.size) for k in ("radius_min", "radius_max", "period_min",
                                            "period_max")}
    cell = np.empty(cls.size, dtype=np.int64)
    for c in range(len(model.SPECTRAL_CLASSES)):
        sel = cls == c
        if not sel.any():
            continue
        table = model.occurrence_cells(_TABLES[TABLE_OF_CLASS[c]])
        cum = np.cumsum(weights_of_class[c])
        k = np.minimum(np.searchsorted(cum, u[sel] * cum[-1], side="right"), cum.size - 1)
        cell[sel] = k
        for key in out:
            out[key][sel] = table[key][k]
    return cell, out


def _log_uniform(lo, hi, u):
    return np.exp(np.log(lo) + u * np.log(hi / lo))


def draw_all(rng, hosts):
    """Every planet of the block's stars.

    Returns
    -------
    dict of str to numpy.ndarray
        ``star`` (sorted), ``counts`` (planets per star), ``period`` [d],
        ``radius`` [R_earth], ``cosi``, ``z``, ``u_giant``.
    """
    cls = hosts["spectral_class"]
    rates = [model.occurrence_cells(_TABLES[t])["rate"] for t in TABLE_OF_CLASS]
    totals = np.array([r.sum() for r in rates])
    counts = rng.poisson(totals[cls])
    star = np.repeat(np.arange(counts.size), counts)
    u = rng.random((5, star.size))
    z = rng.standard_normal(star.size)
    _, c = _cells(rates, cls[star], u[0])
    return {"star": star, "counts": counts,
            "period": _log_uniform(c["period_min"], c["period_max"], u[1]),
            "radius": _log_uniform(c["radius_min"], c["radius_max"], u[2]),
            "cosi": u[3], "z": z, "u_giant": u[4]}


@lru_cache(maxsize=1)
def transit_bounds():
    """p_max per spectral class and cell of its table (see the module docstring).

    The largest (R* + R_max) / M*^(1/3) over the class's Teff range is taken on
    a grid of 4001 points of the piecewise-linear dwarf sequence and raised by 1 %.

    Returns
    -------
    list of numpy.ndarray
        One array per class of :data:`.model.SPECTRAL_CLASSES`.
    """
    out = []
    for c, name in enumerate(model.SPECTRAL_CLASSES):
        cells = model.occurrence_cells(_TABLES[TABLE_OF_CLASS[c]])
        teff = np.linspace(*model.CLASS_TEFF_RANGE_K[name], 4001)
        p = model.dwarf_properties(teff)
        rs, ms = p["radius"][:, None] * R_SUN, p["mass"][:, None] * M_SUN
        a = geo.semi_major_axis_from_period(cells["period_min"][None, :] * DAY, ms)
        out.append(1.01 * np.max((rs + cells["radius_max"][None, :] * R_EARTH) / a, axis=0))
    return out


def draw_transiting(rng, hosts):
    """The transiting planets of the block's stars, by thinning (module docstring).

    Returns
    -------
    dict of str to numpy.ndarray
        ``star`` (sorted), ``counts`` (transiting planets per star),
        ``period`` [d], ``radius`` [R_earth], ``mass`` [M_earth], ``a`` [m],
        ``b``.
    """
    cls = hosts["spectral_class"]
    bounds = transit_bounds()
    weights = [model.occurrence_cells(_TABLES[TABLE_OF_CLASS[c]])["rate"] * bounds[c]
               for c in range(len(model.SPECTRAL_CLASSES))]
    totals = np.array([w.sum() for w in weights])
    star = np.repeat(np.arange(cls.size), rng.poisson(totals[cls]))
    u = rng.random((5, star.size))
    z = rng.standard_normal(star.size)
    cell, c = _cells(weights, cls[star], u[0])
    period = _log_uniform(c["period_min"], c["period_max"], u[1])
    radius = _log_uniform(c["radius_min"], c["radius_max"], u[2])
    mass = masses(radius, z, u[4])
    rs = hosts["radius"][star] * R_SUN
    a = geo.semi_major_axis_from_period(period * DAY,
                                        hosts["mass"][star] * M_SUN + mass * M_EARTH)
    prob = (rs + radius * R_EARTH) / a
    p_max = _bound_of(bounds, cls[star], cell)
    if np.any(prob > p_max):
        raise SnrkitError("population generator: transit-probability bound violated "
                          "(a defect in draws.transit_bounds)")
    kept = u[3] * p_max < prob
    b = (u[3] * p_max / prob) * (1.0 + radius * R_EARTH / rs)
    star = star[kept]
    return {"star": star, "counts": np.bincount(star, minlength=cls.size),
            "period": period[kept], "radius": radius[kept], "mass": mass[kept],
            "a": a[kept], "b": b[kept]}


def _bound_of(bounds, cls, cell):
    flat = np.concatenate(bounds)
    offset = np.cumsum([0] + [b.size for b in bounds])[:-1]
    return flat[offset[cls] + cell]
