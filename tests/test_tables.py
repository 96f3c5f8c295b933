"""The fast reader of shipped tables gives what astropy.table gives.

Reference: astropy.table's ECSV reader (the format's reference implementation,
ECSV 1.0 specification, astropy APE 6); every shipped table the fast reader serves is
compared column by column: names, order, dtype, values and units, and the metadata.
"""

import numpy as np
import pytest
import astropy.units as u

from snrkit.errors import SnrkitError
from snrkit.io.tables import data_path, read_columns, read_table, _parse_simple_ecsv

_ROOT = data_path()
_ALL = sorted(p.relative_to(_ROOT).parts for p in _ROOT.rglob("*.ecsv"))
#: Shipped tables outside the simple subset (read with astropy.table only).
_NOT_SIMPLE = {("demo", "catalogue.ecsv")}
_SIMPLE = [p for p in _ALL if p not in _NOT_SIMPLE]


def test_the_simple_tables_include_every_one_the_start_up_path_reads():
    needed = {("species.ecsv",), ("mass_radius.ecsv",), ("habitable_zone.ecsv",),
              ("cia", "cia_bands.ecsv"), ("opacity", "bands.ecsv"),
              ("opacity", "alkali_lines.ecsv"), ("photometry", "zero_points.ecsv")}
    assert needed <= set(_SIMPLE) and len(_SIMPLE) >= 12


@pytest.mark.parametrize("parts", _SIMPLE, ids="/".join)
def test_fast_reader_matches_astropy(parts):
    fast = read_columns(*parts)
    ref = read_table(*parts)
    assert list(fast.colnames) == list(ref.colnames) and len(fast) == len(ref)
    for name in ref.colnames:
        want = np.asarray(ref[name])
        got = fast[name]
        assert got.dtype == want.dtype, name
        assert not got.flags.writeable
        if want.dtype.kind == "f":
            assert np.array_equal(got, want, equal_nan=True), name
        else:
            assert got.tolist() == want.tolist(), name
        if ref[name].unit is None:
            assert fast.units[name] is None, name
        else:
            assert u.Unit(fast.units[name], parse_strict="silent") == ref[name].unit, name
    assert fast.meta == dict(ref.meta)
    rows = list(fast.rows())
    assert len(rows) == len(ref) and all(
        rows[i][n] == ref[i][n] or (rows[i][n] != rows[i][n])
        for i in (0, len(ref) - 1) for n in ref.colnames)


def test_tables_outside_the_subset_are_refused():
    for parts in _NOT_SIMPLE:
        with pytest.raises(SnrkitError, match="not a simple table"):
            read_columns(*parts)


@pytest.mark.parametrize("text, why", [
    ("# %ECSV 1.0\n# ---\n# datatype:\n# - {name: a, datatype: int64}\na\n1\n", "datatype"),
    ("# %ECSV 1.0\n# ---\n# datatype:\n# - {name: a, datatype: float64}\na\n\"\"\n", "missing"),
    ("# %ECSV 1.0\n# ---\n# datatype:\n# - {name: a, datatype: string}\na\n\"\"\n", "missing"),
    ("# %ECSV 1.0\n# ---\n# datatype:\n# - {name: a, datatype: float64}\nb\n1\n", "names"),
    ("# %ECSV 1.0\n# ---\n# delimiter: ','\n# datatype:\n# - {name: a, datatype: float64}\na\n1\n",
     "delimiter"),
    ("# %ECSV 1.0\n# ---\n# datatype: [\na\n1\n", "header"),
    ("a\n1\n", "ECSV"),
])
def test_parser_refuses_what_it_does_not_handle(text, why):
    from snrkit.io.tables import _NotSimple
    with pytest.raises(_NotSimple, match=why):
        _parse_simple_ecsv(text)


def test_quoted_strings_and_units_are_read():
    text = ('# %ECSV 1.0\n# ---\n# datatype:\n# - {name: s, datatype: string}\n'
            '# - {name: x, unit: 1 / cm, datatype: float64}\n# meta: !!omap\n# - {k: [1.0, 2.0]}\n'
            '# schema: astropy-2.0\ns x\n"a b" 1.5\n"say ""hi""" -2e-3\n')
    cols, units, meta = _parse_simple_ecsv(text)
    assert cols["s"].tolist() == ["a b", 'say "hi"'] and cols["x"].tolist() == [1.5, -0.002]
    assert units == {"s": None, "x": "1 / cm"} and meta == {"k": [1.0, 2.0]}
