"""Bring your own opacity: user cross-section tables as k-distributions.

:func:`read_cross_sections` reads a table of monochromatic absorption
cross-sections of one species (for example a line-by-line calculation), and
:class:`UserOpacitySource` turns such tables into the k-distributions that
:func:`snrkit.atmosphere.spectrum.transmission_spectrum` uses (pass it as
``opacity_source``).  Every other opacity (the other species, Rayleigh
scattering, haze, collision-induced absorption) comes from snrkit's own
tables unchanged.

Cross-section table layout
--------------------------
One table per species; one row per spectral point.  Columns (names are not
case sensitive):

``wavenumber`` or ``wavelength`` (required)
    The spectral coordinate, in any spectral unit (length, wavenumber,
    frequency or energy; vacuum wavelengths).  The unit must be known: from
    the file (ECSV and FITS column units, or a CSV/text header written as
    ``wavenumber [cm-1]``), or from the ``spectral_unit`` argument.  If both
    columns are present, ``wavenumber`` is used.
``cross_section`` (required; alias ``sigma``)
    Absorption cross-section per molecule, >= 0.  Unit from the file
    (``cm2``, ``m2``, ``cm2/molecule``...), default cm2.
``temperature`` (optional; alias ``T``)
    Temperature of the row [K unless the file says otherwise].  Several
    temperatures are stacked in one file: the rows of one temperature form one
    contiguous block, and each block has its own spectral grid.  Without this
    column the cross-section is taken to be independent of temperature.

Within each temperature block the spectral points are strictly increasing
or strictly decreasing (no duplicates), at least :data:`MIN_POINTS` of them.
Other columns are an error (so that a misspelt ``temperature`` is not
silently dropped).  Formats: CSV (``.csv``), ECSV (``.ecsv``), FITS table
(``.fits``) or plain text (anything else: whitespace or comma separated,
``#`` comments, an optional header line such as
``wavelength [um]  cross_section [cm2]  temperature [K]``; without a header
the columns are spectral coordinate, cross-section, and optionally
temperature, in that order).  Example (CSV)::

    wavenumber [cm-1],cross_section [cm2],temperature [K]
    4000.00,1.2e-22,500
    4000.01,1.5e-22,500
    ...
    4000.00,2.1e-22,1000
    ...

From table to k-distribution
----------------------------
Between its spectral points the cross-section is interpolated linearly in
ln sigma against wavenumber (zero entries count as 1e-60 m2).  Between
table temperatures ln sigma is interpolated linearly in 1/T, point by point
on the union of the blocks' grids, before anything is sorted; temperatures
outside the table are clamped to it with an
:class:`~snrkit.atmosphere.opacity.OpacityRangeWarning`.  In each requested
bin the resulting monochromatic cross-section is sorted into its
cumulative distribution over wavenumber, g(k) = (measure of the bin where
sigma <= k) / (bin width) -- the k-distribution of the correlated-k method
(Goody, West, Chen & Crisp 1989, JQSRT 42, 539; Lacis & Oinas 1991, JGR 96,
9027) -- and k(g) is read off at the Gauss-Legendre points of
``g_quadrature(n_g)``.  The cumulative distribution of a piecewise
log-linear function is itself piecewise linear in ln k, so it is computed
exactly (to ~1e-10 in ln k; no resampling).  Each distinct temperature costs
one sort of the table's points (about 0.2 s per million points), so a
profile with many different temperatures and a large table is slow.  The bin-mean transmission is then
``sum_g w_g exp(-k_g u)``, which tends to the exact monochromatic mean as
n_g grows.  Pressure does not enter: the table's cross-sections are used at
every pressure.

Bins reaching outside the table are an error (nothing is extrapolated)
unless ``outside="zero"``, which gives those parts of the bins zero
cross-section.
"""

import difflib
import re
import warnings
from pathlib import Path

import numpy as np
import astropy.units as u

from ..errors import InputError, UnitMismatchError, UnknownKeyError
from .user_spectrum import _format_for  # same file-type rules as user spectra

