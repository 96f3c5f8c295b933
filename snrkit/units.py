"""Turning user values (Quantities, floats, unit strings) into SI arrays.

The public layer of snrkit accepts an :class:`astropy.units.Quantity`, a
plain number (read in the documented default unit of the field), an array
of either, or a string such as ``"1.2 earthRad"``.  :func:`to_si` converts any
of these to a float64 numpy array in SI and checks its range, raising
:class:`~snrkit.errors.InputError` subclasses that name the field.

:func:`parse_number` is the one parser of a single plain number (a value from
a TOML file or an option): it refuses text, booleans, lists, non-finite
values and integers too large for a float (``10**400``) with a range error,
never an ``OverflowError``.  :func:`parse_quantity` and
:func:`as_float_array` refuse overflowing integers the same way.
"""

import math
from functools import lru_cache

import os
from typing import Union

import numpy as np
import numpy.typing as npt
import astropy.units as u

from .errors import InputError, UnitMismatchError

__all__ = ["QuantityLike", "PathLike", "parse_quantity", "to_si", "check_range", "as_float_array", "parse_number",
           "scalar_si", "si_scale"]

#: What public functions accept for a physical value: an astropy Quantity, or a
#: number or array in the parameter's documented default unit (annotations only).
QuantityLike = Union[u.Quantity, float, npt.ArrayLike]
#: A file path as a string or an ``os.PathLike``.
PathLike = Union[str, os.PathLike[str]]


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
                detail=f"could not read it: {_first_sentence(exc)}") from None
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
    except OverflowError:
        raise InputError(field, value, f"a finite number in {unit}",
                         detail="too large for a 64-bit float") from None
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
    except OverflowError:
        raise InputError(field, value, "a finite number",
                         detail="too large for a 64-bit float") from None


def parse_number(value, field, low=None, high=None, *, low_inclusive=True,
                 high_inclusive=True, integer=False, unit_label=""):
    """Read one plain number (no unit) and check that it is finite and in range.

    Parameters
    ----------
    value : int or float
        The value as read (TOML, an option, a mapping).  Text, booleans,
        lists and tables are refused.
    field : str
        Name used in the message.
    low, high : float, optional
        Allowed range; ``None`` means unbounded.
    low_inclusive, high_inclusive : bool
        Whether the bounds themselves are allowed.
    integer : bool
        Require a whole number (returned as ``int``).
    unit_label : str
        Unit text for the message.

    Returns
    -------
    float or int

    Raises
    ------
    InputError
        Not a number, not finite, too large for a float, out of range, or
        (with ``integer``) not whole.

    Examples
    --------
    >>> parse_number(3, "planet.observation.transits", 1, integer=True)
    3
    """
    kind = "a whole number" if integer else "a number"
    allowed = kind + _range_words(low, high, low_inclusive, high_inclusive, unit_label)
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, float, np.integer,
                                                                     np.floating)):
        raise InputError(field, value, allowed)
    if integer and not isinstance(value, (int, np.integer)):
        if not (math.isfinite(value) and float(value).is_integer()):
            raise InputError(field, value, allowed)
    try:
        x = float(value)
    except OverflowError:
        raise InputError(field, value, allowed, detail="too large for a 64-bit float") from None
    if not math.isfinite(x):
        raise InputError(field, value, allowed)
    too_low = low is not None and (x < low if low_inclusive else x <= low)
    too_high = high is not None and (x > high if high_inclusive else x >= high)
    if too_low or too_high:
        raise InputError(field, value, allowed)
    return int(value) if integer else x


def _range_words(low, high, low_inclusive, high_inclusive, unit_label):
    if low is None and high is None:
        return ""
    lo = "-inf" if low is None else _fmt(low)
    hi = "inf" if high is None else _fmt(high)
    lb = "[" if low_inclusive and low is not None else "("
    hb = "]" if high_inclusive and high is not None else ")"
    label = f" {unit_label}" if unit_label else ""
    return f" in {lb}{lo}, {hi}{hb}{label}"


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
    return np.asarray(q.value * si_scale(q.unit), dtype=np.float64)


_SI_BASES = frozenset((u.m, u.kg, u.s, u.A, u.K, u.mol, u.cd, u.rad))


@lru_cache(maxsize=256)
def si_scale(unit):
    """Factor from ``unit`` to SI: the number ``Quantity.si`` multiplies by.

    Taken from the unit's decomposition into SI base units, which gives the
    same factor as astropy's ``unit.si`` (checked in ``tests/test_units.py``
    over astropy's named units) without its search for the simplest
    composition, which costs about 10 ms per unit the first time in a
    process.  Units that do not decompose into SI base units go through
    ``unit.si``.

    Parameters
    ----------
    unit : astropy.units.UnitBase

    Returns
    -------
    float
    """
    d = unit.decompose()
    if set(d.bases) <= _SI_BASES:
        return d.scale
    return unit.si.scale


def scalar_si(value, field, default_unit, low=None, high=None, *, low_inclusive=True,
              high_inclusive=True):
    """:func:`to_si` for a single value: a list or an array is refused.

    Returns
    -------
    float
        The value in SI units.
    """
    if isinstance(value, (list, tuple, dict, np.ndarray)) and np.ndim(value) != 0 \
            or isinstance(value, dict):
        raise InputError(field, value, f"one number in {u.Unit(default_unit)} "
                         "or a '<number> <unit>' text")
    arr = to_si(value, field, default_unit, low, high, low_inclusive=low_inclusive,
                high_inclusive=high_inclusive)
    if arr.ndim != 0:
        raise InputError(field, value, f"one number in {u.Unit(default_unit)}")
    return float(arr)


def _first_sentence(exc):
    """The first sentence of a library's message, without its advice and links."""
    text = " ".join(str(exc).split())
    cut = text.find(". ")
    return text if cut < 0 else text[:cut + 1]
