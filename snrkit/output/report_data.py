"""What the report shows, gathered from the engine: per planet the tests, the noise, the plan.

The report computes nothing itself: each number comes from a public function
(:func:`snrkit.transits.transits_for_system`,
:func:`snrkit.photons.precision.system_precision`,
:func:`snrkit.plan.programme_plan`, :func:`snrkit.rank.rank_catalogue`,
:func:`snrkit.describe.describe_system`), and the JSON written beside the
report holds exactly the numbers the page prints.
"""

__all__ = ["planet_entry", "gather_targets", "gather_catalogue", "table_provenance",
           "preset_provenance", "chosen_windows", "merge_windows",
           "DEFAULT_MODE", "DEFAULT_SCENARIO"]

#: Mode of planets whose system file names none (the demo's default).
DEFAULT_MODE = "cold6m-prism-lowres"
#: Scenario ranked in a catalogue when none is given.
DEFAULT_SCENARIO = "h2-clear-solar"


def planet_entry(system, index, source, results, plan=None, budget=None):
    """One planet's part of the report.

    Parameters
    ----------
    system : snrkit.system.System
        The system the planet belongs to.
    index : int
        The planet's index in ``system``.
    source : str
        Where the planet came from (the system file's name).
    results : list of dict
        :func:`snrkit.transits.transits_for_system` results for this planet
        alone, the atmosphere test first.
    plan : dict, optional
        The planet's entry of :func:`snrkit.plan.programme_plan`.
    budget : xarray.Dataset, optional
        Its :func:`snrkit.photons.precision.system_precision`; by default
        computed here at the readout and bins of the first test.

    Returns
    -------
    dict
        ``name``, ``source``, ``inputs`` (star and planet, from
        :func:`snrkit.describe.describe_system`), ``scenario_overrides`` (the
        values the system file changes in its scenario preset), ``tests`` (the per-planet
        records), ``plan``, and, not for JSON, ``_results`` and ``_budget``.
    """
    from ..bodies.describe import describe_system
    one = system.take([index])
    desc = describe_system(one)
    first = results[0]["planets"][0]
    if budget is None:
        from ..photons.precision import DEFAULT_RESOLUTION
        from ..photons.targets import system_precision
        budget = system_precision(one, first["mode"], readout=int(first["groups_per_integration"]),
                                  n_transits=int(first["transits_needed"] or 1), warn=False,
                                  resolution=DEFAULT_RESOLUTION)
    atm = system.atmospheres[index]
    overrides = ({str(k): v for k, v in atm.items() if k != "scenario"}
                 if isinstance(atm, dict) and "scenario" in atm else {})
    return {"name": first["name"], "source": source, "inputs": desc,
            "scenario_overrides": overrides,
            "tests": [r["planets"][0] for r in results], "plan": plan,
            "noise_budget_ppm": _median_budget(budget),
            "_results": results, "_budget": budget}


def _median_budget(ds):
    """Median over usable bins of each noise term of one transit [ppm] (from the Dataset)."""
    import numpy as np
    sat = ds["saturated"].values[0]
    if sat.all():
        return {str(t): None for t in ds["term"].values}
    vals = ds["noise_budget_ppm"].values[0][:, ~sat]
    out = {str(t): float(np.nanmedian(v)) for t, v in zip(ds["term"].values, vals)}
    out["total"] = float(np.nanmedian(ds["noise_ppm_per_transit"].values[0][~sat]))
    return out


