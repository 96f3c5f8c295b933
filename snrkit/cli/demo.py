"""``snrkit demo``: the whole chain on the embedded invented demo systems.

For each demo system file: its description, the spectrum of each planet's
scenario, the transits needed to detect the atmosphere (against a flat line)
and its main gases (H2O, CO2 where present) -- nested likelihood-ratio tests
with one degree of freedom on the same bins and noise, so the atmosphere never
needs more transits than one of its gases -- with the planet's instrument
mode (``[planet.observation] mode``, or the low-resolution prism preset), and
a figure.  Everything is written into a results folder with a plain-text
summary, which is also printed, and one HTML report of it all
(``report.html``, :mod:`snrkit.output.report`).
"""

from pathlib import Path

from ._common import print_json
from .transits import plural

__all__ = ["add_parser", "run", "demo_files", "DEFAULT_MODE", "run_demo"]

#: Mode used for demo planets that name none.
DEFAULT_MODE = "cold6m-prism-lowres"
#: Stars of the demo's synthetic population (45 generator blocks).
DEMO_YIELD_STARS = 45 * 4096
#: Programme hours per planet of the demo's yield designs.
DEMO_HOURS = (25, 50, 100, 200, 400)
#: Gases the demo tests one by one where the scenario has them.
DEMO_GASES = ("H2O", "CO2")


def demo_files():
    """Paths of the shipped demo system files, sorted by name."""
    from ..io.tables import data_path
    return sorted(data_path("demo").glob("*.toml"))


def add_parser(p):
    p.add_argument("--out", metavar="FOLDER", default="snrkit_demo_output",
                   help="results folder (default: ./snrkit_demo_output)")
    p.add_argument("--only", metavar="NAME", action="append",
                   help="run only this demo system (file stem, e.g. cedar; repeatable)")
    p.add_argument("--describe-only", action="store_true",
                   help="only describe the demo systems (no spectra, noise or stacking)")
    p.add_argument("--yield-stars", type=int, default=DEMO_YIELD_STARS, metavar="N",
                   help=f"stars of the invented population whose yields the demo computes "
                        f"(default {DEMO_YIELD_STARS}, about 10^4 transiting planets)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of the summary")


def _mode_of(system, i):
    obs = system.observations[i] or {}
    return obs.get("mode", DEFAULT_MODE)


def run_demo(out_dir, only=None, describe_only=False, yield_stars=DEMO_YIELD_STARS):
    """Run the demo chain; return (summary text, JSON-ready dict).  Writes files into ``out_dir``."""
    import json
    import tomllib
    from ..io.systemfile import load_system
    from ..io.atomic import atomic_write_text
    from ..bodies.describe import describe_system
    from .describe import format_description
    from ._common import jsonable
    files = demo_files()
    if only:
        known = {f.stem for f in files}
        from ..errors import InputError
        for name in only:
            if name not in known:
                raise InputError("--only", name, "one of " + ", ".join(sorted(known)))
        files = [f for f in files if f.stem in only]
    out = Path(out_dir)
    if not describe_only:
        out.mkdir(parents=True, exist_ok=True)
    summary = ["snrkit demo: invented systems (no real star or planet); planning estimates only", ""]
    systems, report_parts = [], []
    for path in files:
        system = load_system(path)
        title = tomllib.loads(path.read_text()).get("title", path.stem)
        desc = describe_system(system)
        summary.append(format_description(desc, title=f"{title}  [{path.name}]"))
        entry = {"file": path.name, "title": title, **desc}
        if not describe_only:
            entry["results"], per_planet = _chain(system, path.stem, out, summary)
            report_parts.append((system, path.name, per_planet))
            atomic_write_text(out / f"{path.stem}_description.json",
                              json.dumps(jsonable(desc), indent=2) + "\n")
        systems.append(entry)
        summary.append("")
    ranking, plans, windows = None, {}, None
    if not describe_only and not only:
        ranking, plans, windows = _catalogue_and_plan(files, out, summary)
        _population_yields(out, summary, yield_stars)
    if not describe_only:
        _report(report_parts, ranking, plans, windows, out, summary)
        summary.append(f"results written to {out}/")
        atomic_write_text(out / "summary.txt", "\n".join(summary) + "\n")
    return "\n".join(summary), {"systems": systems, "out": None if describe_only else str(out)}


