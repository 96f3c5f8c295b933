"""``snrkit plan SYSTEM.toml ... --mode M``: the observing programme for a target list."""

from ._common import (one_mode, print_json, print_notes, check_output_path, write_table,
                      add_target_options, today_utc)
from .transits import resolution_value

__all__ = ["add_parser", "run"]


def add_parser(p):
    p.add_argument("targets", nargs="+", metavar="SYSTEM.toml", help="system files of the targets")
    p.add_argument("--planet", metavar="NAME", help="only this planet")
    p.add_argument("--mode", metavar="PRESET_OR_FILE", action="append",
                   help="instrument mode (default: observation.mode in the file)")
    p.add_argument("--scenario", metavar="NAME_OR_FILE",
                   help="scenario assumed true (default: each planet's [planet.atmosphere])")
    p.add_argument("--test", default="atmosphere",
                   help="atmosphere (default), species:GAS or against:SCENARIO")
    add_target_options(p)
    p.add_argument("--resolution", metavar="R",
                   help="resolving power of the bins, or 'native' (default 100)")
    p.add_argument("--from", dest="start", default=None, metavar="DATE",
                   help="first date searched (UTC, YYYY-MM-DD; default today)")
    p.add_argument("--years", type=float, default=5.0, help="years of calendar searched (default 5)")
    p.add_argument("--observatory", default="space", metavar="WHERE",
                   help="space (default), site:LON,LAT[,ELEV_M] or none")
    p.add_argument("--overhead", type=float, metavar="HOURS", help="per-visit overhead (default 1 h)")
    p.add_argument("--out", metavar="FILE", help="write the chosen windows (.csv, .ecsv or .fits)")
    p.add_argument("--plot", metavar="FILE.png", help="timeline of the chosen windows")
    p.add_argument("--json", action="store_true", help="print one JSON object")


def run(args):
    import numpy as np
    from astropy.table import vstack
    from ..io.systemfile import load_system
    from ..planning.plan import programme_plan
    if args.out:
        check_output_path(args.out, (".ecsv", ".csv", ".fits"), "--out")
    if args.plot:
        check_output_path(args.plot, (".png", ".pdf", ".svg"), "--plot")
    results, tables = [], []
    seen = set()
    for path in args.targets:
        from pathlib import Path
        key = Path(path).resolve()
        if key in seen:          # the same file twice would count its planets twice
            continue
        seen.add(key)
        system = load_system(path, planet=args.planet)
        res = programme_plan(system, one_mode(args, "plan"), args.scenario, test=args.test, sigma=args.sigma,
                             start=args.start or today_utc(), years=args.years, observatory=args.observatory,
                             n_max=args.max_transits, resolution=resolution_value(args.resolution),
                             overhead_hours=args.overhead)
        results.append(res)
        chosen = set()
        for p in res["planets"]:
            chosen |= {(p["name"], w["epoch"]) for w in p["windows"]}
        t = res["table"]
        keep = np.array([(str(r["planet"]), int(r["epoch"])) in chosen for r in t], dtype=bool)
        tables.append(t[keep])
    planets = [p for r in results for p in r["planets"]]
    total = sum(r["programme"]["hours_total"] for r in results)
    spans = [p["span_years"] for p in planets if p["span_years"] is not None]
    chosen_table = vstack(tables, metadata_conflicts="silent") if tables else None
    if chosen_table is not None and len(tables):
        chosen_table.meta.update(tables[0].meta)
        chosen_table.meta["planets"] = [p["name"] for p in planets]
        chosen_table.meta["to_utc"] = max(t.meta.get("to_utc", "") for t in tables)
    if args.out and chosen_table is not None:
        write_table(chosen_table, args.out)
    if args.plot and chosen_table is not None:
        from ..output.figures import plot_timeline, save_figure
        save_figure(plot_timeline(chosen_table, title="programme windows (planning estimate)"),
                    args.plot, "--plot", dpi=120)
    summary = {"hours_total": total, "longest_span_years": max(spans) if spans else None,
               "planets": len(planets),
               "planets_complete": int(sum(p["enough_windows"] for p in planets))}
    notes = [n for r in results for n in r["notes"]]
    if args.json:
        print_json({"planets": planets, "programme": summary, "notes": notes})
        print_notes(notes)
        return 0
    for p in planets:
        n = p["transits_needed"]
        head = f"{p['name']}: {p['test']} in {p['scenario']}"
        if not n:
            print(f"{head}: {p['reason'] or p['status']}")
            continue
        print(f"{head}: {n} transits, {p['observable_windows']} of {p['windows_found']} windows "
              f"observable ({p['observable_fraction']:.0%})")
        if p["enough_windows"]:
            print(f"  {p['span_years']:.2f} years, {p['hours_total']:.1f} h: the windows "
                  f"(T14 + baseline + {p['padding_sigma']:g} sigma timing padding on each side, "
                  f"{p['timing_padding_hours']:.1f} h of padding in all) plus the overhead per visit")
            for w in p["windows"]:
                print(f"    epoch {w['epoch']:>6}  {w['start_utc'][:16]} to {w['end_utc'][:16]} UTC"
                      f"  (timing sigma {w['sigma_minutes']:.1f} min)")
        else:
            print(f"  {p['reason']}")
    ls = f"{summary['longest_span_years']:.2f} years" if summary["longest_span_years"] else "-"
    print_notes(notes)
    print(f"programme: {summary['planets_complete']} of {summary['planets']} planets complete, "
          f"{total:.1f} h, longest span {ls}")
    print("hours: `snrkit transits` quotes T14 + baseline + overhead per visit; the plan adds "
          "the timing padding of each window")
    print("planning estimate; official observatory tools govern real proposals")
    return 0
