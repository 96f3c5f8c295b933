"""The demo's HTML report, opened in headless Chromium (Debian's package) through playwright.

Checks what a reader would see: every image decoded, no console errors, no
network request, every section heading, the numbers on the page equal to the
JSON documents of the same run, and a full-page screenshot that is not blank
(kept under ``test-artifacts/`` and the test's tmp folder).  The reference
for "numbers equal" is the run itself: the report's JSON and the per-test
JSON files the demo writes beside it.
"""

import json
import math
import shutil
from pathlib import Path

import pytest

CHROMIUM = "/usr/bin/chromium"
#: Launch flags that run Chromium here without a sandbox, GPU or network chatter.
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync"]
ARTIFACTS = Path(__file__).resolve().parents[1] / "test-artifacts"


@pytest.fixture(scope="module")
def page_view(demo_run, tmp_path_factory):   # demo_run: the session's `snrkit demo` (conftest.py)
    """What Chromium shows: image sizes, console errors, requests, headings, numbers, screenshot."""
    if not Path(CHROMIUM).exists():
        pytest.skip(f"no Chromium at {CHROMIUM} (install Debian's package: apt-get install chromium; "
                    ".ci/run does)")
    sync_api = pytest.importorskip("playwright.sync_api", reason="playwright is in the test extras")
    out = demo_run["out"]
    shot = tmp_path_factory.mktemp("shot") / "report.png"
    profile = tmp_path_factory.mktemp("profile")
    view = {"console_errors": [], "page_errors": [], "requests": []}
    with sync_api.sync_playwright() as p:
        ctx = p.chromium.launch_persistent_context(str(profile), executable_path=CHROMIUM, args=FLAGS,
                                                   headless=True, viewport={"width": 1200, "height": 900})
        try:
            page = ctx.new_page()
            page.on("console", lambda m: view["console_errors"].append(m.text) if m.type == "error"
                    else None)
            page.on("pageerror", lambda e: view["page_errors"].append(str(e)))
            page.on("request", lambda r: view["requests"].append(r.url))
            page.goto((out / "report.html").as_uri(), wait_until="load")
            view["images"] = page.evaluate(
                "Array.from(document.images).map(i => [i.alt, i.complete, i.naturalWidth])")
            view["headings"] = page.evaluate(
                "Array.from(document.querySelectorAll('h2')).map(h => [h.id, h.textContent.trim()])")
            view["numbers"] = page.evaluate(
                "Array.from(document.querySelectorAll('[data-key]')).map(e => [e.dataset.key, e.innerText])")
            page.screenshot(path=str(shot), full_page=True)
        finally:
            ctx.close()
    ARTIFACTS.mkdir(exist_ok=True)
    shutil.copy(shot, ARTIFACTS / "report.png")
    view["screenshot"] = shot
    return view


def _lookup(doc, key):
    """The value at a dotted key of the report's JSON (probability keys such as ``0.5`` kept whole)."""
    node, parts = doc, key.split(".")
    i = 0
    while i < len(parts):
        part = parts[i]
        if isinstance(node, list):
            node, i = node[int(part)], i + 1
        elif part in node:
            node, i = node[part], i + 1
        else:                               # "0.5" split in two
            node, i = node[part + "." + parts[i + 1]], i + 2
    return node


def test_every_image_decoded_no_console_errors_no_network(page_view, demo_run):
    out = demo_run["out"]
    doc = json.loads((out / "report.json").read_text())
    images = page_view["images"]
    # per planet its noise budget, and per test (atmosphere, each gas) a spectrum and a
    # significance figure; then the timeline and the ranking
    n_tests = sum(len(p["tests"]) for p in doc["planets"])
    assert n_tests > len(doc["planets"])                    # the demo tests gases too
    assert len(images) == len(doc["planets"]) + 2 * n_tests + 2
    alts = [alt for alt, _, _ in images]
    for p in doc["planets"]:
        for t in p["tests"]:
            label = "atmosphere" if t["test"] == "atmosphere" else t["test"].split(":")[1]
            assert f"significance of {p['name']}, {label} test" in alts
    assert all(complete and width > 0 for _, complete, width in images), images
    assert page_view["console_errors"] == [] and page_view["page_errors"] == []
    # the page is self-contained: the only request is the page itself (images are data URIs)
    assert [u for u in page_view["requests"] if not u.startswith(("file://", "data:"))] == []


