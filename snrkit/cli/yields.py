"""``snrkit yields``: how many planets of a population each design characterises."""

import math
import sys

from ._common import add_target_options, print_json, check_output_path

__all__ = ["add_parser", "run"]


def add_parser(p):
    src = p.add_mutually_exclusive_group(required=True)
    src.add_argument("--population", metavar="FILE",
                     help="population file (.parquet, .csv or .ecsv; catalogue columns, "
                          "optionally planet_class, hz_position and scenario)")
    src.add_argument("--generate", type=int, metavar="N",
                     help="draw a population of N stars (rounded up to whole generator blocks) "
                          "and keep their transiting planets")
    p.add_argument("--mapping", metavar="FILE.toml",
                   help="column mapping of the population file (default: the plain layout)")
    p.add_argument("--seed", type=int, default=0, help="seed of the first draw (default 0)")
    p.add_argument("--draws", type=int, default=1, metavar="K",
                   help="independent population draws (seeds SEED..SEED+K-1) for the spread "
                        "of the yield (default 1)")
    p.add_argument("--designs", metavar="FILE.toml",
                   help="design grid file ([defaults] and [[design]] tables; keys: name, mode, "
                        "aperture_m, throughput_scale, floor_ppm, floor_averages_down, hours, years)")
    p.add_argument("--design", action="append", metavar="KEY=VALUE,...",
                   help="one design, e.g. name=8m,aperture_m=8,floor_ppm=20 (repeatable)")
    p.add_argument("--mode", metavar="PRESET_OR_FILE",
                   help="instrument mode of designs that name none (alone: one design, the mode "
                        "as it is)")
    p.add_argument("--scenario", action="append", metavar="NAME_OR_FILE",
                   help="atmosphere scenario for every planet (repeatable); 'assigned' (default) "
                        "is each planet's own scenario from the population")
    p.add_argument("--test", action="append", metavar="TEST",
                   help="atmosphere (default), species:GAS or against:SCENARIO (repeatable)")
    add_target_options(p, "largest number of transits per planet (default 500)")
    p.add_argument("--hours", type=float, metavar="H",
                   help="programme hours per planet for designs that set none (default: no limit)")
    p.add_argument("--resolution", metavar="R",
                   help="resolving power of the bins, or 'native' (default 100, as for transits)")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="dask scheduler address (HOST:PORT), 'local' for a cluster on this machine "
                        "or 'in-process' (default: $SNRKIT_SCHEDULER, else local)")
    p.add_argument("--connect-timeout", type=float, default=10.0, metavar="SECONDS",
                   help="how long to wait for the scheduler at --scheduler ADDRESS (default 10)")
    p.add_argument("--workers", type=int, metavar="N",
                   help="worker processes of the local cluster (default: one per core)")
    p.add_argument("--chunk-memory", default="1 GB", metavar="SIZE",
                   help="memory one chunk may use on a worker, e.g. '1 GB' (default 1 GB; at most "
                        "a worker's memory)")
    p.add_argument("--chunk-planets", type=int, default=5000, metavar="N",
                   help="rows per chunk of a population file (default 5000)")
    p.add_argument("--chunk-blocks", type=int, default=8, metavar="N",
                   help="generator blocks of 4096 stars per chunk of a generated population "
                        "(default 8)")
    p.add_argument("--out", dest="out_dir", default="snrkit_yields", metavar="DIR",
                   help="run folder: yields.nc, planets/*.parquet, manifest.json (default "
                        "./snrkit_yields); a run there with the same settings is resumed")
    p.add_argument("--restart", action="store_true",
                   help="discard the chunks of an earlier run in DIR instead of resuming")
    p.add_argument("--plot", metavar="FILE.png", help="yield against --plot-against per planet class")
    p.add_argument("--plot-against", default="aperture_m", metavar="KEY",
                   help="aperture_m (default), hours, years, floor_ppm or throughput_scale")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.add_argument("--json", action="store_true", help="print one JSON object")


def _rows(ds):
    """One record per design x scenario x test x planet class (habitable-zone positions summed)."""
    tot = ds[["reached"]].sum("hz_position")["reached"]
    mean = tot.mean("draw")
    spread = tot.std("draw", ddof=1) if ds.sizes["draw"] > 1 else None
    planets = ds["planets"].sum("hz_position").mean("draw")
    hz = [h for h in ("optimistic", "conservative") if h in ds["hz_position"].values]
    in_hz = ds["reached"].sel(hz_position=hz).sum("hz_position").mean("draw")
    scale = float(ds.attrs.get("volume_scale", math.nan))
    rows = []
    for d in ds["design"].values:
        for s in ds["scenario"].values:
            for t in ds["test"].values:
                for c in ds["planet_class"].values:
                    at = dict(design=d, scenario=s, test=t, planet_class=c)
                    rows.append({"design": str(d), "scenario": str(s), "test": str(t),
                                 "planet_class": str(c),
                                 "planets": float(planets.sel(planet_class=c)),
                                 "yield_mean": float(mean.sel(**at)),
                                 "yield_spread": None if spread is None else float(spread.sel(**at)),
                                 "poisson_sigma": float(mean.sel(**at)) ** 0.5,
                                 "yield_per_volume": (float(mean.sel(**at)) * scale
                                                      if math.isfinite(scale) else None),
                                 "yield_per_volume_error": (
                                     scale * (float(mean.sel(**at)) / ds.sizes["draw"]) ** 0.5
                                     if math.isfinite(scale) else None),
                                 "yield_in_habitable_zone": float(in_hz.sel(**at))})
    return rows


