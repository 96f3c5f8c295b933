"""Figures as objects: every plot function returns a Figure, draws into a given axes, switches
no backend, and the problems a new user met are gone (overlapping labels, legends over data,
"um", powers-of-ten tick labels, missing scenario names, the saturation note with nothing
saturated).  Overlaps are measured with matplotlib's own renderer (text extents in pixels).

Reference: these are presentation rules (common practice, no source); the numbers drawn come
from the engine and are checked by its own tests.
"""

import ast
from pathlib import Path

import numpy as np
import pytest

from snrkit.io.tables import data_path

CEDAR = data_path("demo", "cedar.toml")
BIRCH = data_path("demo", "birch.toml")
MODE = "cold6m-prism-lowres"


@pytest.fixture(scope="module")
def cedar():
    from snrkit.io.systemfile import load_system
    return load_system(CEDAR)


@pytest.fixture(scope="module")
def result(cedar):
    from snrkit.engine.transits import transits_for_system
    return transits_for_system(cedar.take([0]), MODE)


@pytest.fixture(scope="module")
def ranking():
    from snrkit.planning.catalog import read_catalogue
    from snrkit.planning.rank import rank_catalogue
    return rank_catalogue(read_catalogue(data_path("demo", "catalogue.ecsv")), MODE, "h2-clear-solar")


@pytest.fixture(scope="module")
def precision(cedar, result):
    from snrkit.io.systemfile import load_system
    from snrkit.photons.targets import system_precision
    groups = int(result["planets"][0]["groups_per_integration"])     # the test's readout saturates bins
    return {"cedar": system_precision(cedar.take([0]), MODE, readout=groups, warn=False),
            "birch": system_precision(load_system(BIRCH), "cold6m-grism-2.4-5um", warn=False)}


@pytest.fixture(scope="module")
def spectra(cedar):
    from snrkit.cli.spectrum import spectra_for_system
    return spectra_for_system(cedar, resolution=50, calibration_band=(0.6, 5.0))


@pytest.fixture(scope="module")
def windows(cedar):
    from snrkit.planning.calendar import transit_windows
    return transit_windows(cedar, "2027-01-01", "2027-03-01")


def _renderer(fig):
    fig.draw_without_rendering()
    return fig._get_renderer()


def _every_plot(result, ranking, precision, spectra, windows):
    from snrkit.output import figures as f, transit_figures as tf
    return {
        "significance": lambda ax: tf.plot_significance(result, ax=ax),
        "simulated_spectrum": lambda ax: tf.plot_simulated_spectrum(result, ax=ax),
        "spectrum": lambda ax: tf.plot_spectrum(spectra, {"CO2", "H2O"}, ax=ax),
        "ranking": lambda ax: f.plot_ranking(ranking, ax=ax),
        "timeline": lambda ax: f.plot_timeline(windows, ax=ax),
        "precision": lambda ax: f.plot_precision(precision["cedar"], ax=ax),
        "noise_budget": lambda ax: f.plot_noise_budget(precision["cedar"], ax=ax),
    }


def test_every_plot_returns_a_figure_and_draws_into_given_axes(result, ranking, precision, spectra,
                                                               windows):
    import matplotlib
    from matplotlib.figure import Figure
    backend = matplotlib.get_backend()
    for name, plot in _every_plot(result, ranking, precision, spectra, windows).items():
        fig = plot(None)
        assert isinstance(fig, Figure), name
        assert fig.axes and any(ax.has_data() for ax in fig.axes), name
        host = Figure()
        ax = host.add_subplot()
        assert plot(ax) is host, name
        assert ax.has_data(), name
    from snrkit.output.transit_figures import plot_transits
    host = Figure()
    axes = host.subplots(1, 2)
    assert plot_transits(result, axes=axes) is host and all(a.has_data() for a in axes)
    assert matplotlib.get_backend() == backend


def test_no_module_switches_the_backend_or_uses_pyplot():
    root = Path(__file__).resolve().parents[1] / "snrkit"
    for path in root.rglob("*.py"):
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.Attribute) and node.attr == "use":
                base = node.value
                assert not (isinstance(base, ast.Name) and base.id == "matplotlib"), path
            if isinstance(node, ast.ImportFrom) and node.module:
                assert "pyplot" not in node.module, path
            if isinstance(node, ast.Import):
                assert all("pyplot" not in a.name for a in node.names), path


