"""A population file read in chunks of rows, each screened as in a whole-file read.

:class:`PopulationFile` opens a Parquet, CSV or ECSV population and hands out
chunks of ``chunk_rows`` rows by number, so the memory of the reading
process is bounded by the chunk, not by the file:

* Parquet (pyarrow, imported here): record batches of ``chunk_rows`` rows
  are streamed from the row groups (``ParquetFile.iter_batches``) and cut at
  the chunk's rows; the chunk, with the file's schema and metadata (units),
  goes through astropy's Parquet reader, so its columns are those of a
  whole-file read.  (pyarrow may still buffer one row group's compressed
  column pages: a file written as one huge row group is read in pieces but
  not with less I/O buffer than that; not measured here.)
* CSV and ECSV: one pass over the file records the byte offset of every
  chunk's first data line; a chunk is the header lines followed by its
  data lines, parsed by astropy.  Blank lines are skipped, as astropy does.
  Quoted cells spanning several lines are not supported (one row per line).
  In CSV, whose columns carry no declared type, a chunk whose cells all look
  numeric reads a column as numbers where the whole file might read text;
  the screening converts both to the same values.

Each chunk is screened with :func:`snrkit.planning.population.reader.screen_population`.
The one check that spans rows, repeated planet names, is made over the whole
file when it is opened (one extra pass over the file, two when a name
repeats): the names are hashed chunk by chunk (8 bytes per row
are kept: 0.8 GB for 10^8 rows, the one thing that grows with the file), and
only the names whose hash repeats are read again exactly, so a chunk's row
gets ``duplicate_name`` (naming the file row of the first use) exactly when a
whole-file read gives it.
"""

import io
from pathlib import Path

import numpy as np

from ...errors import InputError
from .reader import POPULATION_FORMATS, screen_population

__all__ = ["PopulationFile"]

_NAMED = {"parquet": "parquet", "csv": "ascii.csv", "ecsv": "ascii.ecsv"}


