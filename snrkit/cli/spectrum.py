"""``snrkit spectrum SYSTEM.toml``: transmission spectra of atmosphere scenarios."""

from ._common import add_system_args, print_json

__all__ = ["add_parser", "run", "spectra_for_system", "write_spectrum"]

def add_parser(p):
    add_system_args(p)
    p.add_argument("--scenario", action="append", metavar="NAME|FILE",
                   help="scenario preset or TOML file (repeat for several); default: each "
                        "planet's [planet.atmosphere] table")
    p.add_argument("--solver", choices=("analytic", "layers"), default="analytic",
                   help="analytic isothermal formula (default) or chord integration "
                        "through layers")
    p.add_argument("--resolution", type=float, default=100.0, metavar="R",
                   help="resolving power of the wavelength grid (default 100)")
    p.add_argument("--range", nargs=2, type=float, default=(0.3, 30.0), metavar=("MIN", "MAX"),
                   dest="wavelength_range", help="wavelength range in um (default 0.3 30)")
    p.add_argument("--layers", type=int, default=None, metavar="N",
                   help="layers of the layered solver (default 150)")
    p.add_argument("--refraction", action="store_true",
                   help="limit the deepest pressure probed by refraction (layered and analytic)")
    p.add_argument("--contributions", action="store_true",
                   help="also compute the spectrum with each species removed")
    p.add_argument("--cross-sections", action="append", metavar="SPECIES=FILE",
                   dest="cross_sections",
                   help="your own cross-section table for a species (repeat for several; "
                        "layout: snrkit.atmosphere.user_opacity); it must cover --range")
    p.add_argument("--white-light", nargs=2, type=float, default=WHITE_LIGHT_UM,
                   metavar=("MIN", "MAX"),
                   help="band [um] whose average model depth is set equal to the observed transit "
                        f"depth (default {WHITE_LIGHT_UM[0]:g} {WHITE_LIGHT_UM[1]:g})")
    p.add_argument("--radius-at-reference-pressure", action="store_true",
                   help="place the planet radius at the scenario's reference pressure instead "
                        "(the model then misses the observed depth)")
    p.add_argument("--out", metavar="FILE.ecsv|FILE.nc", help="write the spectra to a file")
    p.add_argument("--plot", metavar="FILE.png", help="plot the spectra")
    p.add_argument("--json", action="store_true", help="print one JSON object")


#: Default white-light band [um] to which spectra are calibrated (a broad
#: near-infrared band; common practice, no source).
WHITE_LIGHT_UM = (0.6, 5.0)


def spectra_for_system(system, scenarios=None, **kwargs):
    """Spectra of every planet of a :class:`~snrkit.bodies.system.System`.

    Parameters
    ----------
    system : snrkit.bodies.system.System
    scenarios : list of (str, dict or Scenario), optional
        Scenarios for all planets (adds a ``scenario`` dimension when more
        than one).  Default: each planet's own ``[planet.atmosphere]`` table.
    **kwargs
        Passed to :func:`snrkit.atmosphere.spectrum.transmission_spectrum`.

    Returns
    -------
    xarray.Dataset
    """
    import astropy.units as u
    import xarray as xr
    from ..errors import InputError
    from ..atmosphere.spectrum import transmission_spectrum
    d = system.derived_arrays()
    names = [str(n) for n in system.names]
    common = dict(planet_radius=d["radius_m"] * u.m, stellar_radius=system.star.radius_m * u.m,
                  gravity=d["surface_gravity_m_s2"] * u.m / u.s**2,
                  equilibrium_temperature=d["equilibrium_temperature_K"] * u.K,
                  semi_major_axis=d["semi_major_axis_m"] * u.m)
    if scenarios:
        spec = list(scenarios) if len(scenarios) > 1 else scenarios[0]
        return transmission_spectrum(spec, planet_names=names, **common, **kwargs)
    parts = []
    for i, name in enumerate(names):
        atm = system.atmospheres[i]
        if not atm:
            raise InputError("--scenario", None, "a scenario name or file",
                             detail=f"planet {name!r} has no [planet.atmosphere] table")
        one = {k: v[i:i + 1] for k, v in common.items()}
        parts.append(transmission_spectrum(dict(atm), planet_names=[name], **one, **kwargs))
    if len(parts) == 1:
        return parts[0]
    return xr.concat(parts, dim="planet", coords="different", compat="equals",
                     join="outer", combine_attrs="override")


