"""Reading a population from Parquet, CSV or ECSV, every row kept with a status.

:func:`read_population` reads a file (Parquet through pyarrow, imported
inside the function), maps its columns with the catalogue column mappings of
:mod:`snrkit.planning.catalog` (the same TOML format; default: snrkit's default
catalogue layout, which the generator writes) and screens every row with
:func:`snrkit.catalog.catalogue_from_table`.  Unlike a catalogue, a
population never fails as a whole because of a column:

* a required field with no column (planet name, radius, stellar Teff,
  radius, mass or log g, period or semi-major axis), or a mapping naming a
  column the file lacks, gives every row status ``missing_column``;
* a column whose unit (from the file or the mapping) cannot be converted to
  its field's unit gives every row status ``wrong_unit``;
* a text cell with its own unit (``"1.5 earthRad"``) is converted; one of the
  wrong dimension (``"300 K"`` as a radius) gives that row ``wrong_unit``;
* every other problem (empty values, negative radius, duplicate names, no
  transit, ...) is the catalogue's per-row status (:data:`snrkit.catalog.STATUS_CODES`).

A row keeps its first problem, column problems first.  Columns the mapping
does not use (``star_index``, ``scenario``, ``planet_class``, ...) are
carried through unchanged.
"""

import warnings
from pathlib import Path

import numpy as np
import astropy.units as u

from ..catalog import (DEFAULT_COLUMNS, FIELDS, FLAG_COLUMNS, catalogue_from_table, load_mapping,
                       read_table_file)
from ...errors import InputError

__all__ = ["read_population", "screen_population", "POPULATION_FORMATS", "COLUMN_STATUS_CODES"]

#: File extension -> astropy reader format.
POPULATION_FORMATS = {".parquet": "parquet", ".pq": "parquet", ".csv": "ascii.csv",
                      ".ecsv": "ascii.ecsv"}
#: Status codes added to the catalogue's for column problems.
COLUMN_STATUS_CODES = {"missing_column": "a required field has no column in the file",
                       "wrong_unit": "a unit that cannot be converted to the field's unit"}
_REQUIRED = ("planet.name", "planet.radius", "star.effective_temperature", "star.radius")
_EITHER = (("star.mass", "star.log_gravity"), ("planet.period", "planet.semi_major_axis"))


def _read(path, format):
    """The file as an astropy Table; CSV and ECSV through the catalogue's reader."""
    path = Path(path)
    fmt = POPULATION_FORMATS.get(path.suffix.lower()) if format is None else \
        {"parquet": "parquet", "csv": "ascii.csv", "ecsv": "ascii.ecsv"}.get(str(format).lower())
    if fmt is None:
        raise InputError("POPULATION", str(path) if format is None else format,
                         "a file ending in .parquet, .pq, .csv or .ecsv, or format parquet, csv, ecsv")
    try:
        if fmt != "parquet":
            return read_table_file(path, fmt)
        return _read_parquet(path)
    except InputError as exc:      # the same message, naming the population
        raise InputError("POPULATION", exc.value, exc.allowed, detail=exc.detail) from None


def _read_parquet(path):
    from astropy.table import Table
    from astropy.utils.exceptions import AstropyWarning
    from ...io.tomlfile import check_input_path
    check_input_path(path, "POPULATION", "a population file")
    if not path.is_file():
        raise InputError("POPULATION", str(path), "an existing file")
    try:
        import pyarrow.parquet  # noqa: F401  (astropy's Parquet reader needs it)
    except ImportError:
        raise InputError("POPULATION", str(path), "a CSV or ECSV file",
                         detail="reading Parquet needs pyarrow: pip install pyarrow") from None
    with warnings.catch_warnings():
        # unit strings astropy does not know are reported per column by the screening
        warnings.simplefilter("ignore", AstropyWarning)
        try:
            return Table.read(str(path), format="parquet")
        except (ValueError, TypeError, KeyError, IndexError, OSError) as exc:
            raise InputError("POPULATION", str(path), "a readable Parquet table",
                             detail=f"{type(exc).__name__}: {exc}") from None


def read_population(path, mapping=None, *, format=None):
    """Read a population file and screen every row.

    Parameters
    ----------
    path : str or pathlib.Path
        ``.parquet`` / ``.pq`` (needs pyarrow), ``.csv`` or ``.ecsv``.
    mapping : str, pathlib.Path, dict or None
        A catalogue column mapping (:func:`snrkit.catalog.load_mapping`);
        None for the default catalogue layout.
    format : {"parquet", "csv", "ecsv"}, optional
        Override the format chosen from the extension.

    Returns
    -------
    astropy.table.Table
        See :func:`screen_population`.

    Raises
    ------
    InputError
        Unreadable file or unknown format; a malformed mapping (unknown keys,
        unit strings astropy cannot read).  Column problems never raise.
    """
    return screen_population(_read(path, format), mapping, source=str(path))