def test_every_section_heading_present(page_view):
    from snrkit.output.report import SECTIONS
    assert page_view["headings"] == [list(s) for s in SECTIONS]


def test_page_numbers_equal_the_json_of_the_same_run(page_view, demo_run):
    out = demo_run["out"]
    doc = json.loads((out / "report.json").read_text())
    numbers = page_view["numbers"]
    assert len(numbers) > 100
    checked = 0
    for key, text in numbers:
        value = _lookup(doc, key)
        if value is None:
            assert text == "–", key
            continue
        if isinstance(value, bool):
            continue
        shown = float(text)
        decimals = len(text.split(".")[1]) if "." in text else 0
        # the page rounds to the digits it shows: equal within half a unit of the last digit
        assert math.isclose(shown, value, abs_tol=0.5 * 10.0 ** -decimals + 1e-12), (key, text, value)
        checked += 1
    assert checked > 100
    # ... and the report's JSON holds what the demo's per-test JSON files hold
    for planet in doc["planets"]:
        for test in planet["tests"]:
            tag = "atmosphere" if test["test"] == "atmosphere" else test["test"].split(":")[1]
            one = json.loads((out / f"{planet['name'].replace(' ', '_')}_{tag}.json").read_text())
            for k in ("transits_needed", "hours_total", "transits_for_probability", "bins_used",
                      "groups_per_integration", "transits_needed_spread"):
                assert test[k] == one[k], (planet["name"], tag, k)
    plan = json.loads((out / "programme_plan.json").read_text())
    by_name = {p["name"]: p for p in plan["planets"]}
    for planet in doc["planets"]:
        assert planet["plan"]["span_years"] == by_name[planet["name"]]["span_years"]
        assert planet["plan"]["hours_total"] == by_name[planet["name"]]["hours_total"]


def test_full_page_screenshot_is_not_blank(page_view):
    import numpy as np
    from PIL import Image                             # matplotlib's own dependency
    with Image.open(page_view["screenshot"]) as im:
        grey = np.asarray(im.convert("L"))
    assert grey.shape[0] > 3000                       # the whole page, not the first screen
    ink = np.mean(grey < 204)                         # share of pixels that are not near-white
    assert 0.02 < ink < 0.9, ink
    assert np.std(grey) > 12


def test_demo_prints_the_report_path(demo_run):
    out = demo_run["out"]
    assert demo_run["rc"] == 0
    assert f"report: {out / 'report.html'}" in demo_run["stdout"].splitlines()
    html = (out / "report.html").read_text()
    assert "http://" not in html and "https://" not in html     # nothing to fetch


def test_presets_used_are_listed_with_the_demo_overrides(demo_run):
    # Every scenario and mode the demo's tests used is listed with its parameters, and
    # Cedar c's change to its preset (cedar.toml: cloud_top_pressure = 0.6) beside it.
    doc = json.loads((demo_run["out"] / "report.json").read_text())
    listed = {(p["kind"], p["name"]): p for p in doc["presets"]}
    for planet in doc["planets"]:
        for t in planet["tests"]:
            assert ("mode", t["mode"]) in listed
            assert ("scenario", t["scenario"].removesuffix(" (modified)")) in listed
    assert all(p["parameters"] for p in listed.values())
    over = listed[("scenario", "n2-o2-temperate")]["overrides"]
    assert over == [{"planet": "Cedar c", "source": "cedar.toml", "parameter": "cloud_top_pressure",
                     "value": "0.6"}]
