"""The whole chain: precision + spectrum + test + stacker, and its commands.

The physics of each link is checked against its sources in the layer's own
tests (test_detect.py: Wilks, scipy.stats chi2/ncx2, Monte Carlo; test_photons*:
photon statistics; test_spectrum*: Heng & Kitzmann 2017).  Here the links must
agree with each other: the chain's Delta chi^2 equals the stacker's on the
chain's own arrays, and the noise and spectrum it uses are those of the layers.
"""

import json

import numpy as np
import pytest

from snrkit.cli.entry import main
from snrkit.errors import InputError
from snrkit.io.systemfile import load_system, read_system_text
from snrkit.io.tables import data_path
from snrkit.engine.transits import transits_for_system, contrast_for_system

CEDAR = str(data_path("demo", "cedar.toml"))
ALDER = str(data_path("demo", "alder.toml"))
PRISM = "cold6m-prism-lowres"


@pytest.fixture(scope="module")
def cedar():
    return load_system(CEDAR)


@pytest.fixture(scope="module")
def co2_result(cedar):
    return transits_for_system(cedar.select("Cedar b"), PRISM, species="CO2", resolution=60)


def species_chi2(data, null, sig):
    """min over level c and 0 <= b <= 2 of chi^2(data - c - b null), by weighted lstsq.

    Independent of snrkit.stats.detect: the species null of snrkit.stats.hypotheses (the
    scenario without the gas, its remaining features scaled by b in [0, 2]).
    """
    w = 1 / sig
    x = np.column_stack([np.ones_like(null), null]) * w[:, None]
    coef, *_ = np.linalg.lstsq(x, data * w, rcond=None)
    b = np.clip(coef[1], 0.0, 2.0)
    resid = data - b * null
    level = np.sum(resid / sig ** 2) / np.sum(1 / sig ** 2)
    return float(np.sum((resid - level) ** 2 / sig ** 2))


def test_chain_matches_stacker_on_its_arrays(co2_result):
    ds = co2_result["dataset"]
    rec = co2_result["planets"][0]
    ok = np.isfinite(ds["white_noise_ppm_per_transit"].values[0])
    data = ds["model_ppm"].values[0][ok]
    null = ds["null_ppm"].values[0][ok]
    sig1 = ds["noise_ppm_per_transit"].values[0][ok]
    lam = species_chi2(data, null, sig1)
    assert rec["delta_chi2_per_transit"] == pytest.approx(lam, rel=1e-9)
    assert rec["significance_per_transit_sigma"] == pytest.approx(np.sqrt(lam), rel=1e-9)
    # transits needed: the smallest N with Z(N) >= 5 (non-averaging floor: recompute per N)
    floor = ds["floor_ppm"].values[0][ok]
    white = ds["white_noise_ppm_per_transit"].values[0][ok]
    n = next(n for n in range(1, 500)
             if species_chi2(data, null, np.sqrt(white ** 2 / n + floor ** 2)) >= 25.0)
    assert rec["transits_needed"] == n
    # hours: N (T14 + baseline + 1 h overhead)
    assert rec["hours_total"] == pytest.approx(n * (rec["t14_hours"] + rec["baseline_hours"] + 1.0))


def test_required_keys(co2_result):
    rec = co2_result["planets"][0]
    for key in ("transits_needed", "reachable", "limiting_term", "significance_per_transit_sigma",
                "hours_total"):
        assert key in rec
    assert rec["status"] == "ok" and rec["reachable"]


def test_flat_scenario_has_no_signal(cedar):
    res = transits_for_system(cedar.select("Cedar b"), PRISM, scenario="flat", resolution=30)
    rec = res["planets"][0]
    assert rec["transits_needed"] is None and rec["limiting_term"] == "no signal"


def test_transit_limit_reported(cedar):
    res = transits_for_system(cedar.select("Cedar c"), PRISM, species="CO2", n_max=3,
                              resolution=30, floor_ppm=0.0)
    rec = res["planets"][0]
    assert rec["transits_needed"] is None and rec["status"] == "not_reachable"
    assert "3 transits" in rec["reason"]


def test_saturating_mode_is_said_so():
    text = data_path("demo", "alder.toml").read_text().replace("J = 10.27", "J = 4.0").replace(
        "H = 10.02", "H = 3.7").replace("Ks = 9.97", "Ks = 3.6").replace("V = 11.35", "V = 5.2")
    system = read_system_text(text)
    res = transits_for_system(system, PRISM, resolution=30)
    rec = res["planets"][0]
    assert rec["status"] == "saturated" and rec["transits_needed"] is None
    assert "brightest usable magnitude" in rec["reason"]
    assert any("too bright" in n for n in res["notes"])


