"""Scenarios whose composition or temperature varies with height.

Cold traps (``[cold_trap]``), mixing-ratio profiles (``[mixing_ratio_profiles]``)
and tabulated temperature profiles (``temperature_profile = "tabulated"``):
parsing, one-line errors, per-level opacity, the analytic solver's cold trap
and its fallback to the layered solver for the others.
"""

import numpy as np
import pytest

from snrkit.atmosphere import spectrum as S
from snrkit.atmosphere import mixture
from snrkit.atmosphere.profiles import TabulatedProfile, hydrostatic_radius, IsothermalProfile
from snrkit.atmosphere.scenarios import load_scenario
from snrkit.errors import InputError, UnknownKeyError

TRAP = {"gas": "H2O", "tropopause_pressure": 0.2, "mixing_ratio_above": 4e-6}
BASE = {"mixing_ratios": {"O2": 0.21, "H2O": 3e-3, "CO2": 4e-4}, "fill_gas": "N2",
        "surface_pressure": 1.0}
# radius at the reference pressure, so that heights are comparable between scenarios
PLANET = dict(planet_radius=1.0, planet_mass=1.0, stellar_radius=1.0,
              equilibrium_temperature=255.0, radius_calibration="reference-pressure")


def test_presets_that_are_temperate_have_a_cold_trap():
    for name in ("n2-o2-temperate", "n2-co2-ch4-anoxic"):
        sc = load_scenario(name)
        assert sc.cold_trap["gas"] == "H2O"
        assert sc.cold_trap["tropopause_pressure_Pa"] == pytest.approx(22632.0)
        assert sc.cold_trap["mixing_ratio_above"] < 1e-5 < sc.mixing_ratios["H2O"]
        assert sc.needs_layers and not sc.well_mixed
    assert load_scenario("steam").cold_trap is None


def test_hydrogen_presets_carry_equilibrium_co2():
    # CO + H2O <-> CO2 + H2 at 1300 K with K = exp(4577.8/T - 4.33) (Moe 1962; value from
    # memory): [CO2] = K [CO][H2O]/[H2]; about Z^2, so 1e4 times more at 100 x solar
    import math
    k = math.exp(4577.8 / 1300.0 - 4.33)
    rich = load_scenario("h2-metal-rich").mixing_ratios
    assert rich["CO2"] == pytest.approx(k * rich["CO"] * rich["H2O"] / rich["H2"], rel=2e-3)
    assert 1e-4 < rich["CO2"] < 1e-2
    solar = load_scenario("h2-clear-solar")
    x_solar = k * solar.mixing_ratios["CO"] * solar.mixing_ratios["H2O"] / solar.mixing_ratios["H2"]
    assert 5e3 < rich["CO2"] / x_solar < 2e4
    # below the presets' 1e-7 threshold: left out, with its value in the method
    assert "CO2" not in solar.mixing_ratios and "CO2 9e-08" in solar.provenance["method"]


def test_every_preset_names_the_source_of_each_abundance():
    from snrkit.atmosphere.scenarios import preset_names
    for name in preset_names():
        sc = load_scenario(name)
        for gas in sc.mixing_ratios:
            assert f"source_{gas}" in sc.provenance, (name, gas)
            assert sc.provenance[f"source_{gas}"].strip(), (name, gas)


def test_level_mixing_ratios_step_at_the_tropopause():
    sc = load_scenario({**BASE, "cold_trap": TRAP})
    p = np.array([[1e5, 3e4, 1.9e4, 1e2]])
    x, mu = sc.level_mixing_ratios(p)
    np.testing.assert_allclose(x["H2O"][0], [3e-3, 3e-3, 4e-6, 4e-6])
    np.testing.assert_allclose(sum(x.values()), 1.0)
    # the fill gas takes the water's place, so mu rises by (M_N2 - M_H2O) x 2.996e-3
    assert mu[0, -1] - mu[0, 0] == pytest.approx((28.0134 - 18.0153) * (3e-3 - 4e-6), rel=1e-3)
    # O2 and CO2 are unchanged
    np.testing.assert_allclose(x["O2"][0], 0.21)


