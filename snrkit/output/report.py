"""One self-contained HTML report of a programme: answers, inputs, assumptions, figures, plan.

The page is rendered by jinja2 from the templates in ``snrkit/output/templates``
(shipped in the wheel); figures are embedded as PNG data URIs, so the file
opens offline and can be sent as it is.  The numbers on the page are those of
the JSON document written beside it (:func:`report_document`), themselves the
records of the engine (:mod:`snrkit.output.report_data`); templates only
format them.
"""

__all__ = ["report_document", "report_figures", "render_report", "write_report", "figure_uri",
           "SECTIONS", "CAUTION"]

#: Section ids and headings, in page order (the browser test checks each).
SECTIONS = (
    ("answer", "Question and answer"),
    ("inputs", "Inputs"),
    ("assumptions", "Assumptions"),
    ("spectra", "Spectra with simulated error bars"),
    ("significance", "Significance against transits"),
    ("noise", "Noise budget"),
    ("transits", "Transits, hours and calendar span"),
    ("windows", "Observing windows"),
    ("sensitivity", "Sensitivity to planet parameters"),
    ("catalogue", "Ranked catalogue"),
    ("provenance", "Provenance"),
    ("caution", "Caution"),
)

#: The standard caution printed on every report.
CAUTION = ("These are planning estimates from simplified models of the atmosphere, the star and "
           "the instrument.  The observatory's own tools and its instrument teams govern the "
           "numbers of a proposal.")

#: Star and planet inputs shown: (key in describe_system, label, unit, format).
STAR_ROWS = (("effective_temperature_K", "effective temperature", "K", "{:.0f}"),
             ("radius_solar", "radius", "R☉", "{:.3f}"), ("mass_solar", "mass", "M☉", "{:.3f}"),
             ("distance_pc", "distance", "pc", "{:.1f}"),
             ("metallicity_dex", "metallicity [Fe/H]", "dex", "{:.2f}"))
PLANET_ROWS = (("radius_earth", "radius", "R⊕", "{:.3f}"),
               ("radius_uncertainty_earth", "radius uncertainty", "R⊕", "{:.3f}"),
               ("mass_earth", "mass", "M⊕", "{:.3f}"),
               ("mass_uncertainty_earth", "mass uncertainty", "M⊕", "{:.3f}"),
               ("period_days", "period", "d", "{:.5f}"),
               ("impact_parameter", "impact parameter", "", "{:.3f}"),
               ("equilibrium_temperature_K", "equilibrium temperature", "K", "{:.0f}"),
               ("transit_depth_ppm", "observed transit depth", "ppm", "{:.1f}"),
               ("t14_hours", "transit duration T14", "h", "{:.3f}"),
               ("scale_height_km", "scale height", "km", "{:.1f}"),
               ("tsm", "TSM (Kempton et al. 2018)", "", "{:.1f}"))


def test_label(test, long=False):
    """Plain words for a test's code: ``species:H2O`` -> ``H2O``, ``against:X`` -> ``not X``."""
    kind, _, arg = str(test).partition(":")
    if kind == "atmosphere":
        return "an atmosphere" if long else "atmosphere"
    if kind == "species":
        return arg
    if kind == "against":
        return f"a difference from {arg}" if long else f"not {arg}"
    return str(test)


def answer_sentence(rec):
    """One sentence answering a test's question for one planet (wording only)."""
    null = "a flat line" if rec["null_model"] == "flat line" else rec["null_model"]
    head = (f"{rec['name']}: detecting {test_label(rec['test'], long=True)} ({rec['scenario']} against {null}) "
            f"at {rec['target_sigma']:g} σ with {rec['mode']}")
    n = rec["transits_needed"]
    if rec["status"] != "ok" and not n:
        return f"{head} is not possible: {rec['reason'] or rec['status'].replace('_', ' ')}."
    if not n:
        return f"{head} is not reachable within the transit limit ({rec['limiting_term']})."
    n90 = (rec.get("transits_for_probability") or {}).get("0.9")
    more = f"; {n90} for a 90 % chance" if n90 else ""
    word = "transit" if n == 1 else "transits"
    return f"{head} takes {n} {word} ({rec['hours_total']:.1f} h){more}."


def _catalogue_part(table, top):
    import numpy as np
    ok = np.asarray(table["rank"]) > 0
    ranked = table[ok]
    ranked.sort("rank")
    cols = ("rank", "name", "transits_needed", "hours_total", "tsm", "radius_earth")
    rows = [{c: ranked[c][i].item() if hasattr(ranked[c][i], "item") else ranked[c][i] for c in cols}
            for i in range(min(top, len(ranked)))]
    return {"rows": len(table), "ranked": int(ok.sum()),
            "status_counts": dict(table.meta.get("status_counts", {})),
            "test": table.meta.get("test", ""), "scenarios": list(table.meta.get("scenarios", [])),
            "modes": list(table.meta.get("modes", [])),
            "target_sigma": table.meta.get("target_sigma", None), "top": rows}


