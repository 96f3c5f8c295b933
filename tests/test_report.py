"""``snrkit report``: the page from its templates, the JSON beside it, the CLI's refusals.

The browser check of the demo's report is in tests/test_report_browser.py; here the
template is rendered directly (undefined names are errors) and the command runs on the
demo catalogue.  Reference: the report shows engine records and formats them only
(common practice, no source).
"""

import json

import pytest

from snrkit.cli import main
from snrkit.io.tables import data_path


def _doc(**extra):
    doc = {"title": "t", "version": "0", "command_line": "snrkit report x", "created_utc": "now",
           "planets": [], "catalogue": None, "provenance": [], "presets": [],
           "caution": "careful"}
    doc.update(extra)
    return doc


def test_template_renders_every_section_and_escapes_text():
    from snrkit.output.report import SECTIONS, render_report
    html = render_report(_doc(title="<b>plan</b>", catalogue={
        "rows": 1, "ranked": 0, "status_counts": {}, "test": "atmosphere", "scenarios": ["flat"],
        "modes": ["m"], "target_sigma": 5.0, "top": []}), {"_all": {}})
    for sid, text in SECTIONS:
        assert f'<h2 id="{sid}">{text}</h2>' in html
    assert "&lt;b&gt;plan&lt;/b&gt;" in html and "<b>plan</b>" not in html
    assert "<script" not in html and "http" not in html


def test_no_catalogue_section_without_a_catalogue():
    from snrkit.output.report import render_report
    assert 'id="catalogue"' not in render_report(_doc(), {"_all": {}})


def test_answer_sentences_follow_the_record():
    from snrkit.output.report import answer_sentence
    rec = {"name": "P b", "test": "species:CO2", "scenario": "s", "null_model": "s without CO2",
           "target_sigma": 5.0, "mode": "m", "status": "ok", "reason": "", "transits_needed": 3,
           "hours_total": 12.25, "limiting_term": "white noise",
           "transits_for_probability": {"0.5": 3, "0.9": 5}}
    assert answer_sentence(rec) == ("P b: detecting CO2 (s against s without CO2) at 5 σ with m takes "
                                    "3 transits (12.2 h); 5 for a 90 % chance.")
    rec.update(status="saturated", transits_needed=None, reason="every bin saturates")
    assert answer_sentence(rec).endswith("is not possible: every bin saturates.")


def test_report_command_on_a_catalogue(tmp_path, capsys):
    out = tmp_path / "cat.html"
    rc = main(["report", str(data_path("demo", "catalogue.ecsv")), "--out", str(out), "--json"])
    assert rc == 0
    printed = json.loads(capsys.readouterr().out)
    saved = json.loads(out.with_suffix(".json").read_text())
    assert printed["catalogue"] == saved["catalogue"] and printed["out"] == str(out)
    cat = saved["catalogue"]
    assert cat["rows"] == 269 and cat["ranked"] == cat["status_counts"]["ok"]
    assert [r["rank"] for r in cat["top"]] == list(range(1, 21))
    hours = [r["hours_total"] for r in cat["top"]]
    assert hours == sorted(hours)                   # ranked by hours, the default
    html = out.read_text()
    assert html.count("data:image/png;base64,") == 1 and 'id="catalogue"' in html


@pytest.mark.parametrize("argv, field", [
    (["x.txt", "--out", "r.html"], "TARGET"),
    (["a.ecsv", "b.ecsv", "--out", "r.html"], "TARGET"),
    ([str(data_path("demo", "catalogue.ecsv")), "--out", "r.pdf"], "--out"),
    # the engine's one rule for a target significance, (0, 37] sigma, not a report's own
    ([str(data_path("demo", "alder.toml")), "--out", "r.html", "--sigma", "50"], "sigma"),
])
def test_report_command_refuses_bad_input(argv, field, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert main(["report", *argv]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"error: {field}") and len(err.strip().splitlines()) == 1


def test_presets_listed_with_their_parameters_and_sources():
    # The report lists every parameter of a preset it used with the source the preset
    # file gives for it (the reference is the shipped file itself, read here directly).
    import tomllib
    from snrkit.output.report import render_report
    from snrkit.output.report_data import preset_provenance
    mode, scen = "cold6m-prism-lowres", "h2-clear-solar"
    listed = preset_provenance([scen, f"{scen} (modified)", "my-own"], [mode])
    assert [(p["kind"], p["name"]) for p in listed] == [("scenario", scen), ("scenario", "my-own"),
                                                        ("mode", mode)]
    raw = tomllib.loads(data_path("instruments", f"{mode}.toml").read_text())
    rows = {r["parameter"]: r for r in listed[2]["parameters"]}
    for key, src in raw["sources"].items():
        section, name = key.split(".")
        assert rows[key]["source"] == src and raw[section][name] is not None
    assert rows["detector.read_noise_electrons"]["value"] == str(raw["detector"]["read_noise_electrons"])
    sc_raw = tomllib.loads(data_path("scenarios", f"{scen}.toml").read_text())
    mix = next(r for r in listed[0]["parameters"] if r["parameter"] == "mixing_ratios")
    assert all(f"{gas} {x:g}" in mix["value"] for gas, x in sc_raw["mixing_ratios"].items())
    assert sc_raw["provenance"]["source_H2O"] in mix["source"]
    assert f"source: {sc_raw['provenance']['source']}" in listed[0]["notes"]
    assert listed[1]["file"] is None and listed[1]["parameters"] == []
    html = render_report(_doc(presets=listed), {"_all": {}})
    assert "detector.read_noise_electrons" in html and "snrkit presets --show h2-clear-solar" in html
