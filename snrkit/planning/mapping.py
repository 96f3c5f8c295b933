"""Catalogue column mappings: the fields, their default units and layout, and mapping files.

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
"""

import difflib
from collections import namedtuple
from pathlib import Path

import astropy.units as u

from ..errors import InputError, UnitMismatchError, UnknownKeyError
from ..bodies.limits import TEFF_RANGE_K, BANDS, LIMITS

__all__ = ["FIELDS", "DEFAULT_COLUMNS", "FORMATS", "load_mapping"]


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

#: file extension -> astropy reader format; ``format=`` also accepts the keys
#: ``"csv"``, ``"ecsv"``, ``"votable"``.
FORMATS = {".csv": "ascii.csv", ".ecsv": "ascii.ecsv", ".vot": "votable",
           ".votable": "votable", ".xml": "votable"}
_FORMAT_NAMES = {"csv": "ascii.csv", "ecsv": "ascii.ecsv", "votable": "votable",
                 "ascii.csv": "ascii.csv", "ascii.ecsv": "ascii.ecsv"}

_REQUIRED = ("planet.name", "planet.radius", "star.effective_temperature", "star.radius")
_EITHER = (("star.mass", "star.log_gravity"), ("planet.period", "planet.semi_major_axis"))


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
