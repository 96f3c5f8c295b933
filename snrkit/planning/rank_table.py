"""The ranking's output table: its columns, units and descriptions, sort keys and metadata."""

import numpy as np

from ..errors import InputError

__all__ = ["SORT_KEYS"]

#: Sort keys: name -> (column, descending)
SORT_KEYS = {"hours": ("hours_total", False), "transits": ("transits_needed", False),
             "tsm": ("tsm", True), "esm": ("esm", True),
             "significance": ("significance_per_transit", True)}


def _empty_columns(n_rows):
    """The output columns, empty: NaN numbers, zero counts, empty labels."""
    out = {c: np.full(n_rows, np.nan) for c in _FLOAT_COLUMNS}
    out["transits_needed"] = np.zeros(n_rows, dtype=np.int64)
    out["groups_per_integration"] = np.zeros(n_rows, dtype=np.int64)
    out["escape_warning"] = np.zeros(n_rows, dtype=bool)
    out["bins_saturated"] = np.zeros(n_rows, dtype=np.int64)
    out["mode"] = np.full(n_rows, "", dtype=object)
    out["scenario"] = np.full(n_rows, "", dtype=object)
    out["limiting_term"] = np.full(n_rows, "", dtype=object)
    out["habitable_zone"] = np.full(n_rows, "", dtype=object)
    out["mass_estimated"] = np.zeros(n_rows, dtype=bool)
    return out


def _ranked_table(n_rows, names, status, reason, rank, out, notes, meta):
    """The output Table: one row per input row, ranked rows first in rank order."""
    from astropy.table import Table, MaskedColumn
    t = Table()
    t["input_index"] = np.arange(n_rows)
    t["name"] = names.astype(str)
    t["status"] = status.astype(str)
    t["reason"] = reason.astype(str)
    # unranked rows and unreached targets are masked (null in ECSV, None in JSON), never 0
    t["rank"] = MaskedColumn(rank, mask=rank == 0)
    for c in ("mode", "scenario"):
        t[c] = out[c].astype(str)
    for c in _OUTPUT_ORDER:
        t[c] = out[c] if out[c].dtype != object else out[c].astype(str)
    t["transits_needed"] = MaskedColumn(out["transits_needed"], mask=out["transits_needed"] == 0)
    t["hours_total"] = MaskedColumn(out["hours_total"], mask=~np.isfinite(out["hours_total"]))
    for c, unit in _UNITS.items():
        t[c].unit = unit
    for c, text in _DESCRIPTIONS.items():
        t[c].description = text
    counts = {str(s): int(np.sum(status == s)) for s in np.unique(status)}
    t.meta.update(meta)
    t.meta.update({"status_counts": counts, "rows": int(n_rows),
                   "notes": list(notes)[:50],
                   "note": "planning estimates; official observatory tools govern real proposals"})
    return t

_FLOAT_COLUMNS = ("radius_earth", "mass_earth", "equilibrium_temperature_K", "tsm", "esm",
                  "quick_feature_ppm", "significance_per_transit", "hours_per_transit",
                  "hours_total", "duty_cycle", "jeans_parameter")
_OUTPUT_ORDER = ("radius_earth", "mass_earth", "mass_estimated", "equilibrium_temperature_K",
                 "tsm", "esm", "habitable_zone", "quick_feature_ppm", "significance_per_transit",
                 "transits_needed", "hours_per_transit", "hours_total", "limiting_term",
                 "groups_per_integration", "duty_cycle", "bins_saturated", "jeans_parameter",
                 "escape_warning")
_OUTPUT_COLUMNS = set(_OUTPUT_ORDER) | {"name", "input_index"}
_UNITS = {"radius_earth": "earthRad", "mass_earth": "earthMass", "equilibrium_temperature_K": "K",
          "hours_per_transit": "h", "hours_total": "h"}
#: What each column holds (every column has a unit or a description).
_DESCRIPTIONS = {
    "input_index": "row of the input catalogue (0-based)",
    "name": "planet name from the catalogue",
    "radius_earth": "planet radius", "mass_earth": "planet mass",
    "equilibrium_temperature_K": "equilibrium temperature (zero albedo, full redistribution)",
    "hours_per_transit": "hours of one visit (transit, baseline and overhead)",
    "status": "ok, or why the row is not ranked (see reason)",
    "reason": "why the row is not ranked (empty when ok)",
    "rank": "1 = best by the sort key among rows with status ok; null when not ranked",
    "mode": "instrument mode of the best combination", "scenario": "atmosphere scenario of it",
    "mass_estimated": "true when the mass comes from the mass-radius relation",
    "tsm": "transmission spectroscopy metric (Kempton et al. 2018, eq. 1), dimensionless",
    "esm": "emission spectroscopy metric (Kempton et al. 2018, eq. 4), dimensionless",
    "habitable_zone": "position against the habitable zone (Kopparapu et al. 2014)",
    "quick_feature_ppm": "quick estimate N_H x 2 H Rp / Rs^2 of the band amplitude, ppm",
    "significance_per_transit": "significance of the test after one transit, sigma",
    "transits_needed": "transits to reach the target significance; null when not reached",
    "hours_total": "programme hours for those transits; null when not reached",
    "limiting_term": "what limits the test (white noise, noise floor, ...)",
    "groups_per_integration": "detector readout chosen for the test",
    "duty_cycle": "fraction of the exposure time that collects light",
    "bins_saturated": "wavelength bins left out because they saturate",
    "jeans_parameter": "restricted Jeans escape parameter (Fossati et al. 2017), dimensionless",
    "escape_warning": "true for hydrogen-rich scenarios with a Jeans parameter below 20",
}


_STATUS_CLASS = {"ok": 0, "not_reachable": 1, "stellar_contamination": 1, "no_signal": 2,
                 "unbound_atmosphere": 2, "escaping_atmosphere": 2, "saturated": 3,
                 "bad_value": 4}
_NUMERIC_SORT = ("radius_earth", "mass_earth", "equilibrium_temperature_K", "tsm", "esm",
                 "quick_feature_ppm", "significance_per_transit", "transits_needed",
                 "hours_per_transit", "hours_total")


def _sort_key(sort_by):
    """(column, descending) from ``KEY`` or ``KEY:asc`` / ``KEY:desc``."""
    text = str(sort_by)
    name, _, direction = text.partition(":")
    if name in SORT_KEYS:
        col, desc = SORT_KEYS[name]
    elif name in _NUMERIC_SORT:
        col, desc = name, False
    else:
        keys = list(dict.fromkeys(list(SORT_KEYS) + list(_NUMERIC_SORT)))
        raise InputError("sort", sort_by, "one of " + ", ".join(keys)
                         + ", optionally with :asc or :desc")
    if direction:
        if direction not in ("asc", "desc"):
            raise InputError("sort", sort_by, "KEY, KEY:asc or KEY:desc")
        desc = direction == "desc"
    return col, desc


def _resolution_label(resolution):
    from ..photons.precision import DEFAULT_RESOLUTION
    if resolution is None:
        return float(DEFAULT_RESOLUTION)
    return resolution if isinstance(resolution, str) else float(resolution)


def _statistic(kind):
    from ..engine.transits import TEST_STATISTICS
    return TEST_STATISTICS.get(kind, TEST_STATISTICS["nested"])
