"""Seeded synthetic populations of transiting planets, drawn in independent blocks.

Stars are numbered 0, 1, 2, ...; block ``k`` holds stars ``k * BLOCK_STARS``
to ``(k + 1) * BLOCK_STARS - 1`` and is drawn from its own random stream,
``numpy.random.SeedSequence([seed, k])``.  A block is therefore the same
whether it is drawn alone, inside a population, or on another machine, and
any grouping of blocks into chunks gives the same population.

Ingredients, each with its source (see also :mod:`.model` and :mod:`.rules`):

* hosts: the local-volume model of :func:`.model.draw_hosts` (class mix from
  Mamajek 2016 local densities, the Pecaut & Mamajek 2013 dwarf sequence,
  uniform in volume, magnitudes from absolute magnitudes);
* planets: per star, N ~ Poisson(total rate of the host's table), each
  planet's cell drawn with probability rate / total (this splitting of a
  Poisson process is the same as an independent Poisson number per cell);
  within a cell, period and radius log-uniform (common practice, no
  source).  Tables: Fressin et al. 2013 (ApJ 766, 81) for F, G and K hosts,
  Dressing & Charbonneau 2015 (ApJ 807, 45, Figure 12) for M dwarfs;
* orbits circular (common practice, no source), cos i uniform in [0, 1]
  (isotropic), a from Kepler's third law with M_star + M_planet; kept as
  transiting when b = a cos i / R_star < 1 + Rp / R_star (Winn 2010 eq. 7
  with e = 0); the transit probability is then (R_star + Rp) / a (Winn
  2010, eq. 9);
* masses: Chen & Kipping 2017 (ApJ 834, 17) as in
  :func:`snrkit.metrics.mass_from_radius`, times 10^(sigma z) with z
  standard normal and sigma the relation's scatter in log10 M at fixed R
  (``data_tables/mass_radius.ecsv``); at R >= 14.26 R_earth, where radius
  does not fix the mass, log-uniform in 0.414-13 M_jup (the Chen & Kipping
  Jovian transition, value from memory, to the deuterium-burning limit;
  common practice, no source);
* labels: :func:`.rules.planet_class`, the Kopparapu et al. 2014 habitable-zone
  position (:func:`snrkit.metrics.habitable_zone_position`) and
  :func:`.rules.assign_scenario`.

Names are ``<prefix>-<star_index, 9 digits>`` for hosts and the host name
plus a letter (``b``, ``c``, ... by increasing period among all the planets
drawn for that star, transiting or not) for planets.
"""

import difflib

import numpy as np

from ... import geometry as geo
from ... import metrics as met
from ...constants import AU, DAY, M_EARTH, M_JUP, M_SUN, R_EARTH, R_SUN
from ...errors import InputError, UnknownKeyError
from ...units import parse_number
from . import model
from .rules import assign_scenario, planet_class

__all__ = ["BLOCK_STARS", "DEFAULT_OPTIONS", "generate_block", "generate_population",
           "block_columns", "columns_to_table", "COLUMN_UNITS"]

#: Stars per generation block.
BLOCK_STARS = 4096
#: Generator options and their defaults.
DEFAULT_OPTIONS = {
    "max_distance_pc": 50.0,     # outer edge of the volume [pc]
    "min_distance_pc": 1.0,      # inner edge [pc] (the nearest stars are at 1.3 pc)
    "host_mix": None,            # {class: weight}; None = local densities (Mamajek 2016)
    "transiting_only": True,     # False: keep every drawn planet, with a `transits` column
    "name_prefix": "Syn",
}
#: Output column -> unit (None: dimensionless or text).  The catalogue columns
#: follow snrkit's default catalogue layout (snrkit.catalog).
COLUMN_UNITS = {
    "planet_name": None, "host_name": None, "star_index": None,
    "host_class": None, "host_spectral_class": None,
    "planet_radius_earth": "earthRad", "planet_mass_earth": "earthMass",
    "period_days": "d", "semi_major_axis_au": "AU", "impact_parameter": None,
    "eccentricity": None,
    "host_teff_K": "K", "host_radius_sun": "solRad", "host_mass_sun": "solMass",
    "host_mag_V": None, "host_mag_J": None, "host_mag_H": None, "host_mag_Ks": None,
    "host_distance_pc": "pc", "host_ra_deg": "deg", "host_dec_deg": "deg",
    "insolation_earth": None, "zero_albedo_teq_K": "K", "transit_probability": None,
    "transits": None, "planet_class": None, "hz_position": None, "scenario": None,
}
_GIANT_MASS_JUP = (0.414, 13.0)


