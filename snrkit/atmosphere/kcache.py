"""A per-user disk cache for the native-bin k-distributions.

Building the k-distributions of the native opacity bins (Malkmus quantiles,
finely sampled alkali lines) costs about a second per species and pressure;
they depend only on the shipped data tables, the species, the pressure and
the number of g points.  They are kept as ``.npy`` files in a per-user
folder (``$SNRKIT_CACHE_DIR``, else ``$XDG_CACHE_HOME/snrkit``, else
``~/.cache/snrkit``) under a key that covers the data files' contents and
the package version, so a changed table or a new release never reuses a
stale entry.  Files are written atomically (temporary file, then rename); a
file that cannot be read back whole (truncated, corrupt, wrong shape) is
rebuilt, never trusted.  Where no cache folder can be written the arrays
are simply computed.
"""

import hashlib
import os
from functools import lru_cache
from pathlib import Path

import numpy as np

__all__ = ["cache_dir", "cached_array", "data_key", "CACHE_ENV"]

#: Environment variable naming the cache folder.
CACHE_ENV = "SNRKIT_CACHE_DIR"
#: Bumped when the layout or the meaning of a cached array changes.
_FORMAT = 1


def cache_dir():
    """The cache folder (not created here)."""
    env = os.environ.get(CACHE_ENV)
    if env:
        return Path(env)
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "snrkit"


@lru_cache(maxsize=8)
def data_key(*names):
    """Hash of the package version and the named data files' contents."""
    from .._version import __version__
    from ..tables import data_path
    h = hashlib.sha256(f"{__version__}|{_FORMAT}".encode())
    for name in names:
        path = data_path(*name.split("/"))
        h.update(name.encode())
        h.update(Path(path).read_bytes())
    return h.hexdigest()[:20]


def cached_array(label, key, shape, build):
    """``build()`` through the disk cache.

    Parameters
    ----------
    label : str
        Readable part of the file name (species, pressure, g points).
    key : str
        Content key (:func:`data_key`).
    shape : tuple
        Expected shape; a file of another shape is rebuilt.
    build : callable
        Returns the array (float32 is stored).
    """
    folder = cache_dir()
    path = folder / f"{label}-{key}.npy"
    try:
        arr = np.load(path, allow_pickle=False)
        if arr.shape == tuple(shape) and arr.dtype == np.float32 and np.all(np.isfinite(arr)):
            arr.setflags(write=False)
            return arr
    except (OSError, ValueError, EOFError):
        pass
    arr = np.asarray(build(), dtype=np.float32)
    try:
        folder.mkdir(parents=True, exist_ok=True)
        tmp = folder / f".{path.name}.{os.getpid()}.tmp"
        with open(tmp, "wb") as fh:
            np.save(fh, arr, allow_pickle=False)
        os.replace(tmp, path)
    except OSError:
        pass                                   # no writable cache: computed each time
    arr.setflags(write=False)
    return arr
