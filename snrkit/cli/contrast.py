"""``snrkit contrast SYSTEM.toml --mode M --scenarios A,B,C``: transits to tell scenarios apart."""

from ._common import one_mode, add_system_args, print_json, print_notes
from .transits import add_observation_args, resolution_value

__all__ = ["add_parser", "run"]


def add_parser(p):
    add_system_args(p)
    p.add_argument("--scenarios", required=True, metavar="A,B,...",
                   help="comma-separated scenario presets or files (two or more)")
    add_observation_args(p)
    p.add_argument("--json", action="store_true", help="print one JSON object")


def run(args):
    from ..io.systemfile import load_system
    from ..engine.transits import contrast_for_system
    system = load_system(args.system, planet=args.planet)
    fa = None if args.floor_averages is None else args.floor_averages == "yes"
    res = contrast_for_system(system, one_mode(args, "contrast"), args.scenarios, sigma=args.sigma,
                              n_max=args.max_transits, resolution=resolution_value(args.resolution),
                              floor_ppm=args.floor, floor_averages_down=fa,
                              overhead_hours=args.overhead, solver=args.solver)
    if args.json:
        print_json(res)
        print_notes(res["notes"])
        return 0
    names = res["scenarios"]
    width = max(12, *(len(n) for n in names))
    for p in res["planets"]:
        print(f"{p['name']} with {res['mode']}: transits to reject the column scenario at "
              f"{res['target_sigma']:g} sigma when the row scenario is true")
        print(f"  test: {res['test_statistic']}; bins: {p['bins_used']} used ({res['binning']})")
        print("  " + "true \\ rejected".ljust(width) + "".join(n.rjust(width + 2) for n in names))
        for a, row in enumerate(p["transits_needed"]):
            cells = []
            for b, n in enumerate(row):
                cells.append("-" if a == b else ("not reachable" if n is None else str(n)))
            print("  " + names[a].ljust(width) + "".join(c.rjust(width + 2) for c in cells))
    print_notes(res["notes"])
    print("planning estimate; official observatory tools govern real proposals")
    return 0
