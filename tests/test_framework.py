"""One statistical framework: the invariants that tie the three questions together.

Every test is a likelihood-ratio test between nested models on noise-free
(Asimov) data (Cowan, Cranmer, Gross & Vitells 2011, Eur. Phys. J. C 71, 1554,
"C11").  These property tests check the relations that must hold between the
questions, over many random planets, scenarios and modes:

* the atmosphere test is at least as significant as any species test of the same
  atmosphere at every N (the flat line is a member of the species null, b = 0);
* a scenario whose only absorber is X gives nearly the same answer to both;
* --against flat, --atmosphere and contrast agree exactly;
* in the floor-limited regime the answer barely depends on the binning;
* a fitted nuisance never raises Delta chi^2; more transits never lower it;
* without a floor, Z = sqrt(N Delta chi^2_1) exactly (C11, Sec. 3.5 and 3.8).
"""

import json
import warnings

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from snrkit import Star, Planet, System
from snrkit.stats import stacker
from snrkit.stats import likelihood
from snrkit.cli.entry import main
from snrkit.io.systemfile import load_system
from snrkit.io.tables import data_path
from snrkit.engine.transits import transits_for_system, contrast_for_system
from snrkit.atmosphere.scenarios import load_scenario
from snrkit.atmosphere.opacity import OPACITY_SPECIES

PRISM = "cold6m-prism-lowres"
MODES = ("cold6m-prism-lowres", "cold6m-grism-2.4-5um", "space2.4m-grism-scan", "survey1m-lowres")
SCENARIOS = ("h2-clear-solar", "h2-metal-rich", "h2-cloudy-solar", "h2-warm-solar", "steam",
             "co2-thick", "n2-o2-temperate", "n2-co2-ch4-anoxic")


def random_system(rng, n, small=False):
    """Seeded random transiting planets around main-sequence hosts (invented)."""
    teff = rng.uniform(3100.0, 6400.0, n)
    rs = np.clip(teff / 5772.0, 0.2, 1.4) ** 1.3           # rough main-sequence radii
    ms = np.clip(rs, 0.18, 1.3)
    rp = rng.uniform(1.0, 3.0, n) if small else np.exp(rng.uniform(np.log(1.5), np.log(13.0), n))
    star = Star(teff, rs, mass=ms, magnitudes={"J": rng.uniform(8.0, 12.5, n)})
    planet = Planet(rp, rng.uniform(1.5, 25.0, n), impact_parameter=rng.uniform(0.0, 0.6, n),
                    name=[f"random {i}" for i in range(n)])
    return System(star, planet)


def quiet(fn, *a, **kw):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return fn(*a, **kw)


def test_atmosphere_at_least_species_over_random_cases():
    # Over 4 modes x 8 scenarios x 8 random planets x every absorbing gas (> 200 cases):
    # * on one shared readout, Z(atmosphere) >= Z(species) at every N of the curve.  Not a
    #   theorem for arbitrary nulls; it holds here because the species null carries the
    #   flat line (b = 0), so no failure is allowed (the issue asks for under 5%), and any
    #   output where it failed would have to say so in a sentence;
    # * with the readout chosen per test, the atmosphere never needs more transits (its
    #   own best readout is at least as good as the species test's).
    rng = np.random.default_rng(20261202)
    cases = failures = 0
    for k, sc_name in enumerate(SCENARIOS):
        mode = MODES[k % len(MODES)]
        system = random_system(rng, 8, small=sc_name.startswith(("n2", "co2", "steam")))
        kw = dict(resolution=30, n_max=200)
        atm = quiet(transits_for_system, system, mode, sc_name, readout="unsaturated", **kw)
        atm_best = quiet(transits_for_system, system, mode, sc_name, **kw) if k < 3 else None
        gases = [g for g in load_scenario(sc_name).mixing_ratios if g in OPACITY_SPECIES]
        for gas in gases:
            sp = quiet(transits_for_system, system, mode, sc_name, species=gas,
                       readout="unsaturated", **kw)
            ok = np.array([p["status"] not in ("saturated", "unbound_atmosphere")
                           for p in sp["planets"]])
            za = atm["dataset"]["significance"].values[ok]
            zs = sp["dataset"]["significance"].values[ok]
            bad = np.any(zs > za * (1 + 1e-9) + 1e-12, axis=-1)
            cases += int(ok.sum())
            failures += int(bad.sum())
            for p, b in zip(np.array(sp["planets"], dtype=object)[ok], bad):
                assert ("exceeds_atmosphere_test" in p) == bool(b)
            if k < 3:                                     # (time: three scenarios suffice)
                sp_best = quiet(transits_for_system, system, mode, sc_name, species=gas, **kw)
                for a, b in zip(atm_best["planets"], sp_best["planets"]):
                    if b["transits_needed"] is not None and a["status"] == "ok":
                        assert a["transits_needed"] <= b["transits_needed"]
    assert cases >= 200
    assert failures == 0, f"{failures} of {cases} cases"