def _flat_spectra(ds):
    """Yield (planet, scenario, Dataset-slice) for every spectrum in ``ds``."""
    from ..output.transit_figures import flat_spectra
    return flat_spectra(ds)


def _summary_rows(ds):
    import numpy as np
    rows = []
    for planet, scen, one in _flat_spectra(ds):
        depth = one["transit_depth_ppm"].values
        rows.append({
            "planet": planet, "scenario": scen,
            "transit_depth_ppm": depth,
            "effective_height_km": one["effective_height_km"].values,
            "scale_height_km": float(one["scale_height_km"]),
            "annulus_ppm_per_scale_height": float(one["annulus_ppm_per_scale_height"]),
            "temperature_K": float(one["temperature_K"]),
            "mean_molecular_weight": float(one["mean_molecular_weight"]),
            "min_depth_ppm": float(depth.min()), "max_depth_ppm": float(depth.max()),
            "observed_depth_ppm": float(one["observed_depth_ppm"]),
        })
        if "depth_without_species_ppm" in one:
            w = one["depth_without_species_ppm"]
            rows[-1]["depth_without_species_ppm"] = {
                str(sp): w.sel(species=sp).values for sp in w["species"].values
                if np.all(np.isfinite(w.sel(species=sp).values))}
    return rows


def write_spectrum(ds, path):
    """Write spectra to ``.ecsv`` (long table) or ``.nc`` (netCDF, the whole Dataset)."""
    from pathlib import Path
    import numpy as np
    from ..errors import InputError
    from ..io.atomic import atomic_path
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in (".ecsv", ".nc"):
        raise InputError("--out", str(path), "a file name ending in .ecsv or .nc")
    if not path.parent.exists():
        raise InputError("--out", str(path), "a path in an existing folder")
    if suffix == ".nc":
        with atomic_path(path) as tmp:
            ds.to_netcdf(tmp, engine="scipy")
        return path
    from astropy.table import Table
    import astropy.units as u
    cols = {k: [] for k in ("planet", "scenario", "wavelength", "wavelength_lower",
                            "wavelength_upper", "transit_depth", "effective_height")}
    meta_rows = []
    for planet, scen, one in _flat_spectra(ds):
        n = one.sizes["wavelength"]
        cols["planet"] += [planet] * n
        cols["scenario"] += [scen] * n
        cols["wavelength"].append(one["wavelength"].values)
        cols["wavelength_lower"].append(one["wavelength_lower"].values)
        cols["wavelength_upper"].append(one["wavelength_upper"].values)
        cols["transit_depth"].append(one["transit_depth_ppm"].values)
        cols["effective_height"].append(one["effective_height_km"].values)
        meta_rows.append({"planet": planet, "scenario": scen,
                          "scale_height_km": float(one["scale_height_km"]),
                          "annulus_ppm_per_scale_height": float(one["annulus_ppm_per_scale_height"]),
                          "temperature_K": float(one["temperature_K"]),
                          "mean_molecular_weight_g_mol": float(one["mean_molecular_weight"])})
    t = Table()
    t["planet"] = cols["planet"]
    t["scenario"] = cols["scenario"]
    for key, unit in (("wavelength", u.um), ("wavelength_lower", u.um),
                      ("wavelength_upper", u.um), ("effective_height", u.km)):
        t[key] = np.concatenate(cols[key]) * unit
    t["transit_depth_ppm"] = np.concatenate(cols["transit_depth"])
    t["transit_depth_ppm"].description = "transit depth in ppm (bin average)"
    t = t[["planet", "scenario", "wavelength", "wavelength_lower", "wavelength_upper",
           "transit_depth_ppm", "effective_height"]]
    if "depth_without_species_ppm" in ds:
        for sp in ds["depth_without_species_ppm"]["species"].values:
            col = f"depth_without_{sp}_ppm"
            t[col] = np.concatenate([one["depth_without_species_ppm"].sel(species=sp).values
                                     for _, _, one in _flat_spectra(ds)])
            t[col].description = (f"transit depth in ppm with {sp}'s opacity removed (mean "
                                  "molecular weight unchanged; NaN where the scenario lacks it)")
    t.meta["source"] = "snrkit spectrum"
    t.meta["method"] = ds.attrs.get("method", "")
    t.meta["solver"] = ds.attrs.get("solver", "")
    t.meta["spectra"] = meta_rows
    with atomic_path(path) as tmp:
        t.write(tmp, format="ascii.ecsv", overwrite=True)
    return path