def test_bad_inputs(cedar):
    one = cedar.select("Cedar b")
    with pytest.raises(InputError, match="gas of scenario"):
        transits_for_system(one, PRISM, species="CH4", resolution=30)
    with pytest.raises(InputError):
        transits_for_system(one, PRISM, sigma=0.0)
    with pytest.raises(InputError):
        transits_for_system(one, PRISM, probabilities=(1.2,))
    with pytest.raises(InputError):
        transits_for_system(one, PRISM, scenario="no-such-scenario")
    with pytest.raises(InputError):
        transits_for_system(one, PRISM, test="molecule:CO2")


def test_user_spectrum_on_another_grid_is_resampled(cedar, tmp_path):
    # An alternative given as a file on its own (finer) grid is rebinned, not refused.
    wl = np.linspace(0.5, 5.5, 2000)
    f = tmp_path / "alt.csv"
    depth = 5400.0 + 30 * np.exp(-0.5 * ((wl - 4.3) / 0.1) ** 2)
    f.write_text("wavelength_um,depth_ppm\n" + "\n".join(f"{a},{b}" for a, b in zip(wl, depth)))
    from snrkit.atmosphere import user_spectrum
    ds = user_spectrum.read_user_spectrum(f, "ppm", wavelength_unit="um")
    assert ds.sizes["wavelength"] == 2000
    res = transits_for_system(cedar.select("Cedar b"), PRISM, against=str(f), resolution=30,
                              against_wavelength_unit="um")
    assert res["planets"][0]["null_model"].startswith("user spectrum")
    # no unit in the file and none given: a clear error, not a guess
    with pytest.raises(InputError, match="unit"):
        transits_for_system(cedar.select("Cedar b"), PRISM, against=str(f), resolution=30)


def test_contamination_vanishes_with_the_covering_fraction(cedar):
    # Rackham, Apai & Giampapa 2018: the data are epsilon x the true depth.  As the
    # unocculted covering fraction goes to 0, epsilon -> 1 and the answer must be the
    # one without spots, whether the signature is fitted or not.
    one = cedar.select("Cedar b")
    base = transits_for_system(one, PRISM, species="CO2", resolution=40)["planets"][0]
    for fitted in (True, False):
        tiny = transits_for_system(one, PRISM, species="CO2", resolution=40, contamination={
            "spot_fraction": 1e-9, "spot_temperature_contrast": 300.0, "fitted": fitted})["planets"][0]
        assert tiny["delta_chi2_per_transit"] == pytest.approx(base["delta_chi2_per_transit"], rel=1e-6)


def test_unfitted_contamination_mimics_an_atmosphere(cedar):
    # A featureless planet (the flat scenario) in front of a spotted star.  The spots'
    # chromatic signature (Rackham, Apai & Giampapa 2018, ApJ 853, 122) cannot mimic the
    # flat scenario's own (absent) features, so the nested atmosphere test finds nothing;
    # the model-agnostic goodness of fit of a flat line does reject it, and all of its
    # Delta chi^2 is the star's: the status says the detection would be of the star.
    one = cedar.select("Cedar b")
    spots = {"spot_fraction": 0.1, "spot_temperature_contrast": 500.0}
    nested = transits_for_system(one, PRISM, scenario="flat", resolution=40,
                                 contamination=dict(spots, fitted=False))["planets"][0]
    assert nested["delta_chi2_per_transit"] == 0.0 and nested["status"] == "no_signal"
    bias = transits_for_system(one, PRISM, scenario="flat", resolution=40, test="goodness-of-fit",
                               contamination=dict(spots, fitted=False))["planets"][0]
    assert bias["delta_chi2_per_transit"] > 0
    assert bias["limiting_term"] == "stellar contamination (bias)"
    assert bias["contamination_share"] > 0.99
    assert bias["status"] == "stellar_contamination" and "of the star" in bias["reason"]
    # fitted with its prior (amplitude 1 +/- 1, the stated spots) the signature is absorbed
    fit = transits_for_system(one, PRISM, scenario="flat", resolution=40, test="goodness-of-fit",
                              contamination=dict(spots, fitted=True))["planets"][0]
    assert fit["delta_chi2_per_transit"] <= 1.0 + 1e-9
    with pytest.raises(InputError):
        transits_for_system(one, PRISM, contamination={"spot_fraction": 1.5})
    with pytest.raises(InputError):
        transits_for_system(one, PRISM, contamination={"spot_fraction": 0.1,
                                                       "spot_temperature_contrast": 5000.0})


