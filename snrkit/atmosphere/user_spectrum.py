"""Bring your own spectrum: read a user's transmission spectrum and rebin it.

:func:`read_user_spectrum` reads CSV, ECSV, FITS tables or whitespace
separated plain text with a wavelength column (any spectral unit: length,
frequency, wavenumber, energy; from the file or given by the user) and a
depth column whose meaning the user states (``depth_kind``): ``"ppm"``,
``"percent"``, ``"fraction"`` (``(Rp/Rs)**2``) or ``"radius-ratio"``
(``Rp/Rs``).

:func:`resample_spectrum` rebins conservatively: each sample stands for
the interval between the midpoints to its neighbours (the first and last
extend half a spacing outwards), the spectrum is the piecewise-constant
function on those intervals, and each target bin receives its average over
wavelength (the same scheme as Carnall 2017, arXiv:1705.05165).  The
integral over any range covered by whole target bins is conserved exactly,
and a constant stays constant.  Target bins reaching outside the data are
an error (nothing is extrapolated) unless ``outside="nan"``.
"""

import difflib
from pathlib import Path

import numpy as np
import astropy.units as u

from ..errors import InputError, UnitMismatchError

__all__ = ["DEPTH_KINDS", "read_user_spectrum", "bin_average", "sample_edges",
           "resample_spectrum"]

#: depth_kind -> description
DEPTH_KINDS = {
    "ppm": "transit depth in parts per million",
    "percent": "transit depth in per cent",
    "fraction": "transit depth as a fraction, (Rp/Rs)^2",
    "radius-ratio": "apparent radius ratio Rp/Rs",
}

_WAVE_NAMES = ("wavelength", "wavelength_um", "wave", "lambda", "wl", "wavenumber", "frequency")
_DEPTH_NAMES = ("transit_depth_ppm", "transit_depth", "depth", "depth_ppm", "rp_rs", "rprs",
                "radius_ratio", "ratio")


def _format_for(path, fmt):
    if fmt is not None:
        allowed = ("csv", "ecsv", "fits", "text")
        if fmt not in allowed:
            raise InputError("format", fmt, ", ".join(allowed))
        return fmt
    name = path.name.lower()
    if name.endswith(".csv"):
        return "csv"
    if name.endswith(".ecsv"):
        return "ecsv"
    if name.endswith((".fits", ".fit", ".fits.gz", ".fts")):
        return "fits"
    return "text"


def _read_table(path, fmt):
    from astropy.table import Table
    try:
        if fmt == "csv":
            return Table.read(str(path), format="ascii.csv")
        if fmt == "ecsv":
            return Table.read(str(path), format="ascii.ecsv")
        if fmt == "fits":
            return Table.read(str(path), format="fits")
        lines = [ln for ln in path.read_text().splitlines()
                 if ln.strip() and not ln.lstrip().startswith("#")]
        if not lines:
            raise InputError("spectrum file", str(path), "a file with data rows")
        first = lines[0].replace(",", " ").split()
        try:
            [float(x) for x in first]
            header = False
        except ValueError:
            header = True
        return Table.read(str(path), format="ascii.basic" if header else "ascii.no_header",
                          comment="#")
    except InputError:
        raise
    except FileNotFoundError:
        raise InputError("spectrum file", str(path), "an existing file") from None
    except Exception as exc:  # astropy raises many types for malformed files
        raise InputError("spectrum file", str(path), f"a readable {fmt} table",
                         detail=f"{type(exc).__name__}: {exc}") from None


def _pick(table, name, defaults, field, position):
    cols = list(table.colnames)
    if name is not None:
        if name in cols:
            return name
        close = difflib.get_close_matches(str(name), cols, n=1, cutoff=0.5)
        raise InputError(field, name, "a column of the file: " + ", ".join(cols),
                         detail=f"did you mean {close[0]!r}?" if close else "")
    lower = {c.lower(): c for c in cols}
    for d in defaults:
        if d in lower:
            return lower[d]
    if len(cols) == 2:
        return cols[position]
    raise InputError(field, None, "the name of one of the columns: " + ", ".join(cols),
                     detail="the file has more than two columns; name the one to use")


