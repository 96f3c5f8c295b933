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

Fields
------
The field names are those of the system-file keys
(:mod:`snrkit.io.systemfile`), prefixed by ``planet.`` or ``star.``.  Each
has a default unit (used for a column that carries no unit and has none in
the mapping) and a column name in the *default layout*:

==================================  =================  =================================
field                               default unit       default-layout column
==================================  =================  =================================
planet.name (required, unique)      text               ``planet_name``
star.name                           text               ``host_name``
planet.radius (required)            earthRad           ``planet_radius_earth``
planet.radius_uncertainty           earthRad           ``planet_radius_uncertainty_earth``
planet.mass                         earthMass          ``planet_mass_earth``
planet.mass_uncertainty             earthMass          ``planet_mass_uncertainty_earth``
planet.period (or semi_major_axis)  d                  ``period_days``
planet.period_uncertainty           d                  ``period_uncertainty_days``
planet.semi_major_axis              AU                 ``semi_major_axis_au``
planet.impact_parameter             stellar radii      ``impact_parameter``
planet.inclination                  deg                ``inclination_deg``
planet.eccentricity                 number             ``eccentricity``
planet.periastron_argument          deg                ``periastron_argument_deg``
planet.transit_midtime              d (BJD_TDB)        ``transit_midtime_bjd_tdb``
planet.transit_midtime_uncertainty  d                  ``transit_midtime_uncertainty_days``
planet.equilibrium_temperature      K                  ``planet_teq_K``
star.effective_temperature (req.)   K                  ``host_teff_K``
star.radius (required)              solRad             ``host_radius_sun``
star.mass (or log_gravity)          solMass            ``host_mass_sun``
star.log_gravity                    dex (cgs)          ``host_logg_cgs``
star.metallicity                    dex                ``host_metallicity_dex``
star.magnitudes.V / J / H / Ks      mag                ``host_mag_V`` ... ``host_mag_Ks``
star.distance                       pc                 ``host_distance_pc``
star.right_ascension                deg (ICRS)         ``host_ra_deg``
star.declination                    deg (ICRS)         ``host_dec_deg``
==================================  =================  =================================

With no mapping the default layout is used: every column above that is
present is read, absent optional columns are simply missing, and an absent
required column is a whole-file error.  ``planet.equilibrium_temperature``
is catalogue-only: where given it is the temperature used for the scale
height; where missing, Teq is computed from the star (flagged
``equilibrium_temperature_estimated``).  The TSM always uses Teq computed
from the star (zero albedo, full redistribution), as Kempton et al. 2018 do.

Mapping files
-------------
A TOML file (or the same structure as a dict) that maps the user's columns
onto the fields.  Keys mirror the system file::

    # snrkit catalogue mapping
    start_from_default = false          # also read default-layout columns
                                        # for fields not listed here
    [planet]
    name = "pl_label"                   # a bare string names the column
    radius = { column = "Rp", unit = "jupiterRad" }
    period = { column = "P", unit = "h" }
    transit_midtime = { column = "T0", unit = "d", offset = 2450000.0 }
    [star]
    name = "host"
    effective_temperature = "Teff"
    radius = { column = "Rs", unit = "solRad" }
    log_gravity = "logg"
    [star.magnitudes]
    J = "Jmag"

An entry is a column name or a table with ``column`` (required), ``unit``
(an astropy unit string) and, for ``transit_midtime`` only, ``offset`` (days
added after conversion, e.g. 2450000 for BJD - 2450000).  Unit rules: a
column that carries a unit in the file (ECSV, VOTable) is read in that unit;
if the mapping also gives one, the two must be the same unit (to 1 part in
10^5, since VOTable writers round scale factors; the mapping's exact unit is
then used); a column with no unit in the file uses the mapping's unit, else
the field's default unit (the default layout gives every column's unit).
A unit that cannot be converted to the field's dimension is a
:class:`~snrkit.errors.UnitMismatchError` naming the column.  Unknown keys
are :class:`~snrkit.errors.UnknownKeyError` with the closest valid key; a
column not in the file is an :class:`~snrkit.errors.InputError` with the
closest column name.

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