def test_mixing_ratio_profile_interpolates_in_log_pressure():
    sc = load_scenario({**BASE, "mixing_ratios": {**BASE["mixing_ratios"], "O3": 1e-6},
                        "mixing_ratio_profiles": {"O3": {"pressure": [1.0, 0.01],
                                                         "mixing_ratio": [0.0, 1e-5]}}})
    x, _ = sc.level_mixing_ratios(np.array([2e5, 1e5, 1e4, 1e3, 1.0]))
    np.testing.assert_allclose(x["O3"], [0.0, 0.0, 5e-6, 1e-5, 1e-5], atol=1e-15)


@pytest.mark.parametrize("changes, exc, match", [
    ({"cold_trap": {**TRAP, "gas": "N2"}}, InputError, "cold_trap.gas.*other than the fill gas"),
    ({"cold_trap": {**TRAP, "gas": "CH4"}}, InputError, "cold_trap.gas"),
    ({"cold_trap": {**TRAP, "tropopause_pressure": 1.5}}, InputError, "below the surface"),
    ({"cold_trap": {**TRAP, "tropopause_pressure": -1}}, InputError, "tropopause_pressure"),
    ({"cold_trap": {**TRAP, "mixing_ratio_above": 0.01}}, InputError,
     r"mixing_ratio_above.*\[0, 0.003\]"),
    ({"cold_trap": {**TRAP, "mixing_ratio_above": "low"}}, InputError, "mixing_ratio_above"),
    ({"cold_trap": {"gas": "H2O", "tropopause_pressure": 0.2}}, InputError,
     "mixing_ratio_above.*required"),
    ({"cold_trap": {**TRAP, "tropopause": 0.2}}, UnknownKeyError, "tropopause_pressure"),
    ({"cold_trap": "H2O"}, InputError, "cold_trap"),
    ({"temperature_profile": "tabulated"}, InputError, "temperature_table"),
    ({"temperature_table": {"pressure": [1, 0.1], "temperature": [280, 220]}}, InputError,
     "tabulated"),
    ({"temperature_profile": "tabulated",
      "temperature_table": {"pressure": [1, 0.1, 0.1], "temperature": [280, 220, 220]}},
     InputError, "strictly"),
    ({"temperature_profile": "tabulated",
      "temperature_table": {"pressure": [1, 0.1], "temperature": [280, 0]}},
     InputError, r"temperature_table.temperature.*\(0, "),
    ({"temperature_profile": "tabulated",
      "temperature_table": {"pressure": [1, 0.1], "temperature": [280]}},
     InputError, "at least 2"),
    ({"temperature_profile": "tabulated", "temperature": 300,
      "temperature_table": {"pressure": [1, 0.1], "temperature": [280, 220]}},
     InputError, "not both"),
    ({"mixing_ratio_profiles": {"O3": {"pressure": [1, 0.1], "mixing_ratio": [0, 1e-6]}}},
     InputError, "mixing_ratio_profiles.O3"),
    ({"mixing_ratio_profiles": {"CO2": {"pressure": [1, 0.1], "mixing_ratio": [0, 2.0]}}},
     InputError, r"\[0, 1\]"),
    ({"mixing_ratio_profiles": {"CO2": {"pressure": [1, 0.1], "mixing_ratio": [0, 0.9]}}},
     InputError, "room for the fill gas"),
    ({"mixing_ratio_profiles": {"H2O": {"pressure": [1, 0.1], "mixing_ratio": [1e-3, 0]}},
      "cold_trap": TRAP}, InputError, "one vertical rule per gas"),
])
def test_bad_vertical_keys_one_line(changes, exc, match):
    with pytest.raises(exc, match=match) as err:
        load_scenario({**BASE, **changes})
    assert "\n" not in str(err.value)


def test_new_composition_without_the_trapped_gas_drops_the_trap():
    sc = load_scenario({"scenario": "n2-o2-temperate", "mixing_ratios": {"CO2": 0.01},
                        "fill_gas": "N2"})
    assert sc.cold_trap is None and sc.well_mixed
    kept = load_scenario({"scenario": "n2-o2-temperate", "cloud_top_pressure": 0.6})
    assert kept.cold_trap is not None
    off = load_scenario({"scenario": "n2-o2-temperate", "cold_trap": {}})
    assert off.cold_trap is None


