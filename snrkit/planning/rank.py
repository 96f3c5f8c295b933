"""Ranking a catalogue of candidate planets for transmission spectroscopy.

:func:`rank_catalogue` runs the whole chain (precision of each instrument
mode, spectrum of each scenario, the chosen test, the stacker, programme
hours) as whole arrays over the usable rows of a catalogue, in chunks of
planets (no per-planet Python loop on the hot path), keeps for each input
row the best mode x scenario combination (fewest hours to the target),
applies the filters, and ranks.  Every input row appears in the output, in
input order, with ``status``, ``reason`` and ``rank`` (empty when not
ranked).

The quick estimate beside the full model is the scale-height signal
2 H Rp / Rs^2 times the scenario's documented band amplitude in scale
heights (``feature_scale_heights``, N_H), with H from the scenario's mean
molecular weight and temperature rule.
"""

import numpy as np

from ..errors import InputError
from ..constants import R_EARTH, M_EARTH
from .rank_table import (SORT_KEYS, _STATUS_CLASS, _empty_columns, _ranked_table, _resolution_label,
                         _sort_key, _statistic)

__all__ = ["rank_catalogue", "run_chunk", "with_magnitudes", "SORT_KEYS", "FILTER_KEYS", "DEFAULT_CHUNK"]

#: Accepted filter keys (see :func:`rank_catalogue`).
FILTER_KEYS = ("radius_min", "radius_max", "teq_min", "teq_max", "habitable_zone_only",
               "magnitude_max", "magnitude_min", "band")
#: Planets per chunk of the array path.
DEFAULT_CHUNK = 2000


def _check_filters(filters):
    f = dict(filters or {})
    for k in f:
        if k not in FILTER_KEYS:
            import difflib
            close = difflib.get_close_matches(k, FILTER_KEYS, n=1)
            raise InputError(f"filter {k}", f[k], "one of " + ", ".join(FILTER_KEYS),
                             detail=f"did you mean {close[0]!r}?" if close else "")
        if k not in ("habitable_zone_only", "band"):
            v = f[k]
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not np.isfinite(v):
                raise InputError(f"filter {k}", v, "a finite number")
    for lo, hi in (("radius_min", "radius_max"), ("teq_min", "teq_max"),
                   ("magnitude_min", "magnitude_max")):
        if lo in f and hi in f and f[lo] > f[hi]:
            raise InputError(f"filter {lo}", f[lo], f"a value <= {hi} = {f[hi]}")
    return f


