"""SI conversion of user values: the fast SI factor equals astropy's ``Quantity.si``.

Reference: astropy.units (``UnitBase.si``, the composition into the SI system) is the
standard the shortcut is compared with, bit for bit, over astropy's named units
(SI, astrophysical and cgs modules) and the composite units snrkit's public functions
and shipped tables use.
"""

import numpy as np
import pytest
import astropy.units as u
from astropy.units import astrophys, cgs, si

from snrkit.units import si_scale, to_si


def _named(module):
    out = []
    for name in dir(module):
        obj = getattr(module, name)
        if isinstance(obj, u.UnitBase) and not isinstance(obj, u.PrefixUnit):
            out.append(obj)
    return out


_COMPOSITE = ["m2 / kg", "m / s2", "W / (m2 um)", "W / (um m2)", "erg / (s cm2 Angstrom)",
              "g / mol", "1 / cm", "cm5", "Jy", "solRad", "earthRad", "jupiterRad", "jupiterMass",
              "solMass", "earthMass", "AU", "pc", "d", "h", "deg", "bar", "Pa", "um", "nm",
              "cm / molecule", "km / s", "mas / yr"]


def _units():
    seen = {}
    for unit in _named(si) + _named(astrophys) + _named(cgs) + [
            u.Unit(s, parse_strict="silent") for s in _COMPOSITE]:
        seen.setdefault(unit.to_string(), unit)
    return list(seen.values())


@pytest.mark.parametrize("unit", _units(), ids=str)
def test_si_scale_is_astropys_si_factor(unit):
    try:
        want = unit.si.scale
    except (u.UnitsError, ValueError, TypeError):
        with pytest.raises((u.UnitsError, ValueError, TypeError)):
            si_scale(unit)
        return
    assert si_scale(unit) == want


def test_to_si_equals_quantity_si_bit_for_bit():
    x = np.array([0.3, 1.0, 7.123456789, 1e-5])
    for text in ("jupiterRad", "solRad", "earthMass", "d", "deg", "bar", "um", "AU"):
        q = x * u.Unit(text)
        got = to_si(q, "x", text)
        assert got.tobytes() == np.asarray(q.si.value, dtype=np.float64).tobytes(), text
    assert to_si("1.25 jupiterRad", "r", "earthRad") == pytest.approx(1.25 * 71492000.0,
                                                                      rel=1e-15)
