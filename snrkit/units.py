"""Turning user values (Quantities, floats, unit strings) into SI arrays.

The public layer of snrkit accepts an :class:`astropy.units.Quantity`, a
plain number (read in the documented default unit of the field), an array
of either, or a string such as ``"1.2 earthRad"``.  :func:`to_si` converts any
of these to a float64 numpy array in SI and checks its range, raising
:class:`~snrkit.errors.InputError` subclasses that name the field.
"""

import math

import numpy as np
import astropy.units as u

from .errors import InputError, UnitMismatchError

__all__ = ["parse_quantity", "to_si", "check_range", "as_float_array"]


def parse_quantity(value, field, default_unit):
    """Return ``value`` as a Quantity in ``default_unit``.

    Parameters
    ----------
    value : float, array_like, str or astropy.units.Quantity
        A number (taken in ``default_unit``), a string ``"<number> <unit>"``
        parsed by astropy (a string holding only a number is taken in
        ``default_unit`` too), or a Quantity.
    field : str
        Name used in error messages.
    default_unit : astropy.units.UnitBase or str
        Unit assumed for bare numbers and required dimension for the others.

    Returns
    -------
    astropy.units.Quantity
        Float64 quantity in ``default_unit``.

    Raises
    ------
    UnitMismatchError
        Unknown unit, or a unit that cannot be converted to ``default_unit``.
    InputError
        A value that is not a number.
    """
    unit = u.Unit(default_unit)
    if isinstance(value, str):
        text = value.strip()
        try:
            # a bare number written as text ("1.2") is read in the default unit
            return u.Quantity(float(text), unit, dtype=np.float64)
        except ValueError:
            pass
        try:
            q = u.Quantity(text)
        except (TypeError, ValueError) as exc:
            raise UnitMismatchError(
                field, value, f"a number or '<number> <unit>' convertible to {unit}",
                detail=f"could not read it: {exc}") from None
        value = q
    if isinstance(value, u.Quantity):
        try:
            q = value.to(unit)
        except u.UnitConversionError:
            raise UnitMismatchError(
                field, str(value), f"a quantity convertible to {unit}",
                detail=f"unit {value.unit} has the wrong dimension") from None
        return q.astype(np.float64, copy=False)
    if isinstance(value, bool):
        raise InputError(field, value, f"a number in {unit}")
    try:
        arr = np.asarray(value, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError(field, value, f"a number in {unit}") from None
    return arr * unit


def as_float_array(value, field):
    """Return a float64 array from a number or array of dimensionless values."""
    if isinstance(value, u.Quantity):
        try:
            return np.asarray(value.to_value(u.dimensionless_unscaled), dtype=np.float64)
        except u.UnitConversionError:
            raise UnitMismatchError(field, str(value), "a dimensionless number") from None
    if isinstance(value, (bool, np.bool_)):
        raise InputError(field, value, "a number")
    try:
        return np.asarray(value, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError(field, value, "a number") from None


def check_range(arr, field, low=None, high=None, *, low_inclusive=True,
                high_inclusive=True, unit_label="", allow_nan=False):
    """Raise :class:`InputError` unless every element lies in the range.

    Parameters
    ----------
    arr : numpy.ndarray
        Values already in the unit that ``low``/``high`` are in.
    field : str
        Name used in the message.
    low, high : float, optional
        Bounds; ``None`` means unbounded.
    low_inclusive, high_inclusive : bool
        Whether the bounds themselves are allowed.
    unit_label : str
        Unit text for the message.
    allow_nan : bool
        Whether NaN (a missing value) passes.
    """
    a = np.asarray(arr, dtype=np.float64)
    bad = np.zeros(a.shape, dtype=bool)
    nan = np.isnan(a)
    if not allow_nan:
        bad |= nan
    finite = ~nan
    bad |= finite & ~np.isfinite(a)
    with np.errstate(invalid="ignore"):
        if low is not None:
            bad |= finite & ((a < low) if low_inclusive else (a <= low))
        if high is not None:
            bad |= finite & ((a > high) if high_inclusive else (a >= high))
    if bad.any():
        first = a[bad].flat[0] if a.ndim else float(a)
        lo = "-inf" if low is None else _fmt(low)
        hi = "inf" if high is None else _fmt(high)
        lb = "[" if low_inclusive and low is not None else "("
        hb = "]" if high_inclusive and high is not None else ")"
        label = f" {unit_label}" if unit_label else ""
        where = ""
        if a.ndim and a.size > 1:
            idx = int(np.flatnonzero(bad.ravel())[0])
            where = f" (entry {idx})"
        raise InputError(f"{field}{where}", _fmt(first) + label,
                         f"{lb}{lo}, {hi}{hb}{label}")
    return a


def _fmt(x):
    x = float(x)
    if math.isnan(x) or math.isinf(x):
        return str(x)
    return f"{x:.6g}"


def to_si(value, field, default_unit, low=None, high=None, *,
          low_inclusive=True, high_inclusive=True, allow_nan=False):
    """Convert a user value to a float64 SI array and check its range.

    Parameters
    ----------
    value : float, array_like, str or astropy.units.Quantity
        See :func:`parse_quantity`.
    field : str
        Name used in error messages.
    default_unit : astropy.units.UnitBase or str
        Unit of bare numbers; also the unit in which ``low``/``high`` are given.
    low, high : float, optional
        Allowed range in ``default_unit``.
    low_inclusive, high_inclusive, allow_nan : bool
        See :func:`check_range`.

    Returns
    -------
    numpy.ndarray
        Values in SI units.
    """
    q = parse_quantity(value, field, default_unit)
    check_range(q.value, field, low, high, low_inclusive=low_inclusive,
                high_inclusive=high_inclusive, unit_label=str(q.unit),
                allow_nan=allow_nan)
    return np.asarray(q.si.value, dtype=np.float64)