def _as_float(col, field):
    try:
        a = np.ma.filled(np.ma.asarray(col, dtype=np.float64), np.nan)
    except (TypeError, ValueError):
        raise InputError(field, str(col.dtype), "a numeric column") from None
    return np.asarray(a, dtype=np.float64).ravel()


def read_user_spectrum(path, depth_kind, *, wavelength_column=None, depth_column=None,
                       wavelength_unit=None, format=None):
    """Read a user's transmission spectrum.

    Parameters
    ----------
    path : str or pathlib.Path
        CSV (``.csv``), ECSV (``.ecsv``), FITS table (``.fits``) or plain text
        (anything else; whitespace separated, ``#`` comments, optional
        header line).
    depth_kind : {"ppm", "percent", "fraction", "radius-ratio"}
        What the depth column holds (:data:`DEPTH_KINDS`).
    wavelength_column, depth_column : str, optional
        Column names.  Default: a column with a usual name (``wavelength``,
        ``depth``...), or the first and second columns of a two-column file.
    wavelength_unit : str or astropy.units.Unit, optional
        Unit of the wavelength column when the file does not carry one
        (length, frequency, wavenumber or energy).
    format : {"csv", "ecsv", "fits", "text"}, optional
        Override the format guessed from the file name.

    Returns
    -------
    xarray.Dataset
        ``transit_depth_ppm`` on coordinate ``wavelength`` (um, increasing),
        with the file name, columns and depth kind in ``attrs``.

    Raises
    ------
    InputError
        Unknown depth kind or column, missing or wrong unit, NaN values,
        negative or impossible depths, unsorted or duplicate wavelengths.
    """
    import xarray as xr
    if depth_kind not in DEPTH_KINDS:
        close = difflib.get_close_matches(str(depth_kind), list(DEPTH_KINDS), n=1, cutoff=0.4)
        raise InputError("depth_kind", depth_kind, ", ".join(DEPTH_KINDS),
                         detail=f"did you mean {close[0]!r}?" if close else "")
    path = Path(path)
    if path.is_dir():
        raise InputError("spectrum file", str(path), "a file, not a folder")
    fmt = _format_for(path, format)
    table = _read_table(path, fmt)
    if len(table) < 2:
        raise InputError("spectrum file", str(path), "at least two rows")
    wcol = _pick(table, wavelength_column, _WAVE_NAMES, "wavelength_column", 0)
    dcol = _pick(table, depth_column, _DEPTH_NAMES, "depth_column", 1)
    if wcol == dcol:
        raise InputError("depth_column", dcol, "a column other than the wavelength column")

    unit = _wavelength_unit(table[wcol].unit, wavelength_unit, wcol, path)
    raw_w = _as_float(table[wcol], f"column {wcol}")
    try:
        lam = (raw_w * unit).to_value(u.um, equivalencies=u.spectral())
    except u.UnitConversionError:
        raise UnitMismatchError("wavelength_unit", str(unit),
                                "a length, frequency, wavenumber or energy unit") from None
    d = _as_float(table[dcol], f"column {dcol}")
    lam, d = _checked_values(lam, d, raw_w, wcol, dcol, depth_kind, path)
    ppm = {"ppm": d, "percent": d * 1e4, "fraction": d * 1e6, "radius-ratio": d * d * 1e6}[depth_kind]
    return xr.Dataset(
        {"transit_depth_ppm": ("wavelength", ppm, {"units": "ppm"})},
        coords={"wavelength": ("wavelength", lam, {"units": "um"})},
        attrs={"source_file": str(path), "wavelength_column": wcol, "depth_column": dcol,
               "depth_kind": depth_kind, "wavelength_unit_in_file": str(unit)})


