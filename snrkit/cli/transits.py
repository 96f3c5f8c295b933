"""``snrkit transits SYSTEM.toml --mode M``: transits needed for a detection."""

from ._common import add_system_args, add_target_options, print_json, print_notes, check_output_path

__all__ = ["add_parser", "run", "add_observation_args", "parse_contamination", "resolution_value",
           "format_result", "plural", "compare_modes"]


def add_observation_args(p):
    """Options shared by the commands that stack transits."""
    p.add_argument("--mode", metavar="PRESET_OR_FILE", action="append",
                   help="instrument mode preset or file (default: observation.mode in the file); "
                        "`transits` takes it several times and compares the modes side by side")
    add_target_options(p)
    p.add_argument("--resolution", metavar="R",
                   help="bin the spectrum to this resolving power, or 'native' for the mode's own "
                        "bins (default 100; bins narrower than a resolution element are merged)")
    p.add_argument("--floor", type=float, metavar="PPM",
                   help="systematics floor per transit [ppm] in a bin of the mode's reference "
                        "resolving power (R = 100 for the presets; default: the mode's floor); "
                        "white in wavelength, so wider bins average it down")
    p.add_argument("--readout", type=int, metavar="GROUPS",
                   help="fixed groups per integration (default: chosen per target for the test, "
                        "accepting saturated bins where that needs fewer transits)")
    p.add_argument("--floor-averages", choices=("yes", "no"),
                   help="whether the floor averages down over transits (default: the mode's)")
    p.add_argument("--overhead", type=float, metavar="HOURS",
                   help="per-visit overhead in hours (default 1)")
    p.add_argument("--solver", choices=("analytic", "layers"), default="analytic",
                   help="spectrum solver: the analytic isothermal formula (default) or chord "
                        "integration through layers (slower; vertical composition, T profiles)")


def resolution_value(text):
    """A resolving power > 1, 'native' (the mode's own bins), or None (the default)."""
    import math
    from ..errors import InputError
    if text is None:
        return None
    if str(text).strip().lower() == "native":
        return "native"
    try:
        value = float(text)
    except ValueError:
        raise InputError("--resolution", text, "a resolving power > 1 or 'native'") from None
    if not math.isfinite(value) or value <= 1:
        raise InputError("--resolution", text, "a resolving power > 1 or 'native'")
    return value


def parse_contamination(args):
    """Build the contamination dict from --spots/--faculae (FRACTION,DELTA_T)."""
    from ..errors import InputError
    out = {}
    for opt, key in (("spots", "spot"), ("faculae", "facula")):
        text = getattr(args, opt, None)
        if not text:
            continue
        try:
            frac, dt = (float(x) for x in text.split(","))
        except ValueError:
            raise InputError(f"--{opt}", text, "FRACTION,TEMPERATURE_CONTRAST_K, e.g. 0.05,400") from None
        import math
        if not (math.isfinite(frac) and math.isfinite(dt)) or not 0 <= frac < 1 or dt < 0:
            raise InputError(f"--{opt}", text, "a fraction in [0, 1) and a contrast >= 0 K")
        out[f"{key}_fraction"] = frac
        out[f"{key}_temperature_contrast"] = dt
    if out:
        out["fitted"] = not getattr(args, "unfitted_contamination", False)
    return out or None