def gather_targets(paths, mode=None, scenario=None, species=(), sigma=5.0, start="2027-01-01",
                   years=5.0, uncertainty_draws=200, seed=1):
    """Run the tests, the noise budget and the plan for every planet of the system files.

    Parameters
    ----------
    paths : sequence of str or pathlib.Path
        System files (TOML).
    mode : str, optional
        Instrument mode; default each planet's ``[planet.observation] mode``
        or :data:`DEFAULT_MODE`.
    scenario : str, optional
        Scenario; default each planet's ``[planet.atmosphere]``.
    species : sequence of str
        Gases to test one by one where the scenario has them.
    sigma : float
        Target significance.
    start : str
        First day of the calendar (UTC date).
    years : float
        Length of the calendar.
    uncertainty_draws, seed : int
        Draws of the planet parameters for the spread of the transits needed.

    Returns
    -------
    entries : list of dict
        :func:`planet_entry` per planet.
    timeline : astropy.table.Table or None
        The planned windows of every planet, for the timeline.
    """
    from pathlib import Path
    from ..io.systemfile import load_system
    from ..atmosphere.scenarios import load_scenario
    from ..engine.transits import transits_for_system
    from ..planning.plan import programme_plan
    entries, tables = [], []
    for path in paths:
        system = load_system(path)
        for i in range(len(system)):
            one = system.take([i])
            obs = system.observations[i] or {}
            m = mode or obs.get("mode", DEFAULT_MODE)
            spec = scenario or system.atmospheres[i] or DEFAULT_SCENARIO
            sc = load_scenario(spec if isinstance(spec, str) else dict(spec))
            gases = [g for g in species if g in sc.mixing_ratios]
            results = [transits_for_system(one, m, sc, species=g, sigma=sigma,
                                           uncertainty_draws=uncertainty_draws, seed=seed)
                       for g in [None] + gases]
            plan = programme_plan(one, m, sc, sigma=sigma, start=start, years=years)
            tables.append(chosen_windows(plan))
            entries.append(planet_entry(system, i, Path(path).name, results, plan["planets"][0]))
    return entries, merge_windows(tables)


def chosen_windows(plan):
    """The windows a plan chose, as a table (every window of the calendar otherwise dropped)."""
    import numpy as np
    chosen = {(p["name"], w["epoch"]) for p in plan["planets"] for w in p["windows"]}
    t = plan["table"]
    keep = np.array([(str(r["planet"]), int(r["epoch"])) in chosen for r in t], dtype=bool)
    out = t[keep] if len(t) else t
    out.meta["planets"] = [p["name"] for p in plan["planets"]]
    return out


def merge_windows(tables):
    """Stack the chosen windows of several plans into one timeline table (None if none)."""
    if not tables:
        return None
    from astropy.table import vstack
    out = vstack(tables, metadata_conflicts="silent")
    out.meta.update(tables[0].meta)
    out.meta["planets"] = [n for t in tables for n in t.meta.get("planets", [])]
    out.meta["from_utc"] = min(t.meta["from_utc"] for t in tables)
    out.meta["to_utc"] = max(t.meta["to_utc"] for t in tables)
    return out


def gather_catalogue(path, mode=DEFAULT_MODE, scenario=DEFAULT_SCENARIO, sigma=5.0):
    """A ranked catalogue: read as it is when it has a ``rank`` column, else ranked here.

    Returns
    -------
    astropy.table.Table
        The :func:`snrkit.rank.rank_catalogue` table.
    """
    from astropy.table import Table
    from ..io.tomlfile import check_input_path
    p = check_input_path(path, "catalogue", "a catalogue file")
    if p.suffix.lower() == ".ecsv":
        t = Table.read(p, format="ascii.ecsv")
        if "rank" in t.colnames and "hours_total" in t.colnames:
            return t
    from ..planning.catalog import read_catalogue
    from ..planning.rank import rank_catalogue
    return rank_catalogue(read_catalogue(p), mode, scenario, sigma=sigma)


def table_provenance():
    """Source, method and regenerating script of every shipped ECSV data table.

    Returns
    -------
    list of dict
        ``table``, ``source``, ``script`` (empty where the table says none).
    """
    from ..io.tables import data_path, read_table
    root = data_path()
    rows = []
    for f in sorted(root.rglob("*.ecsv")):
        rel = f.relative_to(root).as_posix()
        if rel.startswith("demo/"):
            continue
        meta = read_table(*rel.split("/")).meta
        rows.append({"table": rel, "source": _text(meta.get("source", "")),
                     "script": _text(meta.get("script", ""))})
    return rows