def _chain(system, stem, out, summary):
    import json
    from ..engine.transits import transits_for_system
    from ..atmosphere.scenarios import load_scenario
    from ..output.figures import save_figure
    from ..output.transit_figures import plot_transits
    from ..io.atomic import atomic_write_text
    from ._common import jsonable
    from .spectrum import spectra_for_system, write_spectrum, WHITE_LIGHT_UM
    ds = spectra_for_system(system, resolution=100, calibration_band=WHITE_LIGHT_UM)
    write_spectrum(ds, out / f"{stem}_spectra.ecsv")
    results, per_planet = [], []
    for i, name in enumerate(system.names):
        one = system.take([i])
        mode = _mode_of(system, i)
        sc = load_scenario(system.atmospheres[i]) if system.atmospheres[i] else None
        if sc is None:
            summary.append(f"  {name}: no atmosphere scenario in the file; skipped")
            continue
        tests = [("atmosphere", None)] + [("species", g) for g in DEMO_GASES if g in sc.mixing_ratios]
        lines = [f"  {name} ({sc.name}, mode {mode}):"]
        per_planet.append((i, []))
        for kind, gas in tests:
            res = transits_for_system(one, mode, species=gas, uncertainty_draws=200, seed=1)
            rec = res["planets"][0]
            tag = "atmosphere" if gas is None else gas
            results.append(rec)
            per_planet[-1][1].append(res)
            safe = str(name).replace(" ", "_")
            atomic_write_text(out / f"{safe}_{tag}.json", json.dumps(jsonable(rec), indent=2) + "\n")
            save_figure(plot_transits(res, seed=1), out / f"{safe}_{tag}.png", dpi=100)
            if kind == "atmosphere":
                lines.append(f"    (each test: {rec['test_statistic']}; {rec['bins_used']} bins, "
                             f"{rec['binning']}; readout {rec['groups_per_integration']} groups, "
                             f"{rec['bins_saturated']} saturated bins dropped)")
            if rec["status"] in ("saturated", "no_signal", "stellar_contamination"):
                lines.append(f"    {tag:<10} {rec['status'].replace('_', ' ')}: {rec['reason']}")
            elif rec["transits_needed"] is None:
                lines.append(f"    {tag:<10} not reachable within the transit limit "
                             f"({rec['limiting_term']}; {rec['asymptotic_significance_sigma']:.1f} sigma at most)")
            else:
                spread = rec.get("transits_needed_spread") or {}
                s84 = spread.get("p84")
                lines.append(f"    {tag:<10} {plural(rec['transits_needed'], 'transit'):>12} for "
                             f"{rec['target_sigma']:g} sigma ({rec['hours_total']:.0f} h; 90% probability: "
                             f"{rec['transits_for_probability'].get('0.9') or 'not reachable'}; "
                             f"84th percentile over mass/radius: "
                             f"{f'{s84:.0f}' if s84 is not None else 'not reachable'})")
        summary.extend(lines)
    return results, per_planet


def _report(parts, ranking, plans, windows, out, summary):
    """Write ``report.html`` (and its JSON) from the results the demo computed."""
    from ..output.report import write_report
    from ..output.report_data import planet_entry
    entries = [planet_entry(system, i, source, res, plans.get(str(system.names[i])))
               for system, source, per_planet in parts for i, res in per_planet]
    path = out / "report.html"
    write_report(path, entries, ranking, windows, command_line="snrkit demo", seed=1)
    summary.append(f"report: {path}")


