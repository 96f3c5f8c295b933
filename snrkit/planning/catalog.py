"""Catalogue import: CSV, ECSV and VOTable tables of transiting planets.

:func:`read_catalogue` reads a table, maps its columns onto snrkit's fields,
screens every row (whole-array numpy masks, no per-row Python loop) and
returns a :class:`Catalogue`: the input table with ``input_index``,
``status`` and ``reason`` columns and per-row estimation flags, plus a
:class:`~snrkit.bodies.system.System` over the usable rows only.  A bad row never
raises; it gets a status code and a sentence saying what is wrong.  Problems
with the file as a whole (a mapping naming a column that does not exist, a
unit of the wrong dimension, no column at all for a required field) raise
:class:`~snrkit.errors.InputError` subclasses naming the column.

The fields, their default units and the default layout, and the mapping
files are described in :mod:`snrkit.planning.mapping`.

Screening
---------
Each row gets the first problem found, in this order (codes in
:data:`STATUS_CODES`): ``missing_name``, ``duplicate_name`` (every
repetition after the first row with that name), ``bad_value`` for text that
is not a number, ``missing_radius``, ``missing_star_temperature``,
``missing_star_radius``, ``missing_star_mass`` (no mass and no log g),
``missing_orbit`` (no period and no semi-major axis), ``bad_value`` for a
value outside its field's range (negative or zero sizes, Teff outside
:data:`snrkit.bodies.system.TEFF_RANGE_K`, e outside [0, 1), ...; the ranges are
those :class:`~snrkit.bodies.system.Star` and :class:`~snrkit.bodies.system.Planet`
enforce), ``missing_mass`` (no mass and a radius at or above
:data:`snrkit.bodies.metrics.MASS_RADIUS_MAX_EARTH_RADII`, beyond the mass-radius
relation), ``inside_star`` (a or the periastron distance a(1 - e) <= R_star +
R_planet; a planet radius >= the star's is ``bad_value``) and ``no_transit``
(b >= 1 + Rp/Rs).  Usable rows have status ``ok``.  Two paths loop over rows,
and only where needed: a text column that is not all numbers is read entry by
entry, and if :class:`~snrkit.bodies.system.System` ever rejected the screened rows
(a check missing here) the rows are retried one by one and the rejected ones
get ``bad_value`` with System's message.

Estimates (flag columns, one per row, in :data:`FLAG_COLUMNS`)
--------------------------------------------------------------
* ``mass_estimated``: mass from the radius, Chen & Kipping 2017 (ApJ 834,
  17) as quoted by Kempton et al. 2018 (PASP 130, 114401, eq. 2).
* ``semi_major_axis_estimated`` / ``period_estimated``: Kepler's third law
  with M_star + M_planet.
* ``star_mass_from_log_gravity``: M = g R^2 / G.
* ``impact_parameter_from_inclination``: b = a cos i / Rs x (1 - e^2) /
  (1 + e sin w) (Winn 2010, eq. 7); where a row gives both b and i, b is
  used.  ``impact_parameter_assumed``: neither given, b = 0 (central).
* ``eccentricity_assumed``: no eccentricity given, e = 0 (w = 90 deg where
  missing, metallicity 0 where missing; not flagged, they change nothing
  for a circular orbit and a solar-metallicity default).
* ``equilibrium_temperature_estimated``: Teq from the star.
* ``grazing``: 1 - Rp/Rs < b < 1 + Rp/Rs (usable, but T23 = 0).
* ``kepler_mismatch``: a given semi-major axis differs from Kepler's third
  law for the given period and masses by more than
  :data:`snrkit.bodies.system.KEPLER_TOLERANCE` (the given value is used).
"""

import warnings
from pathlib import Path

import numpy as np
import astropy.units as u

from ..errors import InputError
from .mapping import (DEFAULT_COLUMNS, FIELDS, FORMATS, _FORMAT_NAMES, _resolve, load_mapping)
from .screening import (_Status, _estimates, _field_values, _screen_missing, _screen_names,
                        _screen_ranges, _screened_system)

__all__ = ["read_catalogue", "catalogue_from_table", "load_mapping", "read_table_file", "Catalogue",
           "FIELDS", "DEFAULT_COLUMNS", "STATUS_CODES", "FLAG_COLUMNS", "FORMATS"]

#: status code -> meaning.
STATUS_CODES = {
    "ok": "usable",
    "missing_name": "no planet name",
    "duplicate_name": "planet name already used by an earlier row",
    "missing_radius": "no planet radius",
    "missing_star_temperature": "no stellar effective temperature",
    "missing_star_radius": "no stellar radius",
    "missing_star_mass": "no stellar mass and no log g",
    "missing_orbit": "no period and no semi-major axis",
    "missing_magnitude": "no stellar magnitude in any band (V, J, H, Ks)",
    "bad_value": "a value that is not a number or is outside its allowed range",
    "missing_mass": "no mass, and the radius is beyond the mass-radius relation",
    "inside_star": "orbit inside the star",
    "no_transit": "impact parameter >= 1 + Rp/Rs: no transit",
}

