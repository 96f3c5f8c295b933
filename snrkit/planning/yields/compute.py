"""Population yields: the public function and its labelled result.

:func:`population_yields` answers the designer's question: for each design,
scenario and test, how many planets of a population reach the target
significance within the budgets, split by planet class and habitable-zone
position, with the spread over population draws.  The population comes from
a file (read with its per-row status) or from the seeded generator (whole
blocks of stars); its chunks go through the one engine
(:mod:`snrkit.planning.yields.chunk`) in this process or as dask tasks
(:mod:`snrkit.planning.yields.cluster`), and finished chunks are stored as
they finish (:mod:`snrkit.planning.yields.store`).

Spread: each draw is an independent population from its own seed, so the
yield of one draw is a count; ``yield_spread`` is the sample standard
deviation over the draws (ddof = 1; NaN with one draw) and ``poisson_sigma``
= sqrt(mean yield), the spread of a Poisson count of that mean, to compare
with it.
"""

import math

import numpy as np

from ...errors import InputError
from ...units import parse_number
from ...engine.engine import parse_test
from ...atmosphere.scenarios import load_scenario
from .designs import designs_from_options, build_mode, design_coordinates
from .chunk import ASSIGNED
from . import cluster as cl

__all__ = ["population_yields", "yield_dataset", "HZ_ORDER", "DEFAULT_CHUNK_MEMORY",
           "DEFAULT_CHUNK_PLANETS", "DEFAULT_CHUNK_BLOCKS", "MAX_DRAWS", "generate_blocks"]

#: Habitable-zone positions in the order of the outputs (others follow, sorted).
HZ_ORDER = ("inner", "optimistic", "conservative", "outer", "undefined")
#: Memory of one chunk on a worker unless told otherwise.
DEFAULT_CHUNK_MEMORY = "1 GB"
#: Rows per chunk of a population read from a file.
DEFAULT_CHUNK_PLANETS = 5000
#: Generator blocks per chunk (about 200 transiting planets each with the
#: default options).
DEFAULT_CHUNK_BLOCKS = 8
#: Most population draws of one run.
MAX_DRAWS = 1000


def _check_lists(scenarios, tests):
    scenarios = [scenarios] if isinstance(scenarios, str) else list(scenarios or [ASSIGNED])
    tests = [tests] if isinstance(tests, str) else list(tests or ["atmosphere"])
    for s in scenarios:
        if s != ASSIGNED:
            load_scenario(s)                       # validated before the long run
    for t in tests:
        parse_test(t)
    for name, items in (("--scenario", scenarios), ("--test", tests)):
        for i, x in enumerate(items):
            if x in items[:i]:
                raise InputError(name, x, "each value once")
    return scenarios, tests


def _population_chunks(population, generate, seed, draws, mapping, chunk_planets, chunk_blocks,
                       generator_options):
    """(chunks, seeds, description) where chunks = [((seed, block), source)]."""
    from functools import partial
    if (population is None) == (generate is None):
        raise InputError("--population", population, "either a population file or --generate N")
    if generate is not None:
        from ..population import BLOCK_STARS
        n = int(_parse_int(generate, "--generate", 1, 10**10))
        draws = int(_parse_int(draws, "--draws", 1, MAX_DRAWS))
        seed = int(_parse_int(seed, "--seed", 0, 2**63 - draws))
        per = int(_parse_int(chunk_blocks, "--chunk-blocks", 1, 10**5))
        seeds = [seed + k for k in range(draws)]
        blocks = math.ceil(n / BLOCK_STARS)
        opts = dict(generator_options or {})
        chunks = [((s, b), partial(generate_blocks, count=min(per, blocks - b), options=opts))
                  for s in seeds for b in range(0, blocks, per)]
        return chunks, seeds, {"generated_stars": blocks * BLOCK_STARS, "seeds": seeds,
                               "block_stars": BLOCK_STARS, "generator_options": opts}
    if int(_parse_int(draws, "--draws", 1, MAX_DRAWS)) != 1:
        raise InputError("--draws", draws, "1 for a population file (draws need --generate)")
    from astropy.table import Table
    rows = int(_parse_int(chunk_planets, "--chunk-planets", 1, 10**7))
    if isinstance(population, Table):
        table, desc = population, {"table_rows": len(population), "table": _table_digest(population)}
        chunks = [((0, b), table[s0:s0 + rows]) for b, s0 in enumerate(range(0, len(table), rows))]
        return chunks, [0], {**desc, "chunk_planets": rows}
    from ..population.stream import PopulationFile
    from pathlib import Path
    pf = PopulationFile(population, mapping, chunk_rows=rows)
    st = Path(population).stat()
    desc = {"file": str(Path(population).resolve()), "size": st.st_size,
            "mtime_ns": st.st_mtime_ns, "mapping": None if mapping is None else str(mapping)}
    chunks = [((0, b), cl.FileChunk(pf, b)) for b in range(pf.chunks)]
    return chunks, [0], {**desc, "chunk_planets": rows}