import difflib
import warnings
from collections import namedtuple
from pathlib import Path

import numpy as np
import astropy.units as u

from ..bodies import geometry as geo
from ..bodies import metrics as met
from ..constants import G, R_SUN, M_SUN, R_EARTH, M_EARTH, AU, DAY
from ..errors import InputError, UnitMismatchError, UnknownKeyError, GrazingTransitWarning
from ..bodies.limits import TEFF_RANGE_K, BANDS, LIMITS
from ..bodies.planet import Planet
from ..bodies.star import Star
from ..bodies.system import System

__all__ = ["read_catalogue", "catalogue_from_table", "load_mapping", "Catalogue",
           "FIELDS", "DEFAULT_COLUMNS", "STATUS_CODES", "FLAG_COLUMNS", "FORMATS"]

_Field = namedtuple("_Field", "kind unit column label low high low_inc high_inc")


def _f(kind, unit, column, label, low=None, high=None, low_inc=True, high_inc=True):
    return _Field(kind, unit, column, label, low, high, low_inc, high_inc)


#: field -> (kind, default unit, default-layout column, label, range in the default unit).
#: Kinds: "text", "quantity" (any unit of the right dimension), "number"
#: (dimensionless), "dex", "mag", "time" (a BJD_TDB date in days).
FIELDS = {
    "planet.name": _f("text", None, "planet_name", "planet name"),
    "star.name": _f("text", None, "host_name", "host name"),
    "planet.radius": _f("quantity", "earthRad", "planet_radius_earth", "planet radius",
                        *LIMITS["planet.radius"]),
    "planet.radius_uncertainty": _f("quantity", "earthRad", "planet_radius_uncertainty_earth",
                                    "planet radius uncertainty", *LIMITS["planet.radius_uncertainty"]),
    "planet.mass": _f("quantity", "earthMass", "planet_mass_earth", "planet mass",
                      *LIMITS["planet.mass"]),
    "planet.mass_uncertainty": _f("quantity", "earthMass", "planet_mass_uncertainty_earth",
                                  "planet mass uncertainty", *LIMITS["planet.mass_uncertainty"]),
    "planet.period": _f("quantity", "d", "period_days", "orbital period", *LIMITS["planet.period"]),
    "planet.period_uncertainty": _f("quantity", "d", "period_uncertainty_days",
                                    "period uncertainty", *LIMITS["planet.period_uncertainty"]),
    "planet.semi_major_axis": _f("quantity", "AU", "semi_major_axis_au", "semi-major axis",
                                 *LIMITS["planet.semi_major_axis"]),
    "planet.impact_parameter": _f("number", None, "impact_parameter", "impact parameter",
                                  *LIMITS["planet.impact_parameter"]),
    "planet.inclination": _f("quantity", "deg", "inclination_deg", "inclination", 0.0, 180.0),
    "planet.eccentricity": _f("number", None, "eccentricity", "eccentricity", 0.0, 1.0,
                              high_inc=False),
    "planet.periastron_argument": _f("quantity", "deg", "periastron_argument_deg",
                                     "argument of periastron", -360.0, 360.0),
    "planet.transit_midtime": _f("time", "d", "transit_midtime_bjd_tdb",
                                 "transit mid-time (BJD_TDB)", 2.0e6, 3.0e6),
    "planet.transit_midtime_uncertainty": _f("quantity", "d", "transit_midtime_uncertainty_days",
                                             "transit mid-time uncertainty",
                                             *LIMITS["planet.transit_midtime_uncertainty"]),
    "planet.equilibrium_temperature": _f("quantity", "K", "planet_teq_K",
                                         "equilibrium temperature",
                                         *LIMITS["planet.equilibrium_temperature"]),
    "star.effective_temperature": _f("quantity", "K", "host_teff_K",
                                     "stellar effective temperature", *TEFF_RANGE_K),
    "star.radius": _f("quantity", "solRad", "host_radius_sun", "stellar radius",
                      *LIMITS["star.radius"]),
    "star.mass": _f("quantity", "solMass", "host_mass_sun", "stellar mass", *LIMITS["star.mass"]),
    "star.log_gravity": _f("dex", None, "host_logg_cgs", "stellar log g (cgs)", 0.0, 9.0),
    "star.metallicity": _f("dex", None, "host_metallicity_dex", "stellar metallicity [Fe/H]",
                           -5.0, 1.5),
    **{f"star.magnitudes.{b}": _f("mag", None, f"host_mag_{b}", f"{b} magnitude", -2.0, 30.0)
       for b in BANDS},
    "star.distance": _f("quantity", "pc", "host_distance_pc", "distance", *LIMITS["star.distance"]),
    "star.right_ascension": _f("quantity", "deg", "host_ra_deg", "right ascension", 0.0, 360.0,
                               high_inc=False),
    "star.declination": _f("quantity", "deg", "host_dec_deg", "declination", -90.0, 90.0),
}

