"""Reading users' cross-section tables (text, ECSV, FITS) into checked blocks.

Each table gives wavenumber or wavelength, the cross-section per molecule and
the temperature, with units in the header; the format and every check are
described in :mod:`snrkit.atmosphere.user_opacity`.  Text files are read by
``np.loadtxt`` where they are plain, by a line reader (exact messages)
otherwise.
"""

import difflib
import re
import warnings
from pathlib import Path

import numpy as np
import astropy.units as u

from ..errors import InputError, UnknownKeyError
from .user_spectrum import _format_for  # same file-type rules as user spectra
from .cross_section_checks import _validate

__all__ = ["read_cross_sections"]


_HEADER_TOKEN = re.compile(r"([A-Za-z_][\w\-]*)(?:\s*\[([^\]]*)\])?")
_NAME_WITH_UNIT = re.compile(r"^\s*([A-Za-z_][\w\-]*)\s*\[([^\]]*)\]\s*$")


def _read_text(path, field):
    """Plain text: returns (names, units, list of float columns).

    Large files go through numpy's compiled reader (``np.loadtxt``); a file
    it refuses is read again line by line, which names the offending line.
    """
    text = path.read_text()
    fast = _read_text_fast(text)
    if fast is not None:
        return fast
    return _read_text_lines(text.splitlines(), path, field)


def _read_text_fast(text):
    """``np.loadtxt`` after the optional header line; None when anything is unusual."""
    import io
    header, skip = None, 0
    for n, ln in enumerate(text.splitlines()):
        s = ln.split("#", 1)[0].strip()
        if not s:
            continue
        try:
            [float(x) for x in s.replace(",", " ").split()]
        except ValueError:
            header, skip = _HEADER_TOKEN.findall(s), n + 1
        break
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error")          # e.g. "input contained no data"
            data = np.loadtxt(io.StringIO(text.replace(",", " ")), comments="#", skiprows=skip,
                              dtype=np.float64, ndmin=2)
    except (ValueError, UserWarning):
        return None
    width = data.shape[1]
    if data.shape[0] == 0 or (header is not None and len(header) != width):
        return None
    if header is not None:
        names = [h[0] for h in header]
        units = [h[1].strip() or None for h in header]
    else:
        names = [f"col{i + 1}" for i in range(width)]
        units = [None] * width
    return names, units, [np.ascontiguousarray(data[:, i]) for i in range(width)]


def _read_text_lines(lines, path, field):
    """The line-by-line reader (exact messages for malformed files)."""
    rows, numbers, header = [], [], None
    for n, ln in enumerate(lines, start=1):
        s = ln.split("#", 1)[0].strip()
        if not s:
            continue
        if header is None and not rows:
            first = s.replace(",", " ").split()
            try:
                [float(x) for x in first]
            except ValueError:
                header = _HEADER_TOKEN.findall(s)
                continue
        rows.append(s.replace(",", " ").split())
        numbers.append(n)
    if not rows:
        raise InputError(field, str(path), "a file with data rows")
    width = len(rows[0])
    for r, n in zip(rows, numbers):
        if len(r) != width:
            raise InputError(f"{path.name}: line {n}", " ".join(r),
                             f"{width} values like the first data line")
    try:
        data = np.array(rows, dtype=np.float64)
    except ValueError:
        for r, n in zip(rows, numbers):
            for x in r:
                try:
                    float(x)
                except ValueError:
                    raise InputError(f"{path.name}: line {n}", x, "a number") from None
        raise
    if header is not None:
        names = [h[0] for h in header]
        units = [h[1].strip() or None for h in header]
        if len(names) != width:
            raise InputError(f"{path.name}: header", " ".join(names),
                             f"{width} column names, one per data column")
    else:
        names = ["col1", "col2", "col3", "col4"][:width] + [f"col{i + 1}" for i in range(4, width)]
        units = [None] * width
    return names, units, [data[:, i] for i in range(width)]


def _read_columns(path, fmt, field):
    """(names, unit strings or None, float arrays) of a file."""
    if fmt == "text":
        return _read_text(path, field)
    from astropy.table import Table
    try:
        with warnings.catch_warnings():
            # unparsable units such as 'cm2/molecule' are read as text and handled below
            warnings.simplefilter("ignore", u.UnitsWarning)
            table = Table.read(str(path), format={"csv": "ascii.csv", "ecsv": "ascii.ecsv",
                                                  "fits": "fits"}[fmt])
    except FileNotFoundError:
        raise InputError(field, str(path), "an existing file") from None
    except Exception as exc:  # astropy raises many types for malformed files
        raise InputError(field, str(path), f"a readable {fmt} table",
                         detail=f"{type(exc).__name__}: {exc}") from None
    return _table_columns(table, path.name)


