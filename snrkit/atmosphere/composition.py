"""Atmospheric composition: volume mixing ratios to mean molecular weight.

The mean molecular weight is mu = sum_i x_i M_i, with the
mixing ratios x_i summing to one (a named fill gas may take the remainder).
Molar masses come from ``data_tables/species.ecsv`` (IUPAC 2021 standard
atomic weights).
"""

from __future__ import annotations

import difflib
from typing import TYPE_CHECKING

import numpy as np

from ..errors import InputError
from ..units import as_float_array
from ..io.tables import read_columns

__all__ = ["species_molar_masses", "SPECIES", "normalise_mixing_ratios",
           "mean_molecular_weight", "MU_H2_HE_DEFAULT", "SUM_TOLERANCE"]

if TYPE_CHECKING:   # annotations only: not imported at run time
    from collections.abc import Mapping
    import numpy.typing as npt


#: Default mean molecular weight [g/mol] for a hydrogen-helium envelope
#: (solar H2/He, common practice, no source beyond e.g. Kempton et al. 2018).
MU_H2_HE_DEFAULT = 2.3

#: Mixing ratios may sum above one by this much (rounding in user files).
SUM_TOLERANCE = 1e-6


def species_molar_masses():
    """Return ``{species: molar mass [g/mol]}`` for every supported species."""
    t = read_columns("species.ecsv")
    return {str(s): float(m) for s, m in zip(t["species"], t["molar_mass"])}


SPECIES = tuple(species_molar_masses())


def _check_species(name, field):
    if name not in SPECIES:
        same = [sp for sp in SPECIES if sp.lower() == name.lower()]  # "h2o" -> "H2O"
        close = same or difflib.get_close_matches(name, SPECIES, n=1)
        hint = f"did you mean {close[0]!r}?" if close else ""
        raise InputError(field, name, "one of " + ", ".join(SPECIES), detail=hint)


def normalise_mixing_ratios(mixing_ratios, fill_gas=None, field="mixing_ratios"):
    """Validate volume mixing ratios and complete them with a fill gas.

    Parameters
    ----------
    mixing_ratios : dict of str to float or array_like
        Volume mixing ratios (mole fractions, 0..1) by species name; arrays
        broadcast over a leading planet axis.
    fill_gas : str, optional
        Species that takes the remainder ``1 - sum(x)``.  Without it the
        ratios must sum to between 1 - 1e-3 and 1 + :data:`SUM_TOLERANCE`
        (rounded file values) and are renormalised to sum exactly to one.
        A sum above 1 + :data:`SUM_TOLERANCE` is always an error.
    field : str
        Name used in error messages.

    Returns
    -------
    dict of str to numpy.ndarray
        Mixing ratios summing to one.

    Raises
    ------
    InputError
        Unknown species, a negative ratio, a sum above one, or (without a
        fill gas) a sum that differs from one.
    """
    if not isinstance(mixing_ratios, dict) or (not mixing_ratios and fill_gas is None):
        raise InputError(field, mixing_ratios, "a non-empty table of species = fraction")
    out = {}
    for name, value in mixing_ratios.items():
        _check_species(str(name), f"{field}.{name}")
        if isinstance(value, (bool, np.bool_)):
            raise InputError(f"{field}.{name}", value, "a number in [0, 1]")
        arr = as_float_array(value, f"{field}.{name}")
        if not np.all(np.isfinite(arr)) or np.any(arr < 0) or np.any(arr > 1):
            raise InputError(f"{field}.{name}", value, "a number in [0, 1]")
        out[str(name)] = arr
    total = sum(out.values()) if out else np.float64(0.0)
    if np.any(total > 1.0 + SUM_TOLERANCE):
        raise InputError(field, f"sum {float(np.max(total)):.6g}", "mixing ratios summing to at most 1")
    if fill_gas is not None:
        _check_species(str(fill_gas), f"{field}.fill_gas")
        rest = np.clip(1.0 - total, 0.0, None)
        out[str(fill_gas)] = out.get(str(fill_gas), 0.0) + rest
        return out
    if np.any(np.abs(total - 1.0) > 1e-3):
        raise InputError(field, f"sum {float(np.min(total)):.6g}",
                         "mixing ratios summing to 1 (within 1e-3), or name a fill gas")
    return {k: v / total for k, v in out.items()}


def mean_molecular_weight(mixing_ratios: Mapping[str, npt.ArrayLike], fill_gas: str | None = None,
                          field: str = "mixing_ratios") -> float | np.ndarray:
    """Mean molecular weight of a gas mixture.

    Parameters
    ----------
    mixing_ratios : dict of str to float or array_like
        Volume mixing ratios by species (see :func:`normalise_mixing_ratios`).
    fill_gas : str, optional
        Species taking the remainder.
    field : str
        Name used in error messages.

    Returns
    -------
    numpy.ndarray or float
        mu in g/mol (numerically equal to the mean molecular mass in atomic
        mass units), ``sum_i x_i M_i``.

    Examples
    --------
    Dry air of the U.S. Standard Atmosphere 1976 (NOAA/NASA/USAF 1976,
    Table 3) has M = 28.9644 g/mol:

    >>> round(float(mean_molecular_weight({"N2": 0.78084, "O2": 0.209476,
    ...     "Ar": 0.00934, "CO2": 0.000314}, fill_gas="N2")), 2)
    28.96
    """
    x = normalise_mixing_ratios(mixing_ratios, fill_gas, field=field)
    masses = species_molar_masses()
    mu = sum(x[k] * masses[k] for k in x)
    mu = np.asarray(mu, dtype=np.float64)
    return float(mu) if mu.ndim == 0 else mu
