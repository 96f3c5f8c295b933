"""Finding and reading the data tables shipped with snrkit.

In a source checkout the tables live in the top-level ``data_tables/``
folder; in an installed wheel they are carried inside the package as
``snrkit/data_tables``.  :func:`data_path` returns whichever exists.

Two readers.  :func:`read_table` returns an :class:`astropy.table.Table`
(full ECSV support, slow to import and to parse).  :func:`read_columns` is
the fast reader of the start-up path: it reads the simple ECSV tables snrkit
ships itself (plain column descriptions, float64 or string columns without
missing values, space-separated values) into numpy arrays, and refuses any
other table.  The test suite checks that both readers give the same names,
values, units and metadata for every shipped table the fast reader serves.
"""

from functools import lru_cache
from pathlib import Path

__all__ = ["data_path", "read_table", "read_columns", "ColumnTable"]

# The package folder (this module lives in snrkit/io/).
_HERE = Path(__file__).resolve().parent.parent


@lru_cache(maxsize=1)
def _root():
    for candidate in (_HERE / "data_tables", _HERE.parent / "data_tables"):
        if (candidate / "README.md").is_file():
            return candidate
    raise FileNotFoundError(
        "snrkit data tables not found: looked in "
        f"{_HERE / 'data_tables'} and {_HERE.parent / 'data_tables'}; "
        "reinstall the package")


def data_path(*parts):
    """Return the path of a shipped data file or folder.

    Parameters
    ----------
    *parts : str
        Path components below ``data_tables/`` (for example
        ``"demo", "hot_giant.toml"``).

    Returns
    -------
    pathlib.Path
    """
    return _root().joinpath(*parts)


@lru_cache(maxsize=32)
def read_table(*parts):
    """Read a shipped ECSV table (cached; callers must not modify it).

    Returns
    -------
    astropy.table.Table
    """
    from astropy.table import Table
    return Table.read(str(data_path(*parts)), format="ascii.ecsv")


class ColumnTable:
    """A read-only table of numpy columns (what :func:`read_columns` returns).

    Attributes
    ----------
    colnames : tuple of str
        Column names in file order.
    units : dict
        Column name -> unit string as written in the file (astropy unit
        syntax, for example ``"1 / cm"``), or None for a column without unit.
    meta : dict
        The table's metadata (a plain dict; callers must not modify it).
    """

    def __init__(self, columns, units, meta):
        self._columns = columns
        self.colnames = tuple(columns)
        self.units = units
        self.meta = meta

    def __getitem__(self, name):
        """The column ``name`` (a read-only numpy array)."""
        return self._columns[name]

    def __len__(self):
        return len(next(iter(self._columns.values()))) if self._columns else 0

    def rows(self):
        """Iterate over the rows as dicts of Python scalars."""
        cols = [(n, self._columns[n].tolist()) for n in self.colnames]
        for i in range(len(self)):
            yield {n: v[i] for n, v in cols}


_DTYPES = {"float64": "float64", "string": "str"}


class _NotSimple(Exception):
    """The file uses ECSV features outside the fast reader's subset."""


def _yaml_load(text):
    import yaml
    loader = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
    try:
        return yaml.load(text, Loader=loader)     # a safe loader: plain YAML types only
    except yaml.YAMLError as exc:
        raise _NotSimple(f"header: {exc}") from None


def _parse_simple_ecsv(text):
    """(columns, units, meta) of a simple ECSV table; raises _NotSimple otherwise."""
    import csv

    import numpy as np

    lines = text.splitlines()
    n_head = 0
    while n_head < len(lines) and lines[n_head].startswith("#"):
        n_head += 1
    head = [ln[2:] if ln.startswith("# ") else ln[1:] for ln in lines[:n_head]]
    if not head or not head[0].startswith("%ECSV 1.") or head[1:2] != ["---"]:
        raise _NotSimple("no ECSV 1.x header")
    header = _yaml_load("\n".join(head[2:]))
    if not isinstance(header, dict) or set(header) - {"datatype", "meta", "schema", "delimiter"}:
        raise _NotSimple("header keys")
    if header.get("delimiter", " ") != " ":
        raise _NotSimple("delimiter")
    cols = header.get("datatype")
    if not isinstance(cols, list) or not cols:
        raise _NotSimple("no columns")
    meta = header.get("meta") or {}
    if isinstance(meta, list):                       # !!omap -> list of pairs
        meta = dict(meta)
    if not isinstance(meta, dict):
        raise _NotSimple("meta")
    names, kinds, units = [], [], {}
    for c in cols:
        if not isinstance(c, dict) or set(c) - {"name", "datatype", "unit", "description"}:
            raise _NotSimple("column description")
        if c.get("datatype") not in _DTYPES:
            raise _NotSimple(f"datatype {c.get('datatype')!r}")
        names.append(str(c["name"]))
        kinds.append(_DTYPES[c["datatype"]])
        units[names[-1]] = None if c.get("unit") is None else str(c["unit"])
    body = [ln for ln in lines[n_head:] if ln.strip()]
    try:
        rows = list(csv.reader(body, delimiter=" ", quotechar='"', strict=True))
    except csv.Error as exc:
        raise _NotSimple(f"body: {exc}") from None
    if not rows or rows[0] != names or any(len(r) != len(names) for r in rows):
        raise _NotSimple("column names or row lengths")
    data = rows[1:]
    columns = {}
    for j, (name, kind) in enumerate(zip(names, kinds)):
        vals = [r[j] for r in data]
        if any(v == "" for v in vals):              # astropy may read these as masked
            raise _NotSimple("missing values")
        if kind == "str":
            arr = np.array(vals, dtype=str) if vals else np.array([], dtype="<U1")
        else:
            try:
                arr = np.array([float(v) for v in vals], dtype=np.float64)
            except ValueError as exc:
                raise _NotSimple(f"column {name}: {exc}") from None
        arr.setflags(write=False)
        columns[name] = arr
    return columns, units, meta


@lru_cache(maxsize=32)
def read_columns(*parts):
    """Read a shipped ECSV table into numpy columns, without astropy.table.

    Parameters
    ----------
    *parts : str
        Path components below ``data_tables/``.

    Returns
    -------
    ColumnTable
        Cached; its arrays are read-only.

    Raises
    ------
    SnrkitError
        The table uses ECSV features outside the simple subset snrkit
        writes for its own tables (missing values, integer, boolean,
        multidimensional or object columns, another delimiter); read it
        with :func:`read_table`.
    """
    path = data_path(*parts)
    try:
        columns, units, meta = _parse_simple_ecsv(Path(path).read_text(encoding="utf-8"))
    except _NotSimple as exc:
        from ..errors import SnrkitError
        raise SnrkitError(f"{path}: not a simple table ({exc}); read it with read_table") from None
    return ColumnTable(columns, units, meta)