#: field -> column name of the default layout.
DEFAULT_COLUMNS = {k: f.column for k, f in FIELDS.items()}

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

#: file extension -> astropy reader format; ``format=`` also accepts the keys
#: ``"csv"``, ``"ecsv"``, ``"votable"``.
FORMATS = {".csv": "ascii.csv", ".ecsv": "ascii.ecsv", ".vot": "votable",
           ".votable": "votable", ".xml": "votable"}
_FORMAT_NAMES = {"csv": "ascii.csv", "ecsv": "ascii.ecsv", "votable": "votable",
                 "ascii.csv": "ascii.csv", "ascii.ecsv": "ascii.ecsv"}

_REQUIRED = ("planet.name", "planet.radius", "star.effective_temperature", "star.radius")
_EITHER = (("star.mass", "star.log_gravity"), ("planet.period", "planet.semi_major_axis"))
_ADDED = ("input_index", "status", "reason") + FLAG_COLUMNS


# ----------------------------------------------------------------------------- mapping


def _suggest(word, choices):
    close = difflib.get_close_matches(str(word), list(choices), n=1, cutoff=0.5)
    return f"did you mean {close[0]!r}?" if close else ""


def load_mapping(mapping=None):
    """Read and check a column mapping (without a table).

    Parameters
    ----------
    mapping : str, pathlib.Path, dict or None
        A mapping TOML file, the same structure as a dict, or None for the
        default layout.

    Returns
    -------
    dict
        ``{"fields": {field: {"column", "unit", "offset"}}, "start_from_default": bool,
        "source": str}``; for the default layout ``fields`` holds every field.

    Raises
    ------
    UnknownKeyError, InputError, UnitMismatchError
        Unknown keys, malformed entries, unit strings astropy cannot read.
    """
    if mapping is None:
        return {"fields": {k: {"column": c, "unit": FIELDS[k].unit, "offset": 0.0}
                           for k, c in DEFAULT_COLUMNS.items()},
                "start_from_default": False, "source": "default layout", "default": True}
    if isinstance(mapping, (str, Path)):
        from ..io.tomlfile import read_toml
        path = Path(mapping)
        doc = read_toml(path, "mapping", "an existing mapping TOML file")
        source = str(path)
    elif isinstance(mapping, dict):
        doc, source = mapping, "mapping"
    else:
        raise InputError("mapping", type(mapping).__name__, "a TOML file path, a dict or None")
    top = {"planet": None, "star": None, "start_from_default": None, "title": None, "notes": None}
    for key in doc:
        if key not in top:
            raise UnknownKeyError(f"mapping.{key}", doc[key], "keys " + ", ".join(top),
                                  detail=_suggest(key, top))
    start = doc.get("start_from_default", False)
    if not isinstance(start, bool):
        raise InputError("mapping.start_from_default", start, "true or false")
    fields = {}
    for part in ("planet", "star"):
        tbl = doc.get(part, {})
        if not isinstance(tbl, dict):
            raise InputError(f"mapping.{part}", tbl, "a table of field = column")
        keys = {k.split(".", 1)[1] for k in FIELDS if k.startswith(part + ".")}
        keys = {k for k in keys if not k.startswith("magnitudes.")}
        if part == "star":
            keys.add("magnitudes")
        for key, entry in tbl.items():
            if key not in keys:
                raise UnknownKeyError(f"mapping.{part}.{key}", entry, "keys " + ", ".join(sorted(keys)),
                                      detail=_suggest(key, keys))
            if key == "magnitudes":
                if not isinstance(entry, dict):
                    raise InputError("mapping.star.magnitudes", entry,
                                     "a table of band = column, e.g. { J = \"Jmag\" }")
                for band, sub in entry.items():
                    if band not in BANDS:
                        raise UnknownKeyError(f"mapping.star.magnitudes.{band}", sub,
                                              "bands " + ", ".join(BANDS), detail=_suggest(band, BANDS))
                    fields[f"star.magnitudes.{band}"] = _entry(sub, f"star.magnitudes.{band}")
                continue
            fields[f"{part}.{key}"] = _entry(entry, f"{part}.{key}")
    return {"fields": fields, "start_from_default": start, "source": source, "default": False}