def _table_digest(table):
    """Digest of a table's columns (names and values), so a resumed run is the same table."""
    import hashlib
    h = hashlib.sha256()
    for name in table.colnames:
        col = np.asarray(table[name])
        h.update(name.encode())
        h.update(col.tobytes() if col.dtype.kind in "biufcUS" else repr(col.tolist()).encode())
    return h.hexdigest()[:20]


def generate_blocks(seed, first, count, options):
    """Generator blocks ``first .. first + count - 1`` of ``seed`` as one table."""
    from astropy.table import vstack
    from ..population import generate_block
    parts = [generate_block(seed, b, **options) for b in range(first, first + count)]
    return vstack(parts, metadata_conflicts="silent") if len(parts) > 1 else parts[0]


def _parse_int(value, field, low, high):
    return parse_number(value, field, low, high, integer=True)


# size: the docstring documents every parameter of the public function; the body is a
# short list of steps, each a helper
def population_yields(population=None, *, generate=None, seed=0, draws=1, mapping=None,
                      designs=None, design_texts=(), mode=None, scenarios=(ASSIGNED,),
                      tests=("atmosphere",), sigma=5.0, max_transits=500, hours=None,
                      resolution=None, scheduler=None, workers=None,
                      chunk_memory=DEFAULT_CHUNK_MEMORY, chunk_planets=DEFAULT_CHUNK_PLANETS,
                      chunk_blocks=DEFAULT_CHUNK_BLOCKS, out_dir=None, restart=False,
                      progress=None, notify=None,
                      connect_timeout=10.0, generator_options=None):
    """Yields of a population for a grid of designs, scenarios and tests.

    Parameters
    ----------
    population : str, pathlib.Path or astropy.table.Table, optional
        A population file (Parquet, CSV or ECSV, read by
        :func:`snrkit.planning.population.read_population` through
        ``mapping``) or a table in the catalogue's default layout, sent to
        the workers in chunks of ``chunk_planets`` rows; a generated
        population is drawn on the workers, block by block.  Either way
        only the chunks in flight are ever in memory: a file is read here
        chunk by chunk (:class:`snrkit.planning.population.stream.PopulationFile`,
        each chunk screened as in a whole-file read) just before its task
        is sent, at most :data:`snrkit.planning.yields.cluster.IN_FLIGHT_PER_WORKER`
        chunks per worker at a time.
    generate : int, optional
        Instead: draw this many stars (rounded up to whole generator
        blocks) with :func:`snrkit.planning.population.generate_block`.
    seed, draws : int
        Seed of the first draw and the number of independent draws (seeds
        ``seed``, ``seed + 1``, ...); generated populations only.
    designs, design_texts, mode :
        A design grid file, ``KEY=VALUE,...`` texts, and the mode of designs
        naming none (see :mod:`snrkit.planning.yields.designs`).
    scenarios : sequence of str
        Scenario presets or files; ``"assigned"`` (default) is each planet's
        own scenario from the population.
    tests : sequence of str
        ``atmosphere``, ``species:GAS``, ``against:SCENARIO``.
    sigma : float
        Target significance.
    max_transits : int
        Largest number of transits per planet.
    hours : float, optional
        Programme hours per planet for designs that set none.
    resolution : float or "native", optional
        Resolving power of the bins (default that of the engine, R = 100).
    scheduler : str, optional
        ``"local"`` (a LocalCluster sized to the machine), ``"in-process"``,
        or a scheduler address; default ``$SNRKIT_SCHEDULER``, else local.
    workers : int, optional
        Workers of the LocalCluster (default: one per core).
    chunk_memory : str or float
        Memory one chunk may use on a worker (bounds the engine's pass).
    chunk_planets : int
        Rows per chunk of a population file.
    chunk_blocks : int
        Generator blocks per chunk of a generated population (a chunk holds
        whole blocks, so the population does not depend on the chunking).
    out_dir : str or pathlib.Path, optional
        Run folder: per-planet Parquet per chunk, the manifest and
        ``yields.nc``; a run there with the same settings is resumed.
    restart : bool
        Discard the chunks of an earlier run in ``out_dir``.
    progress : callable, optional
        ``progress(done, total)`` after each chunk.
    notify : callable, optional
        ``notify(text)`` with the dashboard link when a cluster is used.
    connect_timeout : float
        Seconds to wait for a scheduler address.

    Returns
    -------
    dict
        ``dataset`` (xarray.Dataset, see :func:`yield_dataset`), ``chunks``,
        ``computed`` (chunks computed by this call), ``planets`` (input rows,
        all draws), ``scheduler``, ``dashboard`` (link or None), ``out_dir``.
    """
    scenarios, tests = _check_lists(scenarios, tests)
    from ...stats import detect as dt
    sigma = dt.check_sigma(sigma)
    max_transits = int(_parse_int(max_transits, "--max-transits", 1, 100000))
    if hours is not None:
        hours = float(parse_number(hours, "--hours", 0.0, 1e6, low_inclusive=False))
    design_list = designs_from_options(designs, design_texts, mode)
    built = [(d, *build_mode(d)) for d in design_list]
    chunk_bytes = cl.parse_memory(chunk_memory)
    per_pass = cl.planets_per_pass(chunk_bytes, _bins_factor(resolution))
    chunks, seeds, pop_desc = _population_chunks(population, generate, seed, draws, mapping,
                                                 chunk_planets, chunk_blocks, generator_options)
    settings = dict(scenarios=scenarios, tests=tests, sigma=sigma, max_transits=max_transits,
                    resolution=resolution, hours=hours, planets_per_pass=per_pass)
    from ..._version import __version__
    identity = {"population": pop_desc, "designs": [d.as_dict() for d in design_list],
                **{k: v for k, v in settings.items() if k != "planets_per_pass"},
                "version": __version__}
    store, done = None, {}
    keys = [k for k, _ in chunks]
    if out_dir is not None:
        from .store import RunStore
        store = RunStore(out_dir, identity, keys, restart=restart)
        done = store.done(keys)
    from .store import settings_digest
    digest = settings_digest(identity)
    counts, computed, dashboard = _compute(
        chunks, [(d, m) for d, m, _ in built], settings, scheduler, workers, connect_timeout,
        chunk_bytes, store, done, progress, notify, f"snrkit-yields-{digest}")
    ds = yield_dataset(counts, seeds, design_list, [a for _, _, a in built], scenarios, tests,
                       volume_scale=_volume_scale(pop_desc))
    ds.attrs.update(_attrs(sigma, max_transits, hours, resolution, pop_desc))
    if out_dir is not None:
        _write_netcdf(ds, store.folder / "yields.nc")
    return {"dataset": ds, "chunks": len(chunks), "computed": computed,
            "planets": int(ds["planets"].sum()), "scheduler": scheduler or "default",
            "dashboard": dashboard, "out_dir": None if store is None else str(store.folder)}


