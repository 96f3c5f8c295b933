"""Atomic output files: write to a temporary file beside the target, then rename.

A crash part-way through never leaves a half-written output file.
"""

import contextlib
import os
import tempfile
from pathlib import Path

__all__ = ["atomic_path", "atomic_write_text"]


@contextlib.contextmanager
def atomic_path(path):
    """Context manager yielding a temporary path that replaces ``path`` on success.

    Parameters
    ----------
    path : str or pathlib.Path
        Final destination.  Its folder must exist.

    Examples
    --------
    >>> with atomic_path("out.ecsv") as tmp:          # doctest: +SKIP
    ...     table.write(tmp, format="ascii.ecsv")
    """
    path = Path(path)
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        from ..errors import InputError
        raise InputError("output file", str(path), "a file in an existing folder")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=path.suffix or ".tmp",
                               dir=str(path.parent if str(path.parent) else "."))
    os.close(fd)
    tmp = Path(tmp)
    try:
        yield tmp
        os.replace(tmp, path)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise


def atomic_write_text(path, text):
    """Write ``text`` to ``path`` atomically."""
    with atomic_path(path) as tmp:
        tmp.write_text(text)
