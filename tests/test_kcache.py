"""The per-user disk cache of opacity tables: reused, keyed, never trusted when broken.

Reference: the cache holds exactly what the builder returns (in the stored dtype), so
a cached and a freshly built table are identical (checked against the opacity
module's own builders); design rule of snrkit.atmosphere.kcache, no external source.
"""

import numpy as np
import pytest

from snrkit.atmosphere import kcache
from snrkit.atmosphere import opacity
from snrkit.atmosphere import malkmus
from snrkit.atmosphere import bands


@pytest.fixture
def cache(tmp_path, monkeypatch):
    """An empty cache folder for the test, and empty in-memory caches around it."""
    monkeypatch.setenv(kcache.CACHE_ENV, str(tmp_path))
    memo = (bands._native_kdist, opacity._k_table_cached, malkmus._quantile_table)
    for f in memo:
        f.cache_clear()
    yield tmp_path
    for f in memo:
        f.cache_clear()


def test_cached_array_reuses_and_rebuilds(cache):
    calls = []

    def build():
        calls.append(1)
        return np.arange(12.0).reshape(3, 4)
    a = kcache.cached_array("x", "key1", (3, 4), build)
    b = kcache.cached_array("x", "key1", (3, 4), build)
    assert len(calls) == 1 and np.array_equal(a, b) and b.dtype == np.float32
    assert not b.flags.writeable
    # another key (a changed data file or release) is a different entry
    kcache.cached_array("x", "key2", (3, 4), build)
    assert len(calls) == 2
    path = cache / "x-key1.arr"
    good = path.read_bytes()
    # a truncated file is detected and rebuilt, not trusted
    path.write_bytes(good[:-5])
    c = kcache.cached_array("x", "key1", (3, 4), build)
    assert len(calls) == 3 and np.array_equal(c, a)
    assert path.read_bytes() == good                  # and written again whole
    # a file of the right length with one changed byte fails its checksum
    bad = bytearray(good)
    bad[-3] ^= 0x10
    path.write_bytes(bytes(bad))
    c = kcache.cached_array("x", "key1", (3, 4), build)
    assert len(calls) == 4 and np.array_equal(c, a)
    # an entry of another shape or dtype is rebuilt too
    kcache.cached_array("x", "key1", (4, 3), lambda: np.zeros((4, 3)))
    kcache.cached_array("x", "key1", (3, 4), build)
    assert len(calls) == 5
    kcache.cached_array("x", "key1", (3, 4), build, dtype=np.float64)
    assert len(calls) == 6
    # a builder that disagrees with the declared shape is a defect, not an entry
    from snrkit.errors import SnrkitError
    with pytest.raises(SnrkitError, match="expected"):
        kcache.cached_array("z", "key1", (2, 2), build)
    assert not list(cache.glob(".*.tmp"))             # no temporary file left behind


def test_float64_entries_are_bit_identical(cache):
    rng = np.random.default_rng(3)
    x = rng.normal(size=(5, 7))
    out = kcache.cached_array("f64", "k", x.shape, lambda: x, dtype=np.float64)
    again = kcache.cached_array("f64", "k", x.shape, lambda: 0 * x, dtype=np.float64)
    assert again.dtype == np.float64 and again.tobytes() == x.tobytes() == out.tobytes()


def test_unwritable_cache_still_computes(tmp_path, monkeypatch):
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    monkeypatch.setenv(kcache.CACHE_ENV, str(blocker / "sub"))
    out = kcache.cached_array("y", "k", (2,), lambda: np.ones(2))
    assert np.array_equal(out, [1.0, 1.0])


def test_key_covers_data_contents_and_version(monkeypatch):
    k1 = kcache.data_key("opacity/bands.ecsv")
    k2 = kcache.data_key("opacity/bands.ecsv", "opacity/alkali_lines.ecsv")
    assert k1 != k2 and len(k1) == 20 and kcache.data_key() not in (k1, k2)
    # another release is another key
    import snrkit._version
    kcache.data_key.cache_clear()
    monkeypatch.setattr(snrkit._version, "__version__", "0.0.0-test")
    try:
        assert kcache.data_key("opacity/bands.ecsv") != k1
    finally:
        kcache.data_key.cache_clear()


