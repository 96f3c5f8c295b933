"""Checks of a user's cross-section table: column roles, units, finite values, temperature blocks, spectral order."""

import difflib
import re

import numpy as np
import astropy.units as u

from ..errors import InputError, UnitMismatchError, UnknownKeyError

__all__ = ["MIN_POINTS"]

#: Fewest spectral points per temperature block.
MIN_POINTS = 2
_SPECTRAL_NAMES = ("wavenumber", "wavelength")
_SIGMA_NAMES = ("cross_section", "sigma")
_TEMP_NAMES = ("temperature", "t")
_KNOWN = _SPECTRAL_NAMES + _SIGMA_NAMES + _TEMP_NAMES
_PER_MOLECULE = re.compile(r"\s*(/\s*molec(ule)?s?|molec(ule)?s?\s*(\^|\*\*)?\s*-1)\s*$", re.I)


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


def _validate(names, units, cols, species, label, spectral_unit):
    """Validated blocks: list of (T or None, wavenumber [m-1] ascending, sigma [m2])."""
    roles = _assign_columns(names, label)
    js, jx = roles["spectral"], roles["sigma"]
    jt = roles.get("temperature")
    sname, xname = names[js], names[jx]
    n_rows = cols[0].size
    if n_rows < MIN_POINTS:
        raise InputError(f"{label}", f"{n_rows} row(s)", f"at least {MIN_POINTS} rows")

    nu, unit = _spectral_values(cols[js], units[js], sname, label, spectral_unit)

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

    temps, starts, tunit = _temperature_blocks(cols, units, names, jt, n_rows, label)
    blocks = _blocks(temps, starts, nu, sigma, cols[js], sname, label)
    blocks.sort(key=lambda blk: -1.0 if blk[0] is None else blk[0])
    info = {"spectral_column": sname, "spectral_unit_in_file": str(unit),
            "cross_section_column": xname, "cross_section_unit_in_file": str(xunit),
            "temperature_unit_in_file": None if tunit is None else str(tunit)}
    return blocks, info


def _spectral_values(col, file_unit_js, sname, label, spectral_unit):
    """Wavenumbers [m-1] of the spectral column, and the unit it was read in."""
    file_unit = file_unit_js
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
        nu = (col * unit).to_value(1 / u.m, equivalencies=u.spectral())
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
    return nu, unit


def _temperature_blocks(cols, units, names, jt, n_rows, label):
    """Temperatures [K] of the contiguous row blocks, their start rows, and the file's unit."""
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
    return temps, starts, tunit


def _blocks(temps, starts, nu, sigma, spectral_col, sname, label):
    """One (T, wavenumber ascending, sigma) block per temperature, its spectral points checked."""
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
                             float(spectral_col[a + i]),
                             "strictly increasing (or strictly decreasing) spectral points "
                             "within each temperature", detail=f"{what} value")
        order = slice(None) if step[0] > 0 else slice(None, None, -1)
        blocks.append((t, v[order].copy(), sigma[a:b][order].copy()))
    return blocks


def _parse_unit(text, field, kind):
    s = _PER_MOLECULE.sub("", str(text)) if kind == "area" else str(text)
    try:
        return u.Unit(s.strip())
    except (ValueError, TypeError):
        raise UnitMismatchError(field, str(text), {
            "spectral": "a spectral unit such as um, nm, Angstrom, cm-1, GHz",
            "area": "an area unit such as cm2, m2 (per molecule)",
            "temperature": "a temperature unit such as K"}[kind]) from None