__all__ = ["MIN_POINTS", "OUTSIDE_POLICIES", "read_cross_sections", "sorted_k_distribution",
           "UserOpacitySource"]

#: Fewest spectral points per temperature block.
MIN_POINTS = 2
#: What to do with bins (or parts of bins) the table does not cover.
OUTSIDE_POLICIES = ("error", "zero")

_SPECTRAL_NAMES = ("wavenumber", "wavelength")
_SIGMA_NAMES = ("cross_section", "sigma")
_TEMP_NAMES = ("temperature", "t")
_KNOWN = _SPECTRAL_NAMES + _SIGMA_NAMES + _TEMP_NAMES

_LN_FLOOR = float(np.log(1e-60))    # m^2; zero cross-sections, far below anything that matters
_FLAT = 1e-7                        # |d ln sigma| below which an interval counts as constant
_CACHE_SIZE = 256
_HEADER_TOKEN = re.compile(r"([A-Za-z_][\w\-]*)(?:\s*\[([^\]]*)\])?")
_NAME_WITH_UNIT = re.compile(r"^\s*([A-Za-z_][\w\-]*)\s*\[([^\]]*)\]\s*$")
_PER_MOLECULE = re.compile(r"\s*(/\s*molec(ule)?s?|molec(ule)?s?\s*(\^|\*\*)?\s*-1)\s*$", re.I)


# --------------------------------------------------------------------------
# reading
# --------------------------------------------------------------------------

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


def _parse_unit(text, field, kind):
    s = _PER_MOLECULE.sub("", str(text)) if kind == "area" else str(text)
    try:
        return u.Unit(s.strip())
    except (ValueError, TypeError):
        raise UnitMismatchError(field, str(text), {
            "spectral": "a spectral unit such as um, nm, Angstrom, cm-1, GHz",
            "area": "an area unit such as cm2, m2 (per molecule)",
            "temperature": "a temperature unit such as K"}[kind]) from None


def _assign_columns(names, label):
    """Map role -> column index, by name or position."""
    lower = [n.lower() for n in names]
    roles = {}
    for role, options in (("spectral", _SPECTRAL_NAMES), ("sigma", _SIGMA_NAMES),
                          ("temperature", _TEMP_NAMES)):
        for opt in options:
            if opt in lower:
                roles[role] = lower.index(opt)
                break
    if not roles and len(names) in (2, 3):
        roles = {"spectral": 0, "sigma": 1}
        if len(names) == 3:
            roles["temperature"] = 2
        return roles
    used = set(roles.values())
    for i, n in enumerate(names):
        if n.lower() in _SPECTRAL_NAMES and i != roles.get("spectral"):
            continue      # the other spectral column (wavenumber is preferred)
        if i not in used:
            close = difflib.get_close_matches(n.lower(), list(_KNOWN), n=1, cutoff=0.6)
            raise UnknownKeyError(f"{label}: column {n!r}", n,
                                  "the columns wavenumber or wavelength, cross_section and "
                                  "optionally temperature",
                                  detail=f"did you mean {close[0]!r}?" if close else "")
    for role, what in (("spectral", "a wavenumber or wavelength column"),
                       ("sigma", "a cross_section column")):
        if role not in roles:
            raise InputError(f"{label}: columns", ", ".join(names), what)
    return roles


def _check_species(species):
    from .composition import SPECIES
    if species not in SPECIES:
        by_case = {sp.lower(): sp for sp in SPECIES}
        close = ([by_case[str(species).lower()]] if str(species).lower() in by_case
                 else difflib.get_close_matches(str(species), SPECIES, n=1))
        raise UnknownKeyError("species", species, "one of " + ", ".join(SPECIES),
                              detail=f"did you mean {close[0]!r}?" if close else "")
    return species