def test_ranking_labels_do_not_overlap(ranking):
    from snrkit.output.figures import plot_ranking
    fig = plot_ranking(ranking, top=20)
    ax = fig.axes[0]
    r = _renderer(fig)
    labels = [t for t in ax.texts if t.get_text().isdigit()]
    assert len(labels) >= 15                       # nearly all of the top 20 find room
    from matplotlib.text import Text
    boxes = [Text.get_window_extent(t, r) for t in labels]      # the text, without a leader line
    for i in range(len(boxes)):
        for j in range(i + 1, len(boxes)):
            assert not boxes[i].overlaps(boxes[j]), (labels[i].get_text(), labels[j].get_text())
    frame = ax.get_window_extent(r)
    assert all(b.x0 >= frame.x0 - 1 and b.x1 <= frame.x1 + 1 for b in boxes)
    ranks = sorted(int(t.get_text()) for t in labels)
    assert set(ranks) <= set(range(1, 21))


def test_band_labels_are_shared_and_kept_apart():
    from snrkit.output.transit_figures import band_labels
    marks = band_labels({"H2O", "CO2", "CH4", "CO", "NH3", "HCN"}, 0.5, 20.0, min_gap=0.07)
    texts = {round(c, 2): t for c, t, _ in marks}
    assert texts[2.7] == "CO2, H2O" and texts[3.0] == "HCN, NH3"      # one label per shared centre
    for row in {r for _, _, r in marks}:
        logs = np.log10(sorted(c for c, _, r in marks if r == row))
        assert np.all(np.diff(logs) >= 0.07 - 1e-12)


def test_spectra_one_panel_per_planet_with_observed_depth(spectra):
    from matplotlib.figure import Figure
    from snrkit.output.transit_figures import plot_spectrum
    fig = plot_spectrum(spectra, {"CO2", "H2O"})
    assert len(fig.axes) == spectra.sizes["planet"]
    for ax, obs in zip(fig.axes, spectra["observed_depth_ppm"].values.reshape(spectra.sizes["planet"], -1)):
        flat = [ln for ln in ax.lines if np.ptp(ln.get_ydata()) == 0 and len(ln.get_ydata()) == 2]
        assert any(np.isclose(ln.get_ydata()[0], obs[0]) for ln in flat)
        assert ax.get_xlabel() == "wavelength [µm]"
    # on one given axes: depth relative to each planet's observed depth
    ax = Figure().add_subplot()
    plot_spectrum(spectra, ax=ax)
    assert "observed depth" in ax.get_ylabel()


def test_legends_sit_outside_the_data(result, windows, precision):
    from snrkit.output.figures import plot_noise_budget, plot_timeline
    from snrkit.output.transit_figures import plot_significance, plot_simulated_spectrum
    for fig in (plot_timeline(windows), plot_significance(result), plot_simulated_spectrum(result),
                plot_noise_budget(precision["cedar"])):
        ax = fig.axes[0]
        r = _renderer(fig)
        legend = ax.get_legend()
        assert legend is not None
        assert not legend.get_window_extent(r).overlaps(ax.get_window_extent(r))


def test_significance_shows_the_curves_reached_with_50_and_90_percent(result):
    # The drawn lines are the result Dataset's own curves (the figure computes nothing);
    # their values are checked against scipy.stats.ncx2 in tests/test_significance_reached.py.
    from snrkit.output.transit_figures import plot_significance
    ds = result["dataset"]
    ax = plot_significance(result).axes[0]
    lines = {ln.get_label(): ln for ln in ax.get_lines()}
    for k, chance in enumerate(ds["chance"].values):
        label = next(lab for lab in lines if lab.startswith(f"reached with {chance:.0%}".replace("%", " %")))
        np.testing.assert_array_equal(lines[label].get_ydata(),
                                      ds["significance_reached"].values[0, k])
    assert [round(c, 6) for c in ds["chance"].values] == [0.5, 0.9]
    z50, z90 = ds["significance_reached"].values[0]
    assert np.all(z90 <= z50) and np.any(z90 < z50)
    np.testing.assert_allclose(z50, ds["significance"].values[0], rtol=1e-12)


