"""``snrkit describe SYSTEM.toml``: inputs and derived quantities."""

from ._common import add_system_args, print_json

__all__ = ["add_parser", "run", "format_description", "HABITABLE_ZONE_WORDS"]


def add_parser(p):
    add_system_args(p)
    p.add_argument("--json", action="store_true", help="print one JSON object instead of a table")


#: Plain words for the habitable-zone codes (Kopparapu et al. 2014 limits).
HABITABLE_ZONE_WORDS = {
    "inner": "inside the inner edge (hotter than recent Venus)",
    "optimistic": "optimistic zone only",
    "conservative": "conservative zone",
    "outer": "beyond the outer edge (colder than early Mars)",
    "undefined": "undefined (Teff outside 2600-7200 K)",
}


def _fmt(value, fmt):
    if value is None:
        return "-"
    if isinstance(value, bool):
        return "yes" if value else "no"
    try:
        return fmt.format(value)
    except (ValueError, TypeError):
        return str(value)


def format_description(desc, title=None):
    """Plain-text table of a :func:`snrkit.bodies.describe.describe_system` result."""
    from ..bodies.describe import PLANET_DERIVED_KEYS
    lines = []
    star = desc["star"]
    head = title or f"star {star['name'] or '(unnamed)'}"
    lines.append(head)
    mags = ", ".join(f"{b} = {v:.2f}" for b, v in star["magnitudes"].items() if v is not None)
    lines.append(f"  Teff {star['effective_temperature_K']:.0f} K, R {star['radius_solar']:.3f} R_sun, "
                 f"M {star['mass_solar']:.3f} M_sun, log g {star['log_gravity_cgs']:.2f}"
                 + (f", {star['distance_pc']:.1f} pc" if star["distance_pc"] else "")
                 + (f"; {mags}" if mags else ""))
    planets = desc["planets"]
    rows = [("planet", [pl["name"] for pl in planets]),
            ("radius [R_earth]", [_fmt(pl["radius_earth"], "{:.3f}") for pl in planets]),
            ("period [d]", [_fmt(pl["period_days"], "{:.5f}") for pl in planets])]
    for key, (label, fmt) in PLANET_DERIVED_KEYS.items():
        if key == "habitable_zone":
            rows.append((label, [HABITABLE_ZONE_WORDS.get(pl[key], str(pl[key])) for pl in planets]))
            continue
        rows.append((label, [_fmt(pl[key], fmt) for pl in planets]))
    width = max(len(r[0]) for r in rows)
    colw = [max(len(str(r[1][j])) for r in rows) for j in range(len(planets))]
    for label, vals in rows:
        cells = "  ".join(str(v).rjust(colw[j]) for j, v in enumerate(vals))
        lines.append(f"  {label.ljust(width)}  {cells}")
    notes = [f"  note: {pl['name']}: mass estimated from radius (Chen & Kipping 2017)"
             for pl in planets if pl["mass_estimated"]]
    notes += [f"  note: {pl['name']}: impact parameter not given; b = 0 assumed"
              for pl in planets if pl["impact_parameter_assumed"]]
    lines.extend(notes)
    return "\n".join(lines)


def run(args):
    from ..io.systemfile import load_system
    from ..bodies.describe import describe_system
    system = load_system(args.system, planet=args.planet)
    desc = describe_system(system)
    if args.json:
        print_json(desc)
    else:
        print(format_description(desc))
    return 0