def _validate(names, units, cols, species, label, spectral_unit):
    """Validated blocks: list of (T or None, wavenumber [m-1] ascending, sigma [m2])."""
    roles = _assign_columns(names, label)
    js, jx = roles["spectral"], roles["sigma"]
    jt = roles.get("temperature")
    sname, xname = names[js], names[jx]
    n_rows = cols[0].size
    if n_rows < MIN_POINTS:
        raise InputError(f"{label}", f"{n_rows} row(s)", f"at least {MIN_POINTS} rows")

    file_unit = units[js]
    if spectral_unit is not None:
        unit = _parse_unit(spectral_unit, "spectral_unit", "spectral")
        if file_unit is not None and _parse_unit(file_unit, f"{label}: column {sname!r}",
                                                 "spectral") != unit:
            raise UnitMismatchError("spectral_unit", str(unit),
                                    f"the unit stored in the file ({file_unit}) or nothing")
    elif file_unit is not None:
        unit = _parse_unit(file_unit, f"{label}: column {sname!r} unit", "spectral")
    else:
        raise UnitMismatchError(f"{label}: column {sname!r} unit", None,
                                "a spectral unit such as um, nm, cm-1",
                                detail="the column carries no unit; give spectral_unit or "
                                       f"write the header as '{sname} [um]'")
    try:
        nu = (cols[js] * unit).to_value(1 / u.m, equivalencies=u.spectral())
    except u.UnitConversionError:
        raise UnitMismatchError(f"{label}: column {sname!r} unit", str(unit),
                                "a length, wavenumber, frequency or energy unit") from None
    lname = sname.lower()
    if lname == "wavelength" and unit.physical_type != "length":
        raise UnitMismatchError(f"{label}: column {sname!r} unit", str(unit),
                                "a length unit for a wavelength column")
    if lname == "wavenumber" and unit.physical_type not in ("wavenumber", "spectral wavenumber"):
        raise UnitMismatchError(f"{label}: column {sname!r} unit", str(unit),
                                "an inverse length such as cm-1 for a wavenumber column")

    xunit = (u.cm ** 2 if units[jx] is None
             else _parse_unit(units[jx], f"{label}: column {xname!r} unit", "area"))
    try:
        sigma = (cols[jx] * xunit).to_value(u.m ** 2)
    except u.UnitConversionError:
        raise UnitMismatchError(f"{label}: column {xname!r} unit", units[jx],
                                "an area per molecule such as cm2 or m2") from None

    for name, arr in ((sname, nu), (xname, sigma)):
        bad = ~np.isfinite(arr)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(f"{label}: column {name!r}, row {i + 1}", "NaN or missing",
                             "a finite number")
    if np.any(nu <= 0):
        i = int(np.flatnonzero(nu <= 0)[0])
        raise InputError(f"{label}: column {sname!r}, row {i + 1}", float(cols[js][i]),
                         "a positive spectral coordinate")
    if np.any(sigma < 0):
        i = int(np.flatnonzero(sigma < 0)[0])
        raise InputError(f"{label}: column {xname!r}, row {i + 1}", float(cols[jx][i]),
                         "a cross-section >= 0")

    if jt is None:
        temps, starts = [None], np.array([0, n_rows])
        tunit = None
    else:
        tname = names[jt]
        tunit = (u.K if units[jt] is None
                 else _parse_unit(units[jt], f"{label}: column {tname!r} unit", "temperature"))
        try:
            tk = (cols[jt] * tunit).to_value(u.K, equivalencies=u.temperature())
        except u.UnitConversionError:
            raise UnitMismatchError(f"{label}: column {tname!r} unit", str(tunit),
                                    "a temperature unit such as K") from None
        bad = ~(np.isfinite(tk) & (tk > 0))
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(f"{label}: column {tname!r}, row {i + 1}", float(cols[jt][i]),
                             "a temperature > 0 K")
        change = np.flatnonzero(np.diff(tk) != 0) + 1
        starts = np.concatenate([[0], change, [n_rows]])
        temps = [float(tk[s]) for s in starts[:-1]]
        seen = {}
        for t, s in zip(temps, starts[:-1]):
            if t in seen:
                raise InputError(f"{label}: column {tname!r}, row {s + 1}", t,
                                 "one contiguous block of rows per temperature",
                                 detail=f"{t:g} K also starts at row {seen[t] + 1}")
            seen[t] = s
    blocks = []
    for t, a, b in zip(temps, starts[:-1], starts[1:]):
        where = "" if t is None else f" ({t:g} K block)"
        if b - a < MIN_POINTS:
            raise InputError(f"{label}: rows {a + 1}-{b}{where}", f"{b - a} point(s)",
                             f"at least {MIN_POINTS} spectral points per temperature")
        v = nu[a:b]
        step = np.diff(v)
        if not (np.all(step > 0) or np.all(step < 0)):
            zero = np.flatnonzero(step == 0)
            if zero.size:
                i, what = int(zero[0]) + 1, "duplicate"
            else:
                i, what = int(np.flatnonzero(np.sign(step) != np.sign(step[0]))[0]) + 1, \
                    "out of order"
            raise InputError(f"{label}: column {sname!r}, row {a + i + 1}{where}",
                             float(cols[js][a + i]),
                             "strictly increasing (or strictly decreasing) spectral points "
                             "within each temperature", detail=f"{what} value")
        order = slice(None) if step[0] > 0 else slice(None, None, -1)
        blocks.append((t, v[order].copy(), sigma[a:b][order].copy()))
    blocks.sort(key=lambda blk: -1.0 if blk[0] is None else blk[0])
    info = {"spectral_column": sname, "spectral_unit_in_file": str(unit),
            "cross_section_column": xname, "cross_section_unit_in_file": str(xunit),
            "temperature_unit_in_file": None if tunit is None else str(tunit)}
    return blocks, info


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