def _options(options):
    """Check generator options; return them complete, in a fixed order."""
    for key in options:
        if key not in DEFAULT_OPTIONS:
            close = difflib.get_close_matches(key, DEFAULT_OPTIONS, n=1)
            raise UnknownKeyError(f"population option {key}", options[key],
                                  "options " + ", ".join(DEFAULT_OPTIONS),
                                  detail=f"did you mean {close[0]!r}?" if close else "")
    o = {**DEFAULT_OPTIONS, **options}
    o["min_distance_pc"] = parse_number(o["min_distance_pc"], "min_distance_pc", 1e-3, 1e6,
                                        unit_label="pc")
    o["max_distance_pc"] = parse_number(o["max_distance_pc"], "max_distance_pc",
                                        o["min_distance_pc"], 1e6, low_inclusive=False,
                                        unit_label="pc")
    mix = o["host_mix"]
    if mix is not None:
        if not isinstance(mix, dict) or not mix or set(mix) - set(model.SPECTRAL_CLASSES):
            raise InputError("host_mix", mix, "a dict of weights by class F, G, K, M")
        mix = {c: parse_number(w, f"host_mix.{c}", 0.0, 1e9) for c, w in mix.items()}
        if sum(mix.values()) <= 0:
            raise InputError("host_mix", mix, "at least one positive weight")
        o["host_mix"] = mix
    if not isinstance(o["transiting_only"], bool):
        raise InputError("transiting_only", o["transiting_only"], "true or false")
    if not isinstance(o["name_prefix"], str) or not o["name_prefix"].strip():
        raise InputError("name_prefix", o["name_prefix"], "a non-empty text")
    return o


def _seed(seed, index):
    seed = parse_number(seed, "seed", 0, 2 ** 63 - 1, integer=True)
    index = parse_number(index, "block index", 0, 2 ** 63 - 1, integer=True)
    return seed, index


def _tables():
    cells = [model.occurrence_cells(t) for t in ("FGK", "M")]
    return cells, np.array([c["rate"].sum() for c in cells])


def _draw_planets(rng, hosts):
    """Per-planet draws of one block: star, cell, period, radius, cos i, mass deviates."""
    cells, totals = _tables()
    table_of_star = (hosts["spectral_class"] == model.SPECTRAL_CLASSES.index("M")).astype(int)
    counts = rng.poisson(totals[table_of_star])
    star = np.repeat(np.arange(counts.size), counts)
    u = rng.random((5, star.size))
    z = rng.standard_normal(star.size)
    tab = table_of_star[star]
    rmin, rmax, pmin, pmax = (np.empty(star.size) for _ in range(4))
    for t, c in enumerate(cells):
        sel = tab == t
        cum = np.cumsum(c["rate"])
        k = np.minimum(np.searchsorted(cum, u[0, sel] * totals[t], side="right"), cum.size - 1)
        rmin[sel], rmax[sel] = c["radius_min"][k], c["radius_max"][k]
        pmin[sel], pmax[sel] = c["period_min"][k], c["period_max"][k]
    period = np.exp(np.log(pmin) + u[1] * np.log(pmax / pmin))
    radius = np.exp(np.log(rmin) + u[2] * np.log(rmax / rmin))
    return star, table_of_star, period, radius, u[3], z, u[4]