def add_parser(p):
    add_system_args(p)
    p.add_argument("--scenario", metavar="NAME_OR_FILE",
                   help="scenario assumed true (default: each planet's [planet.atmosphere])")
    test = p.add_mutually_exclusive_group()
    test.add_argument("--atmosphere", action="store_true",
                      help="test: any atmosphere against a flat line (default)")
    test.add_argument("--species", metavar="GAS", help="test: detect one gas of the scenario")
    test.add_argument("--against", metavar="SCENARIO_OR_FILE",
                      help="test: reject another scenario (or a spectrum file, depth in ppm)")
    test.add_argument("--goodness-of-fit", action="store_true",
                      help="instead of a nested test: reject a flat line at bins - 1 degrees of "
                           "freedom (model-agnostic; not a detection of the scenario)")
    p.add_argument("--against-unit", metavar="UNIT",
                   help="wavelength unit of an --against spectrum file that carries none (e.g. um)")
    p.add_argument("--against-kind", default="ppm", metavar="KIND",
                   help="what the depth column of an --against file holds: ppm, percent, fraction "
                        "or radius-ratio (default ppm)")
    add_observation_args(p)
    p.add_argument("--probability", type=float, action="append", metavar="P",
                   help="also report N for this detection probability (repeatable; default 0.5 and 0.9)")
    p.add_argument("--spots", metavar="FRACTION,DT",
                   help="unocculted spots: covering fraction and temperature contrast [K]")
    p.add_argument("--faculae", metavar="FRACTION,DT",
                   help="unocculted faculae: covering fraction and temperature contrast [K]")
    p.add_argument("--unfitted-contamination", action="store_true",
                   help="leave the spot/facula signature out of the fit (a bias that can mimic features)")
    p.add_argument("--uncertainty-draws", type=int, default=300, metavar="N",
                   help="seeded draws of planet mass and radius for the spread of N (0: off; default 300)")
    p.add_argument("--seed", type=int, default=1, help="seed of the draws and of the simulated spectrum")
    p.add_argument("--refit", metavar="PARAMS",
                   help="re-fit the alternative's continuum first: comma-separated from "
                        "temperature, cloud_top_pressure, reference_radius")
    p.add_argument("--fisher", action="store_true",
                   help="also forecast parameter errors at the N needed (slower)")
    p.add_argument("--min-jeans", type=float, metavar="LAMBDA",
                   help="leave out hydrogen-rich scenarios on planets whose restricted Jeans "
                        "parameter is below this (default: keep them, with a warning below 20)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--plot", metavar="FILE.png",
                   help="significance vs transits and a simulated spectrum")


def _fmt_n(n):
    return "not reachable" if n is None else str(n)


def plural(n, word):
    """'1 transit', '3 transits'."""
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


def _test_lines(p):
    lo, hi = p["wavelength_range_um"]
    dof = plural(p["degrees_of_freedom"], "degree") + " of freedom"
    return [f"  test: {p['test']} ({p['test_statistic']}); null: {p['null_model']}; {dof}",
            f"  bins: {p['bins_used']} used ({p['binning']}, {lo:.3g}-{hi:.3g} um); readout "
            f"{p['groups_per_integration']} groups per integration, duty cycle "
            f"{p['duty_cycle']:.2f}, {plural(p['bins_saturated'], 'saturated bin')} dropped"]


def _extra_lines(p):
    lines = []
    spread = p.get("transits_needed_spread")
    if spread:
        s = {k: ("-" if v is None else f"{v:.0f}") for k, v in spread.items()}
        lines.append(f"  with mass/radius uncertainty: median {s['median']} (16-84%: {s['p16']}-"
                     f"{s['p84']}); reachable in {p['fraction_of_draws_reachable']:.0%} of draws")
    if p.get("refit"):
        vals = ", ".join(f"{k} = {v:.4g}" for k, v in p["refit"].items() if k != "at_bound")
        bound = p["refit"].get("at_bound") or []
        lines.append("  null re-fitted within physical bounds: " + vals
                     + (f"; at a bound: {', '.join(bound)}" if bound else ""))
    if p.get("fisher_errors"):
        errs = ", ".join(f"{k} +/- {v:.3g}" if isinstance(v, float) else f"{k} {v}"
                         for k, v in p["fisher_errors"].items())
        lines.append(f"  1-sigma errors at N (uniform priors over physical ranges): {errs}")
    if p.get("exceeds_atmosphere_test"):
        lines.append(f"  note: {p['exceeds_atmosphere_test']}")
    return lines


def format_result(res):
    """Plain-text summary of a :func:`snrkit.engine.transits.transits_for_system` result."""
    lines = []
    for p in res["planets"]:
        lines.append(f"{p['name']}: {p['scenario']} vs {p['null_model']} with {p['mode']}, "
                     f"target {p['target_sigma']:g} sigma")
        lines.extend(_test_lines(p))
        if p.get("escape_warning"):
            lines.append(f"  warning: {p['escape_warning']}")
        if p["status"] in ("saturated", "no_signal", "unbound_atmosphere", "escaping_atmosphere"):
            lines.append(f"  {p['status'].replace('_', ' ')}: {p['reason']}")
            continue
        lines.append(f"  transits needed (expected significance): {_fmt_n(p['transits_needed'])}"
                     + (f"  -> {p['hours_total']:.1f} h of telescope time" if p["hours_total"] else ""))
        probs = ", ".join(f"{float(k):.0%}: {_fmt_n(v)}" for k, v in p["transits_for_probability"].items())
        if probs:
            lines.append(f"  transits for detection probability {probs}")
        lines.append(f"  per transit: {p['significance_per_transit_sigma']:.2f} sigma; limit as N grows: "
                     f"{p['asymptotic_significance_sigma']:.2f} sigma; limiting term: {p['limiting_term']}")
        if p["reason"]:
            lines.append(f"  {p['reason']}")
        lines.append(f"  visit: T14 {p['t14_hours']:.2f} h + baseline {p['baseline_hours']:.2f} h + "
                     f"overhead = {p['hours_per_transit']:.2f} h (noise from "
                     f"{p['in_transit_hours']:.2f} h in transit, (T14 + 2 T23) / 3)")
        lines.extend(_extra_lines(p))
    return "\n".join(lines)