# --------------------------------------------------------------------------
# compute layer: sorting a piecewise log-linear cross-section
# --------------------------------------------------------------------------

def _segmented_cumsum(values, starts, group):
    c = np.cumsum(values)
    base = np.where(starts > 0, c[np.maximum(starts - 1, 0)], 0.0)
    return c - base[group]


def _layout(nu, wavenumber_edges):
    """Points, intervals and uncovered fractions of bins on a table grid.

    nu : ascending table wavenumbers; wavenumber_edges : ascending bin edges.
    Returns a dict: interpolation index/fraction of every point, the bin and
    weight (interval / bin width) of every interval between points, and the
    fraction of every bin outside the table.
    """
    e = np.asarray(wavenumber_edges, dtype=np.float64)
    n_b = e.size - 1
    lo, hi = max(nu[0], e[0]), min(nu[-1], e[-1])
    if hi > lo:
        inner = nu[(nu > lo) & (nu < hi)]
        ein = e[(e > lo) & (e < hi)]
        pts = np.unique(np.concatenate([[lo, hi], inner, ein]))
    else:
        pts = np.array([])
    if pts.size >= 2:
        mid = 0.5 * (pts[1:] + pts[:-1])
        grp = np.clip(np.searchsorted(e, mid) - 1, 0, n_b - 1)
        w = np.diff(pts) / np.diff(e)[grp]
        i = np.clip(np.searchsorted(nu, pts, side="right") - 1, 0, nu.size - 2)
        f = np.clip((pts - nu[i]) / (nu[i + 1] - nu[i]), 0.0, 1.0)
    else:
        grp = np.zeros(0, dtype=np.int64)
        w = np.zeros(0)
        i = np.zeros(0, dtype=np.int64)
        f = np.zeros(0)
    covered = np.bincount(grp, weights=w, minlength=n_b)
    uncovered = np.clip(1.0 - covered, 0.0, 1.0)
    uncovered[uncovered < 1e-9] = 0.0
    return {"i": i, "f": f, "group": grp, "weight": w, "uncovered": uncovered, "n_bins": n_b}