def report_document(entries, ranking=None, command_line="", title="snrkit programme report",
                    top=20):
    """The report as one JSON-ready dict: the numbers the page shows, and nothing else.

    Parameters
    ----------
    entries : list of dict
        :func:`snrkit.output.report_data.planet_entry` results.
    ranking : astropy.table.Table, optional
        A :func:`snrkit.rank.rank_catalogue` table.
    command_line : str
        The command that made the report.
    title : str
    top : int
        Ranked rows listed.

    Returns
    -------
    dict
    """
    import datetime
    from .._version import __version__
    from .report_data import preset_provenance, table_provenance
    planets = []
    for e in entries:
        budget = e["_budget"]
        planets.append({
            "name": e["name"], "source": e["source"],
            "answers": [answer_sentence(r) for r in e["tests"]],
            "star": e["inputs"]["star"], "planet": e["inputs"]["planets"][0],
            "tests": e["tests"], "plan": e["plan"], "noise_budget_ppm": e["noise_budget_ppm"],
            "floor_ppm": float(budget.attrs["floor_ppm"]),
            "floor_averages_down": bool(budget.attrs.get("floor_averages_down", False)),
        })
    tests = [t for e in entries for t in e["tests"]]
    cat = {} if ranking is None else ranking.meta
    presets = preset_provenance([t["scenario"] for t in tests] + list(cat.get("scenarios", [])),
                                [t["mode"] for t in tests] + list(cat.get("modes", [])))
    _add_overrides(presets, entries)
    doc = {"title": title, "version": __version__, "command_line": command_line,
           "created_utc": datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"),
           "planets": planets,
           "catalogue": None if ranking is None else _catalogue_part(ranking, top),
           "provenance": table_provenance(), "presets": presets, "caution": CAUTION}
    return _plain(doc)


def _add_overrides(presets, entries):
    """Each scenario preset's ``overrides``: the values a system file changed, per planet."""
    from .report_data import MODIFIED
    for ps in presets:
        ps["overrides"] = [
            {"planet": e["name"], "source": e["source"], "parameter": k, "value": str(v)}
            for e in entries if ps["kind"] == "scenario"
            and e["tests"][0]["scenario"].removesuffix(MODIFIED) == ps["name"]
            for k, v in e.get("scenario_overrides", {}).items()]


def _plain(x):
    """numpy scalars and arrays to Python values, NaN and infinities to None (JSON has no NaN)."""
    import math
    import numpy as np
    if isinstance(x, dict):
        return {str(k): _plain(v) for k, v in x.items()}
    if isinstance(x, (list, tuple, np.ndarray)):
        return [_plain(v) for v in x]
    if isinstance(x, np.generic):
        x = x.item()
    if isinstance(x, float) and not math.isfinite(x):
        return None
    return x


def figure_uri(fig, dpi=90):
    """A figure as a ``data:image/png;base64,...`` URI (nothing written to disk)."""
    import base64
    import io
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi)
    return "data:image/png;base64," + base64.b64encode(buf.getvalue()).decode("ascii")


def report_figures(entries, ranking=None, timeline=None, seed=1):
    """Every figure of the report as data URIs.

    Returns
    -------
    dict
        ``{planet name: {"noise": uri, "tests": [{"spectrum": uri,
        "significance": uri}, ...]}}``, one item of ``tests`` per test of the
        planet in the order of its records (the atmosphere test first, then
        each gas, whose spectrum shows the scenario without the gas as the
        null), and ``_all`` (``timeline``, ``ranking``).
    """
    from .figures import plot_noise_budget, plot_ranking, plot_timeline
    from .transit_figures import plot_significance, plot_simulated_spectrum
    out = {}
    for e in entries:
        out[e["name"]] = {
            "noise": figure_uri(plot_noise_budget(e["_budget"], 0)),
            "tests": [{"spectrum": figure_uri(plot_simulated_spectrum(res, 0, seed=seed)),
                       "significance": figure_uri(plot_significance(res, 0))}
                      for res in e["_results"]],
        }
    out["_all"] = {}
    if timeline is not None:
        out["_all"]["timeline"] = figure_uri(plot_timeline(
            timeline, title="planned windows (planning estimate)", fit_windows=True))
    if ranking is not None:
        out["_all"]["ranking"] = figure_uri(plot_ranking(ranking))
    return out


def _fmt(value, spec="{:.1f}"):
    """Template filter: a number in ``spec``, "-" for a missing value."""
    if value is None:
        return "–"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (int, float)):
        return spec.format(value)
    return str(value)


def render_report(doc, figures):
    """The HTML page (str) of a report document and its figures, by the shipped templates."""
    import jinja2
    env = jinja2.Environment(loader=jinja2.PackageLoader("snrkit.output", "templates"),
                             autoescape=jinja2.select_autoescape(["html", "j2"]),
                             undefined=jinja2.StrictUndefined, trim_blocks=True, lstrip_blocks=True)
    env.filters["fmt"] = _fmt
    env.filters["test_label"] = test_label
    return env.get_template("report.html.j2").render(
        doc=doc, figures=figures, sections=SECTIONS, star_rows=STAR_ROWS, planet_rows=PLANET_ROWS)


def write_report(path, entries, ranking=None, timeline=None, command_line="", seed=1):
    """Write the HTML report and its JSON document (same name, ``.json``) atomically.

    Returns
    -------
    dict
        The JSON document.
    """
    import json
    from pathlib import Path
    from ..io.atomic import atomic_write_text
    path = Path(path)
    doc = report_document(entries, ranking, command_line)
    html = render_report(doc, report_figures(entries, ranking, timeline, seed=seed))
    atomic_write_text(path.with_suffix(".json"), json.dumps(doc, indent=2, allow_nan=False) + "\n")
    atomic_write_text(path, html)
    return doc