def _wavelength_unit(file_unit, wavelength_unit, wcol, path):
    """The unit of the spectral column: the one given, the file's, and they must agree."""
    if wavelength_unit is not None:
        try:
            unit = u.Unit(wavelength_unit)
        except (ValueError, TypeError):
            raise UnitMismatchError("wavelength_unit", str(wavelength_unit),
                                    "an astropy unit such as um, nm, Angstrom, cm-1") from None
        if file_unit is not None and u.Unit(file_unit) != unit:
            raise UnitMismatchError("wavelength_unit", str(unit),
                                    f"the unit stored in the file ({file_unit}) or nothing")
    elif file_unit is not None:
        unit = u.Unit(file_unit)
    else:
        raise UnitMismatchError("wavelength_unit", None, "a unit such as um, nm, Angstrom, cm-1",
                                detail=f"column {wcol!r} of {path.name} carries no unit")
    return unit


def _checked_values(lam, d, raw_w, wcol, dcol, depth_kind, path):
    """Wavelengths [um] and depths, finite, in range and in increasing wavelength order."""
    for name, arr in ((wcol, lam), (dcol, d)):
        bad = ~np.isfinite(arr)
        if bad.any():
            i = int(np.flatnonzero(bad)[0])
            raise InputError(f"{path.name}: column {name}, row {i + 1}", "NaN or missing",
                             "a finite number")
    if np.any(lam <= 0):
        i = int(np.flatnonzero(lam <= 0)[0])
        raise InputError(f"{path.name}: column {wcol}, row {i + 1}", float(raw_w[i]),
                         "a positive wavelength")
    if np.any(d < 0):
        i = int(np.flatnonzero(d < 0)[0])
        raise InputError(f"{path.name}: column {dcol}, row {i + 1}", float(d[i]),
                         "a depth >= 0")
    limit = {"ppm": 1e6, "percent": 100.0, "fraction": 1.0, "radius-ratio": 1.0}[depth_kind]
    if np.any(d > limit):
        i = int(np.flatnonzero(d > limit)[0])
        raise InputError(f"{path.name}: column {dcol}, row {i + 1}", float(d[i]),
                         f"at most {limit:g} for depth_kind {depth_kind!r}",
                         detail="is depth_kind right?")
    step = np.diff(lam)
    if np.all(step < 0):                 # e.g. a wavenumber or frequency column
        order = slice(None, None, -1)
    elif np.all(step > 0):
        order = slice(None)
    else:
        bad = np.flatnonzero(step == 0) if np.any(step == 0) else np.flatnonzero(
            np.sign(step) != np.sign(step[0]))
        i = int(bad[0]) + 1
        what = "duplicate" if step[i - 1] == 0 else "out of order"
        raise InputError(f"{path.name}: column {wcol}, row {i + 1}", float(raw_w[i]),
                         "strictly increasing (or strictly decreasing) wavelengths",
                         detail=f"{what} value")
    lam, d = lam[order], d[order]
    return lam, d


def sample_edges(x):
    """Interval edges of samples ``x``: midpoints, the ends extended half a spacing.

    Parameters
    ----------
    x : array_like, shape (n,)
        Strictly increasing sample positions (n >= 2).

    Returns
    -------
    numpy.ndarray, shape (n + 1,)
    """
    x = np.asarray(x, dtype=np.float64)
    mid = 0.5 * (x[1:] + x[:-1])
    return np.concatenate([[x[0] - (mid[0] - x[0])], mid, [x[-1] + (x[-1] - mid[-1])]])


