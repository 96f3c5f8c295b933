"""``snrkit limits --mode M --teff T``: brightest usable and floor-limited magnitudes."""

from ._common import print_json

__all__ = ["add_parser", "run"]


def add_parser(p):
    p.add_argument("--mode", required=True, action="append", metavar="PRESET_OR_FILE",
                   help="instrument mode preset or file (repeatable)")
    p.add_argument("--teff", required=True, type=float, metavar="K", help="stellar Teff [K]")
    p.add_argument("--band", default="J", help="band of the magnitudes (default J)")
    p.add_argument("--duration", type=float, default=3.0, metavar="HOURS",
                   help="transit duration T14 for the floor comparison (default 3 h)")
    p.add_argument("--wavelength", type=float, metavar="UM",
                   help="reference bin wavelength (default: centre of the mode's range)")
    p.add_argument("--json", action="store_true", help="print one JSON object")


def run(args):
    from ..photons.targets import limiting_magnitudes
    rows = []
    for mode in args.mode:
        out = limiting_magnitudes(mode, args.teff, args.band, transit_duration=args.duration,
                                  reference_wavelength=args.wavelength)
        rows.append({"mode": mode, "band": args.band, "teff_K": args.teff, **out})
    if args.json:
        print_json({"modes": rows})
        return 0
    print(f"Teff {args.teff:.0f} K, band {args.band}, T14 {args.duration:g} h")
    print(f"  {'mode':<26} {'brightest usable':>17} {'floor = photon at':>18} {'ref. um':>8} {'floor ppm':>10}")
    for r in rows:
        sat = "no limit" if r["saturation_mag"] != r["saturation_mag"] else f"{r['saturation_mag']:.2f}"
        print(f"  {r['mode']:<26} {sat:>17} {r['floor_mag']:>18.2f} "
              f"{r['reference_wavelength_um']:>8.3f} {r['floor_ppm']:>10.1f}")
    return 0