def _compute(chunks, designs, settings, scheduler, workers, connect_timeout, chunk_bytes, store,
             done, progress, notify, key_prefix):
    """Run the chunks on the scheduler asked for; counts, chunks computed and the dashboard link."""
    client, cluster = cl.connect(scheduler, workers, connect_timeout)
    dashboard = None
    try:
        if client is not None:
            cl.check_chunk_memory(client, chunk_bytes)
            dashboard = client.dashboard_link
            if notify is not None:
                from importlib.util import find_spec
                notify(f"dask dashboard: {dashboard}" + ("" if find_spec("bokeh") else
                       " (the page needs bokeh: pip install 'snrkit[dashboard]')"))
        counts, computed = cl.run_chunks(chunks, designs, settings, client=client, store=store,
                                         done=done, progress=progress, key_prefix=key_prefix)
    finally:
        if client is not None:
            client.close()
        if cluster is not None:
            cluster.close()
    return counts, computed, dashboard


def _volume_scale(pop_desc):
    """Stars in the real volume per star drawn (generated populations; NaN otherwise).

    Derived from the run's description here, not stored in it, so that it
    never changes the identity of a run (its resumption key).
    """
    if "generated_stars" not in pop_desc:
        return math.nan
    from ..population import stars_in_volume
    return stars_in_volume(**pop_desc["generator_options"]) / pop_desc["generated_stars"]


