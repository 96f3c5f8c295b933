"""The engine's labelled arrays against the public xarray Datasets they stand for.

The engine asks the public functions for numpy arrays (``as_arrays=True``,
:class:`snrkit.labelled.Labelled`) so that xarray stays out of its hot path;
the Datasets the public functions return are built from the same arrays.
These tests check that both forms carry the same numbers, names, dimensions
and attributes (consistency, no outside source needed).
"""

import numpy as np
import pytest
import astropy.units as u

from snrkit.labelled import Labelled

PLANETS = dict(planet_mass=[5.0, 8.0] * u.M_earth, equilibrium_temperature=[500.0, 700.0] * u.K,
               resolution=30, planet_names=["a", "b"])


def _same(ds, lab):
    """Every variable, coordinate and attribute of ``lab`` equals the Dataset's."""
    other = lab.to_dataset()
    assert set(ds.data_vars) == set(other.data_vars) == set(lab.variables)
    assert set(ds.coords) == set(other.coords)
    for k in ds.data_vars:
        assert ds[k].dims == tuple(lab.dims(k)), k
        a, b = ds[k].values, lab[k]
        if a.dtype.kind == "f":
            np.testing.assert_array_equal(a, b, err_msg=k)
        else:
            assert np.array_equal(a, b), k
        assert ds[k].attrs == lab.attrs_of(k), k
    assert ds.attrs == lab.attrs


@pytest.mark.parametrize("scenario", ["h2-clear-solar", ["h2-clear-solar", "steam", "co2-thick"]])
@pytest.mark.parametrize("contributions", [False, True])
def test_spectrum_arrays_equal_the_dataset(scenario, contributions):
    from snrkit.atmosphere.spectrum import transmission_spectrum
    args = ([2.0, 2.5] * u.R_earth, [0.5, 0.6] * u.R_sun)
    ds = transmission_spectrum(scenario, *args, contributions=contributions, **PLANETS)
    lab = transmission_spectrum(scenario, *args, contributions=contributions, as_arrays=True,
                                **PLANETS)
    _same(ds, lab)
    if contributions:
        gas = str(ds["species"].values[0])
        np.testing.assert_array_equal(
            lab.sel("depth_without_species_ppm", species=gas),
            ds["depth_without_species_ppm"].sel(species=gas).values)


@pytest.mark.parametrize("contributions", [False, True])
def test_each_scenario_of_a_stack_is_its_own_spectrum(contributions):
    # nested consistency: a scenario within a list gives the spectrum it gives alone; the
    # species axis of the stack is the union, NaN where a scenario lacks the species
    from snrkit.atmosphere.spectrum import transmission_spectrum
    args = ([2.0, 2.5] * u.R_earth, [0.5, 0.6] * u.R_sun)
    names = ["h2-clear-solar", "steam", "co2-thick"]
    many = transmission_spectrum(names, *args, contributions=contributions, **PLANETS)
    assert list(many["scenario"].values) == names
    for name in names:
        one = transmission_spectrum(name, *args, contributions=contributions, **PLANETS)
        part = many.sel(scenario=name)
        for k in one.data_vars:
            np.testing.assert_array_equal(part[k].sel(species=one["species"]).values
                                          if "species" in one[k].dims else part[k].values,
                                          one[k].values, err_msg=f"{name} {k}")
        if contributions:
            absent = sorted(set(many["species"].values) - set(one["species"].values))
            assert np.all(np.isnan(part["depth_without_species_ppm"].sel(species=absent).values))


def test_precision_arrays_equal_the_dataset():
    from snrkit.io.systemfile import load_system
    from snrkit.io.tables import data_path
    from snrkit.photons.targets import system_precision
    system = load_system(data_path("demo", "cedar.toml"))
    kw = dict(resolution=20, readout_options=True, warn=False)
    _same(system_precision(system, "cold6m-prism-lowres", **kw),
          system_precision(system, "cold6m-prism-lowres", as_arrays=True, **kw))


def test_labelled_selects_and_refuses_unknown_names():
    lab = Labelled({"x": (("planet", "species"), np.arange(6.0).reshape(2, 3), {"units": "ppm"})},
                   coords={"species": ["H2O", "CO2", "CH4"], "planet": ["a", "b"]})
    np.testing.assert_array_equal(lab.sel("x", species="CO2"), [1.0, 4.0])
    np.testing.assert_array_equal(lab.sel("x", species="CH4", planet="b"), 5.0)
    assert lab.attrs_of("x") == {"units": "ppm"} and lab.dims("species") == ("species",)
    assert "x" in lab and "y" not in lab
    with pytest.raises(KeyError):
        lab["y"]
    with pytest.raises(ValueError):
        lab.sel("x", species="N2")
