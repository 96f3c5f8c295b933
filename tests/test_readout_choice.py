"""The readout is chosen for the test: groups that serve it best, saturated bins dropped.

Up-the-ramp duty cycle (n - 1) / (n + 1) for one reset per integration (Rauscher et
al. 2007, PASP 119, 768): a bright star limited to 2 unsaturated groups collects
light a third of the time; 5 groups with the brightest bins saturated collect it two
thirds of the time in the rest.  The chain tries the candidates of
snrkit.photons.readout and keeps, per target, the one needing the fewest transits.
"""

import json
import warnings

import numpy as np
import pytest

from snrkit import Star, Planet, System
from snrkit.cli.entry import main
from snrkit.photons.instruments import load_mode
from snrkit.photons.precision import transit_precision
from snrkit.photons.readout import readout_candidates, choose_readout
from snrkit.engine.transits import transits_for_system

PRISM = "cold6m-prism-lowres"


def bright_saturn(j_mag):
    # an invented hot Saturn around a Sun-like star near the prism's bright limit
    star = Star(5600.0, 0.95, mass=0.95, magnitudes={"J": j_mag})
    planet = Planet(9.0, 3.9, mass=80.0, impact_parameter=0.2, name=[f"bright J={j_mag}"])
    return System(star, planet)


def quiet(fn, *a, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return fn(*a, **kw)


def test_candidates_start_at_the_unsaturated_choice():
    mode = load_mode(PRISM)
    ds = quiet(transit_precision, mode, magnitude=[8.5, 10.5, 16.0], teff=5600.0,
               transit_duration=3.0, readout_options=True)
    groups = ds["option_groups"].values
    # option 0 is the "auto" choice that saturates nothing
    assert np.array_equal(groups[0], ds["groups_per_integration"].values)
    assert not ds["option_saturated"].values[0, 1:].any() or ds["star_too_bright"].values[0]
    # larger options saturate more bins, never fewer
    sat = ds["option_saturated"].values.sum(axis=-1)
    assert np.all(np.diff(sat, axis=0) >= 0)
    # a faint star already at max_groups has a single distinct option
    assert np.all(groups[:, 2] == mode.max_groups)
    # the duty cycle follows (n - 1) / (n + 1) for one frame per group and one reset
    duty = ds["option_duty_cycle"].values
    assert duty[:, 1] == pytest.approx((groups[:, 1] - 1) / (groups[:, 1] + 1), rel=1e-9)


def test_choice_never_needs_more_transits_than_the_unsaturated_readout():
    for j in (8.0, 9.0, 10.0, 11.0):
        system = bright_saturn(j)
        best = quiet(transits_for_system, system, PRISM, "h2-clear-solar", species="H2O",
                     sigma=10.0)["planets"][0]
        n0 = quiet(transits_for_system, system, PRISM, "h2-clear-solar", species="H2O",
                   sigma=10.0, readout=int(readout_candidates(
                       load_mode(PRISM), *_peaks(system))[0, 0]))["planets"][0]
        assert best["transits_needed"] is not None
        assert n0["transits_needed"] is None or best["transits_needed"] <= n0["transits_needed"]
        assert best["delta_chi2_per_transit"] >= 0.999 * n0["delta_chi2_per_transit"] or \
            best["asymptotic_significance_sigma"] > n0["asymptotic_significance_sigma"]


def _peaks(system):
    from snrkit.photons.binning import native_bin_edges
    from snrkit.photons.noise import bin_photon_rates
    from snrkit.photons.stellar_spectrum import planck_spectrum
    mode = load_mode(PRISM)
    spec = planck_spectrum(system.star.teff_K).normalised(system.star.magnitude("J"), "J")
    rates = bin_photon_rates(mode, spec, native_bin_edges(mode))
    return rates["peak_star"], rates["peak_other"]


def test_bright_star_accepts_saturated_bins():
    # At J = 10.5 the prism's unsaturated choice is the minimum of 2 groups (duty 1/3).
    # The CO2 test lives at 4-5 um, where this Sun-like star is faint: more groups
    # saturate the 1-2 um bins, which the test hardly needs, and give a duty cycle near
    # 0.8 where it matters -- the chain takes them and gains a factor > 2 in Delta chi^2
    # (up-the-ramp duty cycle (n - 1) / (n + 1), Rauscher et al. 2007, PASP 119, 768).
    system = bright_saturn(10.5)
    co2 = {"name": "co2-rich-h2", "mixing_ratios": {"He": 0.15, "H2O": 1e-3, "CO2": 1e-4},
           "fill_gas": "H2"}
    rec = quiet(transits_for_system, system, PRISM, co2, species="CO2")["planets"][0]
    mode = load_mode(PRISM)
    ro = choose_readout(mode, *_peaks(system))
    assert int(ro["groups"][0]) == mode.min_groups
    assert rec["groups_per_integration"] > mode.min_groups
    assert rec["bins_saturated"] > 0 and rec["duty_cycle"] > 0.6
    forced = quiet(transits_for_system, system, PRISM, co2, species="CO2",
                   readout=mode.min_groups)["planets"][0]
    assert forced["duty_cycle"] == pytest.approx(1 / 3)
    assert rec["bins_saturated"] > forced["bins_saturated"]
    assert rec["delta_chi2_per_transit"] > 2.0 * forced["delta_chi2_per_transit"]


def test_readout_reported_in_text_json_and_rank(capsys, tmp_path):
    from snrkit.io.tables import data_path
    cedar = str(data_path("demo", "cedar.toml"))
    assert main(["transits", cedar, "--planet", "Cedar b", "--mode", PRISM, "--json",
                 "--uncertainty-draws", "0"]) == 0
    rec = json.loads(capsys.readouterr().out)["planets"][0]
    for key in ("groups_per_integration", "duty_cycle", "bins_saturated", "degrees_of_freedom",
                "test_statistic", "null_model", "bins_used", "binning"):
        assert key in rec
    assert main(["transits", cedar, "--planet", "Cedar b", "--mode", PRISM,
                 "--uncertainty-draws", "0"]) == 0
    text = capsys.readouterr().out
    assert "groups per integration" in text and "duty cycle" in text and "degree of freedom" in text
    assert "saturated bin" in text and "null: flat line" in text
    out = tmp_path / "rank.ecsv"
    assert main(["rank", str(data_path("demo", "catalogue.ecsv")), "--mode", PRISM,
                 "--scenario", "h2-clear-solar", "--out", str(out), "--quiet", "--top", "3"]) == 0
    text = capsys.readouterr().out
    assert "test: atmosphere" in text and "sorted by hours" in text
    from astropy.table import Table
    t = Table.read(out)
    for col in ("groups_per_integration", "duty_cycle", "bins_saturated"):
        assert col in t.colnames
    ok = t["status"] == "ok"
    assert np.all(t["groups_per_integration"][ok] >= 2)
