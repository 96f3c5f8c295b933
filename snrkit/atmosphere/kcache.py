"""A per-user disk cache for opacity tables that are slow to build.

Building the k-distributions of the native opacity bins (Malkmus quantiles,
finely sampled alkali lines) costs about a second per species and pressure,
rebinning them onto a spectral grid a tenth of a second per species and
pressure, and the standardised Malkmus quantile table a few tenths of a
second.  They depend only on the shipped data tables, the code and their
arguments, so they are kept in a per-user folder (``$SNRKIT_CACHE_DIR``,
else ``$XDG_CACHE_HOME/snrkit``, else ``~/.cache/snrkit``) under a key that
covers the data files' contents and the package version, so a changed table
or a new release never reuses a stale entry.

Each entry is one file: a header line (format, dtype, shape, payload length
and a BLAKE2b checksum of the payload) and the raw array bytes.  Files are
written atomically (temporary file, then rename); a file whose header,
length, checksum, dtype or shape does not match is rebuilt, never trusted.
The arrays read back are bit-identical to what the builder returned (cast
to the requested dtype).  Where no cache folder can be written the arrays
are simply computed.  Entries of a kind that can multiply (one per spectral
grid) are pruned oldest first beyond :data:`MAX_GRID_BYTES`.
"""

import hashlib
import json
import os
from functools import lru_cache
from pathlib import Path

import numpy as np

__all__ = ["cache_dir", "cached_array", "data_key", "array_digest", "CACHE_ENV",
           "MAX_GRID_BYTES"]

#: Environment variable naming the cache folder.
CACHE_ENV = "SNRKIT_CACHE_DIR"
#: Bumped when the layout or the meaning of a cached array changes.
_FORMAT = 2
_MAGIC = b"snrkit-array-cache 2\n"
#: Total size [bytes] above which the oldest per-grid entries are removed.
MAX_GRID_BYTES = 256 * 2 ** 20


def cache_dir():
    """The cache folder (not created here).

    Returns
    -------
    pathlib.Path
    """
    env = os.environ.get(CACHE_ENV)
    if env:
        return Path(env)
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "snrkit"


@lru_cache(maxsize=8)
def data_key(*names):
    """Hash of the package version, the cache format and the named data files' contents.

    Parameters
    ----------
    *names : str
        Data files below ``data_tables/`` (``"opacity/bands.ecsv"``); none
        for an entry that depends on the code only.

    Returns
    -------
    str
        20 hexadecimal digits.
    """
    from .._version import __version__
    from ..io.tables import data_path
    h = hashlib.blake2b(f"{__version__}|{_FORMAT}".encode(), digest_size=10)
    for name in names:
        path = data_path(*name.split("/"))
        h.update(name.encode())
        h.update(Path(path).read_bytes())
    return h.hexdigest()[:20]


def array_digest(arr):
    """Short content hash of an array's dtype, shape and bytes (12 hex digits)."""
    a = np.ascontiguousarray(arr)
    h = hashlib.blake2b(f"{a.dtype.str}|{a.shape}".encode(), digest_size=6)
    h.update(a.tobytes())
    return h.hexdigest()


def _checksum(payload):
    return hashlib.blake2b(payload, digest_size=16).hexdigest()


def _read(path, shape, dtype):
    """The array stored in ``path``, or None if it is missing or not exactly right."""
    try:
        with open(path, "rb") as fh:
            data = fh.read()
    except OSError:
        return None
    if not data.startswith(_MAGIC):
        return None
    end = data.find(b"\n", len(_MAGIC))
    if end < 0:
        return None
    try:
        head = json.loads(data[len(_MAGIC):end])
    except ValueError:
        return None
    payload = memoryview(data)[end + 1:]
    n_bytes = int(np.prod(shape, dtype=np.int64)) * dtype.itemsize
    if (not isinstance(head, dict) or head.get("dtype") != dtype.str
            or head.get("shape") != list(shape) or head.get("nbytes") != n_bytes
            or len(payload) != n_bytes or head.get("blake2b") != _checksum(payload)):
        return None
    return np.frombuffer(data, dtype=dtype, count=n_bytes // dtype.itemsize,
                         offset=end + 1).reshape(shape)


def _write(path, arr):
    payload = np.ascontiguousarray(arr).tobytes()
    head = json.dumps({"dtype": arr.dtype.str, "shape": list(arr.shape),
                       "nbytes": len(payload), "blake2b": _checksum(payload)})
    tmp = path.parent / f".{path.name}.{os.getpid()}.tmp"
    try:
        with open(tmp, "wb") as fh:
            fh.write(_MAGIC + head.encode() + b"\n")
            fh.write(payload)
        os.replace(tmp, path)
    finally:
        if tmp.exists():
            tmp.unlink()


def _prune(folder, prefix, max_bytes):
    """Remove the oldest ``prefix*`` entries until they total at most max_bytes."""
    entries = []
    for p in folder.glob(prefix + "*"):
        try:
            st = p.stat()
        except OSError:
            continue
        entries.append((st.st_mtime, st.st_size, p))
    total = sum(e[1] for e in entries)
    for _, size, p in sorted(entries, key=lambda e: e[0]):
        if total <= max_bytes:
            break
        try:
            p.unlink()
            total -= size
        except OSError:
            pass


def cached_array(label, key, shape, build, dtype=np.float32, prune_prefix=None):
    """``build()`` through the disk cache.

    Parameters
    ----------
    label : str
        Readable part of the file name (what, species, pressure, g points).
    key : str
        Content key (:func:`data_key`).
    shape : tuple of int
        Expected shape; a file of another shape is rebuilt.
    build : callable
        Returns the array (stored and returned as ``dtype``).
    dtype : numpy dtype
        Stored dtype (default float32).
    prune_prefix : str, optional
        After writing a new entry, remove the oldest files whose names start
        with this prefix until they total at most :data:`MAX_GRID_BYTES`.

    Returns
    -------
    numpy.ndarray
        Read-only, identical to ``np.asarray(build(), dtype)``.

    Raises
    ------
    SnrkitError
        ``build()`` returned another shape than ``shape`` (a defect in the
        caller: such an entry would be rebuilt on every read).
    """
    dtype = np.dtype(dtype)
    shape = tuple(int(n) for n in shape)
    folder = cache_dir()
    path = folder / f"{label}-{key}.arr"
    arr = _read(path, shape, dtype)
    if arr is not None:
        return arr
    arr = np.array(build(), dtype=dtype)
    if arr.shape != shape:
        from ..errors import SnrkitError
        raise SnrkitError(f"cache entry {label}: built shape {arr.shape}, expected {shape}")
    try:
        folder.mkdir(parents=True, exist_ok=True)
        _write(path, arr)
        if prune_prefix:
            _prune(folder, prune_prefix, MAX_GRID_BYTES)
    except OSError:
        pass                                   # no writable cache: computed each time
    arr.setflags(write=False)
    return arr
