"""One engine for one planet and a catalogue.

Checks required by the one-engine issue: the catalogue path (the engine over
chunks of planets, several modes and scenarios) and the per-planet path (one
planet at a time through snrkit.engine.transits) give identical statuses and
transits needed for every row of an invented synthetic catalogue, whatever
the chunk size; the statuses computed for all planets at once equal the
per-planet wording of the same rules.  (Spectra to 1e-3 scale heights alone
and in chunks: tests/test_spectrum_fast.py.)
"""

import warnings

import numpy as np
import pytest
from astropy.table import Table

from snrkit.planning.catalog import catalogue_from_table
from snrkit.engine.engine import evaluate, observe, scenario_context
from snrkit.planning.rank import rank_catalogue
from snrkit.engine.transit_records import statuses, status_and_reason
from snrkit.engine.transits import transits_for_system

MODES = ["cold6m-prism-lowres", "cold6m-grism-2.4-5um"]
SCENARIOS = ["h2-clear-solar", "steam"]


def _synthetic(n, seed):
    """Invented planets around invented hosts (no real systems), some saturating."""
    rng = np.random.default_rng(seed)
    teff = rng.uniform(3000, 6500, n)
    ms = np.clip((teff / 5772) ** 1.8, 0.12, 1.4)
    t = Table()
    t["planet_name"] = [f"Synth-{i:04d} b" for i in range(n)]
    t["planet_radius_earth"] = rng.uniform(0.8, 13.0, n)
    t["period_days"] = 10 ** rng.uniform(0.0, 1.6, n)
    t["impact_parameter"] = rng.uniform(0.0, 0.7, n)
    t["host_teff_K"] = teff
    t["host_radius_sun"] = ms ** 0.85
    t["host_mass_sun"] = ms
    t["host_mag_J"] = rng.uniform(7.0, 13.5, n)
    return catalogue_from_table(t, source="synthetic")


@pytest.fixture(scope="module")
def cat():
    return _synthetic(36, seed=21)


@pytest.mark.filterwarnings("ignore::snrkit.errors.SnrkitWarning")  # notes of random planets
@pytest.mark.parametrize("chunk", [5, 36])
def test_catalogue_equals_planet_by_planet(cat, chunk):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ranked = rank_catalogue(cat, MODES, SCENARIOS, resolution=30, chunk=chunk, each_scenario=True)
    for row in ranked:
        j = int(row["input_index"])
        alone = {}
        for mode in MODES:
            rec = transits_for_system(cat.system.take([j]), mode, str(row["scenario"]),
                                      resolution=30, probabilities=(), curves=False)["planets"][0]
            alone[mode] = rec
        # the engine keeps the mode with the best status, then the fewest hours
        best = rec if str(row["mode"]) == "" else alone[str(row["mode"])]
        assert str(row["status"]) == best["status"], (j, row["status"], best["status"])
        assert int(np.ma.filled(row["transits_needed"], 0)) == (best["transits_needed"] or 0), j


def test_vectorized_statuses_match_per_planet_rules(cat):
    obs = observe(cat.system, MODES[0], 30)
    for sc in SCENARIOS:
        ctx = scenario_context(cat.system, obs, MODES[0], sc, probabilities=(), curves=False)
        st = statuses(ctx)
        for i in range(len(cat.system.names)):
            word, _ = status_and_reason(i, ctx, int(st["n_raw"][i]), st["limiting"],
                                        st["saturated_all"], st["unbound"], st["h_km"],
                                        st["h_over_r"], st["jeans"], st["excluded"])
            assert word == st["status"][i]


def test_evaluate_shapes_and_mode_once(cat):
    sub = cat.system.take(np.arange(4))
    out = evaluate(sub, MODES, SCENARIOS, resolution=30, probabilities=())
    for c, v in out["columns"].items():
        assert v.shape == (2, 2, 4), c
    assert out["scenarios"] == SCENARIOS
    assert set(out["columns"]["mode"][0].ravel()) == {MODES[0]}


@pytest.mark.filterwarnings("ignore::snrkit.errors.SnrkitWarning")  # notes of random planets
def test_designs_sharing_bins_solve_each_spectrum_once(cat, monkeypatch):
    # modes that differ only in aperture and throughput have the same bins and calibration
    # weights up to a factor, so one spectrum per scenario serves them all; the answers equal
    # those of each mode alone
    from snrkit.atmosphere import spectrum
    from snrkit.planning.yields.designs import build_mode, design_from_text
    modes = [build_mode(design_from_text(t, MODES[0]))[0]
             for t in ("aperture_m=6", "aperture_m=9,throughput_scale=0.8")]
    sub = cat.system.take(np.arange(8))
    calls = []
    real = spectrum.transmission_spectrum

    def counted(*a, **k):
        calls.append(1)
        return real(*a, **k)

    monkeypatch.setattr(spectrum, "transmission_spectrum", counted)
    both = evaluate(sub, modes, SCENARIOS, resolution=30, probabilities=())
    assert len(calls) == len(SCENARIOS)
    for m, mode in enumerate(modes):
        alone = evaluate(sub, [mode], SCENARIOS, resolution=30, probabilities=())["columns"]
        for c in ("status", "transits_needed"):
            assert np.array_equal(both["columns"][c][m], alone[c][0]), (m, c)
        np.testing.assert_allclose(both["columns"]["significance_per_transit"][m],
                                   alone["significance_per_transit"][0], rtol=1e-9)
    # modes with other bins solve their own spectra
    calls.clear()
    evaluate(sub, MODES, SCENARIOS[:1], resolution=30, probabilities=())
    assert len(calls) == len(MODES)


def test_spectrum_reuse_rule():
    # reused only for equal bins, solver and contributions and proportional weights
    from snrkit.engine.shared_spectra import scenario_spectrum
    calls = []

    def fake(sc, rp, rs, contributions=False, **kw):
        calls.append(kw["calibration_weights"].copy())
        return {"transit_depth_ppm": np.ones((2, 2))}

    def obs(weights, edges=(1.0, 2.0, 3.0), solver="analytic"):
        return {"notes": [], "rp": np.ones(2), "rs": np.ones(2),
                "spec_kw": {"calibration_weights": np.asarray(weights, dtype=float),
                            "wavelength_edges": np.asarray(edges), "solver": solver}}

    memo = []
    w = np.array([[1.0, 2.0], [3.0, 1.0]])
    first = scenario_spectrum(memo, obs(w), "sc", False, fake)
    assert scenario_spectrum(memo, obs(7.5 * w), "sc", False, fake) is first
    assert len(calls) == 1
    for other in (obs(w * [1.0, 1.001]), obs(w, edges=(1.0, 2.0, 3.5)), obs(w, solver="layered")):
        assert scenario_spectrum(memo, other, "sc", False, fake) is not first
    assert scenario_spectrum(memo, obs(w), "sc", ["H2O"], fake) is not first
    assert len(calls) == 5
    assert scenario_spectrum(None, obs(w), "sc", False, fake) is not first