def _entry(entry, field):
    where = f"mapping.{field}"
    if isinstance(entry, str):
        entry = {"column": entry}
    if not isinstance(entry, dict):
        raise InputError(where, entry, "a column name or a table { column = ..., unit = ... }")
    allowed = ("column", "unit", "offset") if field == "planet.transit_midtime" else ("column", "unit")
    for key in entry:
        if key not in allowed:
            raise UnknownKeyError(f"{where}.{key}", entry[key], "keys " + ", ".join(allowed),
                                  detail=_suggest(key, allowed))
    col = entry.get("column")
    if not isinstance(col, str) or not col.strip():
        raise InputError(f"{where}.column", col, "a non-empty column name")
    unit = entry.get("unit")
    if unit is not None:
        if not isinstance(unit, str):
            raise InputError(f"{where}.unit", unit, "an astropy unit string such as \"jupiterRad\"")
        _parse_unit(unit, col, field)
    offset = entry.get("offset", 0.0)
    if isinstance(offset, bool) or not isinstance(offset, (int, float)):
        raise InputError(f"{where}.offset", offset, "a number of days")
    return {"column": col, "unit": unit, "offset": float(offset)}


def _parse_unit(text, column, field):
    try:
        return u.Unit(text)
    except (ValueError, TypeError) as exc:
        raise UnitMismatchError(f"column {column!r} ({field})", text, "an astropy unit string",
                                detail=str(exc)) from None


def _same_unit(a, b, rtol=1e-5):
    """Whether two units are the same to ``rtol`` (VOTable writers round scale
    factors: astropy writes earthMass as "5.97217e+24 kg")."""
    try:
        return abs(u.Unit(a).to(u.Unit(b)) - 1.0) < rtol
    except (u.UnitsError, TypeError, ValueError):
        return False


def _resolve(mapping, table, source):
    """Match the mapping against the table's columns; fix each field's unit.

    Returns field -> (column, unit text or None, factor-free unit object or None, offset).
    """
    cols = list(table.colnames)
    fields = dict(mapping["fields"])
    if mapping["default"]:
        fields = {k: v for k, v in fields.items() if v["column"] in table.colnames}
    else:
        for k, v in fields.items():
            if v["column"] not in table.colnames:
                raise InputError(f"mapping {k}", v["column"], f"a column of {source}",
                                 detail=_suggest(v["column"], cols))
        if mapping["start_from_default"]:
            for k, c in DEFAULT_COLUMNS.items():
                if k not in fields and c in table.colnames:
                    fields[k] = {"column": c, "unit": FIELDS[k].unit, "offset": 0.0}
    how = "the default layout" if mapping["default"] else f"mapping {mapping['source']}"
    for k in _REQUIRED:
        if k not in fields:
            raise InputError(k, None, f"a column in {source}",
                             detail=f"{how} names none (default-layout column "
                                    f"{DEFAULT_COLUMNS[k]!r}; {_suggest(DEFAULT_COLUMNS[k], cols)})")
    for pair in _EITHER:
        if not any(k in fields for k in pair):
            raise InputError(" or ".join(pair), None, f"a column in {source}",
                             detail=f"{how} names neither (default-layout columns "
                                    f"{DEFAULT_COLUMNS[pair[0]]!r}, {DEFAULT_COLUMNS[pair[1]]!r})")
    out = {}
    for k, v in fields.items():
        spec = FIELDS[k]
        col = v["column"]
        if spec.kind == "text":
            out[k] = (col, None, 1.0, 0.0)
            continue
        file_unit_txt = table[col].unit
        map_unit = v["unit"]
        if file_unit_txt is not None and map_unit is not None and not _same_unit(file_unit_txt, map_unit):
            raise UnitMismatchError(f"column {col!r} ({k})", str(file_unit_txt),
                                    f"the unit the mapping gives, {map_unit}",
                                    detail="the file and the mapping disagree; remove one of them")
        # Where both are given and agree, the mapping's (exact) unit is used.
        unit = map_unit if map_unit is not None else file_unit_txt
        factor = _conversion(unit, col, k, spec)
        out[k] = (col, None if unit is None else str(unit), factor, v["offset"])
    return out


