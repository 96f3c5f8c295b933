"""The on-disk store of a yield run: one Parquet file per finished chunk and a manifest.

Layout of a run folder (written atomically, file by file):

``manifest.json``
    The run's settings, their digest, and the planned chunks.
``planets/chunk-s<seed>-b<block>.parquet``
    One per finished chunk: the per-planet rows of
    :data:`snrkit.planning.yields.chunk.PLANET_COLUMNS`, with the chunk's
    class counts and yield counts in the file's key-value metadata
    (``snrkit.counts``).  Together they are a Parquet dataset
    (``pandas.read_parquet("planets/")``).

A run started again with the same settings reads the counts of the chunks
already stored and computes only the others; different settings in a
non-empty folder are refused unless the run is told to start afresh.
"""

import hashlib
import json
from pathlib import Path

from ...errors import InputError
from ...io.atomic import atomic_path, atomic_write_text

__all__ = ["RunStore", "settings_digest", "chunk_name", "MANIFEST", "FORMAT", "COUNT_KEYS"]

MANIFEST = "manifest.json"
#: Version of the store's layout (a change makes old folders refuse to resume).
FORMAT = 1
_COUNTS_KEY = b"snrkit.counts"
#: The count lists of a chunk's result kept with its rows.
COUNT_KEYS = ("classes", "reached", "statuses")


def settings_digest(settings):
    """Digest of a JSON-ready settings mapping (stable key order)."""
    text = json.dumps(settings, sort_keys=True, separators=(",", ":"), default=str)
    return hashlib.sha256(text.encode()).hexdigest()[:20]


def chunk_name(seed, block):
    """File name of a chunk."""
    return f"chunk-s{int(seed)}-b{int(block):06d}.parquet"


# size: a class of short methods around one run folder (manifest, chunks, resume)
class RunStore:
    """A run folder (see the module docstring).

    Parameters
    ----------
    folder : str or pathlib.Path
        The run folder (created if missing; its parent must exist).
    settings : dict
        JSON-ready settings of the run.
    chunks : sequence of (seed, block)
        The planned chunks.
    restart : bool
        Remove the chunks of an earlier run instead of resuming.
    """

    def __init__(self, folder, settings, chunks, restart=False):
        self.folder = Path(folder)
        self.planets = self.folder / "planets"
        self.digest = settings_digest(settings)
        if self.folder.exists() and not self.folder.is_dir():
            raise InputError("--out", str(folder), "a folder for the run (this is a file)")
        if not self.folder.parent.is_dir():
            raise InputError("--out", str(folder), "a folder inside an existing folder")
        old = self._read_manifest()
        orphans = old is None and any(self.planets.glob("chunk-s*-b*.parquet"))
        if orphans or old is not None and (old.get("digest") != self.digest
                                           or old.get("format") != FORMAT):
            if not restart:
                raise InputError("--out", str(folder), "an empty folder or one holding a run "
                                 "with the same settings", detail="it holds a different run; "
                                 "choose another folder or start afresh (--restart)")
        if restart:
            for p in self.planets.glob("chunk-s*-b*.parquet"):
                p.unlink()
        self.planets.mkdir(parents=True, exist_ok=True)
        atomic_write_text(self.folder / MANIFEST, json.dumps(
            {"format": FORMAT, "digest": self.digest, "settings": settings,
             "chunks": [list(c) for c in chunks]}, indent=1, default=str) + "\n")

    def _read_manifest(self):
        p = self.folder / MANIFEST
        if not p.is_file():
            return None
        try:
            return json.loads(p.read_text())
        except (ValueError, OSError):
            return {}

    def path(self, seed, block):
        return self.planets / chunk_name(seed, block)

    def done(self, chunks):
        """The planned chunks already stored, with their counts: {(seed, block): counts}."""
        import pyarrow.parquet as pq
        out = {}
        for seed, block in chunks:
            p = self.path(seed, block)
            if p.is_file():
                try:
                    meta = pq.read_schema(p).metadata or {}
                    out[(seed, block)] = json.loads(meta[_COUNTS_KEY])
                except (OSError, ValueError, KeyError):
                    continue                    # unreadable: computed again
        return out

    def write(self, seed, block, result):
        """Store one chunk's rows and counts (atomically); return the counts."""
        import pyarrow as pa
        import pyarrow.parquet as pq
        counts = {k: result[k] for k in COUNT_KEYS}
        arrays = {}
        for name, values in result["columns"].items():
            arr = pa.array(values.tolist() if values.dtype == object else values)
            if values.dtype == object:
                arr = arr.dictionary_encode()
            arrays[name] = arr
        table = pa.table(arrays)
        table = table.replace_schema_metadata({_COUNTS_KEY: json.dumps(counts).encode()})
        with atomic_path(self.path(seed, block)) as tmp:
            pq.write_table(table, tmp)
        return counts