def bin_average(edges_in, values, edges_out, outside="error"):
    """Average a piecewise-constant function over new bins (flux conserving).

    Parameters
    ----------
    edges_in : array_like, shape (n + 1,)
        Strictly increasing edges of the input intervals.
    values : array_like, shape (..., n)
        Value on each input interval (leading axes are carried along).
    edges_out : array_like, shape (m + 1,)
        Strictly increasing target edges.
    outside : {"error", "nan"}
        Target bins not wholly inside ``[edges_in[0], edges_in[-1]]``: raise
        :class:`InputError`, or return NaN for them.

    Returns
    -------
    numpy.ndarray, shape (..., m)
        ``(1 / dx_j) * integral over bin j``, exact for the piecewise-constant input.
    """
    ei = np.asarray(edges_in, dtype=np.float64)
    eo = np.asarray(edges_out, dtype=np.float64)
    v = np.asarray(values, dtype=np.float64)
    if ei.ndim != 1 or v.shape[-1] != ei.size - 1 or np.any(np.diff(ei) <= 0):
        raise InputError("edges_in", f"{ei.size} edges for {v.shape[-1]} values",
                         "strictly increasing edges, one more than the values")
    if eo.ndim != 1 or eo.size < 2 or np.any(np.diff(eo) <= 0):
        raise InputError("wavelength_edges", f"{eo.size} values",
                         "at least 2 strictly increasing edges")
    inside = (eo[:-1] >= ei[0] * (1 - 1e-12)) & (eo[1:] <= ei[-1] * (1 + 1e-12))
    if not inside.all() and outside == "error":
        raise InputError("wavelength_edges", f"{eo[0]:.6g}-{eo[-1]:.6g}",
                         f"bins inside the data's range {ei[0]:.6g}-{ei[-1]:.6g}",
                         detail="nothing is extrapolated; trim the grid or use outside='nan'")
    if outside not in ("error", "nan"):
        raise InputError("outside", outside, "'error' or 'nan'")
    cum = np.concatenate([np.zeros(v.shape[:-1] + (1,)), np.cumsum(v * np.diff(ei), axis=-1)],
                         axis=-1)
    x = np.clip(eo, ei[0], ei[-1])
    # cumulative integral at x: piecewise linear between input edges (exact)
    idx = np.clip(np.searchsorted(ei, x, side="right") - 1, 0, ei.size - 2)
    frac = (x - ei[idx]) / (ei[idx + 1] - ei[idx])
    c = cum[..., idx] + frac * (cum[..., idx + 1] - cum[..., idx])
    out = np.diff(c, axis=-1) / np.diff(eo)
    return np.where(inside, out, np.nan)


def resample_spectrum(spectrum, wavelength_edges, outside="error"):
    """Rebin a spectrum Dataset onto new wavelength bins, conserving the integral.

    Parameters
    ----------
    spectrum : xarray.Dataset
        With ``transit_depth_ppm`` along a ``wavelength`` coordinate in um
        (e.g. from :func:`read_user_spectrum`).  If it has
        ``wavelength_lower``/``wavelength_upper`` those are the input bins,
        otherwise :func:`sample_edges` of the wavelengths.
    wavelength_edges : Quantity or array_like
        Target edges (bare numbers: um).
    outside : {"error", "nan"}
        See :func:`bin_average`.

    Returns
    -------
    xarray.Dataset
        ``transit_depth_ppm`` on the new bins with ``wavelength`` (bin centre,
        geometric mean), ``wavelength_lower`` and ``wavelength_upper`` (um).
    """
    import xarray as xr
    from ..units import to_si
    eo = to_si(wavelength_edges, "wavelength_edges", u.um, 0.0, None, low_inclusive=False) * 1e6
    da = spectrum["transit_depth_ppm"]
    lam = spectrum["wavelength"].values
    if "wavelength_lower" in spectrum.coords and "wavelength_upper" in spectrum.coords:
        lo, hi = spectrum["wavelength_lower"].values, spectrum["wavelength_upper"].values
        if not np.allclose(lo[1:], hi[:-1], rtol=1e-9):
            raise InputError("spectrum bins", "gaps or overlaps", "contiguous input bins")
        ei = np.concatenate([lo, hi[-1:]])
    else:
        ei = sample_edges(lam)
    dims = [d for d in da.dims if d != "wavelength"] + ["wavelength"]
    vals = da.transpose(*dims).values
    out = bin_average(ei, vals, eo, outside=outside)
    centres = np.sqrt(eo[1:] * eo[:-1])
    coords = {d: da[d].values for d in dims[:-1] if d in da.coords}
    coords.update({"wavelength": ("wavelength", centres, {"units": "um"}),
                   "wavelength_lower": ("wavelength", eo[:-1], {"units": "um"}),
                   "wavelength_upper": ("wavelength", eo[1:], {"units": "um"})})
    return xr.Dataset({"transit_depth_ppm": (tuple(dims), out, {"units": "ppm"})},
                      coords=coords, attrs=dict(spectrum.attrs, resampling=(
                          "flux-conserving bin average over wavelength")))
