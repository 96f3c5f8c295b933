"""``snrkit calendar SYSTEM.toml --from DATE --to DATE``: transit windows and observability."""

from ._common import add_system_args, print_json, write_table, TABLE_FORMATS

__all__ = ["add_parser", "run", "format_windows", "windows_json"]


def add_parser(p):
    add_system_args(p)
    p.add_argument("--from", dest="from_date", required=True, metavar="DATE",
                   help="start of the range, UTC (YYYY-MM-DD or YYYY-MM-DDTHH:MM)")
    p.add_argument("--to", dest="to_date", required=True, metavar="DATE",
                   help="end of the range, UTC; a date alone includes that whole day")
    p.add_argument("--observatory", default="space", metavar="WHERE",
                   help="'space' (solar-elongation limits, default), 'site:LON,LAT[,ELEV_M]' "
                        "(east longitude and latitude in deg, elevation in m), or 'none'")
    p.add_argument("--elongation", metavar="MIN,MAX",
                   help="allowed solar elongation in deg for 'space' (default 85,135)")
    p.add_argument("--season", action="append", metavar="FROM,TO",
                   help="for 'space': a date range in which observing is possible; "
                        "repeat for several (default: all year)")
    p.add_argument("--min-altitude", type=float, metavar="DEG",
                   help="for a site: lowest target altitude (default 30)")
    p.add_argument("--sun-altitude", type=float, metavar="DEG",
                   help="for a site: highest Sun altitude (default -12, nautical twilight)")
    p.add_argument("--baseline", default="1.0", metavar="X",
                   help="total out-of-transit time, half before and half after: a multiple "
                        "of T14 (default 1.0) or a duration such as '3h'")
    p.add_argument("--padding-sigma", type=float, default=3.0, metavar="K",
                   help="pad each side of a window by K times the timing uncertainty (default 3)")
    p.add_argument("--observable-only", action="store_true",
                   help="keep only the windows that can be observed")
    p.add_argument("--out", metavar="FILE", help="write the windows to FILE (.csv, .ecsv or .fits)")
    p.add_argument("--plot", metavar="FILE", help="draw a timeline of the windows (.png, .pdf, .svg)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of a table")


def _seasons(values):
    from ..errors import InputError
    out = []
    for v in values or ():
        parts = v.split(",")
        if len(parts) != 2:
            raise InputError("--season", v, "FROM,TO (two UTC dates)")
        out.append((parts[0].strip(), parts[1].strip()))
    return out


def windows_json(table):
    """The JSON object of a :func:`snrkit.planning.calendar.transit_windows` table."""
    from ..planning.calendar import iso_strings
    planets = []
    for name in table.meta["planets"]:
        rows = table[table["planet"] == name]
        mid, start, end = (iso_strings(rows[c]) for c in ("mid_utc", "start_utc", "end_utc"))
        planets.append({"name": name, "windows": [
            {"epoch": int(r["epoch"]), "mid_bjd_tdb": float(r["mid_bjd_tdb"].jd),
             "mid_utc": mid[i], "start_utc": start[i], "end_utc": end[i],
             "sigma_minutes": float(r["sigma_minutes"]),
             "duration_hours": float(r["duration_hours"]),
             "observable": bool(r["observable"]), "reason": str(r["reason"]) or None}
            for i, r in enumerate(rows)]})
    return {"planets": planets, "observatory": table.meta["observatory"],
            "from_utc": table.meta["from_utc"], "to_utc": table.meta["to_utc"],
            "notes": table.meta["notes"]}


def format_windows(table):
    """Plain-text listing of a windows table."""
    from ..planning.calendar import iso_strings
    mid, start, end = (iso_strings(table[c]) for c in ("mid_utc", "start_utc", "end_utc"))
    lines = [f"transit windows {table.meta['from_utc'][:16]} to {table.meta['to_utc'][:16]} UTC",
             f"  observatory: {table.meta['observatory']}",
             f"  window: {table.meta['window']}; baseline {table.meta['baseline']}, "
             f"k = {table.meta['padding_sigma']:g}"]
    head = ("planet", "epoch", "mid (UTC)", "start (UTC)", "end (UTC)", "sigma [min]",
            "length [h]", "observable")
    rows = [head]
    for i, r in enumerate(table):
        rows.append((str(r["planet"]), str(int(r["epoch"])), mid[i][:16], start[i][:16], end[i][:16],
                     f"{float(r['sigma_minutes']):.1f}", f"{float(r['duration_hours']):.2f}",
                     "yes" if r["observable"] else "no: " + str(r["reason"])))
    widths = [max(len(row[j]) for row in rows) for j in range(len(head) - 1)]
    for row in rows:
        lines.append("  " + "  ".join(c.ljust(w) for c, w in zip(row[:-1], widths)) + "  " + row[-1])
    n_ok = int(sum(bool(x) for x in table["observable"]))
    lines.append(f"  {len(table)} windows, {n_ok} observable")
    return "\n".join(lines)


def _write_table(table, path):
    from pathlib import Path
    from ..errors import InputError
    path = Path(path)
    if path.suffix.lower() not in TABLE_FORMATS:
        raise InputError("--out", str(path), "a .csv, .ecsv or .fits file name")
    if not path.parent.is_dir():
        raise InputError("--out", str(path), "a file in an existing folder")
    write_table(table, path)


def run(args):
    from ..io.systemfile import load_system
    from ..planning.calendar import parse_observatory, transit_windows
    from ..errors import InputError
    from pathlib import Path
    if args.plot and Path(args.plot).suffix.lower() not in (".png", ".pdf", ".svg"):
        raise InputError("--plot", args.plot, "a .png, .pdf or .svg file name")
    if args.out and Path(args.out).suffix.lower() not in TABLE_FORMATS:
        raise InputError("--out", args.out, "a .csv, .ecsv or .fits file name")
    observatory = parse_observatory(args.observatory, elongation=args.elongation,
                                    min_altitude=args.min_altitude,
                                    sun_altitude=args.sun_altitude,
                                    seasons=_seasons(args.season))
    system = load_system(args.system, planet=args.planet)
    table = transit_windows(system, args.from_date, args.to_date, observatory=observatory,
                            baseline=args.baseline, padding_sigma=args.padding_sigma)
    if args.observable_only:
        table = table[table["observable"]]
    if args.out:
        _write_table(table, args.out)
    if args.plot:
        if not Path(args.plot).parent.is_dir():
            raise InputError("--plot", args.plot, "a file in an existing folder")
        from ..output.figures import plot_timeline, save_figure
        save_figure(plot_timeline(table), args.plot, "--plot", dpi=120)
    if args.json:
        print_json(windows_json(table))
    else:
        print(format_windows(table))
    return 0
