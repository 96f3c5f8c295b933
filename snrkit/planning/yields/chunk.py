"""One chunk of a population through the engine: arrays in, arrays out.

:func:`evaluate_chunk` is the function a dask worker runs, and the one the
in-process path runs: it screens the chunk's rows as a catalogue
(:func:`snrkit.catalog.catalogue_from_table`, every row keeps a status and a
reason), evaluates every design x scenario x test through the one engine
(:func:`snrkit.engine.evaluate`, by way of the catalogue path's chunk
runner, which gives a refused row ``bad_value`` without failing its
neighbours) in passes of at most ``planets_per_pass`` planets, and counts the
planets that reach the target within the budgets.  It has no state, writes no
file and prints nothing, so a chunk gives the same answer on any worker, and
a lost worker's chunk is simply run again.

A planet is *reached* for a design, scenario and test when its status is
``ok``, its transits needed are at most ``max_transits`` and, where set, at
most the transits that occur in the design's ``years`` (floor(years /
period)) and its programme hours at most the design's (or the run's)
``hours``.

Transits in ``years``: a window of length L = years x 365.25 d holds
floor(L / P) or floor(L / P) + 1 mid-transit times depending on the phase
(L / P on average); the yield takes floor(L / P), the number every phase
guarantees, since a planet's phase relative to a mission is not known in
advance.  No observability fraction is applied (sky visibility, scheduling
conflicts): every transit in the window is taken, so on that count the
yield is an upper bound.  Hours per transit are the engine's: T14 + baseline
(T14 unless the mode says otherwise) + overhead (1 h by default)
(:func:`snrkit.stats.forecast.programme_hours`).
"""

import numpy as np

from ..catalog import catalogue_from_table
from ...engine.engine import parse_test
from ..rank import run_chunk, with_magnitudes
from ...atmosphere.scenarios import load_scenario

__all__ = ["evaluate_chunk", "reached_mask", "ASSIGNED", "PLANET_COLUMNS", "UNCLASSIFIED", "YEAR_S"]

#: Scenario label meaning "each planet's own scenario" (the population's
#: ``scenario`` column).
ASSIGNED = "assigned"
#: Planet class of rows whose population has no ``planet_class`` column.
UNCLASSIFIED = "unclassified"
#: Julian year [s].
YEAR_S = 365.25 * 86400.0
#: Columns of the per-planet output (one row per planet x design x scenario x test).
PLANET_COLUMNS = ("seed", "block", "row", "name", "star_index", "host_class", "planet_class",
                  "hz_position", "design", "scenario", "test", "status", "reason",
                  "transits_needed", "hours_total", "transits_available", "reached")
#: Population columns that are labels, not catalogue fields.
_LABELS = ("star_index", "host_class", "planet_class", "hz_position", "scenario", "status",
           "reason")


def _labels(table, name, n, default):
    if name in table.colnames:
        return np.asarray(table[name]).astype(str).astype(object)
    return np.full(n, default, dtype=object)


def _screen(table):
    """(catalogue, status, reason, system, good) with the population's own refusals kept."""
    cat_cols = [c for c in table.colnames if c not in _LABELS]
    cat = catalogue_from_table(table[cat_cols], source="population chunk")
    status = np.array([str(s) for s in cat.status], dtype=object)
    reason = np.array([str(r) for r in cat.reason], dtype=object)
    if "status" in table.colnames:                      # refusals of the population reader
        pre = np.asarray(table["status"]).astype(str)
        bad = pre != "ok"
        status[bad] = pre[bad]
        reason[bad] = _labels(table, "reason", len(table), "")[bad]
    system, good = with_magnitudes(cat, status, reason)
    if system is not None and len(good):
        keep = status[good] == "ok"
        if not keep.all():
            system = system.take(np.flatnonzero(keep)) if keep.any() else None
            good = good[keep]
    return cat, status, reason, system, good


def _engine_columns(system, modes, scs, kw, per_pass):
    """Engine columns (mode, scenario, planet) for the system, in passes of ``per_pass`` planets."""
    n = len(system.names)
    parts = []
    for s0 in range(0, n, per_pass):
        sub = system.take(np.arange(s0, min(s0 + per_pass, n)))
        res = run_chunk(sub, modes, scs, kw)
        parts.append({c: res["columns"][c] for c in ("status", "reason", "transits_needed",
                                                     "hours_total")})
    return {c: np.concatenate([p[c] for p in parts], axis=-1) for c in parts[0]}


def _instrument_key(design):
    """What of a design reaches the engine (everything but its name and budgets)."""
    return (design.mode, design.aperture_m, design.throughput_scale, design.floor_ppm,
            design.floor_averages_down)