def run(args):
    from ..io.systemfile import load_system
    from ..engine.transits import transits_for_system
    if args.plot:
        check_output_path(args.plot, (".png", ".pdf", ".svg"), "--plot")
    system = load_system(args.system, planet=args.planet)
    fa = None if args.floor_averages is None else args.floor_averages == "yes"
    modes = list(dict.fromkeys(args.mode)) if args.mode else [None]
    if args.plot and len(modes) > 1:
        from ..errors import InputError
        raise InputError("--plot", args.plot, "one --mode (the figure shows one mode)")
    results = [transits_for_system(
        system, mode, args.scenario, species=args.species, against=args.against,
        test="goodness-of-fit" if args.goodness_of_fit else None, readout=args.readout,
        min_jeans=args.min_jeans,
        sigma=args.sigma, probabilities=tuple(args.probability or (0.5, 0.9)),
        n_max=args.max_transits, resolution=resolution_value(args.resolution), floor_ppm=args.floor,
        floor_averages_down=fa, overhead_hours=args.overhead,
        contamination=parse_contamination(args), uncertainty_draws=args.uncertainty_draws,
        seed=args.seed, fisher=args.fisher, solver=args.solver,
        against_wavelength_unit=args.against_unit, against_depth_kind=args.against_kind,
        refit=tuple(x for x in (args.refit or "").split(",") if x),
        dataset=bool(args.plot)) for mode in modes]
    if len(results) > 1:
        return _run_several(results, args)
    res = results[0]
    if args.plot:
        from ..output.figures import save_figure
        from ..output.transit_figures import plot_transits
        save_figure(plot_transits(res, seed=args.seed), args.plot, "--plot", dpi=100)
    if args.json:
        print_json({"planets": res["planets"], "notes": res["notes"]})
    else:
        print(format_result(res))
        print("planning estimate; official observatory tools govern real proposals")
    print_notes(res["notes"])
    return 0


def compare_modes(results):
    """Rows of a side-by-side comparison: per planet, each mode's transits and hours."""
    rows = []
    for i, first in enumerate(results[0]["planets"]):
        rows.append({"name": first["name"], "modes": [
            {"mode": r["planets"][i]["mode"], "status": r["planets"][i]["status"],
             "transits_needed": r["planets"][i]["transits_needed"],
             "hours_total": r["planets"][i]["hours_total"],
             "significance_per_transit_sigma": r["planets"][i]["significance_per_transit_sigma"]}
            for r in results]})
    return rows


def _run_several(results, args):
    """Several modes: each mode's answer, then the modes side by side."""
    notes = list(dict.fromkeys(n for r in results for n in r["notes"]))
    rows = compare_modes(results)
    if args.json:
        print_json({"planets": [p for r in results for p in r["planets"]], "comparison": rows,
                    "notes": notes})
        print_notes(notes)
        return 0
    for r in results:
        print(format_result(r))
        print()
    names = [m["mode"] for m in rows[0]["modes"]] if rows else []
    width = max([len(n) for n in names] + [24])
    print("modes side by side: transits needed (hours)")
    print(f"  {'planet':<16} " + " ".join(f"{n:>{width}}" for n in names))
    for row in rows:
        cells = [(f"{plural(m['transits_needed'], 'transit')} ({m['hours_total']:.1f} h)"
                  if m["transits_needed"] else m["status"].replace("_", " ")) for m in row["modes"]]
        print(f"  {row['name']:<16} " + " ".join(f"{c:>{width}}" for c in cells))
    print("planning estimate; official observatory tools govern real proposals")
    print_notes(notes)
    return 0
