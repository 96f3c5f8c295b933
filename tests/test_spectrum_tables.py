"""Integration: the spectrum solvers with snrkit's real opacity tables (helper A's)."""

import math

import numpy as np
import pytest
import astropy.units as u

from snrkit.atmosphere.spectrum import transmission_spectrum
from snrkit.atmosphere.mixture import wavelength_bin_edges
from snrkit.atmosphere.scenarios import preset_names

# hot giant, warm sub-Neptune, temperate rocky planet (invented values)
PLANETS = dict(planet_radius=[13.4, 2.6, 1.0], stellar_radius=[1.05, 0.72, 1.0],
               planet_mass=[254.0, 7.5, 1.0], equilibrium_temperature=[1300.0, 600.0, 260.0],
               planet_names=["giant", "sub-neptune", "rocky"])


# the temperate preset without its cold trap (a cold trap always takes the layered solver)
WELL_MIXED_TEMPERATE = {"scenario": "n2-o2-temperate", "cold_trap": {}}


@pytest.mark.parametrize("scenario", ["h2-clear-solar", WELL_MIXED_TEMPERATE, "h2-metal-rich"],
                         ids=["h2-clear-solar", "n2-o2-temperate-well-mixed", "h2-metal-rich"])
def test_layered_matches_analytic_with_real_tables(scenario):
    # The layered solver must match the analytic one within 0.1 H in the isothermal
    # clear case with line shapes at one pressure in both; real line, Rayleigh and CIA
    # opacities (Heng & Kitzmann 2017, MNRAS 470, 2972: the analytic formula is exact for
    # an isothermal atmosphere of constant opacity).
    kw = dict(PLANETS, resolution=50, pressure_broadening=False)
    an = transmission_spectrum(scenario, **kw)
    lay = transmission_spectrum(scenario, solver="layers", **kw)
    h = an.scale_height_km.values[:, None]
    dev = np.abs(lay.effective_height_km.values - an.effective_height_km.values) / h
    assert dev.max() < 0.1
    # the spectra have real structure (several scale heights of bands)
    assert np.all(np.ptp(an.effective_height_km.values / h, axis=1) > 3)


def test_solvers_agree_with_pressure_broadening_on_the_demo_planets():
    # Line shapes at each level's pressure (layered) and at the pressure of each root
    # with the local power law k ~ P^s (analytic): every bin of every preset on every
    # demo planet within 0.3 H (issue requirement; measured ~0.11 H).
    from snrkit.io.systemfile import load_system
    from snrkit.io.tables import data_path
    from snrkit.constants import R_EARTH, M_EARTH, R_SUN
    rows = []
    for name in ("alder.toml", "birch.toml", "cedar.toml"):
        d = load_system(data_path("demo", name))
        dd = d.derived_arrays()
        rows += [(dd["radius_m"][i] / R_EARTH, d.star.radius_m[i] / R_SUN,
                  dd["mass_kg"][i] / M_EARTH, dd["equilibrium_temperature_K"][i])
                 for i in range(len(d))]
    rp, rs, mp, teq = (np.array(c) for c in zip(*rows))
    edges = np.geomspace(0.6, 12.0, 91)
    import warnings
    from snrkit.errors import SnrkitWarning
    for name in preset_names():
        kw = dict(planet_mass=mp, equilibrium_temperature=teq, wavelength_edges=edges)
        with warnings.catch_warnings():
            # the co2-thick band cores reach the model top; both solvers cap them there
            warnings.simplefilter("ignore", SnrkitWarning)
            an = transmission_spectrum(name, rp, rs, **kw)
            lay = transmission_spectrum(name, rp, rs, solver="layers", **kw)
        h = an.scale_height_km.values[:, None]
        dev = np.abs(lay.effective_height_km.values - an.effective_height_km.values) / h
        assert np.nanmax(dev) < 0.3, name


def test_every_preset_runs_analytic():
    # every preset gives a finite spectrum (speed is a benchmark figure,
    # benchmarks/bench_spectrum.py, not a unit-test assertion)
    for name in preset_names():
        ds = transmission_spectrum(name, 13.0, 1.0, planet_mass=300.0,
                                   equilibrium_temperature=1300.0, resolution=100,
                                   top_pressure=1e-6)
        assert np.all(np.isfinite(ds.transit_depth_ppm.values))
        assert np.all(ds.transit_depth_ppm.values >= ds.reference_depth_ppm.values[:, None]
                      * (1 - 0.02))