def _bins_factor(resolution):
    """Bins relative to R = 100 (the engine memory scales with the bins)."""
    if resolution is None or isinstance(resolution, str):
        return 1.0
    return float(parse_number(resolution, "--resolution", 1.0, 1e6)) / 100.0


def _attrs(sigma, max_transits, hours, resolution, pop_desc):
    import json
    return {"target_sigma": float(sigma), "max_transits": int(max_transits),
            "hours_per_planet": "none" if hours is None else float(hours),
            "resolution": "engine default" if resolution is None else str(resolution),
            "population": json.dumps(pop_desc, default=str),
            "reached": "status ok, transits needed <= max_transits and <= the transits in the "
                       "design's years, programme hours <= the design's (or the run's) hours",
            "yield_spread": "sample standard deviation over population draws (ddof = 1)",
            "poisson_sigma": "sqrt(yield_mean), the spread of a Poisson count",
            "note": "planning estimates; official observatory tools govern real proposals"}


def yield_dataset(counts, seeds, designs, apertures, scenarios, tests, volume_scale=math.nan):
    """The labelled yields from the chunks' counts.

    ``volume_scale`` is the number of stars the real volume holds per star
    drawn (:func:`snrkit.planning.population.stars_in_volume` over the stars
    of one draw, whole generator blocks): ``yield_per_volume`` =
    ``yield_mean`` x ``volume_scale`` is the expected yield of the real
    neighbourhood -- its transiting planets that reach the target, if all
    are known and every transit is taken -- and
    ``yield_per_volume_error`` = ``volume_scale`` x sqrt(``yield_mean`` /
    draws) the sampling error of that estimate (Poisson counts over the
    draws).  The real neighbourhood is one realisation: its own count
    scatters by about sqrt(``yield_per_volume``) around the expectation,
    and the occurrence rates' uncertainty is not included.  NaN for a
    population file, or a host mix that is not the local one.

    Returns
    -------
    xarray.Dataset
        ``planets`` (draw, planet_class, hz_position): input rows;
        ``reached`` (draw, design, scenario, test, planet_class, hz_position);
        ``status_count`` (draw, design, scenario, test, status): planets by
        status (``ok``, ``not_reachable``, ``saturated``, the population's
        and the catalogue's refusals, ...);
        ``yield_mean`` and ``yield_spread`` over the draws,
        ``poisson_sigma``, ``yield_per_volume`` and
        ``yield_per_volume_error`` (design, scenario, test, planet_class,
        hz_position); attribute ``volume_scale``.  Design coordinates: ``mode``, ``aperture_m``,
        ``throughput_scale``, ``floor_ppm``, ``hours``, ``years``.
    """
    import xarray as xr
    classes = sorted({c for cnt in counts.values() for c, _, _ in cnt["classes"]})
    seen = {h for cnt in counts.values() for _, h, _ in cnt["classes"]}
    hz = [h for h in HZ_ORDER if h in seen] + sorted(seen - set(HZ_ORDER))
    ci = {c: i for i, c in enumerate(classes)}
    hi = {h: i for i, h in enumerate(hz)}
    di = {s: i for i, s in enumerate(seeds)}
    planets = np.zeros((len(seeds), len(classes), len(hz)), dtype=np.int64)
    reached = np.zeros((len(seeds), len(designs), len(scenarios), len(tests), len(classes),
                        len(hz)), dtype=np.int64)
    codes = sorted({x[3] for cnt in counts.values() for x in cnt["statuses"]})
    code_i = {c: i for i, c in enumerate(codes)}
    status = np.zeros((len(seeds), len(designs), len(scenarios), len(tests), len(codes)),
                      dtype=np.int64)
    for (s, _), cnt in counts.items():
        for d, sc, t, c, k in cnt["statuses"]:
            status[di[s], d, sc, t, code_i[c]] += k
        for c, h, k in cnt["classes"]:
            planets[di[s], ci[c], hi[h]] += k
        for d, sc, t, c, h, k in cnt["reached"]:
            reached[di[s], d, sc, t, ci[c], hi[h]] += k
    coords = {"draw": np.arange(len(seeds)), "seed": ("draw", np.asarray(seeds, dtype=np.int64)),
              "design": [d.name for d in designs], "scenario": list(scenarios), "test": list(tests),
              "planet_class": classes, "hz_position": hz, "status": codes}
    coords.update({k: ("design", v) for k, v in design_coordinates(designs, apertures).items()})
    dims = ("draw", "design", "scenario", "test", "planet_class", "hz_position")
    ds = xr.Dataset({"planets": (("draw", "planet_class", "hz_position"), planets),
                     "reached": (dims, reached),
                     "status_count": (dims[:4] + ("status",), status)}, coords=coords)
    ds["yield_mean"] = ds["reached"].mean("draw")
    ds["yield_spread"] = (ds["reached"].std("draw", ddof=1) if len(seeds) > 1
                          else xr.full_like(ds["yield_mean"], np.nan))
    ds["poisson_sigma"] = np.sqrt(ds["yield_mean"])
    ds["yield_per_volume"] = ds["yield_mean"] * float(volume_scale)
    ds["yield_per_volume"].attrs["description"] = (
        "yield_mean x stars in the real volume / stars drawn: the expected yield of the real "
        "neighbourhood if all its planets are known and every transit is taken; the real "
        "sky scatters by about its square root, occurrence-rate uncertainty not included "
        "(NaN for a population file or a host mix that is not the local one)")
    ds["yield_per_volume_error"] = float(volume_scale) * np.sqrt(ds["yield_mean"] / len(seeds))
    ds["yield_per_volume_error"].attrs["description"] = (
        "sampling error of yield_per_volume: volume scale x sqrt(yield_mean / draws)")
    ds.attrs["volume_scale"] = float(volume_scale)
    ds["aperture_m"].attrs["units"] = "m"
    ds["floor_ppm"].attrs["units"] = "ppm"
    ds["hours"].attrs["units"] = "h"
    ds["years"].attrs["units"] = "yr"
    return ds


def _write_netcdf(ds, path):
    from ...io.atomic import atomic_path
    with atomic_path(path) as tmp:
        ds.to_netcdf(tmp, engine="scipy")