#: per-row flag columns added to :attr:`Catalogue.table`.
FLAG_COLUMNS = ("mass_estimated", "period_estimated", "semi_major_axis_estimated",
                "star_mass_from_log_gravity", "impact_parameter_from_inclination",
                "impact_parameter_assumed", "eccentricity_assumed",
                "equilibrium_temperature_estimated", "grazing", "kepler_mismatch")

_ADDED = ("input_index", "status", "reason") + FLAG_COLUMNS


# ----------------------------------------------------------------------------- mapping


# ----------------------------------------------------------------------------- reading


def read_table_file(path, format):
    """A catalogue or population file as an astropy Table (format from the name or given).

    Unit strings astropy cannot parse and overflowing numbers are left to the
    screening, which reports them per row and column.
    """
    from astropy.table import Table
    path = Path(path)
    if format is None:
        fmt = FORMATS.get(path.suffix.lower())
        if fmt is None:
            raise InputError("CATALOGUE", str(path), "a file ending in " + ", ".join(FORMATS),
                             detail="or give the format explicitly (csv, ecsv, votable)")
    else:
        fmt = _FORMAT_NAMES.get(str(format).lower())
        if fmt is None:
            raise InputError("format", format, "csv, ecsv or votable")
    from ..io.tomlfile import check_input_path
    check_input_path(path, "CATALOGUE", "a catalogue file")
    if not path.is_file():
        raise InputError("CATALOGUE", str(path), "an existing file")
    try:
        from astropy.utils.exceptions import AstropyWarning
        with warnings.catch_warnings():
            # Non-standard unit strings, numbers that overflow a float (read as
            # inf) etc. are reported by the screening, per row and column, instead.
            warnings.simplefilter("ignore", AstropyWarning)
            return Table.read(str(path), format=fmt)
    except (ValueError, TypeError, KeyError, IndexError, OSError) as exc:
        raise InputError("CATALOGUE", str(path), f"a readable {fmt} table",
                         detail=f"{type(exc).__name__}: {exc}") from None


def read_catalogue(path, mapping=None, *, format=None):
    """Read and screen a catalogue of transiting planets.

    Parameters
    ----------
    path : str or pathlib.Path
        CSV (``.csv``), ECSV (``.ecsv``) or VOTable (``.vot``, ``.votable``,
        ``.xml``) file.
    mapping : str, pathlib.Path, dict or None
        Column mapping (see the module docstring); None for the default layout.
    format : {"csv", "ecsv", "votable"}, optional
        Override the format chosen from the extension.

    Returns
    -------
    Catalogue

    Raises
    ------
    InputError
        Unreadable file, unknown format, mapping naming a missing column,
        no column for a required field.
    UnitMismatchError
        A column unit of the wrong dimension.
    UnknownKeyError
        Unknown key in the mapping.
    """
    table = read_table_file(path, format)
    return catalogue_from_table(table, mapping, source=str(path))


# ----------------------------------------------------------------------------- screening


def catalogue_from_table(table, mapping=None, *, source="<table>"):
    """Screen an in-memory astropy Table (see :func:`read_catalogue`).

    Parameters
    ----------
    table : astropy.table.Table
        The catalogue, one planet per row.
    mapping : str, pathlib.Path, dict or None
        Column mapping; None for the default layout.
    source : str
        Name used in messages.

    Returns
    -------
    Catalogue
    """
    from astropy.table import Table
    if not isinstance(table, Table):
        raise InputError("catalogue", type(table).__name__, "an astropy Table")
    spec_map = load_mapping(mapping)
    res = _resolve(spec_map, table, source)
    n = len(table)
    vals, raw, unread, names = _field_values(table, res)
    nan = np.full(n, np.nan)
    get = lambda k: vals.get(k, nan)  # noqa: E731
    col_of = lambda k: res[k][0] if k in res else DEFAULT_COLUMNS[k]  # noqa: E731
    unit_of = lambda k: res[k][1] if k in res else FIELDS[k].unit  # noqa: E731

    st = _Status(n)
    pname = names["planet.name"]
    host = names.get("star.name", np.full(n, "", dtype="<U1"))
    _screen_names(st, pname, col_of, n)
    _screen_missing(st, unread, get, col_of)
    _screen_ranges(st, vals, raw, res, col_of, unit_of)
    x, flags = _estimates(st, get, col_of)
    good, system = _screened_system(st, flags, n, dict(
        x, pname=pname, host=host, get=get, has_host="star.name" in names))
    # --- output tables
    out = table.copy(copy_data=True)
    for name in _ADDED:
        if name in out.colnames:
            out.rename_column(name, name + "_input")
    out.add_column(np.arange(n), name="input_index", index=0)
    out["status"] = st.code.astype(str)
    out["reason"] = st.reason.astype(str)
    for fl, arr in flags.items():
        out[fl] = np.where(st.code == "ok", arr, False) if fl == "grazing" else arr
    values = _values_table(vals, names)
    values.add_column(np.arange(n), name="input_index", index=0)
    return Catalogue(out, values, system, good, res, source)


