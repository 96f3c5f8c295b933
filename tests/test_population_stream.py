"""A population file read in chunks (snrkit.planning.population.stream): per-row
status and yields identical to a whole-file read, whatever the chunk size.

These are consistency checks (a chunk within a file, nested as one planet within a
catalogue), so no outside source is needed: the whole-file read is the reference."""

import warnings

import numpy as np
import pytest
from astropy.table import vstack

from snrkit.planning.population import generate_population, read_population
from snrkit.planning.population.stream import PopulationFile
from snrkit.planning.yields import population_yields

FORMATS = {"parquet": "parquet", "csv": "ascii.csv", "ecsv": "ascii.ecsv"}
MODE = "cold6m-prism-lowres"


@pytest.fixture(scope="module")
def population():
    """Invented planets with bad rows, and names repeated within and across chunks."""
    t = generate_population(2500, 11)[:60]
    names = t["planet_name"]
    names[5] = names[40]           # first use after the repeat's chunk: row 5 is first
    names[33] = names[2]           # repeated in a later chunk
    names[3] = names[4]            # repeated in the same chunk
    t["planet_radius_earth"][8] = -1.0          # bad_value
    t["host_radius_sun"][50] = np.nan           # missing_star_radius
    names[9] = names[8]            # a repeat of a bad row is still a repeat
    return t


def _same(a, b):
    assert a.colnames == b.colnames
    for c in a.colnames:
        x, y = np.asarray(a[c]), np.asarray(b[c])
        if x.dtype.kind == "f":
            np.testing.assert_array_equal(x, y)          # NaN where NaN, else bit for bit
        else:
            assert x.astype(str).tolist() == y.astype(str).tolist(), c


@pytest.mark.parametrize("fmt", list(FORMATS))
@pytest.mark.parametrize("rows", [7, 13, 60, 1000])
def test_chunks_screen_every_row_as_a_whole_file_read(population, tmp_path, fmt, rows):
    path = tmp_path / f"pop.{fmt}"
    population.write(path, format=FORMATS[fmt], overwrite=True)
    if fmt == "parquet":           # row groups of 9 rows: chunks start and stop inside them
        import pyarrow.parquet as pq
        pq.write_table(pq.read_table(path), path, row_group_size=9)
        assert pq.ParquetFile(path).metadata.num_row_groups == 7
    whole = read_population(path)
    pf = PopulationFile(path, chunk_rows=rows)
    assert pf.rows == len(population) and pf.chunks == -(-len(population) // rows)
    parts = vstack([pf.chunk(i) for i in range(pf.chunks)], metadata_conflicts="silent")
    _same(whole, parts)
    if pf.chunks > 1:              # out of order (a resumed run): the same rows
        _same(pf.chunk(pf.chunks - 2), whole[(pf.chunks - 2) * rows:(pf.chunks - 1) * rows])
    status = list(whole["status"])
    assert status.count("duplicate_name") == 4 and "bad_value" in status
    assert "planet name" in whole["reason"][33] and whole["reason"][33].endswith("input row 2")


def test_a_file_in_uneven_chunks_gives_the_yields_of_the_whole_table(population, tmp_path):
    """File chunks of 11 rows (60 = 5 x 11 + 5) against the whole screened table in one chunk."""
    path = tmp_path / "pop.parquet"
    population.write(path, format="parquet", overwrite=True)
    kw = dict(mode=MODE, design_texts=["name=8m,aperture_m=8,years=3"],
              scenarios=["h2-clear-solar"], resolution=10, scheduler="in-process")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")   # the engine's own notes (SnrkitWarning) are not checked here
        whole = population_yields(read_population(path), chunk_planets=10**6, **kw)
        parts = population_yields(path, chunk_planets=11, out_dir=tmp_path / "run", **kw)
    assert parts["chunks"] == 6 and whole["chunks"] == 1
    for var in ("reached", "status_count", "planets"):
        assert whole["dataset"][var].equals(parts["dataset"][var])
    assert int(whole["dataset"]["reached"].sum()) > 0
    import pyarrow.parquet as pq
    rows = pq.read_table(tmp_path / "run" / "planets").to_pandas()
    # every input row once in the per-planet output, with its own name and status
    rows = rows.sort_values(["block", "row"])
    assert rows["name"].tolist() == [str(x) for x in population["planet_name"]]
    assert rows["status"].value_counts()["duplicate_name"] == 4
