"""User spectra: reading CSV/ECSV/FITS/text and flux-conserving resampling.

The resampling checks are exact identities (integral conservation, constants stay
constant: common practice, no source); unit conversions use astropy.units as the
reference library.
"""

import numpy as np
import pytest
import astropy.units as u
from astropy.table import Table
from hypothesis import given, settings, strategies as st

from snrkit.atmosphere.user_spectrum import (read_user_spectrum, bin_average, sample_edges,
                                             resample_spectrum)
from snrkit.errors import InputError, UnitMismatchError


def _write(tmp_path, name, text):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_read_formats_agree(tmp_path):
    lam = np.array([1.0, 1.5, 2.0, 3.0])
    ppm = np.array([100.0, 120.0, 110.0, 105.0])
    t = Table({"wavelength": lam * u.um, "depth": ppm})
    t.write(tmp_path / "s.ecsv", format="ascii.ecsv")
    t.write(tmp_path / "s.fits", format="fits")
    Table({"wavelength": lam, "depth": ppm}).write(tmp_path / "s.csv", format="ascii.csv")
    _write(tmp_path, "s.txt", "# my model\n" + "\n".join(f"{a} {b}" for a, b in zip(lam, ppm)))
    out = [read_user_spectrum(tmp_path / "s.ecsv", "ppm"),
           read_user_spectrum(tmp_path / "s.fits", "ppm"),
           read_user_spectrum(tmp_path / "s.csv", "ppm", wavelength_unit="um"),
           read_user_spectrum(tmp_path / "s.txt", "ppm", wavelength_unit="micron")]
    for ds in out:
        np.testing.assert_allclose(ds.wavelength.values, lam)
        np.testing.assert_allclose(ds.transit_depth_ppm.values, ppm)
        assert ds.wavelength.attrs["units"] == "um"


def test_depth_kinds_and_spectral_units(tmp_path):
    # wavenumber column (descending in wavenumber -> ascending wavelength)
    wn = np.array([10000.0, 5000.0, 2500.0])       # cm-1 -> 1, 2, 4 um
    rr = np.array([0.1, 0.11, 0.12])
    Table({"wavenumber": wn, "rp_rs": rr}).write(tmp_path / "w.csv", format="ascii.csv")
    ds = read_user_spectrum(tmp_path / "w.csv", "radius-ratio", wavelength_unit="cm-1")
    np.testing.assert_allclose(ds.wavelength.values, [1.0, 2.0, 4.0])
    np.testing.assert_allclose(ds.transit_depth_ppm.values, rr * rr * 1e6)
    Table({"wavelength": [0.5, 0.6] * u.nm * 1000, "depth": [0.01, 0.012]}).write(
        tmp_path / "f.ecsv", format="ascii.ecsv")
    ds = read_user_spectrum(tmp_path / "f.ecsv", "fraction")
    np.testing.assert_allclose(ds.transit_depth_ppm.values, [1e4, 1.2e4])
    np.testing.assert_allclose(ds.wavelength.values, [0.5, 0.6])
    ds = read_user_spectrum(tmp_path / "f.ecsv", "percent")
    np.testing.assert_allclose(ds.transit_depth_ppm.values, [100.0, 120.0])


@pytest.mark.parametrize("text,kwargs,exc,match", [
    ("wavelength,depth\n1,100\n2,110\n", {}, UnitMismatchError, "no unit"),
    ("wavelength,depth\n1,100\n2,110\n", {"wavelength_unit": "kg"}, UnitMismatchError, "length"),
    ("wavelength,depth\n1,100\n1,110\n", {"wavelength_unit": "um"}, InputError, "duplicate"),
    ("wavelength,depth\n1,100\n3,110\n2,120\n", {"wavelength_unit": "um"}, InputError, "order"),
    ("wavelength,depth\n1,100\n2,nan\n", {"wavelength_unit": "um"}, InputError, "row 2"),
    ("wavelength,depth\n1,100\n2,-5\n", {"wavelength_unit": "um"}, InputError, ">= 0"),
    ("wavelength,depth\n1,100\n2,110\n", {"wavelength_unit": "um", "depth_column": "dpth"},
     InputError, "did you mean 'depth'"),
    ("a,b,c\n1,100,3\n2,110,4\n", {"wavelength_unit": "um"}, InputError, "more than two"),
    ("wavelength,depth\n1,100\n2,110\n", {"wavelength_unit": "um", "depth_kind": "pmm"},
     InputError, "did you mean 'ppm'"),
    ("wavelength,depth\n1,0.5\n2,1.2\n", {"wavelength_unit": "um", "depth_kind": "fraction"},
     InputError, "at most 1"),
])
def test_bad_files(tmp_path, text, kwargs, exc, match):
    p = _write(tmp_path, "bad.csv", text)
    kind = kwargs.pop("depth_kind", "ppm")
    with pytest.raises(exc, match=match):
        read_user_spectrum(p, kind, **kwargs)