def test_single_absorber_scenario_gives_nearly_the_same_answer():
    # A scenario whose only absorber is X: the species test and the atmosphere test
    # differ only by what the continuum (Rayleigh + CIA, scaled by the free factor of
    # the species null) can mimic.
    only_h2o = {"name": "h2o-only", "mixing_ratios": {"H2O": 1e-3, "He": 0.15},
                "fill_gas": "H2", "temperature_factor": 1.0}
    system = load_system(data_path("demo", "birch.toml"))
    atm = quiet(transits_for_system, system, PRISM, only_h2o)["planets"][0]
    sp = quiet(transits_for_system, system, PRISM, only_h2o, species="H2O")["planets"][0]
    assert sp["delta_chi2_per_transit"] <= atm["delta_chi2_per_transit"]
    assert sp["delta_chi2_per_transit"] >= 0.8 * atm["delta_chi2_per_transit"]


@pytest.mark.parametrize("name", ["alder.toml", "birch.toml", "cedar.toml"])
def test_against_flat_atmosphere_and_contrast_agree(name):
    # The same pair asked three ways must give one count (all are 1-dof nested tests
    # with the flat scenario's level free).
    system = load_system(data_path("demo", name))
    one = system.select(str(system.names[0]))
    atm = quiet(transits_for_system, one, PRISM)["planets"][0]
    flat = quiet(transits_for_system, one, PRISM, against="flat")["planets"][0]
    con = quiet(contrast_for_system, one, PRISM, [one.atmospheres[0]["scenario"], "flat"])
    assert atm["transits_needed"] == flat["transits_needed"] == con["planets"][0]["transits_needed"][0][1]
    assert atm["delta_chi2_per_transit"] == pytest.approx(flat["delta_chi2_per_transit"], rel=1e-9)
    assert atm["degrees_of_freedom"] == flat["degrees_of_freedom"] == 1


def test_cli_against_flat_atmosphere_and_contrast_agree(capsys):
    cedar = str(data_path("demo", "cedar.toml"))
    base = [cedar, "--planet", "Cedar b", "--mode", PRISM, "--json", "--uncertainty-draws", "0"]
    counts = []
    for extra in ([], ["--atmosphere"], ["--against", "flat"]):
        assert main(["transits", *base, *extra]) == 0
        rec = json.loads(capsys.readouterr().out)["planets"][0]
        counts.append(rec["transits_needed"])
        assert rec["degrees_of_freedom"] == 1 and rec["bins_used"] > 2
    assert main(["contrast", cedar, "--planet", "Cedar b", "--mode", PRISM, "--json",
                 "--scenarios", "co2-thick,flat"]) == 0
    con = json.loads(capsys.readouterr().out)
    counts.append(con["planets"][0]["transits_needed"][0][1])
    assert len(set(counts)) == 1 and counts[0] is not None


def test_floor_limited_answer_does_not_depend_on_binning():
    # A floor that does not average down and dominates the noise at the N needed
    # (floor per resolution element, white between elements: snrkit.photons.precision).
    # Transits needed and the asymptotic significance change by at most 15% between
    # R = 30, the mode's native bins and R = 300 (issue statement).  The target is 70%
    # of the asymptote: right at the asymptote any binning loss, however small, moves N
    # without bound, which no convention can avoid.
    for mode, j_mag, floor in (("cold6m-grism-2.4-5um", 11.5, 30.0),):
        star = Star(5200.0, 0.85, mass=0.9, magnitudes={"J": j_mag})
        planet = Planet(2.5, 3.5, mass=8.0, impact_parameter=0.3, name=["floor-limited"])
        system = System(star, planet)
        kw = dict(floor_ppm=floor, floor_averages_down=False, n_max=5000)
        ref = quiet(transits_for_system, system, mode, "h2-metal-rich", resolution="native",
                    **kw)["planets"][0]
        target = 0.7 * ref["asymptotic_significance_sigma"]
        res = {r: quiet(transits_for_system, system, mode, "h2-metal-rich", resolution=r,
                        sigma=target, **kw)["planets"][0] for r in (30.0, "native", 300.0)}
        ref = res["native"]
        assert ref["limiting_term"] == "noise floor" and ref["transits_needed"] > 10
        for r in (30.0, 300.0):
            assert res[r]["transits_needed"] == pytest.approx(ref["transits_needed"], rel=0.15)
            assert res[r]["asymptotic_significance_sigma"] == pytest.approx(
                ref["asymptotic_significance_sigma"], rel=0.15)


