"""``snrkit precision SYSTEM.toml --mode MODE``: per-bin transit-depth precision."""

from ._common import one_mode, add_system_args, print_json

__all__ = ["add_parser", "run", "precision_json", "format_precision"]


def add_parser(p):
    add_system_args(p)
    p.add_argument("--mode", metavar="PRESET_OR_FILE", action="append",
                   help="instrument mode preset (see `snrkit presets`) or mode file (.toml); "
                        "default: observation.mode in the system file")
    p.add_argument("--resolution", type=float, metavar="R",
                   help="re-bin to this resolving power (default: the mode's native bins)")
    p.add_argument("--transits", type=int, metavar="N",
                   help="number of transits for the combined precision (default: "
                        "observation.transits in the file, or 1)")
    p.add_argument("--band", metavar="BAND",
                   help="band of the normalising stellar magnitude (J, H, Ks, V; default: "
                        "the first the star has, in that order)")
    p.add_argument("--json", action="store_true", help="print one JSON object instead of tables")
    p.add_argument("--plot", metavar="FILE.png", help="plot noise against wavelength to this file")


def precision_json(ds):
    """JSON-ready dict of a precision Dataset: common fields and a ``planets`` list."""
    terms = [str(t) for t in ds["term"].values]
    planets = []
    for i, name in enumerate(ds["planet"].values):
        p = ds.isel(planet=i)
        planets.append({
            "name": str(name),
            "mode": ds.attrs["instrument_mode"],
            "saturated": bool(p["saturated"].values.any()),
            "star_too_bright": bool(p["star_too_bright"].values),
            "saturation_limit_mag": float(p["saturation_limit_mag"].values),
            "magnitude": float(p["magnitude"].values),
            "groups_per_integration": int(p["groups_per_integration"].values),
            "duty_cycle": float(p["duty_cycle"].values),
            "integration_time_s": float(p["integration_time"].values),
            "effective_integration_time_s": float(p["effective_integration_time"].values),
            "brightest_pixel_fill": float(p["brightest_pixel_fill"].values),
            "in_transit_hours": float(p["in_transit_time"].values),
            "baseline_hours": float(p["baseline_time"].values),
            "transit_depth_ppm": (float(p["transit_depth"].values)
                                  if "transit_depth" in p else None),
            "wavelength_um": p["wavelength"].values,
            "bin_width_um": p["bin_width"].values,
            "photon_rate_e_per_s": p["photon_rate"].values,
            "noise_ppm_per_transit": p["noise_ppm_per_transit"].values,
            "noise_ppm": p["noise_ppm"].values,
            "noise_budget_ppm": {t: p["noise_budget_ppm"].sel(term=t).values for t in terms},
            "saturated_bins": p["saturated"].values,
        })
    return {
        "mode": ds.attrs["instrument_mode"],
        "mode_description": ds.attrs["mode_description"],
        "readout_scheme": ds.attrs["readout_scheme"],
        "band": ds.attrs["band"],
        "transits": int(ds.attrs["n_transits"]),
        "floor_ppm": float(ds.attrs["floor_ppm"]),
        "floor_averages_down": bool(ds.attrs["floor_averages_down"]),
        "planets": planets,
    }


def _f(x, fmt):
    import math
    return "-" if x is None or (isinstance(x, float) and math.isnan(x)) else fmt.format(x)


def format_precision(ds):
    """Readable text: per planet a readout/budget summary and the per-bin table."""
    import numpy as np
    n_tr = int(ds.attrs["n_transits"])
    lines = [f"mode {ds.attrs['instrument_mode']}: {ds.attrs['mode_description']}",
             f"  floor {ds.attrs['floor_ppm']:.1f} ppm per bin per transit "
             f"({'averages down' if ds.attrs['floor_averages_down'] else 'does not average down'}"
             f" over transits); band {ds.attrs['band']}"]
    terms = [str(t) for t in ds["term"].values]
    for i, name in enumerate(ds["planet"].values):
        p = ds.isel(planet=i)
        lines.append("")
        lines.append(f"{name}: {ds.attrs['band']} = {float(p['magnitude']):.2f}, "
                     f"in transit {float(p['in_transit_time']):.2f} h, "
                     f"baseline {float(p['baseline_time']):.2f} h")
        if ds.attrs["readout_scheme"] == "scan":
            lines.append(f"  readout: scan, {int(p['groups_per_integration'])} reads per "
                         f"exposure, duty cycle {float(p['duty_cycle']):.3f} (no saturation limit)")
        else:
            lines.append(f"  readout: {int(p['groups_per_integration'])} groups per integration, "
                         f"{float(p['integration_time']):.3f} s per integration, duty cycle "
                         f"{float(p['duty_cycle']):.3f}; brightest pixel at "
                         f"{100 * float(p['brightest_pixel_fill']):.0f} % of the usable well; "
                         f"brightest usable {ds.attrs['band']} = "
                         f"{_f(float(p['saturation_limit_mag']), '{:.2f}')}")
        sat = p["saturated"].values
        if bool(p["star_too_bright"]):
            lines.append(f"  SATURATED: the star is too bright for this mode "
                         f"({sat.sum()} of {sat.size} bins saturate even in the shortest "
                         "integration; their noise is not given)")
        elif sat.any():
            lines.append(f"  SATURATED: {sat.sum()} of {sat.size} bins saturate")
        med = {t: np.nanmedian(p["noise_budget_ppm"].sel(term=t).values) if (~sat).any()
               else float("nan") for t in terms}
        lines.append("  median budget per transit [ppm]: "
                     + ", ".join(f"{t} {_f(float(v), '{:.1f}')}" for t, v in med.items()))
        head = (f"  {'lambda_um':>9} {'width_um':>9} {'e-/s':>10} {'ppm/transit':>11} "
                + " ".join(f"{t:>10}" for t in terms) + f" {'ppm x' + str(n_tr):>10}")
        lines.append(head)
        for j in range(p.sizes["wavelength"]):
            b = p["noise_budget_ppm"].values[:, j]
            lines.append(
                f"  {p['wavelength'].values[j]:9.4f} {p['bin_width'].values[j]:9.5f} "
                f"{p['photon_rate'].values[j]:10.3e} "
                f"{_f(float(p['noise_ppm_per_transit'].values[j]), '{:11.1f}'):>11} "
                + " ".join(_f(float(x), "{:10.1f}").rjust(10) for x in b)
                + f" {_f(float(p['noise_ppm'].values[j]), '{:10.1f}'):>10}"
                + ("  saturated" if sat[j] else ""))
    return "\n".join(lines)


def run(args):
    from ..io.systemfile import load_system
    from ..photons.targets import system_precision
    from ..errors import InputError
    if args.transits is not None:
        from ..units import parse_number
        parse_number(args.transits, "--transits", 1, 100000, integer=True)
    if args.plot is not None and not str(args.plot).lower().endswith(".png"):
        raise InputError("--plot", args.plot, "a file name ending in .png")
    system = load_system(args.system, planet=args.planet)
    ds = system_precision(system, one_mode(args, "precision"), band=args.band, n_transits=args.transits,
                          resolution=args.resolution)
    if args.plot:
        from ..output.figures import plot_precision, save_figure
        save_figure(plot_precision(ds), args.plot, "--plot")
    if args.json:
        print_json(precision_json(ds))
    else:
        print(format_precision(ds))
    return 0