def run(args):
    from ..planning.yields import population_yields
    from ..errors import InputError
    from .transits import resolution_value
    from .rank import ProgressBar
    if args.plot:
        check_output_path(args.plot, (".png", ".pdf", ".svg"), "--plot")
    if args.plot and args.plot_against:
        from ..output.yield_figures import PLOT_AXES
        if args.plot_against not in PLOT_AXES:
            raise InputError("--plot-against", args.plot_against, "one of " + ", ".join(PLOT_AXES))
    res = population_yields(
        args.population, generate=args.generate, seed=args.seed, draws=args.draws,
        mapping=args.mapping, designs=args.designs, design_texts=args.design or (),
        mode=args.mode, scenarios=args.scenario or ["assigned"], tests=args.test or ["atmosphere"],
        sigma=args.sigma, max_transits=args.max_transits, hours=args.hours,
        resolution=resolution_value(args.resolution), scheduler=args.scheduler,
        workers=args.workers, connect_timeout=args.connect_timeout,
        chunk_memory=args.chunk_memory, chunk_planets=args.chunk_planets,
        chunk_blocks=args.chunk_blocks,
        out_dir=args.out_dir, restart=args.restart,
        progress=ProgressBar(not args.quiet and not args.json, "yields", " chunks"),
        notify=lambda text: print(text, file=sys.stderr))
    ds = res["dataset"]
    if args.plot:
        from ..output.figures import save_figure
        from ..output.yield_figures import plot_yields
        save_figure(plot_yields(ds, x=args.plot_against), args.plot, "--plot")
    rows = _rows(ds)
    if args.json:
        print_json({"yields": rows, "chunks": res["chunks"], "chunks_computed": res["computed"],
                    "planets": res["planets"], "out": res["out_dir"], "draws": int(ds.sizes["draw"]),
                    "designs": [{"name": str(d), "mode": str(m), "aperture_m": float(a)}
                                for d, m, a in zip(ds["design"].values, ds["mode"].values,
                                                   ds["aperture_m"].values)],
                    "settings": {k: ds.attrs[k] for k in ("target_sigma", "max_transits",
                                                          "hours_per_planet", "resolution")}})
        return 0
    print(f"{res['planets']} planets in {ds.sizes['draw']} draw(s), {res['chunks']} chunks "
          f"({res['computed']} computed now); target {ds.attrs['target_sigma']:g} sigma within "
          f"{ds.attrs['max_transits']} transits")
    print(f"{'design':<22} {'scenario':<18} {'test':<14} {'planet class':<18} {'planets':>9} "
          f"{'yield':>9} {'spread':>7} {'in HZ':>7} {'real vol':>11}")
    for r in rows:
        spread = r["yield_spread"] if r["yield_spread"] is not None else r["poisson_sigma"]
        real = ("-" if r["yield_per_volume"] is None else
                f"{r['yield_per_volume']:.0f}+-{r['yield_per_volume_error']:.0f}")
        print(f"{r['design'][:22]:<22} {r['scenario'][:18]:<18} {r['test'][:14]:<14} "
              f"{r['planet_class'][:18]:<18} {r['planets']:>9.0f} {r['yield_mean']:>9.1f} "
              f"{spread:>7.1f} {r['yield_in_habitable_zone']:>7.1f} {real:>11}")
    print("spread: over the draws" if ds.sizes["draw"] > 1 else
          "spread: Poisson sqrt(yield) (one draw; --draws K for the spread over draws)")
    scale = float(ds.attrs.get("volume_scale", math.nan))
    if math.isfinite(scale):
        print(f"real vol: expected yield of the stars the generator's volume really holds "
              f"(yield x {scale:.3g}; each draw is {1.0 / scale:.3g} times that many stars) "
              "+- its sampling error; if every planet there is known and every transit taken; "
              "the real sky scatters by about its square root; occurrence-rate uncertainty "
              "not included")
    print(f"results in {res['out_dir']}/ (yields.nc, planets/*.parquet)")
    print("planning estimate; official observatory tools govern real proposals")
    return 0
