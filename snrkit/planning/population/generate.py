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
  source).  Tables: Fressin et al. 2013 (ApJ 766, 81; its Table 2 as transcribed in the SAG13 compilation) for F, G and K
  hosts, with the cells it leaves empty (small planets beyond 85-245 d)
  filled after Hsu et al. 2019 (AJ 158, 109), and Dressing & Charbonneau
  2015 (ApJ 807, 45, Figure 12) for M dwarfs; provenance and the filling
  rule in ``data_tables/scripts/make_population_tables.py``;
* orbits circular (common practice, no source), isotropic, a from Kepler's
  third law with M_star + M_planet; a planet transits when b = a cos i /
  R_star < 1 + Rp / R_star (Winn 2010 eq. 7 with e = 0), which happens with
  probability (R_star + Rp) / a (Winn 2010, eq. 9);
* ``transiting_only=True`` (the default) draws the transiting planets
  directly by thinning the Poisson process (:func:`.draws.draw_transiting`:
  exactly the same law, some 20 times fewer draws); ``transiting_only=False``
  draws every planet (:func:`.draws.draw_all`) with cos i uniform in [0, 1]
  and flags the transiting ones.  The two modes use different random draws:
  for one seed they give statistically identical, not identical, transiting
  planets;
* masses: Chen & Kipping 2017 (ApJ 834, 17) as in
  :func:`snrkit.metrics.mass_from_radius`, times 10^(sigma z) with z
  standard normal and sigma the relation's scatter in log10 M at fixed R
  (``data_tables/mass_radius.ecsv``); at R >= 14.26 R_earth, where radius
  does not fix the mass, log-uniform in 0.414-13 M_jup (the Chen & Kipping
  Jovian transition, value from memory, to the deuterium-burning limit;
  common practice, no source);
* labels: :func:`.rules.planet_class`, the Kopparapu et al. 2014 habitable-zone
  position (:func:`snrkit.metrics.habitable_zone_position`) and
  :func:`.rules.assign_scenario`; the runaway-greenhouse limit that splits
  the optimistic zone into its hot and cold sides is interpolated in a
  cached 0.25 K grid of :func:`snrkit.metrics.habitable_zone_fluxes`
  (:func:`runaway_greenhouse_flux`, within 1e-9 of the exact limit), so the
  Kopparapu polynomials are evaluated once per block instead of twice.

