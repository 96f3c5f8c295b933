"""``snrkit report TARGET... --out FILE.html``: one self-contained HTML report of a programme.

TARGETs are system files (``.toml``; several make a target list) and at
most one catalogue (``.ecsv``, ``.csv``, ``.vot``/``.xml``): a table written by
``snrkit rank --out`` is shown as ranked, any other catalogue is ranked
first.  The numbers are written beside the page as JSON (same name,
``.json``); ``--json`` also prints that document.
"""

from ._common import print_json

__all__ = ["add_parser", "run"]

_CATALOGUE_SUFFIXES = (".ecsv", ".csv", ".vot", ".xml")


def add_parser(p):
    p.add_argument("targets", nargs="+", metavar="TARGET",
                   help="system files (.toml) and/or one catalogue (.ecsv, .csv, .vot)")
    p.add_argument("--out", required=True, metavar="FILE.html", help="the report to write")
    p.add_argument("--mode", metavar="PRESET_OR_FILE",
                   help="instrument mode (default: each planet's observation.mode, else the "
                        "low-resolution prism preset)")
    p.add_argument("--scenario", metavar="NAME_OR_FILE",
                   help="atmosphere scenario (default: each planet's [planet.atmosphere]; "
                        "for a catalogue h2-clear-solar)")
    p.add_argument("--gas", action="append", default=[], metavar="GAS",
                   help="also test this gas where the scenario has it (repeatable)")
    p.add_argument("--sigma", type=float, default=5.0, help="target significance (default 5)")
    p.add_argument("--start", metavar="YYYY-MM-DD",
                   help="first day of the calendar (default today, UTC)")
    p.add_argument("--years", type=float, default=5.0, help="length of the calendar (default 5)")
    p.add_argument("--json", action="store_true", help="also print the report's JSON document")


def _split_targets(targets):
    from pathlib import Path
    from ..errors import InputError
    systems, catalogues = [], []
    for t in targets:
        suffix = Path(t).suffix.lower()
        if suffix == ".toml":
            systems.append(t)
        elif suffix in _CATALOGUE_SUFFIXES:
            catalogues.append(t)
        else:
            raise InputError("TARGET", t, "a system file (.toml) or a catalogue (.ecsv, .csv, .vot, .xml)")
    if len(catalogues) > 1:
        raise InputError("TARGET", ", ".join(catalogues), "at most one catalogue")
    return systems, (catalogues[0] if catalogues else None)


def run(args):
    import shlex
    import sys
    from ..output.report import write_report
    from ..output.report_data import DEFAULT_MODE, DEFAULT_SCENARIO, gather_catalogue, gather_targets
    from ._common import check_output_path, today_utc
    check_output_path(args.out, (".html",), "--out")
    systems, catalogue = _split_targets(args.targets)
    entries, timeline = gather_targets(systems, mode=args.mode, scenario=args.scenario,
                                       species=tuple(args.gas), sigma=args.sigma, start=args.start or today_utc(),
                                       years=args.years) if systems else ([], None)
    ranking = None
    if catalogue is not None:
        ranking = gather_catalogue(catalogue, args.mode or DEFAULT_MODE,
                                   args.scenario or DEFAULT_SCENARIO, sigma=args.sigma)
    command = "snrkit " + " ".join(shlex.quote(a) for a in sys.argv[1:]) if sys.argv[1:] else "snrkit report"
    doc = write_report(args.out, entries, ranking, timeline, command_line=command)
    if args.json:
        print_json({**doc, "out": str(args.out)})
    else:
        print(f"wrote {args.out} (numbers in {args.out[:-5] if args.out.endswith('.html') else args.out}.json)")
    return 0