def test_unfitted_contamination_that_cancels_a_signal_is_named(cedar):
    # Spots (Rackham, Apai & Giampapa 2018) that are not fitted can bias a species test's
    # Delta chi^2 to zero although the planet alone gives one: the answer is then the star's
    # (status stellar_contamination, share 1), not "the two models give the same spectrum"
    one = cedar.select("Cedar b")
    spots = {"spot_fraction": 0.1, "spot_temperature_contrast": 1000.0, "fitted": False}
    clean = transits_for_system(one, PRISM, species="H2O", resolution=40)["planets"][0]
    biased = transits_for_system(one, PRISM, species="H2O", resolution=40,
                                 contamination=spots)["planets"][0]
    assert clean["delta_chi2_per_transit"] > 0 and clean["status"] != "no_signal"
    assert biased["delta_chi2_per_transit"] == 0.0      # here the bias cancels the signal
    assert biased["status"] == "stellar_contamination", biased["reason"]
    assert biased["contamination_share"] == 1.0 and "cancels" in biased["reason"]
    assert biased["limiting_term"] == "stellar contamination (bias)"


def test_fisher_errors_through_the_chain(cedar):
    # Expected 1-sigma errors at the N needed: finite for the CO2 abundance of the
    # CO2-rich planet, and no larger when more transits are assumed (more data).
    one = cedar.select("Cedar b")
    rec = transits_for_system(one, PRISM, species="H2O", resolution=40, fisher=True)["planets"][0]
    errs = rec["fisher_errors"]
    assert errs["radius_factor"] is not None and errs["radius_factor"] > 0
    assert errs["temperature_factor"] is not None and errs["temperature_factor"] > 0


def test_unbound_scenario_is_not_credited(cedar):
    # An H2 envelope on a small rocky planet around a late M dwarf has H/Rp > 0.1:
    # not a bound hydrostatic atmosphere, so no transits are claimed.
    # Cedar c: 1.16 M_earth, 1.05 R_earth, Teq 261 K -> Lambda = G M m_H / (k T R) ~ 32,
    # H/Rp for mu = 2.3 ~ 0.014: bound by both criteria (Fossati et al. 2017 threshold 20)
    rec = transits_for_system(cedar.select("Cedar c"), PRISM, scenario="h2-clear-solar",
                              resolution=30)["planets"][0]
    assert 25 < rec["jeans_parameter"] < 40 and rec["status"] == "ok"
    assert rec["escape_warning"] is None
    # a hot low-mass version of it has Lambda ~ 4.5 < 20 (Fossati et al. 2017, A&A 598,
    # A90): escape screening informs -- the answer carries a warning and stays ranked --
    # and leaves the planet out only when the caller asks for a minimum
    from snrkit.io.systemfile import read_system_text
    text = data_path("demo", "cedar.toml").read_text().replace("period = 9.00 ", "period = 0.60 ")
    hot = read_system_text(text).select("Cedar c")
    rec = transits_for_system(hot, PRISM, scenario="h2-clear-solar", resolution=30)["planets"][0]
    assert rec["jeans_parameter"] < 20
    assert rec["escape_warning"] and "Jeans" in rec["escape_warning"]
    assert rec["status"] != "escaping_atmosphere"
    rec = transits_for_system(hot, PRISM, scenario="h2-clear-solar", resolution=30,
                              min_jeans=20)["planets"][0]
    assert rec["status"] == "escaping_atmosphere" and rec["transits_needed"] is None
    # and a thin CO2 atmosphere on the same planet is fine
    rec = transits_for_system(cedar.select("Cedar c"), PRISM, scenario="co2-thick",
                              resolution=30)["planets"][0]
    assert rec["scale_height_over_radius"] < 0.01 and rec["status"] != "unbound_atmosphere"


def test_uncertainty_spread_is_seeded(cedar):
    one = cedar.select("Cedar c")
    # CO2: Cedar c's cold-trapped water is out of reach, so H2O has no spread to draw
    a = transits_for_system(one, PRISM, species="CO2", resolution=30, uncertainty_draws=100, seed=4)
    b = transits_for_system(one, PRISM, species="CO2", resolution=30, uncertainty_draws=100, seed=4)
    assert a["planets"][0]["transits_needed_spread"] == b["planets"][0]["transits_needed_spread"]
    s = a["planets"][0]["transits_needed_spread"]
    # a 10% radius error moves Rp^3 by ~30%: the 16-84% range is not a single value
    # (None: beyond the transit cap, i.e. larger than any finite p16)
    assert s["p16"] is not None
    assert s["p84"] is None or s["p16"] < s["p84"]


def test_contrast_matrix(cedar):
    res = contrast_for_system(cedar, PRISM, "co2-thick,steam,flat", resolution=30)
    assert res["scenarios"] == ["co2-thick", "steam", "flat"]
    for p in res["planets"]:
        m = p["transits_needed"]
        assert all(m[i][i] is None for i in range(3))
        assert all(isinstance(m[i][j], int) for i in range(3) for j in range(3) if i != j)
    with pytest.raises(InputError):
        contrast_for_system(cedar, PRISM, "steam")