def _conversion(unit, col, field, spec):
    """Multiplicative factor from the column's unit to the field's default unit."""
    if unit is None:
        return 1.0
    unit_obj = unit if isinstance(unit, u.UnitBase) else _parse_unit(str(unit), col, field)
    if spec.kind in ("number", "dex", "mag"):
        ok = {"number": (), "dex": ("dex",), "mag": ("mag",)}[spec.kind]
        if str(unit_obj) in ok or str(unit_obj) == "":
            return 1.0
        try:
            return float(unit_obj.to(u.dimensionless_unscaled))
        except (u.UnitsError, TypeError, ValueError):
            allowed = "no unit" + ("" if not ok else f" or {ok[0]}")
            raise UnitMismatchError(f"column {col!r} ({field})", str(unit_obj), allowed) from None
    try:
        return float(unit_obj.to(u.Unit(spec.unit)))
    except (u.UnitsError, TypeError, ValueError):
        raise UnitMismatchError(f"column {col!r} ({field})", str(unit_obj),
                                f"a unit convertible to {spec.unit}",
                                detail="wrong dimension") from None


# ----------------------------------------------------------------------------- reading


def _text_values(col):
    data = np.asarray(np.ma.getdata(col))
    mask = np.asarray(np.ma.getmaskarray(col), dtype=bool)
    text = np.char.strip(data.astype(str))
    return np.where(mask | (text == "--"), "", text)


def _float_values(col):
    """Float64 values (NaN where missing) and a mask of unreadable text entries."""
    n = len(col)
    mask = np.asarray(np.ma.getmaskarray(col), dtype=bool)
    data = np.asarray(np.ma.getdata(col))
    bad = np.zeros(n, dtype=bool)
    raw = None
    if data.dtype.kind in "fiu":
        vals = data.astype(np.float64)
    elif data.dtype.kind == "b":
        vals = np.full(n, np.nan)
        bad = ~mask
        raw = data.astype(str)
    else:
        raw = np.char.strip(data.astype(str))
        empty = (raw == "") | (raw == "--")
        try:
            vals = np.where(empty, "nan", raw).astype(np.float64)
        except ValueError:
            # Dirty text column: read element by element (only on this fallback path).
            vals = np.full(n, np.nan)
            for i in np.flatnonzero(~empty & ~mask):
                try:
                    vals[i] = float(raw[i])
                except ValueError:
                    bad[i] = True
    vals = np.where(mask, np.nan, vals)
    return vals, bad & ~mask, raw


def _read_table(path, format):
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
    table = _read_table(path, format)
    return catalogue_from_table(table, mapping, source=str(path))


# ----------------------------------------------------------------------------- screening


def _fmt(values):
    return np.char.mod("%.6g", np.asarray(values, dtype=np.float64))


def _range_text(spec):
    lo = "-inf" if spec.low is None else f"{spec.low:g}"
    hi = "inf" if spec.high is None else f"{spec.high:g}"
    lb = "[" if spec.low_inc and spec.low is not None else "("
    hb = "]" if spec.high_inc and spec.high is not None else ")"
    unit = f" {spec.unit}" if spec.unit else ""
    return f"{lb}{lo}, {hi}{hb}{unit}"