# size: the docstring documents every option of the public ranking; the body is a list of steps, each a helper
def rank_catalogue(catalogue, modes, scenarios, *, test=None, sigma=5.0, n_max=500,
                   resolution=None, sort_by="hours", filters=None, chunk=DEFAULT_CHUNK,
                   progress=None, overhead_hours=None, each_scenario=False, readout=None,
                   min_jeans=None):
    """Rank every usable row of a catalogue.

    Parameters
    ----------
    catalogue : snrkit.planning.catalog.Catalogue
        From :func:`snrkit.planning.catalog.read_catalogue`.
    modes : str or sequence of str
        Instrument mode presets or files.
    scenarios : str or sequence
        Scenario presets, files or tables.
    test : str, optional
        ``"atmosphere"`` (default), ``"species:GAS"`` or ``"against:SCENARIO"``.
    sigma : float
        Target significance.
    n_max : int
        Largest number of transits considered.
    resolution : float or "native", optional
        Resolving power of the bins; default
        :data:`snrkit.photons.precision.DEFAULT_RESOLUTION`, the same as
        :func:`snrkit.engine.transits.transits_for_system`, so one planet gets the
        same answer from both.
    sort_by : str
        A key of :data:`SORT_KEYS` or a numeric output column, optionally
        ``KEY:asc`` or ``KEY:desc`` (default direction: fewest hours or
        transits first, largest TSM, ESM or significance first).
    filters : dict, optional
        ``radius_min``/``radius_max`` [R_earth], ``teq_min``/``teq_max`` [K],
        ``habitable_zone_only`` (conservative or optimistic),
        ``magnitude_min``/``magnitude_max`` with ``band`` (default J).
        Saturating rows are never ranked (their status says so).
    chunk : int
        Planets per array chunk.
    progress : callable, optional
        ``progress(done, total)`` after each chunk (the CLI draws a bar).
    overhead_hours : float, optional
        Per-visit overhead.
    readout : int or "unsaturated", optional
        As in :func:`snrkit.engine.transits.transits_for_system` (default: chosen
        per row for the test).
    min_jeans : float, optional
        Leave out hydrogen-rich scenarios on planets whose restricted Jeans
        parameter is below this (status ``escaping_atmosphere``).  By default
        every row is ranked and ``escape_warning`` marks those below
        :data:`snrkit.engine.transits.JEANS_PARAMETER_MIN`.
    each_scenario : bool
        Rank every scenario on its own and stack the tables (one row per
        input row and scenario, ``rank`` within the scenario) instead of
        keeping each row's best scenario -- the best is the most optimistic
        atmosphere, a committee may want them side by side.

    Returns
    -------
    astropy.table.Table
        One row per input row, input order: ``input_index``, ``name``,
        ``status``, ``reason``, ``rank``, ``mode``, ``scenario``,
        ``radius_earth``, ``mass_earth``, ``mass_estimated``,
        ``equilibrium_temperature_K``, ``tsm``, ``esm``, ``habitable_zone``,
        ``quick_feature_ppm``, ``significance_per_transit``,
        ``transits_needed`` (0 when not reachable), ``hours_per_transit``,
        ``hours_total``, ``limiting_term``, ``groups_per_integration``,
        ``duty_cycle``, ``bins_saturated``, ``jeans_parameter``,
        ``escape_warning``; ``meta`` holds the settings and
        the status counts.
    """
    from ..engine.engine import parse_test
    from ..atmosphere.scenarios import load_scenario
    from ..stats import detect as dt
    if each_scenario:
        return _rank_each_scenario(catalogue, modes, scenarios, dict(
            test=test, sigma=sigma, n_max=n_max, resolution=resolution, sort_by=sort_by,
            filters=filters, chunk=chunk, progress=progress, overhead_hours=overhead_hours,
            readout=readout, min_jeans=min_jeans))
    kind, arg = parse_test(test)
    sigma = dt.check_sigma(sigma)
    filters = _check_filters(filters)
    modes = [m for m in ([modes] if isinstance(modes, str) else list(modes)) if m]
    scen_specs = [scenarios] if isinstance(scenarios, (str, dict)) else list(scenarios)
    if not modes:
        raise InputError("mode", modes, "at least one instrument mode")
    scs = [load_scenario(s) for s in scen_specs]
    if not scs:
        raise InputError("scenario", scenarios, "at least one scenario")
    _sort_key(sort_by)                        # validate before the long run
    n_rows = len(catalogue.table)
    out = _empty_columns(n_rows)
    status = np.array([str(s) for s in catalogue.status], dtype=object)
    reason = np.array([str(r) for r in catalogue.reason], dtype=object)
    names = np.array([str(x) for x in catalogue.names], dtype=object)
    notes = {}
    system, good = with_magnitudes(catalogue, status, reason)
    if system is not None and len(good):
        run_kw = dict(test=test, sigma=sigma, n_max=n_max, resolution=resolution,
                      probabilities=(), overhead_hours=overhead_hours, readout=readout,
                      min_jeans=min_jeans)
        _evaluate_rows(system, good, modes, scs, run_kw, chunk, progress, out, status, reason,
                       notes)
    # filters
    ok = status == "ok"
    filt = _apply_filters(filters, catalogue, out, ok)
    status = np.where(ok & ~filt, "filtered", status)
    reason = np.where(ok & ~filt, "outside the filters", reason)
    ok = status == "ok"
    # ranking: ok rows only; NaN keys after finite ones
    col, desc = _sort_key(sort_by)
    key = np.asarray(out[col], dtype=np.float64)
    key = -key if desc else key
    order = np.lexsort((key, np.isnan(key), ~ok))
    rank = np.zeros(n_rows, dtype=np.int64)
    n_ok = int(ok.sum())
    rank[order[:n_ok]] = np.arange(1, n_ok + 1)
    return _ranked_table(n_rows, names, status, reason, rank, out, notes, dict(
        test=kind if arg is None else f"{kind}:{arg}", target_sigma=sigma, modes=list(modes),
        scenarios=[s.name for s in scs], resolution=_resolution_label(resolution),
        max_transits=int(n_max), test_statistic=_statistic(kind), sort_by=sort_by))


