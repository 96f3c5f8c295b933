"""``snrkit rank CATALOG --mode M --scenario S``: rank a catalogue of planets."""

import sys

from ._common import add_target_options, print_json, print_notes
from .transits import resolution_value

__all__ = ["add_parser", "run", "ProgressBar"]


def add_parser(p):
    p.add_argument("catalogue", metavar="CATALOG", help="catalogue file (.csv, .ecsv, .vot/.xml)")
    p.add_argument("--mapping", metavar="FILE.toml", help="column mapping (default: the plain layout)")
    p.add_argument("--mode", required=True, action="append", metavar="PRESET_OR_FILE",
                   help="instrument mode (repeatable: the best mode per planet is kept)")
    p.add_argument("--scenario", required=True, action="append", metavar="NAME_OR_FILE",
                   help="atmosphere scenario (repeatable: the best per planet is kept)")
    p.add_argument("--each-scenario", action="store_true",
                   help="rank each scenario on its own (one row per planet and scenario) "
                        "instead of keeping each planet's best scenario")
    p.add_argument("--test", default="atmosphere",
                   help="atmosphere (default), species:GAS, against:SCENARIO, or goodness-of-fit "
                        "(a flat line rejected at bins - 1 degrees of freedom)")
    add_target_options(p)
    p.add_argument("--resolution", metavar="R",
                   help="resolving power of the bins, or 'native' (default 100, as for transits; "
                        "bins narrower than a resolution element are merged)")
    p.add_argument("--min-jeans", type=float, metavar="LAMBDA",
                   help="leave out hydrogen-rich scenarios on planets whose restricted Jeans "
                        "parameter G Mp m_H / (k Teq Rp) is below this (default: rank them and "
                        "flag those below 20 in escape_warning)")
    p.add_argument("--sort", default="hours", metavar="KEY[:asc|:desc]",
                   help="hours (default), transits, tsm, esm, significance, or a numeric column; "
                        "append :asc or :desc to choose the direction")
    p.add_argument("--top", type=int, metavar="N", help="print only the first N ranked rows")
    p.add_argument("--radius-min", type=float, metavar="R_EARTH",
                   help="keep planets at least this large [Earth radii]")
    p.add_argument("--radius-max", type=float, metavar="R_EARTH",
                   help="keep planets at most this large [Earth radii]")
    p.add_argument("--teq-min", type=float, metavar="K",
                   help="keep planets at least this warm (equilibrium temperature, K)")
    p.add_argument("--teq-max", type=float, metavar="K",
                   help="keep planets at most this warm (equilibrium temperature, K)")
    p.add_argument("--habitable-zone", action="store_true", help="keep only planets in the habitable zone")
    p.add_argument("--band", default="J", help="band of the magnitude limits (default J)")
    p.add_argument("--brighter-than", type=float, metavar="MAG", help="keep stars brighter than this")
    p.add_argument("--fainter-than", type=float, metavar="MAG", help="keep stars fainter than this")
    p.add_argument("--out", metavar="FILE", help="write every row to FILE (.ecsv, .csv or .fits)")
    p.add_argument("--plot", metavar="FILE.png", help="hours to the target against TSM")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.add_argument("--json", action="store_true", help="print one JSON object")


class ProgressBar:
    """A one-line progress bar on stderr (only when stderr is a terminal)."""

    def __init__(self, enabled, label="ranking", unit=""):
        self.enabled = enabled and sys.stderr.isatty()
        self.label, self.unit = label, unit

    def __call__(self, done, total):
        if not self.enabled:
            return
        width = 30
        k = int(width * done / max(total, 1))
        sys.stderr.write(f"\r  {self.label} [{'#' * k}{'.' * (width - k)}] {done}/{total}{self.unit}")
        if done >= total:
            sys.stderr.write("\n")
        sys.stderr.flush()


def _filters(args):
    f = {}
    for opt, key in (("radius_min", "radius_min"), ("radius_max", "radius_max"),
                     ("teq_min", "teq_min"), ("teq_max", "teq_max"),
                     ("brighter_than", "magnitude_max"), ("fainter_than", "magnitude_min")):
        v = getattr(args, opt)
        if v is not None:
            f[key] = v
    if args.habitable_zone:
        f["habitable_zone_only"] = True
    if "magnitude_max" in f or "magnitude_min" in f:
        f["band"] = args.band
    return f