def test_tabulated_profile_interpolates_and_extends_isothermally():
    prof = TabulatedProfile([1e5, 1e4, 1e3], [300.0, 200.0, 250.0], factor=[1.0, 2.0],
                            reference_pressure_Pa=[1e5, 1e4])
    t = prof.temperature(np.array([[1e6, 1e5, np.sqrt(1e5 * 1e4), 1e3, 1.0]] * 2))
    np.testing.assert_allclose(t[0], [300.0, 300.0, 250.0, 250.0, 250.0])
    np.testing.assert_allclose(t[1], 2 * t[0])
    np.testing.assert_allclose(prof.reference_temperature(), [300.0, 400.0])
    # a constant table is the isothermal profile, down to the hydrostatic radii
    from snrkit.atmosphere.profiles import pressure_levels
    levels = pressure_levels(np.array([1e5]), np.array([1.0]), 50)
    flat = TabulatedProfile([1e6, 1e-2], [280.0, 280.0])
    r1 = hydrostatic_radius(levels, flat, [29.0], [6.4e6], [1e5], [9.8])
    r2 = hydrostatic_radius(levels, IsothermalProfile([280.0]), [29.0], [6.4e6], [1e5], [9.8])
    np.testing.assert_allclose(r1, r2, rtol=1e-12)


def test_per_level_mixing_ratios_reach_lines_rayleigh_and_cia():
    # one call with per-level arrays equals one call per level with scalars
    src = mixture._default_opacity_source()
    edges = mixture.wavelength_bin_edges(20, 0.6e-6, 8e-6)
    temp = np.array([[280.0, 220.0, 220.0]])
    pres = np.array([[1e5, 1e4, 1e2]])
    x = {"H2O": np.array([[3e-3, 4e-6, 4e-6]]), "O2": np.array([[0.21, 0.21, 0.21]]),
         "N2": np.array([[0.787, 0.79, 0.79]])}
    many = mixture.mixture_opacity(src, x, edges, temp, 4, pressure_Pa=pres)
    for j in range(3):
        one = mixture.mixture_opacity(src, {k: float(v[0, j]) for k, v in x.items()}, edges,
                                temp[:, j:j + 1], 4, pressure_Pa=pres[:, j:j + 1])
        for key in ("line", "continuum", "cia"):
            np.testing.assert_allclose(many[key][:, j], one[key][:, 0], rtol=1e-9, err_msg=key)
    # and the levels do differ (water removed above the trap)
    assert not np.allclose(many["line"][:, 0], many["line"][:, 1], rtol=1e-3, atol=0)
    assert not np.allclose(many["continuum"][:, 0], many["continuum"][:, 1], rtol=1e-3, atol=0)


def test_analytic_solver_handles_a_cold_trap():
    # The analytic solver takes a cold trap through its two compositions (the radius is
    # median(r_stratosphere, r_tropopause, r_troposphere), snrkit.atmosphere.spectrum):
    # within 0.3 H of the layered solver in every bin.
    trap = {**BASE, "cold_trap": TRAP}
    a = S.transmission_spectrum(trap, resolution=20, solver="analytic", **PLANET)
    b = S.transmission_spectrum(trap, resolution=20, solver="layers", **PLANET)
    assert "solver_used" not in a.attrs
    h = float(b["scale_height_km"].values[0])
    dev = np.abs(a["effective_height_km"].values - b["effective_height_km"].values) / h
    assert dev.max() < 0.3
    # the trap lowers the water bands and nothing else rises
    w = a["wavelength"].values
    band = (w > 5.5) & (w < 7.5)
    mixed = S.transmission_spectrum(BASE, resolution=20, solver="layers", **PLANET)
    drop = (mixed["effective_height_km"] - b["effective_height_km"]).values[0]
    # (1 m, 1e-4 H: the water profile changes the per-level mean molecular weight slightly)
    assert np.all(drop > -1e-3)
    assert np.max(drop[band]) > 3 * float(b["scale_height_km"].values[0])
