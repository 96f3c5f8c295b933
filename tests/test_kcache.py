"""The per-user disk cache of native k-distributions: reused, keyed, never trusted when broken.

Reference: the cache holds exactly what the builder returns (float32), so a cached
and a freshly built k-distribution are identical (checked against the opacity
module's own builder); design rule of snrkit.atmosphere.kcache, no external source.
"""

import numpy as np

from snrkit.atmosphere import kcache
from snrkit.atmosphere import opacity


def test_cached_array_reuses_and_rebuilds(tmp_path, monkeypatch):
    monkeypatch.setenv(kcache.CACHE_ENV, str(tmp_path))
    calls = []

    def build():
        calls.append(1)
        return np.arange(12.0).reshape(3, 4)
    a = kcache.cached_array("x", "key1", (3, 4), build)
    b = kcache.cached_array("x", "key1", (3, 4), build)
    assert len(calls) == 1 and np.array_equal(a, b) and b.dtype == np.float32
    # another key (a changed data file or release) is a different entry
    kcache.cached_array("x", "key2", (3, 4), build)
    assert len(calls) == 2
    # a truncated file is detected and rebuilt, not trusted
    path = tmp_path / "x-key1.npy"
    path.write_bytes(path.read_bytes()[:40])
    c = kcache.cached_array("x", "key1", (3, 4), build)
    assert len(calls) == 3 and np.array_equal(c, a)
    # a file of the wrong shape is rebuilt too
    np.save(path, np.zeros((2, 2), dtype=np.float32))
    kcache.cached_array("x", "key1", (3, 4), build)
    assert len(calls) == 4
    assert not list(tmp_path.glob(".*.tmp"))          # no temporary file left behind


def test_unwritable_cache_still_computes(tmp_path, monkeypatch):
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    monkeypatch.setenv(kcache.CACHE_ENV, str(blocker / "sub"))
    out = kcache.cached_array("y", "k", (2,), lambda: np.ones(2))
    assert np.array_equal(out, [1.0, 1.0])


def test_key_covers_data_contents_and_version():
    k1 = kcache.data_key("opacity/bands.ecsv")
    k2 = kcache.data_key("opacity/bands.ecsv", "opacity/alkali_lines.ecsv")
    assert k1 != k2 and len(k1) == 20


def test_cached_kdist_equals_a_fresh_build(tmp_path, monkeypatch):
    monkeypatch.setenv(kcache.CACHE_ENV, str(tmp_path))
    opacity._native_kdist.cache_clear()
    try:
        first = opacity._native_kdist("CO", 1.0e3, 4)           # built and stored
        opacity._native_kdist.cache_clear()
        again = opacity._native_kdist("CO", 1.0e3, 4)           # read back from disk
        fresh = opacity._molecular_native_quantiles("CO", 1.0e3, opacity._gl(4)[0])
        np.testing.assert_array_equal(first, again)
        # ln k in float32: k to 1e-5 relative of a fresh build wherever it is not negligible
        big = fresh > 1e-60
        np.testing.assert_allclose(again[big], fresh[big], rtol=1e-4)
        assert list(tmp_path.glob("lnk-CO-*.npy"))
    finally:
        opacity._native_kdist.cache_clear()