def test_missing_file(tmp_path):
    with pytest.raises(InputError):
        read_user_spectrum(tmp_path / "nope.csv", "ppm", wavelength_unit="um")


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 10_000), n_in=st.integers(5, 80), n_out=st.integers(1, 40))
def test_resampling_conserves_integral_and_constants(seed, n_in, n_out):
    rng = np.random.default_rng(seed)
    x = np.sort(rng.uniform(1.0, 10.0, n_in))
    x = np.unique(x)
    if x.size < 3:
        return
    y = rng.uniform(0.0, 1000.0, x.size)
    ei = sample_edges(x)
    eo = np.sort(rng.uniform(ei[0], ei[-1], n_out + 1))
    eo = np.unique(eo)
    if eo.size < 2:
        return
    out = bin_average(ei, y, eo)
    # integral over [eo0, eo_end] equals the integral of the piecewise-constant input
    fine = np.sort(np.concatenate([ei, eo]))
    mids = 0.5 * (fine[1:] + fine[:-1])
    inside = (mids > eo[0]) & (mids < eo[-1])
    j = np.clip(np.searchsorted(ei, mids) - 1, 0, y.size - 1)
    ref = np.sum((y[j] * np.diff(fine))[inside])
    assert np.sum(out * np.diff(eo)) == pytest.approx(ref, rel=1e-10, abs=1e-9)
    # a constant stays constant (to the rounding of the cumulative sums, ~1e-11 for
    # bins 1e-3 of the range wide)
    np.testing.assert_allclose(bin_average(ei, np.full(y.size, 42.0), eo), 42.0, rtol=1e-9)


def test_resample_whole_range_conserves_total_and_refuses_extrapolation(tmp_path):
    lam = np.linspace(1.0, 5.0, 401)
    ppm = 1000 + 50 * np.sin(lam * 7)
    Table({"wavelength": lam * u.um, "depth": ppm}).write(tmp_path / "s.ecsv",
                                                          format="ascii.ecsv")
    ds = read_user_spectrum(tmp_path / "s.ecsv", "ppm")
    ei = sample_edges(lam)
    eo = np.linspace(ei[0], ei[-1], 17)
    out = resample_spectrum(ds, eo * u.um)
    assert out.transit_depth_ppm.dims == ("wavelength",)
    assert np.sum(out.transit_depth_ppm.values * np.diff(eo)) == pytest.approx(
        np.sum(ppm * np.diff(ei)), rel=1e-12)
    np.testing.assert_allclose(out.wavelength_lower.values, eo[:-1])
    with pytest.raises(InputError, match="extrapolated"):
        resample_spectrum(ds, [0.5, 2.0, 3.0])
    nan = resample_spectrum(ds, [0.5, 2.0, 3.0], outside="nan")
    assert np.isnan(nan.transit_depth_ppm.values[0]) and np.isfinite(nan.transit_depth_ppm[1])


def test_resample_model_output_bins():
    # a model spectrum with explicit bins rebinned onto coarser bins: exact bin averages
    import xarray as xr
    lo = np.array([1.0, 2.0, 3.0, 4.0])
    hi = lo + 1.0
    ds = xr.Dataset({"transit_depth_ppm": (("planet", "wavelength"), [[1.0, 2.0, 3.0, 4.0]])},
                    coords={"planet": ["p"], "wavelength": np.sqrt(lo * hi),
                            "wavelength_lower": ("wavelength", lo),
                            "wavelength_upper": ("wavelength", hi)})
    out = resample_spectrum(ds, [1.0, 3.0, 5.0])
    np.testing.assert_allclose(out.transit_depth_ppm.values, [[1.5, 3.5]])
    assert out.transit_depth_ppm.dims == ("planet", "wavelength")