def _fields(spec, table):
    """field -> (column, unit text or None, offset), as the mapping asks."""
    fields = {k: v for k, v in spec["fields"].items()
              if not spec["default"] or v["column"] in table.colnames}
    if spec["start_from_default"]:
        for k, c in DEFAULT_COLUMNS.items():
            if k not in fields and c in table.colnames:
                fields[k] = {"column": c, "unit": None, "offset": 0.0}
    return fields


def _target(spec):
    return u.Unit(spec.unit) if spec.kind in ("quantity", "time") else u.dimensionless_unscaled


def _factor(unit, spec):
    """Factor from ``unit`` to the field's unit, or None if the dimension is wrong."""
    if unit is None or str(unit) in ("", "dex", "mag"):
        return 1.0
    try:
        return float(u.Unit(unit).to(_target(spec)))
    except (u.UnitsError, TypeError, ValueError):
        return None


def _cells(col, factor, spec):
    """Float values in the field's unit; per-row codes for unreadable or wrong-unit text."""
    n = len(col)
    mask = np.asarray(np.ma.getmaskarray(col), dtype=bool)
    data = np.asarray(np.ma.getdata(col))
    code = np.full(n, "", dtype="<U12")
    why = np.full(n, "", dtype=object)
    if data.dtype.kind in "fiu":
        return np.where(mask, np.nan, data.astype(np.float64) * factor), code, why
    text = np.char.strip(data.astype(str))
    vals = np.full(n, np.nan)
    for i in np.flatnonzero(~mask & (text != "") & (text != "--")):
        # Entry by entry: text columns of a population are the exception (a
        # numeric column takes the vectorized path above).
        try:
            vals[i] = float(text[i]) * factor
            continue
        except ValueError:
            pass
        try:
            q = u.Quantity(text[i])
        except (TypeError, ValueError):
            code[i], why[i] = "bad_value", f"'{text[i]}' is not a number"
            continue
        try:
            vals[i] = float(q.to_value(_target(spec)))
        except u.UnitsError:
            code[i], why[i] = "wrong_unit", f"'{text[i]}' is not in a unit of {_target(spec)}"
    return vals, code, why


class _Marks:
    """Per-row status and reason set by column problems; a row keeps the first."""

    def __init__(self, n):
        self.n = n
        self.code = np.full(n, "", dtype="<U24")
        self.why = np.full(n, "", dtype=object)

    def __call__(self, mask, code, reason):
        new = np.broadcast_to(np.asarray(mask, dtype=bool), (self.n,)) & (self.code == "")
        self.code[new] = code
        self.why[new] = reason if isinstance(reason, str) else np.asarray(reason)[new]


def _convert(table, fields, spec_map, source, mark):
    """The mapped columns in the default layout and units; column problems marked."""
    from astropy.table import Table
    work, used = Table(), set()
    for k, v in fields.items():
        spec, col = FIELDS[k], v["column"]
        label = f"column {col!r} ({spec.label})"
        if col not in table.colnames:
            mark(True, "missing_column", f"{label}, named by the mapping, is not in {source}")
            continue
        used.add(col)
        if spec.kind == "text":
            data = table[col]
            work[spec.column] = np.where(np.ma.getmaskarray(data), "",
                                         np.asarray(np.ma.getdata(data)).astype(str))
            continue
        file_unit = table[col].unit
        map_unit = None if spec_map["default"] else v["unit"]
        if file_unit is not None and map_unit is not None and \
                _factor(file_unit, spec) != _factor(map_unit, spec):
            mark(True, "wrong_unit", f"{label} has unit {file_unit} in the file but {map_unit} "
                                     "in the mapping")
            continue
        unit = map_unit if map_unit is not None else file_unit
        factor = _factor(unit, spec)
        if factor is None:
            mark(True, "wrong_unit", f"{label} has unit {unit}, which is not a unit of "
                                     f"{_target(spec)}")
            continue
        vals, c, w = _cells(table[col], factor, spec)
        for cc in ("wrong_unit", "bad_value"):
            mark(c == cc, cc, np.char.add(f"{label}: ", w.astype(str)))
        work[spec.column] = vals + v["offset"]
        if spec.unit is not None:
            work[spec.column].unit = spec.unit
    return work, used