class PopulationFile:
    """A population file read chunk by chunk (see the module docstring).

    Parameters
    ----------
    path : str or pathlib.Path
    mapping : str, pathlib.Path, dict or None
        A catalogue column mapping; None for the default layout.
    format : {"parquet", "csv", "ecsv"}, optional
    chunk_rows : int
        Rows per chunk (the last chunk holds the rest).

    Attributes
    ----------
    rows : int
        Data rows in the file.
    chunks : int
        Number of chunks.
    """

    def __init__(self, path, mapping=None, *, format=None, chunk_rows=5000):
        from .reader import _read
        self.path = Path(path)
        fmt = POPULATION_FORMATS.get(self.path.suffix.lower()) if format is None else \
            _NAMED.get(str(format).lower())
        if fmt is None:
            _read(path, format)                # raises the reader's one-line error
        self.format, self.mapping, self.chunk_rows = fmt, mapping, int(chunk_rows)
        if self.chunk_rows < 1:
            raise InputError("chunk_rows", chunk_rows, "a whole number >= 1")
        from ...io.tomlfile import check_input_path
        check_input_path(self.path, "POPULATION", "a population file")
        if not self.path.is_file():
            raise InputError("POPULATION", str(self.path), "an existing file")
        if fmt == "parquet":
            self._pf, self.rows, self._group_start = _open_parquet(self.path)
            self._stream = None
        else:
            self._header, self._offsets, self.rows = _scan_text(self.path, self.chunk_rows)
        self.chunks = -(-self.rows // self.chunk_rows) if self.rows else 0
        self.repeated = _repeated_names(self)

    # ---------------------------------------------------------------- reading
    def raw_chunk(self, index):
        """Chunk ``index`` as an astropy Table, unscreened."""
        import warnings
        from astropy.table import Table
        from astropy.utils.exceptions import AstropyWarning
        start = index * self.chunk_rows
        stop = min(start + self.chunk_rows, self.rows)
        with warnings.catch_warnings():
            # unit strings astropy does not know are reported per column by the screening
            warnings.simplefilter("ignore", AstropyWarning)
            if self.format == "parquet":
                return Table.read(_as_parquet(_parquet_rows(self, start, stop)), format="parquet")
            with open(self.path, "rb") as f:
                f.seek(self._offsets[index])
                body = f.read(self._offsets[index + 1] - self._offsets[index])
            return Table.read((self._header + body).decode(), format=self.format)

    def chunk(self, index):
        """Chunk ``index`` screened as in a whole-file read (see the module docstring)."""
        if not 0 <= index < self.chunks:
            raise InputError("chunk", index, f"0 to {self.chunks - 1}")
        return screen_population(self.raw_chunk(index), self.mapping, source=str(self.path),
                                 first_row=index * self.chunk_rows, repeated=self.repeated)


def _open_parquet(path):
    """(pyarrow ParquetFile, rows, first row of each row group and the end)."""
    try:
        import pyarrow.parquet as pq
    except ImportError:
        raise InputError("POPULATION", str(path), "a CSV or ECSV file",
                         detail="reading Parquet needs pyarrow: pip install pyarrow") from None
    try:
        pf = pq.ParquetFile(str(path))
    except (OSError, ValueError) as exc:
        raise InputError("POPULATION", str(path), "a readable Parquet table",
                         detail=f"{type(exc).__name__}: {exc}") from None
    meta = pf.metadata
    sizes = [meta.row_group(i).num_rows for i in range(meta.num_row_groups)]
    return pf, meta.num_rows, np.concatenate([[0], np.cumsum(sizes)]).astype(np.int64)


def _parquet_rows(pf, start, stop):
    """Rows start..stop-1 of a :class:`PopulationFile` as a pyarrow Table, from record batches of the row groups.

    The batch stream is kept between calls, so chunks asked in order (as
    the run asks them) decode each row once; a chunk before the stream's
    position restarts it at the chunk's row group.
    """
    import pyarrow as pa
    st = pf._stream
    if st is None or st["pos"] > start:
        first = int(np.searchsorted(pf._group_start, start, side="right") - 1)
        groups = list(range(first, len(pf._group_start) - 1))
        st = pf._stream = {"pos": int(pf._group_start[first]), "buf": None,
                             "it": pf._pf.iter_batches(batch_size=pf.chunk_rows,
                                                         row_groups=groups, use_threads=False)}
    out = []
    while st["pos"] < stop:
        if st["buf"] is None:
            st["buf"] = next(st["it"])
        b, lo = st["buf"], max(start - st["pos"], 0)
        hi = min(stop - st["pos"], b.num_rows)
        if lo < hi:
            out.append(b.slice(lo, hi - lo))
        if hi < b.num_rows:            # the rest of the batch opens the next chunk
            st["buf"], st["pos"] = b.slice(hi), st["pos"] + hi
        else:
            st["buf"], st["pos"] = None, st["pos"] + b.num_rows
    return pa.Table.from_batches(out, schema=pf._pf.schema_arrow)


def _as_parquet(table):
    """A pyarrow Table (with the file's schema and metadata) as an in-memory Parquet file,
    for astropy's reader (units and string types as in a whole-file read)."""
    import pyarrow.parquet as pq
    buf = io.BytesIO()
    pq.write_table(table, buf)
    buf.seek(0)
    return buf


def _scan_text(path, chunk_rows):
    """Header bytes, the byte offset of each chunk's first data line (and the end), rows."""
    header, offsets, pos, rows = [], [], 0, 0
    in_header = True
    with open(path, "rb") as f:
        for line in f:
            stripped = line.strip()
            if in_header:
                header.append(line)
                if stripped and not stripped.startswith(b"#"):
                    in_header = False      # the column-name line ends the header
            elif stripped and not stripped.startswith(b"#"):
                if rows % chunk_rows == 0:
                    offsets.append(pos)
                rows += 1
            pos += len(line)
    return b"".join(h if h.endswith(b"\n") else h + b"\n" for h in header), offsets + [pos], rows


def _names(pf, index):
    """Planet names of chunk ``index`` as the screening reads them ('' if no column)."""
    from ..catalog import load_mapping
    from ..screening import _text_values
    from .reader import _fields
    table = pf.raw_chunk(index)
    spec = _fields(load_mapping(pf.mapping), table).get("planet.name")
    if spec is None or spec["column"] not in table.colnames:
        return None
    col = table[spec["column"]]        # as reader._convert passes a text field on
    return _text_values(np.where(np.ma.getmaskarray(col), "",
                                 np.asarray(np.ma.getdata(col)).astype(str)))

def _repeated_names(pf):
    """{name: file row of its first use} for names used more than once."""
    from pandas.util import hash_array
    hashes = np.zeros(pf.rows, dtype=np.uint64)
    for i in range(pf.chunks):
        names = _names(pf, i)
        if names is None:
            return {}
        s0 = i * pf.chunk_rows
        hashes[s0:s0 + len(names)] = hash_array(names.astype(object))
    _, first, counts = np.unique(hashes, return_index=True, return_counts=True)
    suspects = set(hashes[first[counts > 1]].tolist())
    if not suspects:
        return {}
    seen, repeated = {}, {}
    for i in range(pf.chunks):           # exact names of the rows whose hash repeats
        s0 = i * pf.chunk_rows
        names = _names(pf, i)
        for j in np.flatnonzero(np.isin(hashes[s0:s0 + len(names)],
                                        np.fromiter(suspects, np.uint64))).tolist():
            name = str(names[j])
            if name == "":
                continue
            if name in seen:
                repeated[name] = seen[name]
            else:
                seen[name] = s0 + j
    return repeated