def run(args):
    from ..planning.catalog import read_catalogue
    from ..planning.rank import rank_catalogue
    from ..errors import InputError
    from ._common import check_output_path, write_table
    if args.top is not None and args.top < 1:
        raise InputError("--top", args.top, "an integer >= 1")
    if args.out:
        check_output_path(args.out, (".ecsv", ".csv", ".fits"), "--out")
    if args.plot:
        check_output_path(args.plot, (".png", ".pdf", ".svg"), "--plot")
    cat = read_catalogue(args.catalogue, mapping=args.mapping)
    table = rank_catalogue(cat, args.mode, args.scenario, test=args.test, sigma=args.sigma,
                           n_max=args.max_transits, resolution=resolution_value(args.resolution),
                           sort_by=args.sort, filters=_filters(args),
                           progress=ProgressBar(not args.quiet and not args.json),
                           each_scenario=args.each_scenario, min_jeans=args.min_jeans)
    if args.out:
        write_table(table, args.out)
    if args.plot:
        from ..output.figures import plot_ranking, save_figure
        save_figure(plot_ranking(table), args.plot, "--plot")
    if args.json:
        rows = []
        for r in table:
            rows.append({"input_index": int(r["input_index"]), "name": str(r["name"]),
                         "status": str(r["status"]), "reason": str(r["reason"]),
                         "rank": _or_none(r["rank"], int),
                         "mode": str(r["mode"]) or None, "scenario": str(r["scenario"]) or None,
                         "tsm": float(r["tsm"]), "esm": float(r["esm"]),
                         "radius_earth": float(r["radius_earth"]),
                         "equilibrium_temperature_K": float(r["equilibrium_temperature_K"]),
                         "habitable_zone": str(r["habitable_zone"]) or None,
                         "quick_feature_ppm": float(r["quick_feature_ppm"]),
                         "significance_per_transit_sigma": float(r["significance_per_transit"]),
                         "transits_needed": _or_none(r["transits_needed"], int),
                         "hours_total": _or_none(r["hours_total"], float),
                         "limiting_term": str(r["limiting_term"]) or None,
                         "groups_per_integration": int(r["groups_per_integration"]) or None,
                         "duty_cycle": float(r["duty_cycle"]),
                         "bins_saturated": int(r["bins_saturated"]),
                         "jeans_parameter": float(r["jeans_parameter"]),
                         "escape_warning": bool(r["escape_warning"])})
        print_json({"rows": rows, "summary": table.meta["status_counts"],
                    "notes": table.meta.get("notes", []),
                    "settings": {k: table.meta[k] for k in ("test", "target_sigma", "modes",
                                                            "scenarios", "resolution", "sort_by",
                                                            "test_statistic")}})
        print_notes(table.meta.get("notes", []))
        return 0
    ranked = table[table["rank"] > 0]
    ranked.sort(["scenario", "rank"] if args.each_scenario else "rank")
    if args.top:
        import numpy as np
        ranked = ranked[np.asarray(ranked["rank"]) <= args.top]   # per scenario with --each-scenario
    print(f"test: {table.meta['test']} at {table.meta['target_sigma']:g} sigma "
          f"({table.meta['test_statistic']}); bins R = {table.meta['resolution']}; "
          f"sorted by {table.meta['sort_by']}")
    print(f"{'rank':>4}  {'planet':<16} {'R [Re]':>7} {'Teq [K]':>8} {'TSM':>7} {'quick [ppm]':>11} "
          f"{'N':>5} {'hours':>8} {'groups':>6} {'sat':>4}  mode / scenario")
    for r in ranked:
        print(f"{int(r['rank']):>4}  {str(r['name']):<16} {r['radius_earth']:>7.2f} "
              f"{r['equilibrium_temperature_K']:>8.0f} {r['tsm']:>7.1f} {r['quick_feature_ppm']:>11.1f} "
              f"{int(r['transits_needed']):>5} {r['hours_total']:>8.1f} "
              f"{int(r['groups_per_integration']):>6} {int(r['bins_saturated']):>4}  "
              f"{r['mode']} / {r['scenario']}")
    counts = ", ".join(f"{k}: {v}" for k, v in sorted(table.meta["status_counts"].items()))
    print(f"{table.meta['rows']} input rows -- {counts}")
    print_notes(table.meta.get("notes", []))
    print("planning estimate; official observatory tools govern real proposals")
    return 0


def _or_none(value, kind):
    """``kind(value)``, or None for a masked (not ranked, not reached) entry."""
    import numpy as np
    return None if value is np.ma.masked or np.ma.is_masked(value) else kind(value)