def test_grid_entries_are_pruned_oldest_first(cache, monkeypatch):
    monkeypatch.setattr(kcache, "MAX_GRID_BYTES", 2500)
    import os
    for i in range(4):
        kcache.cached_array(f"ktab-t{i}", "k", (100,), lambda: np.zeros(100),
                            prune_prefix="ktab-")
        os.utime(cache / f"ktab-t{i}-k.arr", (1e9 + i, 1e9 + i))
    kcache.cached_array("ktab-t4", "k", (100,), lambda: np.zeros(100), prune_prefix="ktab-")
    left = sorted(p.name for p in cache.glob("ktab-*"))
    # five entries of about 530 bytes each: the oldest goes, leaving at most 2500 bytes
    assert "ktab-t4-k.arr" in left and "ktab-t0-k.arr" not in left and len(left) == 5 - 1


def test_cached_kdist_equals_a_fresh_build(cache):
    first = bands._native_kdist("CO", 1.0e3, 4)           # built and stored
    bands._native_kdist.cache_clear()
    again = bands._native_kdist("CO", 1.0e3, 4)           # read back from disk
    fresh = bands._molecular_native_quantiles("CO", 1.0e3, malkmus._gl(4)[0])
    np.testing.assert_array_equal(first, again)
    # ln k in float32: k to 1e-5 relative of a fresh build wherever it is not negligible
    big = fresh > 1e-60
    np.testing.assert_allclose(again[big], fresh[big], rtol=1e-4)
    assert list(cache.glob("lnk-CO-*.arr"))


def test_quantile_table_cached_bit_identical_and_rebuilt_when_broken(cache):
    g = tuple(float(v) for v in malkmus._gl(4)[0])
    fresh = malkmus._build_quantile_table(np.asarray(g))
    first = malkmus._quantile_table(g)                       # built and stored
    (path,) = cache.glob("quantiles-*.arr")
    malkmus._quantile_table.cache_clear()
    again = malkmus._quantile_table(g)                       # read back from disk
    assert first.tobytes() == again.tobytes() == fresh.tobytes()
    # truncated: detected, rebuilt identically and stored again
    path.write_bytes(path.read_bytes()[:100])
    malkmus._quantile_table.cache_clear()
    rebuilt = malkmus._quantile_table(g)
    assert rebuilt.tobytes() == fresh.tobytes() and path.stat().st_size > 1000


def _co_table(edges, pressure=1.0e3):
    return opacity._k_table_cached("CO", np.ascontiguousarray(edges).tobytes(), 4, pressure)


def test_k_table_cache_identical_keyed_and_rebuilt(cache, monkeypatch):
    edges = np.geomspace(2.0e-6, 3.0e-6, 9)
    fresh = opacity._build_k_table("CO", edges, 4, 1.0e3)
    first = _co_table(edges)
    (path,) = cache.glob("ktab-CO-*.arr")
    opacity._k_table_cached.cache_clear()
    again = _co_table(edges)
    assert first.tobytes() == again.tobytes() == fresh.tobytes()
    # another grid or pressure is another entry
    _co_table(edges[:-1])
    _co_table(edges, 1.0e4)
    assert len(list(cache.glob("ktab-CO-*.arr"))) == 3
    # a truncated entry is rebuilt
    path.write_bytes(path.read_bytes()[:60])
    opacity._k_table_cached.cache_clear()
    assert _co_table(edges).tobytes() == fresh.tobytes()
    # a changed data file (simulated through the key inputs) is a new entry, built anew
    calls = []
    real = opacity._build_k_table

    def counting(*args):
        calls.append(args[0])
        return real(*args)
    monkeypatch.setattr(opacity, "_build_k_table", counting)
    opacity._k_table_cached.cache_clear()
    _co_table(edges)
    assert calls == []                                       # same data: read from disk
    monkeypatch.setattr(kcache, "data_key", lambda *names: "changed-data-key-000")
    opacity._k_table_cached.cache_clear()
    assert _co_table(edges).tobytes() == fresh.tobytes()
    assert calls == ["CO"]


def test_spectra_identical_with_and_without_the_cache(cache):
    from snrkit.atmosphere.spectrum import transmission_spectrum
    kw = dict(planet_mass=[300.0], equilibrium_temperature=[1200.0],
              wavelength_edges=np.geomspace(1.0, 5.0, 41))
    built = transmission_spectrum("h2-clear-solar", [12.0], [1.0], **kw)   # empty cache
    assert list(cache.glob("ktab-*.arr"))
    for f in (bands._native_kdist, opacity._k_table_cached, malkmus._quantile_table):
        f.cache_clear()
    read = transmission_spectrum("h2-clear-solar", [12.0], [1.0], **kw)    # from disk
    np.testing.assert_array_equal(built["transit_depth_ppm"].values,
                                  read["transit_depth_ppm"].values)