def _table_columns(table, label):
    names, units, cols = [], [], []
    for name in table.colnames:
        col = table[name]
        unit = None if col.unit is None else col.unit.to_string()
        m = _NAME_WITH_UNIT.match(name)
        base = name
        if m:
            base = m.group(1)
            if unit is None:
                unit = m.group(2).strip() or None
        raw = col.value if isinstance(col, u.Quantity) else col
        try:
            vals = np.ma.filled(np.ma.asarray(raw, dtype=np.float64), np.nan)
        except (TypeError, ValueError):
            raise InputError(f"{label}: column {name!r}", str(col.dtype), "a numeric column") \
                from None
        names.append(base)
        units.append(unit)
        cols.append(np.asarray(vals, dtype=np.float64).ravel())
    return names, units, cols


def _check_species(species):
    from .composition import SPECIES
    if species not in SPECIES:
        by_case = {sp.lower(): sp for sp in SPECIES}
        close = ([by_case[str(species).lower()]] if str(species).lower() in by_case
                 else difflib.get_close_matches(str(species), SPECIES, n=1))
        raise UnknownKeyError("species", species, "one of " + ", ".join(SPECIES),
                              detail=f"did you mean {close[0]!r}?" if close else "")
    return species


def _blocks_to_table(blocks, species, label, info):
    from astropy.table import Table
    nu = np.concatenate([b[1] for b in blocks])
    t = Table()
    t["wavenumber"] = nu / 100.0 * (1 / u.cm)
    t["wavelength"] = 1e6 / nu * u.um
    t["cross_section"] = np.concatenate([b[2] for b in blocks]) * 1e4 * u.cm ** 2
    t["cross_section"].description = "absorption cross-section per molecule"
    has_t = blocks[0][0] is not None
    if has_t:
        t["temperature"] = np.concatenate([np.full(b[1].size, b[0]) for b in blocks]) * u.K
    t.meta.update({"species": species, "source": label,
                   "temperatures_K": [b[0] for b in blocks] if has_t else None,
                   "temperature_dependent": bool(has_t and len(blocks) > 1),
                   "layout": "snrkit cross-section table (see snrkit.atmosphere.user_opacity)",
                   **info})
    return t


def read_cross_sections(path, species, *, spectral_unit=None, format=None):
    """Read a user's table of absorption cross-sections of one species.

    Parameters
    ----------
    path : str or pathlib.Path
        CSV, ECSV, FITS or plain-text file in the layout of the module
        docstring (spectral column, ``cross_section``, optional ``temperature``).
    species : str
        The absorbing species, one of
        :data:`snrkit.atmosphere.composition.SPECIES`.
    spectral_unit : str or astropy.units.Unit, optional
        Unit of the spectral column when the file does not carry one (length,
        wavenumber, frequency or energy; converted with astropy's spectral
        equivalencies).
    format : {"csv", "ecsv", "fits", "text"}, optional
        Override the format guessed from the file name.

    Returns
    -------
    astropy.table.Table
        Columns ``wavenumber`` [1/cm], ``wavelength`` [um], ``cross_section``
        [cm2] and, if the file has temperatures, ``temperature`` [K]; rows
        sorted by temperature, then by increasing wavenumber.  ``meta`` holds
        the species, the source file, the columns and units found in the file
        and the list of temperatures.  :class:`UserOpacitySource` accepts it.

    Raises
    ------
    InputError
        Unknown species, file or column; missing or wrong units; NaN, missing
        or negative values; unsorted or duplicate spectral points within one
        temperature; too few points.  The message names the column and row
        (data rows counted from 1).
    """
    species = _check_species(species)
    path = Path(path)
    if path.is_dir():
        raise InputError("cross-section file", str(path), "a file, not a folder")
    if not path.exists():
        raise InputError("cross-section file", str(path), "an existing file")
    fmt = _format_for(path, format)
    names, units, cols = _read_columns(path, fmt, "cross-section file")
    blocks, info = _validate(names, units, cols, species, path.name, spectral_unit)
    return _blocks_to_table(blocks, species, str(path), info)


def _blocks_from_table(table, species, label):
    names, units, cols = _table_columns(table, label)
    return _validate(names, units, cols, species, label, None)[0]