def _text(value):
    if isinstance(value, dict):
        return "; ".join(f"{k}: {v}" for k, v in value.items())
    if isinstance(value, (list, tuple)):
        return "; ".join(map(str, value))
    return str(value)


#: Suffix of a preset's name once an input file changed some of its values
#: (:mod:`snrkit.atmosphere.scenario_files`).
MODIFIED = " (modified)"
#: Preset folders of the data tables by kind, and the table of each file that holds its sources.
_PRESET_KINDS = (("scenario", "scenarios", "provenance"), ("mode", "instruments", "sources"))


def _flat_items(doc, prefix=""):
    """``(dotted key, value)`` of a TOML document's parameters, depth first (tables of values kept whole)."""
    for k, v in doc.items():
        key = f"{prefix}{k}"
        if isinstance(v, dict) and not {"wavelength_um", "value"} <= set(v) and key != "mixing_ratios":
            yield from _flat_items(v, key + ".")
        else:
            yield key, v


def _value_text(value):
    if isinstance(value, bool):                 # as the TOML file writes it
        return "true" if value else "false"
    if isinstance(value, dict) and {"wavelength_um", "value"} <= set(value):
        return "; ".join(f"{w:g} µm: {x:g}" for w, x in zip(value["wavelength_um"], value["value"]))
    if isinstance(value, dict):
        return ", ".join(f"{k} {v:g}" if isinstance(v, (int, float)) else f"{k} {v}"
                         for k, v in value.items())
    return str(value)


def _preset_rows(doc, sources_key):
    """Parameters of one preset file, each with its own source entry ("" where the file gives none).

    Mixing ratios take the ``source_GAS`` entries, gases of one source named together.
    """
    sources = doc.get(sources_key, {})
    rows = []
    for key, value in _flat_items({k: v for k, v in doc.items()
                                   if k not in ("name", "description", sources_key)}):
        if key == "mixing_ratios":
            by_source = {}
            for gas in list(value) + [doc.get("fill_gas")]:
                if f"source_{gas}" in sources:
                    by_source.setdefault(_text(sources[f"source_{gas}"]), []).append(gas)
            src = "; ".join(f"{', '.join(g)}: {text}" for text, g in by_source.items())
        else:
            src = _text(sources.get(key, ""))
        rows.append({"parameter": key, "value": _value_text(value), "source": src})
    return rows


def preset_provenance(scenarios=(), modes=()):
    """The shipped presets a report used: parameters, values and sources (what ``snrkit presets --show`` prints).

    Parameters
    ----------
    scenarios, modes : iterable of str
        Names used; ``NAME (modified)`` lists the preset NAME; a name
        without a shipped file (a scenario defined in a system file) is
        listed as such, without parameters.

    Returns
    -------
    list of dict
        ``kind``, ``name``, ``description``, ``file`` (path inside the data
        tables, or None), ``parameters`` (``parameter``, ``value``,
        ``source``), ``notes`` (the file's other provenance entries:
        its general source, method, units, date, script) and ``overrides``
        (empty here; :func:`snrkit.output.report.report_document` adds the
        values input files changed).
    """
    from ..io.tables import data_path
    from ..io.tomlfile import read_toml
    out = []
    for (kind, folder, sources_key), names in zip(_PRESET_KINDS, (scenarios, modes)):
        # a preset changed by an input file is named "NAME (modified)": list NAME
        for name in dict.fromkeys(str(n).removesuffix(MODIFIED) for n in names):
            path = data_path(folder, f"{name}.toml")
            if not path.is_file():
                out.append({"kind": kind, "name": name, "description": "not a shipped preset "
                            "(defined in the input file)", "file": None, "parameters": [], "notes": [],
                            "overrides": []})
                continue
            doc = read_toml(path, f"{kind} preset")
            notes = [f"{k}: {_text(v)}" for k, v in doc.get(sources_key, {}).items()
                     if not k.startswith("source_") and "." not in k]
            out.append({"kind": kind, "name": name, "description": str(doc.get("description", "")),
                        "file": f"{folder}/{name}.toml", "parameters": _preset_rows(doc, sources_key),
                        "notes": notes, "overrides": []})
    return out