def _applies(kind, arg, sc):
    """Why a test does not apply to a scenario ('' when it does)."""
    if kind == "species" and arg not in sc.mixing_ratios:
        return f"scenario {sc.name} has no {arg}"
    return ""


def _one_scenario(system, modes, spec, test, kw, per_pass, assigned):
    """Per mode: status, reason, transits, hours of every usable planet for one scenario entry.

    All modes go through the engine together, so a spectrum is solved once
    for the modes that share its bins (designs that differ in aperture,
    throughput or floor).
    """
    n = len(system.names)
    outs = [{"status": np.full(n, "", dtype=object), "reason": np.full(n, "", dtype=object),
             "transits_needed": np.zeros(n, dtype=np.int64), "hours_total": np.full(n, np.nan)}
            for _ in modes]
    kind, arg = parse_test(test)
    groups = ([(spec, np.arange(n))] if spec != ASSIGNED else
              [(name, np.flatnonzero(assigned == name)) for name in sorted(set(assigned))])
    for name, idx in groups:
        sc = load_scenario(name)
        why = _applies(kind, arg, sc)
        if why:
            for out in outs:
                out["status"][idx], out["reason"][idx] = "not_applicable", why
            continue
        cols = _engine_columns(system.take(idx) if spec == ASSIGNED else system, list(modes),
                               [sc], {**kw, "test": test}, per_pass)
        for m, out in enumerate(outs):
            for c in out:
                out[c][idx] = cols[c][m, 0]
    return outs


def _evaluate_designs(system, designs, scenarios, tests, kw, per_pass, assigned):
    """{(instrument key, scenario index, test index): engine columns} for the distinct designs.

    Designs that differ only in their name and budgets share one evaluation;
    the distinct ones go through the engine together (see :func:`_one_scenario`).
    """
    if system is None:
        return {}
    distinct = {}
    for design, mode in designs:
        distinct.setdefault(_instrument_key(design), mode)
    # designs of one mode file next to each other: the engine keeps the latest spectrum
    keys = sorted(distinct, key=lambda k: str(k[0]))
    engine = {}
    for si, spec in enumerate(scenarios):
        for ti, test in enumerate(tests):
            outs = _one_scenario(system, [distinct[k] for k in keys], spec, test, kw, per_pass,
                                 assigned)
            engine.update({(k, si, ti): out for k, out in zip(keys, outs)})
    return engine


def evaluate_chunk(table, designs, scenarios, tests, *, sigma=5.0, max_transits=500,
                   resolution=None, hours=None, planets_per_pass=2000, seed=0, block=0):
    """Every design x scenario x test for one chunk of a population.

    Parameters
    ----------
    table : astropy.table.Table
        Population rows: catalogue columns (default layout of
        :mod:`snrkit.planning.catalog`) and optionally ``star_index``, ``host_class``,
        ``planet_class``, ``hz_position``, ``scenario`` (needed for
        :data:`ASSIGNED`), ``status`` and ``reason``.
    designs : sequence of (Design, Mode)
        From :func:`snrkit.planning.yields.designs.build_mode`.
    scenarios : sequence of str
        Scenario presets or files, or :data:`ASSIGNED`.
    tests : sequence of str
        Tests as in :func:`snrkit.engine.parse_test`.
    sigma : float
        Target significance.
    max_transits : int
        Largest number of transits.
    resolution : float or "native", optional
        Resolving power of the bins (default that of the engine).
    hours : float, optional
        Programme hours per planet for designs that set none.
    planets_per_pass : int
        Planets per engine pass (bounds the memory).
    seed, block : int
        Identity of the chunk (copied into the rows).

    Returns
    -------
    dict
        ``columns``: {name: array} of :data:`PLANET_COLUMNS`, one row per
        planet x design x scenario x test (designs outermost, planets
        innermost); ``classes``: [[planet_class, hz_position, planets]];
        ``reached``: [[design, scenario, test, planet_class, hz_position,
        count]] (indices into the inputs for the first three, nonzero
        counts only).
    """
    n = len(table)
    cat, status, reason, system, good = _screen(table)
    pclass = _labels(table, "planet_class", n, UNCLASSIFIED)
    hz = _labels(table, "hz_position", n, "")
    assigned = _labels(table, "scenario", n, "")
    if system is not None and not ("hz_position" in table.colnames):
        hz[good] = system.derived_arrays()["hz_position"]
    hz[hz == ""] = "undefined"
    period_s = np.full(n, np.nan)
    if system is not None:
        period_s[good] = system.planet.period_s
    kw = dict(sigma=sigma, n_max=int(max_transits), resolution=resolution, probabilities=())
    per_pass = max(int(planets_per_pass), 1)
    cols = {c: [] for c in PLANET_COLUMNS}
    reached_counts, status_counts = [], []
    engine = _evaluate_designs(system, designs, scenarios, tests, kw, per_pass,
                               assigned[good] if system is not None else None)
    for di, (design, _) in enumerate(designs):
        budget_h = design.hours if design.hours is not None else hours
        for si, spec in enumerate(scenarios):
            for ti, test in enumerate(tests):
                st, rs = status.copy(), reason.copy()
                tn, hrs = np.zeros(n, dtype=np.int64), np.full(n, np.nan)
                if system is not None:
                    r = engine[(_instrument_key(design), si, ti)]
                    st[good], rs[good] = r["status"], r["reason"]
                    tn[good], hrs[good] = r["transits_needed"], r["hours_total"]
                ok, avail = reached_mask(st, tn, hrs, period_s, max_transits, design.years,
                                         budget_h)
                _append(cols, table, n, pclass, hz, design.name, spec, test, st, rs, tn, hrs,
                        avail, ok, seed, block)
                reached_counts += [[di, si, ti, c, h, k] for (c, h), k in _count(pclass[ok], hz[ok])]
                codes, num = np.unique(st.astype(str), return_counts=True)
                status_counts += [[di, si, ti, c, int(k)] for c, k in zip(codes.tolist(), num)]
    classes = [[c, h, k] for (c, h), k in _count(pclass, hz)]
    return {"columns": {c: np.concatenate(v) for c, v in cols.items()},
            "classes": classes, "reached": reached_counts, "statuses": status_counts}