def _quantiles_on_layout(ln_sigma, layout, g):
    """k at cumulative probabilities g in every bin: (n_bins, n_g), ascending wavenumber."""
    n_b = layout["n_bins"]
    g = np.asarray(g, dtype=np.float64)
    i, f = layout["i"], layout["f"]
    ev_x, ev_ds, ev_j, ev_grp = [], [], [], []
    if i.size:
        v = ln_sigma[i] * (1.0 - f) + ln_sigma[i + 1] * f
        a = np.minimum(v[:-1], v[1:])
        b = np.maximum(v[:-1], v[1:])
        w = layout["weight"]
        grp = layout["group"]
        flat = (b - a) < _FLAT
        s = np.where(flat, 0.0, w / np.where(flat, 1.0, b - a))
        sl = ~flat
        ev_x += [a[sl], b[sl], 0.5 * (a + b)[flat]]
        ev_ds += [s[sl], -s[sl], np.zeros(int(flat.sum()))]
        ev_j += [np.zeros(int(sl.sum())), np.zeros(int(sl.sum())), w[flat]]
        ev_grp += [grp[sl], grp[sl], grp[flat]]
    unc = np.flatnonzero(layout["uncovered"] > 0)
    ev_x.append(np.full(unc.size, _LN_FLOOR))
    ev_ds.append(np.zeros(unc.size))
    ev_j.append(layout["uncovered"][unc])
    ev_grp.append(unc)
    x, ds, jump, grp = (np.concatenate(a) for a in (ev_x, ev_ds, ev_j, ev_grp))
    # one float sort key per event: bin index + position of ln k mapped into
    # [0, 1); events closer than ~1e-10 in ln k may swap, which moves the
    # cumulative distribution by less than that (clipped increments below)
    x_lo, x_hi = float(x.min()), float(x.max())
    frac = (x - x_lo) * ((1.0 - 1e-6) / max(x_hi - x_lo, 1e-300))
    order = np.argsort(grp + frac)
    x, ds, jump, grp = x[order], ds[order], jump[order], grp[order]
    counts = np.bincount(grp, minlength=n_b)
    starts_g = np.concatenate([[0], np.cumsum(counts)[:-1]])
    last_g = starts_g + counts - 1
    starts = starts_g[grp]
    is_first = np.arange(x.size) == starts
    # slope of the cumulative distribution (per unit ln k) after each event
    slope = np.maximum(_segmented_cumsum(ds, starts_g, grp), 0.0)
    slope_prev = np.where(is_first, 0.0, np.roll(slope, 1))
    x_prev = np.where(is_first, x, np.roll(x, 1))
    inc = slope_prev * np.maximum(x - x_prev, 0.0) + jump
    cdf = _segmented_cumsum(inc, starts_g, grp)
    total = cdf[last_g]
    cdf = cdf / total[grp]
    slope_prev = slope_prev / total[grp]
    key = 2.0 * grp + cdf
    target = 2.0 * np.arange(n_b)[:, None] + g[None, :]
    idx = np.searchsorted(key, target.ravel(), side="left").reshape(n_b, g.size)
    idx = np.clip(idx, starts_g[:, None], last_g[:, None])
    cdf_prev = np.where(is_first[idx], 0.0, cdf[np.maximum(idx - 1, 0)])
    sp = slope_prev[idx]
    with np.errstate(divide="ignore", invalid="ignore"):
        xq = x_prev[idx] + (g[None, :] - cdf_prev) / sp
    xq = np.where((sp > 0) & (xq <= x[idx]), np.maximum(xq, x_prev[idx]), x[idx])
    k = np.exp(xq)
    k[xq <= _LN_FLOOR + 1e-6] = 0.0
    return k


def sorted_k_distribution(wavenumber_m, cross_section_m2, wavelength_edges_m, g_points):
    """k-distribution of a tabulated cross-section in wavelength bins (compute layer).

    The cross-section is interpolated linearly in ln sigma between the
    table's points (zeros count as 1e-60 m2) and sorted, exactly, into its
    cumulative distribution over wavenumber in each bin (Lacis & Oinas 1991,
    JGR 96, 9027; see the module docstring); the parts of a bin outside the
    table have zero cross-section.

    Parameters
    ----------
    wavenumber_m : numpy.ndarray, shape (n,)
        Strictly increasing wavenumbers [m-1], n >= 2.
    cross_section_m2 : numpy.ndarray, shape (..., n)
        Cross-sections >= 0 [m2]; leading axes (e.g. temperatures) are
        handled one by one.
    wavelength_edges_m : numpy.ndarray, shape (n_bins + 1,)
        Strictly increasing wavelength bin edges [m].
    g_points : numpy.ndarray, shape (n_g,)
        Cumulative probabilities in (0, 1), e.g. Gauss-Legendre points.

    Returns
    -------
    numpy.ndarray, shape (..., n_bins, n_g)
        k(g) [m2], ascending along the last axis.
    """
    nu = np.asarray(wavenumber_m, dtype=np.float64)
    sig = np.asarray(cross_section_m2, dtype=np.float64)
    edges = np.asarray(wavelength_edges_m, dtype=np.float64)
    lay = _layout(nu, 1.0 / edges[::-1])
    lead = sig.shape[:-1]
    ln_s = np.log(np.maximum(sig, np.exp(_LN_FLOOR))).reshape(-1, nu.size)
    out = np.stack([_quantiles_on_layout(row, lay, g_points)[::-1] for row in ln_s])
    return out.reshape(lead + (edges.size - 1, np.size(g_points)))