def test_real_h2_rayleigh_slope():
    # Lecavelier des Etangs et al. 2008 (A&A 481, L83): dR/d ln(lambda) = -4 H for a
    # Rayleigh-scattering H2/He gas (real H2/He cross-sections, Dalgarno & Williams 1962)
    edges = wavelength_bin_edges(20, 0.35e-6, 0.6e-6) * 1e6
    ds = transmission_spectrum({"mixing_ratios": {"He": 0.15}, "fill_gas": "H2",
                                "reference_pressure": 0.1},
                               13.0, 1.0, planet_mass=300.0, equilibrium_temperature=1300.0,
                               wavelength_edges=edges)
    z = ds.effective_height_km.values[0] * 1e3
    h0 = ds.scale_height_km.values[0] * 1e3
    r0 = 13.0 * 6.3781e6
    h_loc = h0 * ((r0 + z.mean()) / r0) ** 2
    slope = np.polyfit(np.log(ds.wavelength.values), z, 1)[0]
    # the H2 King factor and refractivity dispersion steepen it slightly beyond -4
    assert -4.6 < slope / h_loc < -3.9


def test_water_removal_shows_the_band():
    ds = transmission_spectrum("h2-clear-solar", 13.0, 1.0, planet_mass=300.0,
                               equilibrium_temperature=1300.0, resolution=30,
                               contributions=True)
    band = ds.sel(wavelength=1.4, method="nearest")
    h_ppm = float(ds.annulus_ppm_per_scale_height[0])
    drop = float(band.transit_depth_ppm[0] - band.depth_without_species_ppm.sel(species="H2O")[0])
    assert drop > 1.0 * h_ppm          # water shapes the 1.4 um band by > 1 scale height


@pytest.mark.slow
def test_layered_r1000_full_spectrum():
    # the numerical solver gives a full R = 1000 spectrum (its time is a benchmark
    # figure, benchmarks/bench_spectrum.py, not a unit-test assertion)
    ds = transmission_spectrum("h2-clear-solar", 13.0, 1.0, planet_mass=300.0,
                               equilibrium_temperature=1300.0, resolution=1000,
                               solver="layers")
    assert ds.sizes["wavelength"] == math.ceil(1000 * math.log(100))
    assert np.all(np.isfinite(ds.transit_depth_ppm.values))


def test_refraction_raises_temperate_floor():
    # Robinson, Fortney & Hubbard 2017: refraction hides the lower atmosphere of a
    # temperate planet around a Sun-like star; the minimum depth rises.
    kw = dict(planet_mass=1.0, equilibrium_temperature=255.0, semi_major_axis=1.0 * u.AU,
              resolution=30, solver="layers", n_layers=100)
    no = transmission_spectrum("n2-o2-temperate", 1.0, 1.0, **kw)
    yes = transmission_spectrum("n2-o2-temperate", 1.0, 1.0, refraction=True, **kw)
    assert 0.1 < float(yes.refraction_floor_bar[0]) < 0.35
    h = float(no.scale_height_km[0])
    assert float(yes.effective_height_km.min()) > float(no.effective_height_km.min()) + h


def test_preset_feature_scale_heights_match_the_model():
    # issue 3 item 7: each preset documents the band amplitude (in scale heights) of the
    # full model; used as N_H, the quick estimate N_H * 2 H Rp / Rs^2 then reproduces
    # the model's peak-to-trough depth on the reference planet.
    import tomllib
    from snrkit.io.tables import data_path
    from snrkit.atmosphere.scenarios import load_scenario
    from snrkit.atmosphere.features import feature_scale_heights, FEATURE_REFERENCE_PLANETS, FEATURE_WAVELENGTH_RANGE_UM, FEATURE_RESOLUTION
    for name in preset_names():
        sc = load_scenario(name)
        ref = tomllib.loads(data_path("scenarios", f"{name}.toml").read_text())[
            "provenance"]["feature_reference_planet"]
        n_h = feature_scale_heights(sc, ref)
        assert sc.feature_scale_heights == pytest.approx(n_h, rel=0.02, abs=0.02), name
        if sc.featureless:
            continue
        lo, hi = FEATURE_WAVELENGTH_RANGE_UM
        ds = transmission_spectrum(sc, wavelength_edges=wavelength_bin_edges(
            FEATURE_RESOLUTION, lo * 1e-6, hi * 1e-6) * 1e6, **FEATURE_REFERENCE_PLANETS[ref])
        quick = sc.feature_scale_heights * float(ds.annulus_ppm_per_scale_height[0])
        full = float(np.ptp(ds.transit_depth_ppm.values[0]))
        assert quick == pytest.approx(full, rel=0.1), name