def _rank_each_scenario(catalogue, modes, scenarios, kw):
    """``each_scenario=True``: one ranking per scenario, stacked, every row labelled."""
    from astropy.table import vstack
    specs = [scenarios] if isinstance(scenarios, (str, dict)) else list(scenarios)
    parts = [rank_catalogue(catalogue, modes, [sp], **kw) for sp in specs]
    for part in parts:               # label every row, rejected ones too
        part["scenario"] = [part.meta["scenarios"][0]] * len(part)
    out = vstack(parts, metadata_conflicts="silent")
    out.meta = dict(parts[0].meta)
    out.meta["scenarios"] = [p.meta["scenarios"][0] for p in parts]
    out.meta["status_counts"] = {k: sum(p.meta["status_counts"].get(k, 0) for p in parts)
                                 for k in set().union(*(p.meta["status_counts"] for p in parts))}
    out.meta["each_scenario"] = True
    return out


def _evaluate_rows(system, good, modes, scs, run_kw, chunk, progress, out, status, reason, notes):
    """Run the engine over the good rows in chunks and fill ``out``, ``status``, ``reason``."""
    import warnings
    from ..errors import SnrkitWarning
    d = system.derived_arrays()
    quick = {sc.name: _quick_feature_ppm(sc, d) for sc in scs}

    def quick_by_scenario(chosen, idx):
        q = np.full(idx.size, np.nan)
        for name, values in quick.items():
            q[chosen == name] = values[idx[chosen == name]]
        return q

    out["radius_earth"][good] = d["radius_m"] / R_EARTH
    out["mass_earth"][good] = d["mass_kg"] / M_EARTH
    out["mass_estimated"][good] = d["mass_estimated"]
    out["equilibrium_temperature_K"][good] = d["equilibrium_temperature_K"]
    out["tsm"][good] = d["tsm"]
    out["esm"][good] = d["esm"]
    out["habitable_zone"][good] = d["hz_position"]
    starts = list(range(0, len(good), max(int(chunk), 1)))
    best_status = np.full(len(good), "", dtype=object)
    best_reason = np.full(len(good), "", dtype=object)
    for done, s0 in enumerate(starts, 1):
        idx = np.arange(s0, min(s0 + int(chunk), len(good)))
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", SnrkitWarning)
            res = run_chunk(system.take(idx), modes, scs, run_kw)
        for w in caught:
            notes.setdefault(f"{type(w.message).__name__}: {w.message}"[:300], None)
        notes.update({n[:300]: None for n in res["notes"][:3]})
        best = _best_combination(res["columns"])
        gi = good[idx]
        for c in _ENGINE_COLUMNS:
            out[c][gi] = best[c]
        out["quick_feature_ppm"][gi] = quick_by_scenario(best["scenario"], idx)
        best_status[idx] = best["status"]
        best_reason[idx] = best["reason"]
        if progress is not None:
            progress(done, len(starts))
    status[good] = best_status
    reason[good] = best_reason


def with_magnitudes(catalogue, status, reason):
    """The usable rows that have a stellar magnitude; the others get ``missing_magnitude``."""
    system, good = catalogue.system, catalogue.good_index
    if system is None or not len(good):
        return system, good
    cols = [f"host_mag_{b}" for b in ("V", "J", "H", "Ks") if f"host_mag_{b}" in catalogue.values.colnames]
    have = np.zeros(len(good), dtype=bool)
    for c in cols:
        have |= np.isfinite(np.asarray(catalogue.values[c], dtype=np.float64)[good])
    if have.all():
        return system, good
    status[good[~have]] = "missing_magnitude"
    reason[good[~have]] = "no stellar magnitude in V, J, H or Ks; one is needed for the photon counts"
    return (system.take(np.flatnonzero(have)) if have.any() else None), good[have]


def run_chunk(sub, modes, scs, kw):
    """The engine on a chunk of planets; if the chunk is refused, each planet alone.

    A row that the chain refuses gets status ``bad_value`` with the message as
    its reason, and never fails its neighbours; with several modes, a planet
    that one mode refuses is evaluated mode by mode, so only that mode's
    entries are ``bad_value``.
    """
    from ..engine.engine import evaluate
    try:
        return evaluate(sub, modes, scs, **kw)
    except InputError as exc:
        if len(sub.names) == 1 and len(modes) > 1:
            parts = [run_chunk(sub, [m], scs, kw) for m in modes]
            return {"columns": {c: np.concatenate([p["columns"][c] for p in parts], axis=0)
                                for c in parts[0]["columns"]},
                    "notes": [x for p in parts for x in p["notes"]]}
        if len(sub.names) == 1:
            shape = (len(modes), len(scs), 1)
            cols = {c: np.full(shape, v, dtype=type(v) if not isinstance(v, str) else object)
                    for c, v in _BAD_ROW.items()}
            cols["reason"] = np.full(shape, str(exc), dtype=object)
            return {"columns": cols, "notes": []}
    parts = [run_chunk(sub.take([i]), modes, scs, kw) for i in range(len(sub.names))]
    return {"columns": {c: np.concatenate([p["columns"][c] for p in parts], axis=-1)
                        for c in parts[0]["columns"]},
            "notes": [x for p in parts for x in p["notes"]]}