# --------------------------------------------------------------------------
# opacity source
# --------------------------------------------------------------------------

class _DefaultSource:
    """snrkit's own opacity: attributes of the opacity module, then of continuum."""

    def __getattr__(self, name):
        from . import continuum, opacity
        for mod in (opacity, continuum):
            if hasattr(mod, name):
                return getattr(mod, name)
        raise AttributeError(name)


class _SpeciesTable:
    """One species' table on the union grid of its temperature blocks."""

    def __init__(self, species, blocks, label):
        self.species = species
        self.label = label
        temps = [b[0] for b in blocks]
        self.temperatures = None if temps[0] is None else np.array(temps, dtype=np.float64)
        lo = max(b[1][0] for b in blocks)
        hi = min(b[1][-1] for b in blocks)
        if not hi > lo:
            raise InputError(f"{label}: spectral range", "temperature blocks that do not overlap",
                             "blocks covering a common spectral range")
        grid = np.unique(np.concatenate([[lo, hi]] + [b[1][(b[1] > lo) & (b[1] < hi)]
                                                       for b in blocks]))
        self.nu = grid
        self.ln_sigma = np.stack([
            np.interp(grid, b[1], np.log(np.maximum(b[2], np.exp(_LN_FLOOR)))) for b in blocks])
        self.wavelength_range_m = (1.0 / hi, 1.0 / lo)
        self._layouts = {}
        self._k = {}

    def layout(self, edges_key, edges):
        lay = self._layouts.get(edges_key)
        if lay is None:
            if len(self._layouts) > 16:
                self._layouts.clear()
            lay = self._layouts[edges_key] = _layout(self.nu, 1.0 / edges[::-1])
        return lay

    def ln_sigma_at(self, t):
        if self.temperatures is None or self.temperatures.size == 1:
            return self.ln_sigma[0]
        inv = 1.0 / self.temperatures
        j = int(np.clip(np.searchsorted(self.temperatures, t, side="right") - 1, 0,
                        self.temperatures.size - 2))
        f = (1.0 / t - inv[j]) / (inv[j + 1] - inv[j])
        f = min(max(f, 0.0), 1.0)
        return self.ln_sigma[j] * (1.0 - f) + self.ln_sigma[j + 1] * f

    def k_at(self, t, edges_key, edges, g):
        key = (edges_key, g.tobytes(), t)
        k = self._k.get(key)
        if k is None:
            if len(self._k) >= _CACHE_SIZE:
                self._k.clear()
            lay = self.layout(edges_key, edges)
            k = _quantiles_on_layout(self.ln_sigma_at(t), lay, g)[::-1]   # wavelength order
            k.setflags(write=False)
            self._k[key] = k
        return k