def run(args):
    from ..errors import InputError
    from ..io.systemfile import load_system
    from ..atmosphere.spectrum import wavelength_bin_edges
    from ..atmosphere.scenarios import load_scenario
    system = load_system(args.system, planet=args.planet)
    lo, hi = args.wavelength_range
    if not (0 < lo < hi):
        raise InputError("--range", f"{lo} {hi}", "0 < MIN < MAX (um)")
    edges = wavelength_bin_edges(args.resolution, lo * 1e-6, hi * 1e-6)
    if args.layers is not None and args.solver != "layers":
        raise InputError("--layers", args.layers, "only with --solver layers")
    scenarios = [load_scenario(s, field="--scenario") for s in (args.scenario or [])]
    source = _opacity_source(args.cross_sections) if args.cross_sections else None
    calib = "reference-pressure" if args.radius_at_reference_pressure else "observed-depth"
    band = tuple(args.white_light)
    if calib == "observed-depth":
        wl_lo, wl_hi = band
        if not (0 < wl_lo < wl_hi) or wl_hi <= lo or wl_lo >= hi:
            raise InputError("--white-light", f"{wl_lo:g} {wl_hi:g}",
                             f"MIN < MAX [um] overlapping --range {lo:g}-{hi:g}")
    ds = spectra_for_system(system, scenarios or None, wavelength_edges=edges * 1e6,
                            solver=args.solver, n_layers=args.layers,
                            refraction=args.refraction, contributions=args.contributions,
                            opacity_source=source, radius_calibration=calib,
                            calibration_band=band if calib == "observed-depth" else None)
    if args.out:
        write_spectrum(ds, args.out)
    if args.plot:
        species = set()
        for sc in scenarios or [load_scenario(dict(a)) for a in system.atmospheres if a]:
            if not sc.featureless:
                species |= set(sc.mixing_ratios)
        from ..output.figures import save_figure
        from ..output.transit_figures import plot_spectrum
        save_figure(plot_spectrum(ds, species), args.plot, "--plot")
    rows = _summary_rows(ds)
    if args.json:
        print_json(_json_summary(args, ds, rows))
        return 0
    _print_summary(args, ds, rows, lo, hi, band, calib)
    return 0


def _opacity_source(items):
    """A UserOpacitySource from the ``--cross-sections SPECIES=FILE`` items."""
    from ..errors import InputError
    from ..atmosphere.user_opacity import UserOpacitySource
    tables = {}
    for item in items:
        species, sep, path = (part.strip() for part in item.partition("="))
        if not sep or not species or not path:
            raise InputError("--cross-sections", item, "SPECIES=FILE, e.g. H2O=h2o.csv")
        if species in tables:
            raise InputError("--cross-sections", item, "each species at most once")
        tables[species] = path
    return UserOpacitySource(tables)