def test_transits_cli_json(capsys, tmp_path):
    png = tmp_path / "t.png"
    rc = main(["transits", CEDAR, "--mode", PRISM, "--species", "CO2", "--resolution", "40",
               "--uncertainty-draws", "50", "--json", "--plot", str(png)])
    out, err = capsys.readouterr()
    assert rc == 0
    doc = json.loads(out)
    assert [p["name"] for p in doc["planets"]] == ["Cedar b", "Cedar c"]
    b, c = doc["planets"]
    assert isinstance(b["transits_needed"], int) and b["reachable"] is True and b["hours_total"] > 0
    # Cedar c at this coarse binning is limited by the 20 ppm floor: null, with the reason
    assert c["reachable"] is (c["transits_needed"] is not None)
    if not c["reachable"]:
        assert c["limiting_term"] == "noise floor" and c["hours_total"] is None
    assert png.stat().st_size > 10_000
    rc = main(["transits", CEDAR, "--mode", PRISM, "--species", "CH4"])
    assert rc == 2 and "CO2" in capsys.readouterr().err
    rc = main(["transits", CEDAR, "--mode", PRISM, "--sigma", "-1"])
    assert rc == 2


def test_contrast_cli(capsys):
    rc = main(["contrast", ALDER, "--mode", "cold6m-grism-2.4-5um", "--scenarios",
               "h2-clear-solar,h2-cloudy-solar,flat", "--resolution", "50"])
    out, _ = capsys.readouterr()
    assert rc == 0 and "true \\ rejected" in out
    rc = main(["contrast", ALDER, "--mode", "cold6m-grism-2.4-5um", "--scenarios",
               "h2-clear-solar,flat", "--json"])
    assert rc == 0 and json.loads(capsys.readouterr().out)["planets"][0]["transits_needed"][0][1]


def test_demo_writes_results_folder(demo_run):
    # the session's one `snrkit demo` run (tests/conftest.py), not a second one
    assert demo_run["rc"] == 0
    files = {p.name for p in demo_run["out"].iterdir()}
    assert {"summary.txt", "cedar_spectra.ecsv", "Cedar_b_CO2.png", "Cedar_c_atmosphere.json",
            "report.html", "report.json"} <= files
    assert "transits for 5 sigma" in (demo_run["out"] / "summary.txt").read_text()
    assert not any(name.startswith(".") for name in files)   # no temporary files left


def test_refit_can_only_lower_delta_chi2_and_finds_the_degeneracy():
    # h2-cloudy-solar is h2-clear-solar with a cloud deck at 1 mbar; with the cloud-top
    # pressure free, the cloudy model moves its deck below the photosphere and becomes
    # the clear spectrum, so the "cloudy" alternative can no longer be rejected.
    alder = load_system(ALDER)
    fixed = transits_for_system(alder, "cold6m-grism-2.4-5um", against="h2-cloudy-solar",
                                resolution=40)["planets"][0]
    free = transits_for_system(alder, "cold6m-grism-2.4-5um", against="h2-cloudy-solar",
                               resolution=40, refit=("cloud_top_pressure",))["planets"][0]
    assert 1 <= (fixed["transits_needed"] or 0) <= 3   # clear against a 1 mbar deck: a few transits
    assert free["delta_chi2_per_transit"] < 1e-3 * fixed["delta_chi2_per_transit"]
    assert free["refit"]["cloud_top_pressure_bar"] > 0.1
    with pytest.raises(InputError):
        transits_for_system(alder, "cold6m-grism-2.4-5um", refit=("temperature",))
    with pytest.raises(InputError):
        transits_for_system(alder, "cold6m-grism-2.4-5um", against="flat", refit=("albedo",))


def test_datasets_round_trip_through_netcdf(tmp_path):
    # The result and precision Datasets are plain netCDF: no attribute clashes with
    # the writer (a global "mode" attribute did, with the scipy engine, the one a
    # plain install has)
    import xarray as xr
    from snrkit.photons.targets import system_precision
    system = load_system(ALDER)
    grism = "cold6m-grism-2.4-5um"
    for name, ds in (("result", transits_for_system(system, grism, resolution=30)["dataset"]),
                     ("precision", system_precision(system, grism, resolution=30))):
        path = tmp_path / f"{name}.nc"
        ds.to_netcdf(path, engine="scipy")
        with xr.open_dataset(path, engine="scipy") as back:
            assert back.attrs["instrument_mode"] == grism
            for v in ("transit_depth_ppm", "model_ppm", "noise_budget_ppm"):
                if v in ds:
                    np.testing.assert_allclose(back[v].values, ds[v].values)