def _catalogue_and_plan(files, out, summary):
    """Rank the invented demo catalogue and plan the demo planets' transits."""
    import json
    import numpy as np
    from ..planning.catalog import read_catalogue
    from ..planning.rank import rank_catalogue
    from ..planning.plan import programme_plan
    from ..output.figures import plot_ranking, save_figure
    from ..output.report_data import chosen_windows, merge_windows
    from ..io.systemfile import load_system
    from ..io.atomic import atomic_path, atomic_write_text
    from ..io.tables import data_path
    from ._common import jsonable
    cat = read_catalogue(data_path("demo", "catalogue.ecsv"))
    table = rank_catalogue(cat, DEFAULT_MODE, "h2-clear-solar")
    with atomic_path(out / "catalogue_ranked.ecsv") as tmp:
        table.write(tmp, format="ascii.ecsv", overwrite=True)
    save_figure(plot_ranking(table), out / "catalogue_ranking.png")
    top = table[np.asarray(table["rank"]) > 0]
    top.sort("rank")
    summary.append(f"demo catalogue ({len(table)} invented rows), atmosphere test, h2-clear-solar, "
                   f"{DEFAULT_MODE}: "
                   + ", ".join(f"{k} {v}" for k, v in sorted(table.meta["status_counts"].items())))
    for r in top[:5]:
        summary.append(f"  {int(r['rank']):>2}. {r['name']:<14} {plural(int(r['transits_needed']), 'transit')}, "
                       f"{float(r['hours_total']):.1f} h (TSM {float(r['tsm']):.1f})")
    summary.append("")
    plans, windows = [], []
    for path in files:
        system = load_system(path)
        modes = {(system.observations[i] or {}).get("mode", DEFAULT_MODE) for i in range(len(system))}
        for mode in sorted(modes):
            idx = [i for i in range(len(system))
                   if (system.observations[i] or {}).get("mode", DEFAULT_MODE) == mode]
            res = programme_plan(system.take(idx), mode, start="2027-01-01", years=5)
            windows.append(chosen_windows(res))
            for p in res["planets"]:
                plans.append(p)
                if p["enough_windows"]:
                    summary.append(f"  plan {p['name']}: {plural(p['transits_needed'], 'transit')} from "
                                   f"{p['windows'][0]['start_utc'][:10]} to "
                                   f"{p['windows'][-1]['end_utc'][:10]} ({p['span_years']:.2f} years, "
                                   f"{p['hours_total']:.0f} h; {p['observable_fraction']:.0%} of "
                                   "windows observable)")
                else:
                    summary.append(f"  plan {p['name']}: {p['reason'] or p['status']}")
    atomic_write_text(out / "programme_plan.json", json.dumps(jsonable({"planets": plans}), indent=2) + "\n")
    return table, {p["name"]: p for p in plans}, merge_windows(windows)


def _population_yields(out, summary, stars):
    """Yields of an invented population for programme budgets, on a local dask cluster."""
    import json
    import sys
    from ..planning.yields import population_yields
    from ..output.figures import save_figure
    from ..output.yield_figures import plot_yields
    res = population_yields(generate=stars, seed=1, mode=DEFAULT_MODE, resolution=20,
                            design_texts=[f"name={h} h,hours={h}" for h in DEMO_HOURS],
                            out_dir=out / "yields", restart=True,
                            notify=lambda text: print(text, file=sys.stderr))
    ds = res["dataset"]
    save_figure(plot_yields(ds, x="hours"), out / "yields_by_budget.png")
    total = ds["yield_mean"].sum(["planet_class", "hz_position"]).isel(scenario=0, test=0)
    hz = [h for h in ("optimistic", "conservative") if h in ds["hz_position"].values]
    in_hz = ds["yield_mean"].sel(hz_position=hz).sum(["planet_class", "hz_position"])
    summary.append(f"invented population: {res['planets']} transiting planets of {stars} stars; "
                   f"atmosphere at 5 sigma within 500 transits, each planet's own scenario, "
                   f"{DEFAULT_MODE}, by programme hours per planet:")
    scale = float(ds.attrs["volume_scale"])
    for d in ds["design"].values:
        summary.append(f"  {d}: {float(total.sel(design=d)):.0f} planets, "
                       f"{float(in_hz.sel(design=d).isel(scenario=0, test=0)):.0f} of them in "
                       f"the habitable zone ({float(total.sel(design=d)) * scale:.0f} for the "
                       "real stars of the volume)")
    drawn = json.loads(ds.attrs["population"])["generated_stars"]
    summary.append(f"  (the {drawn} stars drawn, whole blocks of 4096, are {1.0 / scale:.2g} "
                   "times the dwarfs within 50 pc: the real-volume numbers divide the yields by "
                   "that factor; expected values, if every planet there is known)")
    status = ds["status_count"].isel(draw=0, design=0, scenario=0, test=0)
    counts = ", ".join(f"{int(status.sel(status=s))} {s.replace('_', ' ')}"
                       for s in ds["status"].values if s != "ok")
    summary.append(f"  planets with another status than ok (never counted): {counts or 'none'}")
    summary.append("")


def run(args):
    text, doc = run_demo(args.out, only=args.only, describe_only=args.describe_only,
                         yield_stars=args.yield_stars)
    if args.json:
        print_json(doc)
    else:
        print(text)
    return 0