class _Status:
    """Per-row status/reason arrays; a row keeps the first problem found."""

    def __init__(self, n):
        self.code = np.full(n, "ok", dtype="<U24")
        self.reason = np.full(n, "", dtype=object)

    def mark(self, mask, code, make_reason):
        new = np.asarray(mask, dtype=bool) & (self.code == "ok")
        if new.any():
            self.code[new] = code
            self.reason[new] = np.asarray(make_reason(new), dtype=object)
        return new


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

    # --- values in each field's default unit (NaN where missing)
    vals, raw, unread, names = {}, {}, {}, {}
    for k, (col, unit, factor, offset) in res.items():
        if FIELDS[k].kind == "text":
            names[k] = _text_values(table[col])
            continue
        v, bad, txt = _float_values(table[col])
        raw[k] = v
        if bad.any():
            unread[k] = (bad, txt)
        conv = v * factor + offset
        vals[k] = conv
    nan = np.full(n, np.nan)
    get = lambda k: vals.get(k, nan)  # noqa: E731
    col_of = lambda k: res[k][0] if k in res else DEFAULT_COLUMNS[k]  # noqa: E731
    unit_of = lambda k: res[k][1] if k in res else FIELDS[k].unit  # noqa: E731

    st = _Status(n)
    pname = names["planet.name"]
    host = names.get("star.name", np.full(n, "", dtype="<U1"))

    # 1. names
    st.mark(pname == "", "missing_name",
            lambda m: f"column {col_of('planet.name')!r} (planet name) is empty")
    _, first, inv = np.unique(pname, return_index=True, return_inverse=True)
    first_row = first[np.ravel(inv)]
    dup = (pname != "") & (first_row != np.arange(n))
    st.mark(dup, "duplicate_name",
            lambda m: np.char.add(np.char.add(np.char.add("planet name '", pname[m]),
                                              "' is already used by input row "),
                                  first_row[m].astype(str)))
    # 2. text that is not a number
    for k, (bad, txt) in unread.items():
        st.mark(bad, "bad_value", lambda m, k=k, txt=txt: np.char.add(np.char.add(
            f"column {col_of(k)!r} ({FIELDS[k].label}) holds '", txt[m]), "', which is not a number"))
    # 3. required values missing
    for k, code in (("planet.radius", "missing_radius"),
                    ("star.effective_temperature", "missing_star_temperature"),
                    ("star.radius", "missing_star_radius")):
        st.mark(np.isnan(get(k)), code,
                lambda m, k=k: f"column {col_of(k)!r} ({FIELDS[k].label}) is empty; a value is required")
    st.mark(np.isnan(get("star.mass")) & np.isnan(get("star.log_gravity")), "missing_star_mass",
            lambda m: (f"no stellar mass (column {col_of('star.mass')!r}) and no log g (column "
                       f"{col_of('star.log_gravity')!r}); one is required"))
    st.mark(np.isnan(get("planet.period")) & np.isnan(get("planet.semi_major_axis")), "missing_orbit",
            lambda m: (f"no period (column {col_of('planet.period')!r}) and no semi-major axis "
                       f"(column {col_of('planet.semi_major_axis')!r}); one is required"))
    # 4. range checks (the ranges Star and Planet enforce)
    for k, v in vals.items():
        spec = FIELDS[k]
        with np.errstate(invalid="ignore"):
            bad = np.isinf(v)
            if spec.low is not None:
                bad |= (v < spec.low) if spec.low_inc else (v <= spec.low)
            if spec.high is not None:
                bad |= (v > spec.high) if spec.high_inc else (v >= spec.high)

        def why(m, k=k, v=v, spec=spec):
            uu = unit_of(k)
            head = f"column {col_of(k)!r} ({spec.label}) = "
            txt = np.char.add(head, _fmt(raw[k][m]))
            if uu:
                txt = np.char.add(txt, f" {uu}")
            converted = bool(uu and spec.unit and not _same_unit(uu, spec.unit)) or res[k][3] != 0
            if converted:
                txt = np.char.add(np.char.add(np.char.add(txt, " (= "), _fmt(v[m])),
                                  f" {spec.unit or ''})".replace(" )", ")"))
            return np.char.add(txt, f"; allowed {_range_text(spec)}")
        st.mark(bad, "bad_value", why)

    # --- estimates over all rows (NaN where inputs are missing; bad rows ignored later)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        rs = get("star.radius") * R_SUN
        rp = get("planet.radius") * R_EARTH
        ms_given = get("star.mass") * M_SUN
        logg = get("star.log_gravity")
        ms_from_logg = np.isnan(ms_given) & ~np.isnan(logg)
        ms = np.where(ms_from_logg, 10.0 ** logg * 1e-2 * rs ** 2 / G, ms_given)
        mp_given = get("planet.mass") * M_EARTH
        mass_est = np.isnan(mp_given)
        mp_est, _ = met.mass_from_radius(rp)
        mp = np.where(mass_est, mp_est, mp_given)
        st.mark(mass_est & ~np.isnan(rp) & np.isnan(mp_est), "missing_mass",
                lambda m: np.char.add(np.char.add(
                    f"no mass (column {col_of('planet.mass')!r}) and radius ", _fmt(rp[m] / R_EARTH)),
                    f" earthRad is at or above {met.MASS_RADIUS_MAX_EARTH_RADII} earthRad, the limit "
                    "of the mass-radius relation (Chen & Kipping 2017); a measured mass is needed"))
        per_given = get("planet.period") * DAY
        a_given = get("planet.semi_major_axis") * AU
        per_est = np.isnan(per_given) & ~np.isnan(a_given)
        a_est = np.isnan(a_given) & ~np.isnan(per_given)
        period = np.where(per_est, geo.period_from_semi_major_axis(a_given, ms + mp), per_given)
        a = np.where(a_est, geo.semi_major_axis_from_period(per_given, ms + mp), a_given)
        st.mark(rp >= rs, "bad_value",
                lambda m: np.char.add(np.char.add(np.char.add(
                    "planet radius ", _fmt(rp[m] / R_EARTH)), " earthRad is not smaller than the star's "),
                    np.char.add(_fmt(rs[m] / R_EARTH), " earthRad")))
        st.mark(a <= rs + rp, "inside_star",
                lambda m: np.char.add(np.char.add(np.char.add(
                    "semi-major axis ", _fmt(a[m] / AU)), " au is inside the star (R_star + R_planet = "),
                    np.char.add(_fmt((rs[m] + rp[m]) / AU), " au)")))
        ecc_raw = get("planet.eccentricity")
        ecc_assumed = np.isnan(ecc_raw)
        ecc = np.where(ecc_assumed, 0.0, ecc_raw)
        omega = np.radians(np.where(np.isnan(get("planet.periastron_argument")), 90.0,
                                    get("planet.periastron_argument")))
        with np.errstate(invalid="ignore"):
            periastron = a * (1 - ecc)
        st.mark(periastron <= rs + rp, "inside_star",
                lambda m: np.char.add(np.char.add(np.char.add(
                    "periastron distance a(1 - e) = ", _fmt(periastron[m] / AU)),
                    " au is inside the star (R_star + R_planet = "),
                    np.char.add(_fmt((rs[m] + rp[m]) / AU), " au)")))
        b_given = get("planet.impact_parameter")
        inc = np.radians(get("planet.inclination"))
        b_from_inc = np.isnan(b_given) & ~np.isnan(inc)
        b_assumed = np.isnan(b_given) & np.isnan(inc)
        b = np.where(b_from_inc, geo.impact_parameter_from_inclination(a / rs, inc, ecc, omega),
                     np.where(b_assumed, 0.0, b_given))
        k_ratio = rp / rs
        st.mark(b >= 1 + k_ratio, "no_transit",
                lambda m: np.char.add(np.char.add(np.char.add(
                    "impact parameter ", _fmt(b[m])), " >= 1 + Rp/Rs = "),
                    np.char.add(_fmt(1 + k_ratio[m]), ": the planet does not transit")))
        grazing = (b > 1 - k_ratio) & (b < 1 + k_ratio)
    teq_given = get("planet.equilibrium_temperature")
    flags = {
        "mass_estimated": mass_est & ~np.isnan(mp_est),
        "period_estimated": per_est,
        "semi_major_axis_estimated": a_est,
        "star_mass_from_log_gravity": ms_from_logg,
        "impact_parameter_from_inclination": b_from_inc,
        "impact_parameter_assumed": b_assumed,
        "eccentricity_assumed": ecc_assumed,
        "equilibrium_temperature_estimated": np.isnan(teq_given),
        "grazing": grazing,
    }

    good = np.flatnonzero(st.code == "ok")
    inputs = dict(rs=rs, ms=ms, rp=rp, mp_given=mp_given, period=period, a_given=a_given,
                  b_given=b_given, b_from_inc=b_from_inc, inc=inc, ecc=ecc, omega=omega,
                  teq=teq_given, pname=pname, host=host, get=get,
                  has_host="star.name" in names)
    system = _build_system(good, inputs)
    if system is None and good.size:
        # Safety net: screening missed a check System enforces.  Find the rows
        # one by one (slow path, never taken when the screening is complete).
        for i in good:
            try:
                _build_system(np.array([i]), inputs, strict=True)
            except InputError as exc:
                st.code[i] = "bad_value"
                st.reason[i] = str(exc)
        good = np.flatnonzero(st.code == "ok")
        system = _build_system(good, inputs, strict=True)
    # a given semi-major axis that disagrees with Kepler's third law (flag only)
    flags["kepler_mismatch"] = np.zeros(n, dtype=bool)
    if system is not None and good.size:
        flags["kepler_mismatch"][good] = system.kepler_mismatch

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


