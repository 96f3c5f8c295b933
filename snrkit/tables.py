"""Finding and reading the data tables shipped with snrkit.

In a source checkout the tables live in the top-level ``data_tables/``
folder; in an installed wheel they are carried inside the package as
``snrkit/data_tables``.  :func:`data_path` returns whichever exists.
"""

from functools import lru_cache
from pathlib import Path

__all__ = ["data_path", "read_table"]

_HERE = Path(__file__).resolve().parent


@lru_cache(maxsize=1)
def _root():
    for candidate in (_HERE / "data_tables", _HERE.parent / "data_tables"):
        if (candidate / "README.md").is_file():
            return candidate
    raise FileNotFoundError(
        "snrkit data tables not found: looked in "
        f"{_HERE / 'data_tables'} and {_HERE.parent / 'data_tables'}; "
        "reinstall the package")


def data_path(*parts):
    """Return the path of a shipped data file or folder.

    Parameters
    ----------
    *parts : str
        Path components below ``data_tables/`` (for example
        ``"demo", "hot_giant.toml"``).

    Returns
    -------
    pathlib.Path
    """
    return _root().joinpath(*parts)


@lru_cache(maxsize=32)
def read_table(*parts):
    """Read a shipped ECSV table (cached; callers must not modify it).

    Returns
    -------
    astropy.table.Table
    """
    from astropy.table import Table
    return Table.read(str(data_path(*parts)), format="ascii.ecsv")