def _masses(radius_earth, z, u_giant):
    """Planet masses [M_earth]: Chen & Kipping 2017 with scatter; giants log-uniform."""
    m_kg, sigma = met.mass_from_radius(radius_earth * R_EARTH)
    lo, hi = np.log10(_GIANT_MASS_JUP)
    giant = 10.0 ** (lo + u_giant * (hi - lo)) * M_JUP
    with np.errstate(invalid="ignore"):
        m = np.where(np.isnan(m_kg), giant, m_kg * 10.0 ** (np.nan_to_num(sigma) * z))
    return m / M_EARTH


def _letters(star, period):
    """Planet letters by increasing period within each star (``star`` sorted)."""
    order = np.lexsort((period, star))
    ranks = np.empty(star.size, dtype=np.int64)
    s = star[order]
    ranks[order] = np.arange(s.size) - np.searchsorted(s, s, side="left")
    top = int(ranks.max()) + 1 if ranks.size else 1
    lookup = np.array([chr(ord("b") + i) if i < 25 else f"p{i + 1}" for i in range(top)])
    return lookup[ranks], order


def block_columns(seed, index, **options):
    """The columns of one block as numpy arrays (see :func:`generate_block`).

    Returns
    -------
    dict of str to numpy.ndarray
        The columns of :data:`COLUMN_UNITS`, in those units, sorted by star
        index and then period.
    """
    seed, index = _seed(seed, index)
    o = _options(options)
    rng = np.random.default_rng(np.random.SeedSequence([seed, index]))
    hosts = model.draw_hosts(rng, BLOCK_STARS, model.class_fractions(o["host_mix"]),
                             o["min_distance_pc"], o["max_distance_pc"])
    star, table_of_star, period, radius, cosi, z, u_giant = _draw_planets(rng, hosts)
    letters, order = _letters(star, period)
    mass = _masses(radius, z, u_giant)
    ms = hosts["mass"][star]
    rs = hosts["radius"][star]
    a_m = geo.semi_major_axis_from_period(period * DAY, ms * M_SUN + mass * M_EARTH)
    b = a_m * cosi / (rs * R_SUN)
    k = radius * R_EARTH / (rs * R_SUN)
    transits = b < 1.0 + k
    keep = order[transits[order]] if o["transiting_only"] else order
    star, period, radius, mass, a_m, b = (x[keep] for x in (star, period, radius, mass, a_m, b))
    teff = hosts["teff"][star]
    rs_m = hosts["radius"][star] * R_SUN
    s_earth = met.insolation(teff, rs_m, a_m)
    teq = met.equilibrium_temperature(teff, rs_m, a_m)
    hz = met.habitable_zone_position(s_earth, teff)
    runaway = met.habitable_zone_fluxes(teff)["runaway_greenhouse"]
    gstar = index * BLOCK_STARS + star
    host = np.char.add(o["name_prefix"] + "-", np.char.zfill(gstar.astype(str), 9))
    spectral = np.asarray(model.SPECTRAL_CLASSES)[hosts["spectral_class"][star]]
    cols = {
        "planet_name": np.char.add(np.char.add(host, " "), letters[keep]),
        "host_name": host, "star_index": gstar.astype(np.int64),
        "host_class": np.where(table_of_star[star] == 1, "M", "FGK"),
        "host_spectral_class": spectral,
        "planet_radius_earth": radius, "planet_mass_earth": mass, "period_days": period,
        "semi_major_axis_au": a_m / AU, "impact_parameter": b, "eccentricity": np.zeros(b.size),
        "host_teff_K": teff, "host_radius_sun": hosts["radius"][star],
        "host_mass_sun": hosts["mass"][star],
        **{f"host_mag_{band}": hosts[f"mag_{band}"][star] for band in ("V", "J", "H", "Ks")},
        "host_distance_pc": hosts["distance"][star], "host_ra_deg": hosts["ra"][star],
        "host_dec_deg": hosts["dec"][star], "insolation_earth": s_earth,
        "zero_albedo_teq_K": teq, "transit_probability": (rs_m + radius * R_EARTH) / a_m,
        "transits": transits[keep], "planet_class": planet_class(radius, s_earth),
        "hz_position": hz, "scenario": assign_scenario(radius, teq, s_earth, hz, runaway),
    }
    return cols