Names are ``<prefix>-<star_index, 9 digits>`` for hosts and the host name
plus a letter for planets (``b``, ``c``, ... by increasing period among the
planets drawn for that star: the transiting ones by default, all of them with
``transiting_only=False``).
"""

import difflib
from functools import lru_cache

import numpy as np

from ...bodies import geometry as geo
from ...bodies import metrics as met
from ...constants import AU, DAY, M_EARTH, M_SUN, R_EARTH, R_SUN
from ...errors import InputError, UnknownKeyError
from ...units import parse_number
from . import draws, model
from .rules import assign_scenario, planet_class

__all__ = ["BLOCK_STARS", "DEFAULT_OPTIONS", "generate_block", "generate_population",
           "stars_in_volume",
           "block_columns", "columns_to_table", "runaway_greenhouse_flux", "COLUMN_UNITS"]

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
#: follow snrkit's default catalogue layout (snrkit.planning.catalog).
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


def _whole(value, field):
    # the upper bound is checked on the integer: as a float, 2^63 - 1 rounds up to 2^63 and
    # seeds just below it would be refused
    value = parse_number(value, field, 0, 2 ** 63, integer=True)
    if int(value) > 2 ** 63 - 1:
        raise InputError(field, value, "a whole number in [0, 2^63 - 1]")
    return int(value)


def _seed(seed, index):
    return _whole(seed, "seed"), _whole(index, "block index")


def _letters(star, period, keep, counts):
    """Letters of the planets ``keep``: b, c, ... by increasing period among the
    planets of their star (``star`` sorted, ``counts`` planets per star)."""
    first = np.cumsum(counts) - counts
    s = star[keep]
    rank = np.zeros(keep.size, dtype=np.int64)
    # One pass per planet slot (a star has at most a few tens of planets), over the
    # kept planets only.
    for j in range(int(counts.max()) if counts.size else 0):
        other = np.minimum(first[s] + j, star.size - 1)
        rank += (j < counts[s]) & (period[other] < period[keep])
    top = int(rank.max()) + 1 if rank.size else 1
    lookup = np.array([chr(ord("b") + i) if i < 25 else f"p{i + 1}" for i in range(top)])
    return lookup[rank]


def _every_planet(rng, hosts):
    """All planets (draws.draw_all) with their transit flag, in star then period order."""
    d = draws.draw_all(rng, hosts)
    star, period = d["star"], d["period"]
    mass = draws.masses(d["radius"], d["z"], d["u_giant"])
    a = geo.semi_major_axis_from_period(period * DAY, hosts["mass"][star] * M_SUN + mass * M_EARTH)
    rs = hosts["radius"][star] * R_SUN
    b = a * d["cosi"] / rs
    keep = np.lexsort((period, star))
    out = {"star": star[keep], "period": period[keep], "radius": d["radius"][keep],
           "mass": mass[keep], "a": a[keep], "b": b[keep],
           "letters": _letters(star, period, keep, d["counts"])}
    out["transits"] = out["b"] < 1.0 + out["radius"] * R_EARTH / (rs[keep])
    return out


def _transiting_planets(rng, hosts):
    """Transiting planets only (draws.draw_transiting), in star then period order."""
    d = draws.draw_transiting(rng, hosts)
    keep = np.lexsort((d["period"], d["star"]))
    out = {k: d[k][keep] for k in ("star", "period", "radius", "mass", "a", "b")}
    out["letters"] = _letters(d["star"], d["period"], keep, d["counts"])
    out["transits"] = np.ones(keep.size, dtype=bool)
    return out


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
    pl = _transiting_planets(rng, hosts) if o["transiting_only"] else _every_planet(rng, hosts)
    star, radius, a_m = pl["star"], pl["radius"], pl["a"]
    teff = hosts["teff"][star]
    rs_m = hosts["radius"][star] * R_SUN
    s_earth = met.insolation(teff, rs_m, a_m)
    teq = met.equilibrium_temperature(teff, rs_m, a_m)
    hz = met.habitable_zone_position(s_earth, teff)
    runaway = runaway_greenhouse_flux(teff)
    mags = model.apparent_magnitudes(teff, hosts["distance"][star])
    gstar = index * BLOCK_STARS + star
    host = np.char.add(o["name_prefix"] + "-", np.char.zfill(gstar.astype(str), 9))
    cls = hosts["spectral_class"][star]
    return {
        "planet_name": np.char.add(np.char.add(host, " "), pl["letters"]),
        "host_name": host, "star_index": gstar.astype(np.int64),
        "host_class": np.asarray([model.HOST_CLASS[c] for c in model.SPECTRAL_CLASSES])[cls],
        "host_spectral_class": np.asarray(model.SPECTRAL_CLASSES)[cls],
        "planet_radius_earth": radius, "planet_mass_earth": pl["mass"],
        "period_days": pl["period"], "semi_major_axis_au": a_m / AU,
        "impact_parameter": pl["b"], "eccentricity": np.zeros(star.size),
        "host_teff_K": teff, "host_radius_sun": hosts["radius"][star],
        "host_mass_sun": hosts["mass"][star],
        **{f"host_mag_{band}": mags[f"mag_{band}"] for band in ("V", "J", "H", "Ks")},
        "host_distance_pc": hosts["distance"][star], "host_ra_deg": hosts["ra"][star],
        "host_dec_deg": hosts["dec"][star], "insolation_earth": s_earth,
        "zero_albedo_teq_K": teq, "transit_probability": (rs_m + radius * R_EARTH) / a_m,
        "transits": pl["transits"], "planet_class": planet_class(radius, s_earth),
        "hz_position": hz, "scenario": assign_scenario(radius, teq, s_earth, hz, runaway),
    }


@lru_cache(maxsize=1)
def _runaway_grid():
    teff = np.arange(met.HZ_TEFF_RANGE_K[0], met.HZ_TEFF_RANGE_K[1] + 0.125, 0.25)
    return teff, met.habitable_zone_fluxes(teff)["runaway_greenhouse"]


def runaway_greenhouse_flux(teff_K):
    """Runaway-greenhouse flux limit [S_earth] at Teff [K], NaN outside the fits' range.

    :func:`snrkit.metrics.habitable_zone_fluxes` (Kopparapu et al. 2014)
    interpolated linearly in a cached 0.25 K grid: the quartic's curvature
    keeps the error below 1e-9 relative (tests/test_population_generate.py).
    """
    teff = np.asarray(teff_K, dtype=np.float64)
    grid, flux = _runaway_grid()
    inside = (teff >= grid[0]) & (teff <= grid[-1])
    return np.where(inside, np.interp(teff, grid, flux), np.nan)


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
                       "occurrence: Fressin et al. 2013 filled after Hsu et al. 2019 (FGK), "
                       "Dressing & Charbonneau 2015 (M); "
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
        ``transiting_only`` (True; False draws every planet and flags the
        transiting ones in ``transits``: see the module docstring),
        ``name_prefix`` ("Syn").

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


def stars_in_volume(**options):
    """Expected number of stars the generator's volume holds in reality.

    The local number densities of the shipped ``host_mix.ecsv`` (Mamajek
    2016; see :mod:`.model`) times the shell volume 4/3 pi (d_max^3 -
    d_min^3).  The generator draws as many stars as it is asked for,
    uniformly in that volume; a population of N stars is therefore N /
    ``stars_in_volume`` realisations of the real neighbourhood, and a yield
    per real volume is the count times ``stars_in_volume / N``.

    Parameters
    ----------
    **options
        As :func:`generate_block` (only the distances and ``host_mix`` matter).

    Returns
    -------
    float
        Stars of the drawn classes in the volume; NaN when ``host_mix``
        gives several classes weights that are not proportional to their
        local densities (the drawn mix is then not that of any real volume,
        so no single factor converts the counts).
    """
    import math
    o = _options(options)
    density = model.class_densities()
    mix = o["host_mix"] or density
    drawn = [c for c, w in mix.items() if w > 0]
    ratio = np.array([mix[c] / density[c] for c in drawn])
    if not np.allclose(ratio, ratio[0], rtol=1e-9, atol=0.0):
        return math.nan
    rho = sum(density[c] for c in drawn)
    d0, d1 = o["min_distance_pc"], o["max_distance_pc"]
    return rho * 4.0 / 3.0 * math.pi * (d1 ** 3 - d0 ** 3)