class UserOpacitySource:
    """An opacity source in which user cross-section tables replace line opacity.

    It behaves like snrkit's own opacity (the functions of
    :mod:`snrkit.atmosphere.opacity` and :mod:`snrkit.atmosphere.continuum`,
    or those of ``base``), except that :meth:`species_k_coefficients` of the
    species given in ``tables`` is built from the user's tables (see the
    module docstring).  Pass it as ``opacity_source`` to
    :func:`snrkit.atmosphere.spectrum.transmission_spectrum`.

    Parameters
    ----------
    tables : dict of str to (path or astropy.table.Table)
        Species -> cross-section file (read with :func:`read_cross_sections`,
        units from the file) or a table (for example the result of
        :func:`read_cross_sections`, or any table in the documented layout
        with units on its columns).  Species may be any of
        :data:`snrkit.atmosphere.composition.SPECIES`; a species with its own
        snrkit tables is replaced.
    base : object, optional
        The opacity source for everything else (default: snrkit's tables).
    outside : {"error", "zero"}
        Requested bins reaching outside a table's spectral range: raise
        :class:`~snrkit.errors.InputError` naming the range not covered
        (default), or give those parts of the bins zero cross-section.

    Attributes
    ----------
    OPACITY_SPECIES : tuple of str
        The base source's species followed by the new user species.
    tables : dict of str to astropy.table.Table
        The validated tables (layout of :func:`read_cross_sections`).
    """

    def __init__(self, tables, base=None, *, outside="error"):
        if outside not in OUTSIDE_POLICIES:
            raise InputError("outside", outside, " or ".join(repr(p) for p in OUTSIDE_POLICIES))
        if not isinstance(tables, dict) or not tables:
            raise InputError("tables", type(tables).__name__,
                             "a dict of species -> cross-section file or table")
        self._base = _DefaultSource() if base is None else base
        self.outside = outside
        self._user = {}
        self.tables = {}
        for species, spec in tables.items():
            _check_species(species)
            if isinstance(spec, (str, Path)):
                table = read_cross_sections(spec, species)
                label = str(spec)
            else:
                from astropy.table import Table
                if not isinstance(spec, Table):
                    raise InputError(f"tables[{species!r}]", type(spec).__name__,
                                     "a file path or an astropy Table")
                meta_sp = spec.meta.get("species")
                if meta_sp is not None and meta_sp != species:
                    raise InputError(f"tables[{species!r}]", f"a table of {meta_sp}",
                                     f"a cross-section table of {species}")
                label = str(spec.meta.get("source", f"{species} table"))
                table = spec
            blocks = _blocks_from_table(table, species, Path(label).name)
            self._user[species] = _SpeciesTable(species, blocks, label)
            self.tables[species] = (table if "wavenumber" in table.colnames
                                    and table.meta.get("species") == species
                                    else _blocks_to_table(blocks, species, label, {}))
        base_species = tuple(self._base.OPACITY_SPECIES)
        self.OPACITY_SPECIES = base_species + tuple(s for s in self._user if s not in base_species)

    def __getattr__(self, name):
        if name.startswith("__") or name in ("_base", "_user"):
            raise AttributeError(name)
        return getattr(self._base, name)

    def __repr__(self):
        parts = ", ".join(f"{s}: {t.label}" for s, t in self._user.items())
        return f"UserOpacitySource({{{parts}}}, outside={self.outside!r})"

    def wavelength_range_um(self, species):
        """(shortest, longest) wavelength [um] covered by a user table."""
        if species not in self._user:
            raise InputError("species", species, "one of the user tables: " + ", ".join(self._user))
        lo, hi = self._user[species].wavelength_range_m
        return lo * 1e6, hi * 1e6

    def _check_edges(self, tab, wavelength_edges_m):
        e = np.asarray(wavelength_edges_m, dtype=np.float64)
        if e.ndim != 1 or e.size < 2:
            raise InputError("wavelength_edges_m", f"array of shape {e.shape}",
                             "a 1-D array of at least 2 bin edges [m]")
        if not np.all(np.isfinite(e)) or np.any(np.diff(e) <= 0) or e[0] <= 0:
            raise InputError("wavelength_edges_m", "unsorted, repeated, non-positive or "
                             "non-finite edges", "strictly increasing positive edges [m]")
        lo, hi = tab.wavelength_range_m
        # edges within 1e-9 (relative) of the table's ends count as inside
        e = np.where(np.abs(e / lo - 1.0) < 1e-9, lo, e)
        e = np.where(np.abs(e / hi - 1.0) < 1e-9, hi, e)
        if self.outside == "error" and (e[0] < lo or e[-1] > hi):
            gaps = []
            if e[0] < lo:
                gaps.append(f"{e[0] * 1e6:.6g}-{min(lo, e[-1]) * 1e6:.6g} um")
            if e[-1] > hi:
                gaps.append(f"{max(hi, e[0]) * 1e6:.6g}-{e[-1] * 1e6:.6g} um")
            raise InputError(f"{tab.species} cross-sections ({Path(tab.label).name})",
                             "wavelengths " + " and ".join(gaps) + " not covered",
                             f"bins inside the table's range {lo * 1e6:.6g}-{hi * 1e6:.6g} um",
                             detail="nothing is extrapolated; trim the wavelength grid or use "
                                    "outside='zero'")
        return e

    def _temperatures(self, tab, temperature_K):
        from .opacity import OpacityRangeWarning
        t = np.asarray(temperature_K, dtype=np.float64)
        if not np.all(np.isfinite(t)) or np.any(t <= 0):
            raise InputError("temperature_K", "non-finite or non-positive value",
                             "finite temperatures > 0 K")
        temps = tab.temperatures
        if temps is None:
            return t
        lo, hi = float(temps[0]), float(temps[-1])
        if np.any(t < lo) or np.any(t > hi):
            warnings.warn(OpacityRangeWarning(
                f"temperature_K: values outside the {tab.species} cross-section table's range "
                f"{lo:g}-{hi:g} K (got {t.min():g}-{t.max():g}); clamped to the range"),
                stacklevel=3)
            t = np.clip(t, lo, hi)
        return t

    def species_k_coefficients(self, species, wavelength_edges_m, temperature_K, n_g=8, *,
                               pressure_Pa=None):
        """k-distribution of one species' cross-section on spectral bins.

        For a species with a user table: the sorted table cross-section in
        each bin at the Gauss-Legendre points of ``g_quadrature(n_g)`` (module
        docstring).  Other species: the base source's function.

        Parameters
        ----------
        species : str
        wavelength_edges_m : array_like
            Strictly increasing bin edges [m], inside the table's range unless
            the source was made with ``outside="zero"``.
        temperature_K : array_like
            Temperatures [K], any shape; clamped to the table's temperatures
            with an :class:`~snrkit.atmosphere.opacity.OpacityRangeWarning`.
        n_g : int
            Number of g points.
        pressure_Pa : array_like, optional
            Broadcast against ``temperature_K`` for the output shape; a user
            table has no pressure dependence.

        Returns
        -------
        numpy.ndarray
            Cross-section per molecule [m2], shape
            ``broadcast(temperature_K, pressure_Pa).shape + (n_bins, n_g)``,
            ascending along the last axis.
        """
        if species not in self._user:
            kw = {} if pressure_Pa is None else {"pressure_Pa": pressure_Pa}
            return self._base.species_k_coefficients(species, wavelength_edges_m,
                                                     temperature_K, n_g=n_g, **kw)
        tab = self._user[species]
        g, _ = self._base.g_quadrature(n_g)
        g = np.ascontiguousarray(g, dtype=np.float64)
        edges = self._check_edges(tab, wavelength_edges_m)
        t = self._temperatures(tab, temperature_K)
        if pressure_Pa is not None:
            p = np.asarray(pressure_Pa, dtype=np.float64)
            if np.any(~(p > 0)):
                raise InputError("pressure_Pa", "a value <= 0 or NaN", "pressures > 0 Pa")
            t = np.broadcast_to(t, np.broadcast_shapes(t.shape, p.shape))
        if tab.temperatures is None or tab.temperatures.size == 1:
            t_eval = np.zeros(t.shape)           # one distribution for every temperature
        else:
            t_eval = t
        key = np.ascontiguousarray(edges).tobytes()
        uniq, inv = np.unique(t_eval.ravel(), return_inverse=True)
        ks = np.stack([tab.k_at(float(tt), key, edges, g) for tt in uniq])
        return ks[inv.ravel()].reshape(t.shape + (edges.size - 1, g.size))