#: Columns of a row that the chain refused (see run_chunk).
_BAD_ROW = {"status": "bad_value", "reason": "", "mode": "", "scenario": "", "transits_needed": 0,
            "hours_per_transit": np.nan, "hours_total": np.nan,
            "significance_per_transit": np.nan, "limiting_term": "",
            "groups_per_integration": 0, "duty_cycle": np.nan, "bins_saturated": 0,
            "jeans_parameter": np.nan, "escape_warning": False}
#: Engine columns copied into the rank table.
_ENGINE_COLUMNS = ("mode", "scenario", "limiting_term", "transits_needed", "hours_total",
                   "hours_per_transit", "significance_per_transit", "groups_per_integration",
                   "duty_cycle", "bins_saturated", "jeans_parameter", "escape_warning")


def _best_combination(cols):
    """Per planet, the mode x scenario with the best status class, then the fewest hours.

    Classes: finite hours < not reachable < unbound or no signal < saturated
    < refused; ties keep the first combination (modes, then scenarios, in the
    order given).
    """
    status = cols["status"]
    k = status.shape[0] * status.shape[1]
    flat = {c: v.reshape((k,) + v.shape[2:]) for c, v in cols.items()}
    cls = np.full(flat["status"].shape, 1)
    for word, c in _STATUS_CLASS.items():
        cls[flat["status"] == word] = c
    hrs = np.where(np.isfinite(flat["hours_total"]), flat["hours_total"], np.inf)
    best_cls = cls.min(axis=0)
    hrs = np.where(cls == best_cls, hrs, np.inf)
    pick = np.where(cls == best_cls, 0, 1)
    # first of the best class with the fewest hours
    order = np.lexsort((np.arange(k)[:, None] * np.ones_like(hrs, dtype=np.int64), hrs, pick),
                       axis=0)[0]
    cols_idx = np.arange(status.shape[-1])
    return {c: v[order, cols_idx] for c, v in flat.items()}


def _quick_feature_ppm(sc, d):
    """N_H x 2 H Rp / Rs^2 [ppm] with the scenario's mu and temperature rule."""
    from ..bodies.metrics import scale_height, annulus_signal
    if sc.featureless or sc.feature_scale_heights is None:
        return np.zeros_like(d["radius_m"])
    temp = sc.temperature(d["equilibrium_temperature_K"])
    h = scale_height(temp, sc.mean_molecular_weight, d["surface_gravity_m_s2"])
    return float(sc.feature_scale_heights) * annulus_signal(h, d["radius_m"], d["radius_m"] / np.sqrt(d["transit_depth"])) * 1e6


def _apply_filters(f, catalogue, out, ok):
    keep = np.ones(len(ok), dtype=bool)
    r = out["radius_earth"]
    teq = out["equilibrium_temperature_K"]
    with np.errstate(invalid="ignore"):
        if "radius_min" in f:
            keep &= r >= float(f["radius_min"])
        if "radius_max" in f:
            keep &= r <= float(f["radius_max"])
        if "teq_min" in f:
            keep &= teq >= float(f["teq_min"])
        if "teq_max" in f:
            keep &= teq <= float(f["teq_max"])
        if f.get("habitable_zone_only"):
            keep &= np.isin(out["habitable_zone"].astype(str), ["conservative", "optimistic"])
        if "magnitude_min" in f or "magnitude_max" in f:
            band = f.get("band", "J")
            col = {"V": "host_mag_V", "J": "host_mag_J", "H": "host_mag_H", "Ks": "host_mag_Ks"}.get(band)
            if col is None:
                raise InputError("band", band, "V, J, H or Ks")
            mags = np.asarray(catalogue.values[col], dtype=np.float64) if col in catalogue.values.colnames \
                else np.full(len(ok), np.nan)
            if "magnitude_min" in f:
                keep &= mags >= float(f["magnitude_min"])
            if "magnitude_max" in f:
                keep &= mags <= float(f["magnitude_max"])
    return keep