def columns_to_table(cols, meta=None):
    """An astropy Table of generator columns, with the units of :data:`COLUMN_UNITS`."""
    from astropy.table import Table
    t = Table()
    for name, unit in COLUMN_UNITS.items():
        t[name] = cols[name]
        if unit is not None:
            t[name].unit = unit
    t.meta.update(meta or {})
    return t


def _meta(seed, o, blocks, n_stars):
    return {"generator": "snrkit.planning.population", "seed": int(seed),
            "blocks": blocks, "stars": int(n_stars), "block_stars": BLOCK_STARS,
            "options": {k: v for k, v in o.items()},
            "sources": "hosts: Pecaut & Mamajek 2013 sequence, Mamajek 2016 local densities; "
                       "occurrence: Fressin et al. 2013 (FGK), Dressing & Charbonneau 2015 (M); "
                       "masses: Chen & Kipping 2017; HZ: Kopparapu et al. 2014; classes: "
                       "Kopparapu et al. 2018"}


def generate_block(seed, index, **options):
    """The planets of stars ``index * BLOCK_STARS`` to ``(index + 1) * BLOCK_STARS - 1``.

    Parameters
    ----------
    seed : int
        Population seed (0 to 2^63 - 1).
    index : int
        Block number (0 to 2^63 - 1).
    **options
        ``max_distance_pc`` (default 50), ``min_distance_pc`` (1),
        ``host_mix`` (dict of class weights, default the local densities),
        ``transiting_only`` (True; False keeps every drawn planet and its
        ``transits`` flag), ``name_prefix`` ("Syn").

    Returns
    -------
    astropy.table.Table
        One row per planet: snrkit's default catalogue columns
        (``planet_name``, ``host_name``, ``planet_radius_earth``,
        ``planet_mass_earth``, ``period_days``, ``semi_major_axis_au``,
        ``impact_parameter``, ``eccentricity``, ``host_teff_K``,
        ``host_radius_sun``, ``host_mass_sun``, ``host_mag_V/J/H/Ks``,
        ``host_distance_pc``, ``host_ra_deg``, ``host_dec_deg``) and
        ``star_index``, ``host_class`` (FGK or M: the occurrence table used),
        ``host_spectral_class``, ``insolation_earth`` [S_earth],
        ``zero_albedo_teq_K``, ``transit_probability`` ((R* + Rp) / a),
        ``transits``, ``planet_class``, ``hz_position``, ``scenario``.
        It reads back through :func:`snrkit.catalog.catalogue_from_table`
        with the default layout.

    Raises
    ------
    InputError
        A bad seed, index or option value; UnknownKeyError for an unknown option.
    """
    o = _options(options)
    cols = block_columns(seed, index, **options)
    return columns_to_table(cols, {**_meta(_seed(seed, index)[0], o, [int(index)],
                                           BLOCK_STARS)})


def generate_population(n_stars, seed, **options):
    """The planets of the first ``n_stars`` stars of the seeded sequence.

    The blocks ``0 .. ceil(n_stars / BLOCK_STARS) - 1`` are drawn whole and
    the stars with ``star_index >= n_stars`` are dropped (a global
    truncation), so a population of n stars is exactly the part of any
    larger population of the same seed and options with ``star_index < n``.

    Parameters
    ----------
    n_stars : int
        Number of stars (1 to 10^10).
    seed : int
    **options
        As :func:`generate_block`.

    Returns
    -------
    astropy.table.Table
        The rows of the blocks in order (star index, then period).
    """
    n_stars = parse_number(n_stars, "n_stars", 1, 1e10, integer=True)
    o = _options(options)
    n_blocks = -(-n_stars // BLOCK_STARS)
    parts = [block_columns(seed, i, **options) for i in range(n_blocks)]
    cols = {k: np.concatenate([p[k] for p in parts]) for k in COLUMN_UNITS}
    keep = cols["star_index"] < n_stars
    cols = {k: v[keep] for k, v in cols.items()}
    return columns_to_table(cols, _meta(_seed(seed, 0)[0], o, [0, n_blocks], n_stars))