def test_gas_test_spectrum_draws_the_scenario_without_the_gas(cedar):
    from snrkit.engine.transits import transits_for_system
    from snrkit.output.transit_figures import plot_simulated_spectrum
    gas = transits_for_system(cedar.take([0]), MODE, species="H2O", uncertainty_draws=0)
    ax = plot_simulated_spectrum(gas).axes[0]
    lines = {ln.get_label(): ln for ln in ax.get_lines()}
    null = lines[f"null: {gas['planets'][0]['null_model']} (best fit)"]
    ds = gas["dataset"]
    ok = np.isfinite(ds["white_noise_ppm_per_transit"].values[0])
    # drawn where the species test's fit puts it (level + b x the spectrum without the gas,
    # 0 <= b <= 2): its chi^2 against the model at the N transits shown is the statistic of
    # the nested test there (the alternative is the model itself)
    from snrkit.stats.hypotheses import SPECIES_SCALE
    from snrkit.stats.likelihood import nested_delta_chi2, noise_per_bin
    y = null.get_ydata()[ok]
    np.testing.assert_allclose(y, ds["null_fitted_ppm"].values[0][ok], rtol=1e-12)
    n = gas["planets"][0]["transits_needed"] or int(ds["transits"].values[-1])
    sig = noise_per_bin(ds["white_noise_ppm_per_transit"].values[0][ok], n,
                        ds["floor_ppm"].values[0][ok], bool(ds.attrs["floor_averages_down"]))
    model = ds["model_ppm"].values[0][ok]
    chi = np.sum((model - y) ** 2 / sig ** 2)
    ref = nested_delta_chi2(model, ds["null_ppm"].values[0][ok], sig, null_scale=SPECIES_SCALE)
    assert chi == pytest.approx(float(ref), rel=1e-8)
    # and that is the significance the test reports at N (Z = sqrt(Delta chi^2))
    if gas["planets"][0]["transits_needed"]:
        assert np.sqrt(chi) >= 5.0 * (1 - 1e-6)
    assert "H2O" in gas["planets"][0]["null_model"]


def test_scenario_names_in_legends(result):
    from snrkit.output.transit_figures import plot_simulated_spectrum
    ax = plot_simulated_spectrum(result).axes[0]
    texts = [t.get_text() for t in ax.get_legend().get_texts()]
    assert f"model: {result['planets'][0]['scenario']}" in texts
    assert not any(t == "model" for t in texts)


def test_saturation_note_only_when_bins_saturate(precision):
    from snrkit.output.figures import plot_precision
    assert precision["cedar"]["saturated"].values.any()
    assert not precision["birch"]["saturated"].values.any()
    assert "(shaded: saturated bins)" in plot_precision(precision["cedar"]).axes[0].get_title()
    assert "shaded" not in plot_precision(precision["birch"]).axes[0].get_title()


def test_tick_labels_are_plain_numbers_in_micrometres(result, precision):
    from snrkit.output.figures import plot_noise_budget
    from snrkit.output.transit_figures import plot_significance, plot_simulated_spectrum
    for fig in (plot_simulated_spectrum(result), plot_noise_budget(precision["cedar"]),
                plot_significance(result)):
        ax = fig.axes[0]
        _renderer(fig)
        for axis in (ax.xaxis, ax.yaxis):
            shown = [t.get_text() for t in axis.get_ticklabels() if t.get_text()]
            assert len(shown) >= 3
            for text in shown:
                float(text.replace("−", "-"))          # "0.6", "10", never "6x10^-1"
    assert "µm" in plot_simulated_spectrum(result).axes[0].get_xlabel()


def test_save_figure_is_atomic_and_checks_the_name(tmp_path, result):
    from snrkit.errors import InputError
    from snrkit.output.figures import save_figure
    from snrkit.output.report import figure_uri
    from snrkit.output.transit_figures import plot_significance
    fig = plot_significance(result)
    out = save_figure(fig, tmp_path / "t.png")
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    with pytest.raises(InputError, match="t.jpg"):
        save_figure(fig, tmp_path / "t.jpg")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["t.png"]       # no partial files left
    assert figure_uri(fig).startswith("data:image/png;base64,iVBORw0KGgo")


def _band_cases():
    from hypothesis import strategies as st
    from snrkit.output.transit_figures import BAND_MARKS
    species = st.sets(st.sampled_from(sorted(BAND_MARKS)), min_size=1)
    edges = st.tuples(st.floats(0.3, 10.0), st.floats(1.2, 100.0)).map(lambda t: (t[0], t[0] * t[1]))
    return species, edges, st.floats(0.02, 0.2)


@pytest.mark.parametrize("rows", [1, 3])
def test_band_labels_properties(rows):
    from hypothesis import given
    from snrkit.output.transit_figures import BAND_MARKS, band_labels
    species, edges, gaps = _band_cases()

    @given(species, edges, gaps)
    def check(chosen, lohi, gap):
        lo, hi = lohi
        marks = band_labels(chosen, lo, hi, rows=rows, min_gap=gap)
        centres = [c for c, _, _ in marks]
        assert len(set(centres)) == len(centres) and all(lo < c < hi for c in centres)
        for c, text, row in marks:
            assert 0 <= row < rows
            for sp in text.split(", "):           # every named species has a band at that centre
                assert sp in chosen and any(abs(np.log(b / c)) < 0.03 for b in BAND_MARKS[sp])
        for row in range(rows):
            logs = np.log10(sorted(c for c, _, r in marks if r == row))
            assert np.all(np.diff(logs) >= gap - 1e-12)

    check()