def _json_summary(args, ds, rows):
    """The JSON object of the spectra: the bins, one entry per spectrum, a ``planets`` list."""
    out = {
        "solver": args.solver,
        "resolution": args.resolution,
        "wavelength_um": ds["wavelength"].values,
        "wavelength_lower_um": ds["wavelength_lower"].values,
        "wavelength_upper_um": ds["wavelength_upper"].values,
        "spectra": rows,
    }
    if len(rows) == 1:
        for key in ("planet", "scenario", "transit_depth_ppm", "scale_height_km",
                    "annulus_ppm_per_scale_height"):
            out[key] = rows[0][key]
    else:
        for key in ("planet", "scenario", "transit_depth_ppm", "scale_height_km",
                    "annulus_ppm_per_scale_height"):
            out[key] = [r[key] for r in rows]
    # The per-planet convention of every snrkit command: a "planets" list
    # whose objects carry the keys (first scenario at the top of each,
    # every scenario in its "spectra" list).
    planets = {}
    for r in rows:
        entry = planets.setdefault(r["planet"], {"name": r["planet"],
                                                 "wavelength_um": ds["wavelength"].values,
                                                 "spectra": []})
        entry["spectra"].append({k: v for k, v in r.items() if k != "planet"})
    for entry in planets.values():
        first = entry["spectra"][0]
        for key in ("scenario", "transit_depth_ppm", "scale_height_km",
                    "annulus_ppm_per_scale_height"):
            entry[key] = first[key]
    out["planets"] = list(planets.values())
    if args.out:
        out["out"] = str(args.out)
    if args.plot:
        out["plot"] = str(args.plot)
    return out


def _print_summary(args, ds, rows, lo, hi, band, calib):
    """The plain-text summary: settings, one line per spectrum, the depths per bin."""
    import numpy as np
    print(f"solver {args.solver}, R = {args.resolution:g}, {lo:g}-{hi:g} um, "
          f"{ds.sizes['wavelength']} bins; "
          + (f"model depth averaged over {band[0]:g}-{band[1]:g} um equals the observed depth"
             if calib == "observed-depth" else "planet radius at the reference pressure"))
    head = (f"{'planet':<14} {'scenario':<22} {'T [K]':>7} {'mu':>6} {'H [km]':>8} "
            f"{'2HRp/Rs^2':>10} {'observed':>10} {'min [ppm]':>10} {'max [ppm]':>10}")
    print(head)
    for r in rows:
        print(f"{r['planet']:<14} {r['scenario']:<22} {r['temperature_K']:7.0f} "
              f"{r['mean_molecular_weight']:6.2f} {r['scale_height_km']:8.1f} "
              f"{r['annulus_ppm_per_scale_height']:10.1f} {r['observed_depth_ppm']:10.1f} "
              f"{r['min_depth_ppm']:10.1f} {r['max_depth_ppm']:10.1f}")
    print()
    labels = [f"{r['planet']}|{r['scenario']}" for r in rows]
    print("wavelength_um  " + "  ".join(f"{lab:>24}" for lab in labels) + "   (transit depth, ppm)")
    depth = np.array([r["transit_depth_ppm"] for r in rows])
    for j, lam in enumerate(ds["wavelength"].values):
        print(f"{lam:13.5f}  " + "  ".join(f"{v:24.2f}" for v in depth[:, j]))
    for r in rows:
        for sp, without in r.get("depth_without_species_ppm", {}).items():
            signal = np.asarray(r["transit_depth_ppm"]) - np.asarray(without)
            print(f"{r['planet']} | {r['scenario']}: {sp} adds up to {np.max(signal):.1f} ppm "
                  f"(at {ds['wavelength'].values[int(np.argmax(signal))]:.3f} um; "
                  f"mean {np.mean(signal):.1f} ppm over the bins)")
    if args.out:
        print(f"\nwrote {args.out}")
    if args.plot:
        print(f"wrote {args.plot}")