def _build_system(idx, x, strict=False):
    """System over rows ``idx`` (None if empty or, unless strict, if System rejects them)."""
    if idx.size == 0:
        return None
    g = x["get"]
    mags = {b: g(f"star.magnitudes.{b}")[idx] for b in BANDS
            if not np.all(np.isnan(g(f"star.magnitudes.{b}")[idx]))}
    feh = g("star.metallicity")[idx]
    try:
        with warnings.catch_warnings():
            # grazing rows are reported in the table's "grazing" column instead
            warnings.simplefilter("ignore", GrazingTransitWarning)
            star = Star(g("star.effective_temperature")[idx] * u.K, x["rs"][idx] * u.m,
                        mass=x["ms"][idx] * u.kg, metallicity=np.where(np.isnan(feh), 0.0, feh),
                        magnitudes=mags, distance=g("star.distance")[idx] * u.pc,
                        ra=g("star.right_ascension")[idx] * u.deg,
                        dec=g("star.declination")[idx] * u.deg,
                        name=x["host"][idx] if x["has_host"] else None)
            bi = x["b_given"][idx]
            inc = np.where(x["b_from_inc"][idx], x["inc"][idx], np.nan)
            planet = Planet(x["rp"][idx] * u.m, x["period"][idx] * u.s,
                            mass=x["mp_given"][idx] * u.kg,
                            mass_uncertainty=g("planet.mass_uncertainty")[idx] * u.M_earth,
                            radius_uncertainty=g("planet.radius_uncertainty")[idx] * u.R_earth,
                            semi_major_axis=x["a_given"][idx] * u.m,
                            impact_parameter=bi, inclination=inc * u.rad,
                            eccentricity=x["ecc"][idx], periastron_argument=x["omega"][idx] * u.rad,
                            transit_midtime=g("planet.transit_midtime")[idx],
                            transit_midtime_uncertainty=g("planet.transit_midtime_uncertainty")[idx] * u.d,
                            period_uncertainty=g("planet.period_uncertainty")[idx] * u.d,
                            name=x["pname"][idx])
            return System(star, planet, atmosphere_temperature=x["teq"][idx] * u.K)
    except InputError:
        if strict:
            raise
        return None


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