def _fill_required(work, fields, n, source, mark):
    """Mark missing required fields and add empty columns for them, so that the
    catalogue screening runs (its per-row statuses are then replaced by ours)."""
    for k in _REQUIRED:
        if k not in fields:
            mark(True, "missing_column", f"no column for {FIELDS[k].label} in {source} "
                                         f"(default column {FIELDS[k].column!r})")
    for pair in _EITHER:
        if not any(k in fields for k in pair):
            mark(True, "missing_column", f"no column for {FIELDS[pair[0]].label} or "
                                         f"{FIELDS[pair[1]].label} in {source}")
    for k in _REQUIRED + tuple(p[0] for p in _EITHER):
        partners = [o for p in _EITHER if k in p for o in p] or [k]
        if not any(FIELDS[o].column in work.colnames for o in partners):
            work[FIELDS[k].column] = np.full(n, "" if FIELDS[k].kind == "text" else np.nan)
            if FIELDS[k].unit:
                work[FIELDS[k].column].unit = FIELDS[k].unit


def _global_names(work, status, reason, first_row, repeated):
    """Duplicate names as in the whole file: repeats of names first used in an earlier
    chunk, and file row numbers in the reasons (the catalogue counts from the chunk)."""
    from ..screening import _text_values
    name_col = FIELDS["planet.name"].column
    if name_col not in work.colnames:
        return
    names = _text_values(work[name_col])
    rows = np.arange(len(names), dtype=np.int64) + first_row
    first = np.array([repeated.get(x, -1) for x in names.tolist()], dtype=np.int64) \
        if repeated else np.full(len(names), -1, dtype=np.int64)
    dup = (first >= 0) & (first != rows) & (status != "missing_name")
    status[dup] = "duplicate_name"
    reason[dup] = [f"planet name '{x}' is already used by input row {r}"
                   for x, r in zip(names[dup].tolist(), first[dup].tolist())]


def screen_population(table, mapping=None, *, source="<table>", first_row=0, repeated=None):
    """Screen an in-memory population Table (see :func:`read_population`).

    Parameters
    ----------
    table : astropy.table.Table
    mapping : str, pathlib.Path, dict or None
    source : str
        Named in the reasons.
    first_row : int
        Row number of ``table``'s first row in its file (a chunk of a file,
        see :mod:`snrkit.planning.population.stream`): ``input_index`` and the
        rows named in ``duplicate_name`` reasons count from the file's start.
    repeated : dict, optional
        {planet name: file row of its first use} for names used more than once
        anywhere in the file; a chunk's row with such a name after its first
        use gets ``duplicate_name`` as a whole-file read gives it.

    Returns
    -------
    astropy.table.Table
        Every input row once, in input order: ``input_index``, the fields in
        snrkit's default catalogue layout and default units (NaN or "" where
        missing), the input's other columns unchanged (renamed
        ``<name>_input`` where a name is taken), ``status``, ``reason`` and
        the catalogue's flag columns.  The rows with status ``ok`` read back
        through :func:`snrkit.catalog.catalogue_from_table`.
    """
    from astropy.table import Table
    if not isinstance(table, Table):
        raise InputError("population", type(table).__name__, "an astropy Table")
    spec_map = load_mapping(mapping)
    fields = _fields(spec_map, table)
    mark = _Marks(len(table))
    work, used = _convert(table, fields, spec_map, source, mark)
    _fill_required(work, fields, len(table), source, mark)
    cat = catalogue_from_table(work, None, source=source)
    cat_status = np.asarray(cat.status).astype("<U24")
    cat_reason = np.asarray(cat.reason, dtype=object)
    if first_row or repeated:
        _global_names(work, cat_status, cat_reason, int(first_row), repeated or {})
    out = Table(cat.values, copy=True)
    out["input_index"] = np.arange(len(table), dtype=np.int64) + int(first_row)
    taken = set(out.colnames) | {"status", "reason"} | set(FLAG_COLUMNS)
    for name in table.colnames:
        if name not in used:
            out[name + "_input" if name in taken else name] = table[name]
    own = mark.code != ""
    out["status"] = np.where(own, mark.code, cat_status).astype(str)
    out["reason"] = np.where(own, mark.why, cat_reason).astype(str)
    for flag in FLAG_COLUMNS:
        out[flag] = np.where(out["status"] == "ok", np.asarray(cat.table[flag]), False)
    out.meta["source"] = source
    out.meta["status_codes"] = dict(COLUMN_STATUS_CODES)
    return out