def reached_mask(status, transits_needed, hours_total, period_s, max_transits, years=None,
                 hours=None):
    """Which planets reach the target within the budgets, and the transits each may use.

    Parameters
    ----------
    status : array of str
    transits_needed : array of int
        0 where not reached within ``max_transits``.
    hours_total : array of float
        Programme hours [h] (NaN where not reached).
    period_s : array of float
        Orbital periods [s] (NaN for refused rows).
    max_transits : int
    years : float, optional
        Mission years: at most floor(years / period) transits occur.
    hours : float, optional
        Programme hours allowed per planet.

    Returns
    -------
    (numpy.ndarray of bool, numpy.ndarray of int)
        Reached, and the transits available to each planet.
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        avail = (np.floor(years * YEAR_S / np.asarray(period_s, dtype=np.float64))
                 if years is not None else np.full(np.shape(status), float(max_transits)))
    avail = np.where(np.isfinite(avail), np.minimum(avail, max_transits), 0).astype(np.int64)
    tn = np.asarray(transits_needed)
    ok = (np.asarray(status) == "ok") & (tn > 0) & (tn <= avail)
    if hours is not None:
        ok &= np.nan_to_num(np.asarray(hours_total, dtype=np.float64), nan=np.inf) <= hours
    return ok, avail


def _count(pclass, hz):
    """Sorted ((planet_class, hz_position), count) pairs."""
    if not len(pclass):
        return []
    keys, counts = np.unique(np.char.add(np.char.add(pclass.astype(str), "\x1f"), hz.astype(str)),
                             return_counts=True)
    return [(tuple(k.split("\x1f")), int(c)) for k, c in zip(keys.tolist(), counts.tolist())]


def _append(cols, table, n, pclass, hz, design, scenario, test, st, rs, tn, hrs, avail, ok,
            seed, block):
    cols["seed"].append(np.full(n, seed, dtype=np.int64))
    cols["block"].append(np.full(n, block, dtype=np.int64))
    cols["row"].append(np.arange(n, dtype=np.int64))
    cols["name"].append(_labels(table, "planet_name", n, ""))
    cols["star_index"].append(np.asarray(table["star_index"], dtype=np.int64)
                              if "star_index" in table.colnames else np.full(n, -1, dtype=np.int64))
    cols["host_class"].append(_labels(table, "host_class", n, ""))
    cols["planet_class"].append(pclass)
    cols["hz_position"].append(hz)
    for c, v in (("design", design), ("scenario", scenario), ("test", test)):
        cols[c].append(np.full(n, v, dtype=object))
    cols["status"].append(st)
    cols["reason"].append(rs)
    cols["transits_needed"].append(tn)
    cols["hours_total"].append(hrs)
    cols["transits_available"].append(avail)
    cols["reached"].append(ok)