def _values_table(vals, names):
    from astropy.table import Table
    t = Table()
    for k in FIELDS:
        spec = FIELDS[k]
        if spec.kind == "text":
            if k in names:
                t[spec.column] = names[k]
            continue
        if k in vals:
            t[spec.column] = vals[k]
            if spec.unit:
                t[spec.column].unit = spec.unit
    return t


# ----------------------------------------------------------------------------- result


# size: a class of eight short accessors (the longest 38 lines) over the screened tables
class Catalogue:
    """A screened catalogue.

    Attributes
    ----------
    table : astropy.table.Table
        Every input row, in input order: ``input_index`` (0-based row number
        in the file), the original columns (a column already named like one
        snrkit adds is renamed ``<name>_input``), ``status``, ``reason`` and
        the flag columns of :data:`FLAG_COLUMNS`.
    values : astropy.table.Table
        Every input row's values as read, converted to the default layout
        (columns of :data:`DEFAULT_COLUMNS` in their default units, NaN where
        missing), with ``input_index``.  Written out, it reads back with the
        default mapping to the same catalogue.
    system : System or None
        The usable rows (status ``ok``) in input order; None if there are none.
    good_index : numpy.ndarray of int
        ``input_index`` of each row of :attr:`system`.
    columns : dict
        Field -> (column, unit text, conversion factor, offset) as resolved.
    source : str
        File name.
    """

    def __init__(self, table, values, system, good_index, columns, source):
        self.table = table
        self.values = values
        self.system = system
        self.good_index = np.asarray(good_index, dtype=int)
        self.columns = columns
        self.source = source

    def __len__(self):
        return len(self.table)

    def __repr__(self):
        return f"<Catalogue {self.source}: {len(self)} rows, {self.good_index.size} usable>"

    @property
    def names(self):
        """Planet name of every input row, from the mapped name column (numpy array of str)."""
        return np.asarray(self.values["planet_name"]).astype(str)

    @property
    def status(self):
        """Status code of every input row (numpy array of str)."""
        return np.asarray(self.table["status"])

    @property
    def reason(self):
        """Reason of every input row ('' for usable rows)."""
        return np.asarray(self.table["reason"])

    def summary(self):
        """Counts by status and by estimate flag.

        Returns
        -------
        dict
            ``{"rows": N, "ok": n_ok, "rejected": N - n_ok, "by_status":
            {code: count} (``ok`` first, then by decreasing count),
            "estimated": {flag: count among usable rows}}``.
        """
        codes, counts = np.unique(self.status, return_counts=True)
        by = dict(sorted(zip(codes.tolist(), counts.tolist()), key=lambda kv: (kv[0] != "ok", -kv[1], kv[0])))
        ok = self.status == "ok"
        return {"rows": len(self), "ok": int(ok.sum()), "rejected": int((~ok).sum()),
                "by_status": by,
                "estimated": {f: int(np.asarray(self.table[f])[ok].sum()) for f in FLAG_COLUMNS}}

    def derived(self):
        """Derived quantities (:meth:`System.derived`) for every input row.

        Rows that are not usable hold NaN (numbers), ``""`` (text) or False.

        Returns
        -------
        astropy.table.QTable
            ``input_index``, ``status`` and the columns of :meth:`System.derived`.
        """
        from astropy.table import QTable
        n = len(self)
        t = QTable()
        t["input_index"] = np.arange(n)
        t["name"] = np.asarray(self.values["planet_name"])
        t["status"] = self.status
        if self.system is None:
            return t
        d = self.system.derived()
        g = self.good_index
        for name in d.colnames:
            if name == "name":
                continue
            col = d[name]
            if isinstance(col, u.Quantity):
                full = np.full(n, np.nan) * col.unit
            else:
                arr = np.asarray(col)
                if arr.dtype.kind == "b":
                    full = np.zeros(n, dtype=bool)
                elif arr.dtype.kind in "US":
                    full = np.full(n, "", dtype=arr.dtype)
                else:
                    full = np.full(n, np.nan)
            full[g] = col
            t[name] = full
        t.meta.update(d.meta)
        return t