def test_coarse_bins_carry_no_more_information_than_fine_ones():
    # Nesting: a bin made of k fine bins (inverse-variance mean of the data, variance
    # 1 / sum(1/sigma^2)) is a linear function of the fine data, so its Delta chi^2 can
    # only be lower or equal (information inequality for linear Gaussian models).
    rng = np.random.default_rng(3)
    for _ in range(50):
        n, k = 60, int(rng.integers(2, 6))
        fine = rng.normal(0, 30, n).cumsum()
        sig = rng.uniform(20, 80, n)
        m = n // k * k
        w = 1 / sig[:m] ** 2
        coarse = (fine[:m] * w).reshape(-1, k).sum(1) / w.reshape(-1, k).sum(1)
        sig_c = 1 / np.sqrt(w.reshape(-1, k).sum(1))
        assert likelihood.profiled_delta_chi2(coarse, sig_c) <= likelihood.profiled_delta_chi2(fine[:m], sig[:m]) * (1 + 1e-12)


spectra = st.lists(st.floats(-200.0, 200.0), min_size=8, max_size=8)


@settings(max_examples=150, deadline=None)
@given(spectra, spectra, spectra, st.floats(5.0, 200.0), st.floats(0.1, 5.0))
def test_fitted_nuisance_never_raises_delta_chi2(truth, null, template, noise, prior):
    # Asimov data generated by the alternative at the nuisance's prior mean: adding the
    # nuisance to both models can only lower min chi^2(null) and leaves the alternative
    # at 0 (C11, Sec. 3.8), so Delta chi^2 never rises.
    t, n0, tm = (np.array(x) for x in (truth, null, template))
    sig = np.full(8, noise)
    data = t + tm                                     # nuisance amplitude 1 (prior mean)
    without = likelihood.nested_delta_chi2(data, n0 + tm, sig, alt=t + tm)   # nuisance known exactly
    withn = likelihood.nested_delta_chi2(data, n0, sig, alt=t, null_templates=tm[:, None],
                                 alt_templates=tm[:, None], template_sigma=[prior],
                                 template_mean=[1.0])
    assert withn <= without * (1 + 1e-9) + 1e-9


@settings(max_examples=100, deadline=None)
@given(spectra, st.floats(5.0, 200.0), st.floats(0.0, 100.0), st.booleans(),
       st.floats(0.3, 3.0))
def test_more_transits_never_lower_delta_chi2(truth, white, floor, averages, prior):
    t = np.array(truth)
    tm = np.linspace(-1, 1, 8)[:, None] * 10.0
    res = stacker.stack_transits(t + tm[:, 0], 0 * t, white, floor=floor, floor_averages=averages,
                            shape=t, null_templates=tm, alt_templates=tm, template_sigma=[prior],
                            template_mean=[1.0], sigma=3.0, n_max=300, n_curve=np.arange(1, 301, 7))
    assert np.all(np.diff(res["curve_significance"]) >= -1e-9)


@settings(max_examples=100, deadline=None)
@given(spectra, st.floats(5.0, 200.0), st.integers(1, 500))
def test_no_floor_one_dof_is_sqrt_n_delta_chi2(truth, white, n):
    # Z(N) = sqrt(N Delta chi^2_1) exactly without a floor (white noise averages as 1/N
    # in variance; Z = sqrt(q0), C11 Sec. 3.5).
    t = np.array(truth)
    res = stacker.stack_transits(t, 0 * t, white, sigma=3.0, n_max=500, n_curve=[n])
    lam1 = float(res["delta_chi2_per_transit"])
    assert float(res["curve_significance"][-1]) == pytest.approx(np.sqrt(n * lam1), rel=1e-12,
                                                                 abs=1e-12)


def test_tiny_signal_on_a_deep_transit_is_not_called_no_signal():
    # A real but small signal on realistic absolute depths (15000 ppm, 1000 bins,
    # 50 ppm per bin): Delta chi^2 per transit 0.005 must survive, and N follows.
    rng = np.random.default_rng(5)
    shape = rng.normal(0.0, 1.0, 1000)
    shape -= shape.mean()
    amp = np.sqrt(0.005 / np.sum(shape ** 2)) * 50.0
    data = 15000.0 + amp * shape
    res = stacker.stack_transits(data, np.full(1000, 15000.0), 50.0, sigma=3.0, n_max=5000)
    assert float(res["delta_chi2_per_transit"]) == pytest.approx(0.005, rel=1e-6)
    assert int(res["transits_needed"]) == 1800 and not bool(res["no_signal"])


def test_identical_models_report_no_signal():
    # A featureless scenario against the flat line: the two models are the same, so
    # Z = 0 and the status says "no signal", never a fraction of a sigma.
    cedar = load_system(data_path("demo", "cedar.toml")).select("Cedar c")
    rec = quiet(transits_for_system, cedar, "cold6m-midir-lowres", "flat")["planets"][0]
    assert rec["status"] == "no_signal" and rec["significance_per_transit_sigma"] == 0.0
    assert rec["transits_needed"] is None and rec["limiting_term"] == "no signal"
    res = stacker.stack_transits(np.full(20, 7.0), np.zeros(20), 30.0, dof=19, sigma=3.0)
    assert float(res["significance_per_transit"]) == 0.0 and bool(res["no_signal"])
