"""Transits needed: the whole chain for a system, a scenario, a mode and a test.

:func:`transits_for_system` ties the layers together: the photon-noise
precision of an instrument mode (:mod:`snrkit.photons`) sets the bins (by
default :data:`snrkit.photons.precision.DEFAULT_RESOLUTION`, the same for
every command) and the per-transit noise; the transmission spectrum of the
scenario (:mod:`snrkit.atmosphere.spectrum`) is computed on the same bins;
the test picks its nested models (:mod:`snrkit.hypotheses`: atmosphere
against a flat line, one species, scenario A against B, each one degree of
freedom; or, on request only, the goodness of fit of a flat line); the
readout of a bright star is chosen for that test; the stacker
(:mod:`snrkit.detect`) finds the transits needed, the detection
probabilities and the limiting term; and :mod:`snrkit.forecast` and
:mod:`snrkit.refit` add the programme hours, the spread from planet mass and
radius uncertainties, bounded re-fits and Fisher errors with priors.

Everything runs on whole arrays over the planet axis; the result holds one
summary record per planet plus an xarray Dataset of curves and spectra.
"""

import numpy as np

from .errors import InputError
from . import detect as dt
from . import forecast as fc
from . import hypotheses as hy
from .constants import HOUR, R_EARTH, M_EARTH, R_SUN, AU

__all__ = ["parse_test", "transits_for_system", "contrast_for_system", "contamination_templates",
           "observe", "TESTS", "DEFAULT_MAX_TRANSITS", "REFIT_PARAMETERS",
           "MAX_SCALE_HEIGHT_RATIO", "JEANS_PARAMETER_MIN", "HYDROGEN_RICH_MU", "STATUSES",
           "TEST_STATISTICS"]

#: Largest scale height, as a fraction of the planet radius, at which a scenario
#: is treated as a bound hydrostatic atmosphere (R/H >= 10; a planet with a
#: smaller ratio loses its atmosphere hydrodynamically -- cf. the Jeans escape
#: parameter of Fossati et al. 2017, A&A 598, A90; threshold: common practice,
#: no source).
MAX_SCALE_HEIGHT_RATIO = 0.1
#: Escape screening informs, it does not delete.  For hydrogen-rich scenarios
#: (mean molecular weight below HYDROGEN_RICH_MU, g/mol) the restricted Jeans
#: escape parameter Lambda = G Mp m_H / (k Teq Rp) -- the hydrogen-atom mass
#: and the equilibrium temperature, the definition of Fossati et al. 2017, A&A
#: 598, A90, who find that envelopes below about 20 are lost by "boil-off"
#: (value from memory) -- is reported with every answer, and a value below
#: JEANS_PARAMETER_MIN adds a warning (``escape_warning``).  A planet is left out
#: only when the caller sets ``min_jeans`` (status ``escaping_atmosphere``).
HYDROGEN_RICH_MU = 4.0
JEANS_PARAMETER_MIN = 20.0
#: Largest number of planet-parameter draws (memory grows with draws x bins).
MAX_UNCERTAINTY_DRAWS = 20000

#: Continuum parameters the null may re-fit (bounded, see :mod:`snrkit.refit`).
REFIT_PARAMETERS = ("temperature", "cloud_top_pressure", "reference_radius")

#: Test kinds: "atmosphere" (vs a flat line), "species" (one molecule removed),
#: "against" (another scenario), and the goodness of fit of a flat line.
TESTS = ("atmosphere", "species", "against", hy.GOODNESS_OF_FIT)
#: What each test's statistic is, as stated in every output.
TEST_STATISTICS = {
    "nested": "one-sided likelihood ratio q0 between nested models, 1 degree of freedom, "
              "Z = sqrt(Delta chi^2) (Cowan et al. 2011)",
    hy.GOODNESS_OF_FIT: "goodness of fit of a flat line, chi^2 with bins - 1 degrees of freedom "
                        "(model-agnostic; not a detection of the scenario)",
}
#: Per-planet statuses.
STATUSES = ("ok", "not_reachable", "no_signal", "saturated", "unbound_atmosphere",
            "escaping_atmosphere", "stellar_contamination")
#: Largest number of transits considered by default.
DEFAULT_MAX_TRANSITS = 500
#: Largest accepted transit limit (far beyond any programme; keeps the
#: stacker's search bounded; common practice, no source).
MAX_TRANSITS_LIMIT = 100000


def parse_test(test=None, species=None, against=None):
    """Normalise the test description to ``(kind, argument)``.

    Accepts ``test="atmosphere"``, ``"goodness-of-fit"``, ``"species:CO2"``,
    ``"against:steam"``, or the keyword forms ``species="CO2"`` /
    ``against="steam"``.
    """
    given = [x is not None for x in (species, against)]
    if sum(given) > 1:
        raise InputError("test", (species, against), "only one of species or against")
    if sum(given) and test not in (None, "atmosphere"):
        raise InputError("test", test, "either test or the species/against keyword, not both")
    if species is not None:
        return "species", str(species)
    if against is not None:
        return "against", against
    if test is None or test == "atmosphere":
        return "atmosphere", None
    if test == hy.GOODNESS_OF_FIT:
        return hy.GOODNESS_OF_FIT, None
    if isinstance(test, str) and ":" in test:
        kind, arg = test.split(":", 1)
        if kind in ("species", "against") and arg:
            return kind, arg
    raise InputError("test", test, "'atmosphere', 'goodness-of-fit', 'species:NAME' or "
                     "'against:SCENARIO'")


def contamination_templates(depth_ppm, star_teff_K, wavelength_um, spot_fraction=0.0,
                            spot_temperature_contrast_K=0.0, facula_fraction=0.0,
                            facula_temperature_contrast_K=0.0):
    """Stellar-contamination factor and its signature.

    Spots and faculae are Planck spectra at Teff - dT_spot and Teff + dT_fac
    relative to the photosphere; epsilon(lambda) follows Rackham, Apai &
    Giampapa 2018, ApJ 853, 122, eq. 2.  Returns ``(epsilon, signature)``,
    with signature = depth (epsilon - 1), the change the contamination makes.
    """
    from .photons.sed import planck_flambda as planck_lambda
    lam = np.asarray(wavelength_um, dtype=np.float64) * 1e-6
    teff = np.asarray(star_teff_K, dtype=np.float64)[..., None]
    phot = planck_lambda(lam, teff)
    spot = planck_lambda(lam, np.maximum(teff - spot_temperature_contrast_K, 1.0))
    fac = planck_lambda(lam, teff + facula_temperature_contrast_K)
    eps = dt.contamination_factor(spot_fraction, spot / phot, facula_fraction, fac / phot)
    return eps, np.asarray(depth_ppm) * (eps - 1.0)


def _edges_from_precision(prec):
    lo = np.asarray(prec["wavelength_low"].values, dtype=np.float64)
    hi = np.asarray(prec["wavelength_high"].values, dtype=np.float64)
    if lo.ndim > 1:
        lo, hi = lo[0], hi[0]
    if not np.allclose(lo[1:], hi[:-1], rtol=1e-9):
        raise InputError("wavelength bins", "gaps between bins", "contiguous bins")
    return np.concatenate([lo, hi[-1:]])


def _resolution_arg(resolution):
    """None -> the shared default; "native" -> the mode's own bins (None downstream)."""
    from .photons.precision import DEFAULT_RESOLUTION
    if resolution is None:
        return DEFAULT_RESOLUTION
    if isinstance(resolution, str) and resolution.strip().lower() == "native":
        return None
    return resolution


def observe(system, mode, resolution=None, bin_edges=None, floor_ppm=None,
            floor_averages_down=None, baseline=None, solver="analytic", readout=None):
    """Precision of the mode on the test's bins, and the keywords for spectra on them.

    ``resolution`` None uses :data:`snrkit.photons.precision.DEFAULT_RESOLUTION`
    (unless ``bin_edges`` are given); ``"native"`` the mode's own bins.
    With automatic readout the result carries every readout candidate
    (``options``), so the test can choose; ``readout="unsaturated"`` keeps
    only the largest unsaturated number of groups.

    Returns
    -------
    dict
        ``white``, ``floor`` and ``saturated`` (planet, bin) for the
        unsaturated readout; ``groups``, ``duty`` (planet); ``options`` or
        None; ``floor_averages``; ``precision`` (the Dataset); ``edges_um``,
        ``wl``; ``derived``; ``rp`` [R_earth], ``rs`` [R_sun]; ``spec_kw``;
        ``notes``; ``binning`` (a phrase for the outputs).
    """
    from .photons.precision import system_precision
    from .errors import SnrkitWarning
    import warnings
    d = system.derived_arrays()
    names = [str(x) for x in system.names]
    res_arg = None if bin_edges is not None else _resolution_arg(resolution)
    unsaturated = isinstance(readout, str) and readout == "unsaturated"
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", SnrkitWarning)
        prec = system_precision(system, mode, resolution=res_arg, bin_edges=bin_edges,
                                floor_ppm=floor_ppm, floor_averages_down=floor_averages_down,
                                baseline=baseline, readout="auto" if unsaturated else readout,
                                warn=True, readout_options=not unsaturated)
    budget = prec["noise_budget_ppm"]
    white_terms = [t for t in budget["term"].values if t != "floor"]
    white = np.sqrt((budget.sel(term=white_terms) ** 2).sum("term", skipna=False))
    white = np.asarray(white.transpose("planet", "wavelength").values, dtype=np.float64)
    floor = np.broadcast_to(np.asarray(prec["floor_per_bin_ppm"].values, dtype=np.float64),
                            white.shape)
    edges_um = _edges_from_precision(prec)
    options = None
    if "option_groups" in prec:
        options = {"groups": np.asarray(prec["option_groups"].values, dtype=np.int64),
                   "duty": np.asarray(prec["option_duty_cycle"].values, dtype=np.float64),
                   "white": np.asarray(prec["option_white_noise_ppm"].values, dtype=np.float64),
                   "saturated": np.asarray(prec["option_saturated"].values, dtype=bool)}
    binning = ("bin edges given" if bin_edges is not None else
               "the mode's native bins" if res_arg is None else f"R = {float(res_arg):g}")
    return {
        "derived": d, "precision": prec, "notes": [str(w.message) for w in caught],
        "white": white, "floor": floor, "options": options,
        "groups": np.asarray(prec["groups_per_integration"].values, dtype=np.int64),
        "duty": np.asarray(prec["duty_cycle"].values, dtype=np.float64),
        "floor_averages": bool(prec.attrs.get("floor_averages_down", False)),
        "saturated": np.asarray(prec["saturated"].transpose("planet", "wavelength").values, dtype=bool),
        "edges_um": edges_um, "wl": np.sqrt(edges_um[1:] * edges_um[:-1]), "binning": binning,
        "rp": d["radius_m"] / R_EARTH, "rs": system.star.radius_m / R_SUN,
        # the model is calibrated to the observed depth as this mode measures it in white
        # light: the band average weighted by the detected photons per bin
        "spec_kw": dict(planet_mass=d["mass_kg"] / M_EARTH,
                        equilibrium_temperature=d["equilibrium_temperature_K"],
                        semi_major_axis=d["semi_major_axis_m"] / AU, wavelength_edges=edges_um,
                        planet_names=names, solver=solver,
                        calibration_weights=np.asarray(
                            prec["photon_rate"].transpose("planet", "wavelength").values,
                            dtype=np.float64)),
    }


def transits_for_system(system, mode, scenario=None, **options):
    """How many transits each planet needs to pass a test, and what they cost.

    Parameters
    ----------
    system : snrkit.System
    mode : str or path
        Instrument mode preset or file (see ``snrkit presets``).
    scenario : str, dict or Scenario, optional
        Atmosphere scenario assumed true; default each planet's own
        ``[planet.atmosphere]`` table (planets are grouped by scenario).
    **options :
        The keywords below.
    test, species, against :
        The test (:func:`parse_test`): atmosphere vs flat line (default),
        ``species="CO2"`` (the scenario against itself without CO2), or
        ``against=SCENARIO`` (the scenario against another; a spectrum file
        path ending in .csv/.ecsv/.fits/.txt/.dat is also accepted and is
        resampled onto the bins; bins it does not cover are left out of the
        test).  ``test="goodness-of-fit"`` asks instead whether a flat line
        is rejected at bins - 1 degrees of freedom (never the default).
    against_wavelength_unit, against_depth_kind :
        For a spectrum file: the wavelength unit when the file carries none,
        and what its depth column holds (see
        :func:`snrkit.atmosphere.user_spectrum.read_user_spectrum`; default ppm).
    sigma : float
        Target significance.
    probabilities : sequence of float
        Detection probabilities for which N is also reported.
    n_max : int
        Largest number of transits considered.
    resolution, bin_edges :
        Binning (default :data:`snrkit.photons.precision.DEFAULT_RESOLUTION`;
        ``resolution="native"``: the mode's bins).  Bins narrower than a
        resolution element are merged, with a note.
    floor_ppm, floor_averages_down, baseline :
        Override the mode's floor (ppm per transit in a bin of the mode's
        reference resolving power, R = 100 for the presets) and the
        observation's baseline.
    min_jeans : float, optional
        Leave out hydrogen-rich scenarios on planets whose restricted Jeans
        parameter is below this (status ``escaping_atmosphere``); default:
        report the parameter and warn below :data:`JEANS_PARAMETER_MIN`, but
        keep the planet.
    readout : int or "unsaturated", optional
        Fixed groups per integration, or the most groups that saturate no
        bin; default: chosen per target for the test (:mod:`snrkit.hypotheses`).
    overhead_hours : float, optional
        Per-visit overhead (default :data:`snrkit.forecast.DEFAULT_OVERHEAD_HOURS`).
    contamination : dict, optional
        ``spot_fraction``, ``spot_temperature_contrast`` [K],
        ``facula_fraction``, ``facula_temperature_contrast`` [K] and
        ``fitted`` (bool, default True); see :mod:`snrkit.hypotheses`.
    uncertainty_draws : int
        Seeded Monte Carlo draws of planet mass and radius (0: none).
    seed : int
        Seed of those draws.
    fisher : bool
        Also forecast 1-sigma errors (with uniform priors over physical
        ranges; "unconstrained" where the range is not narrowed) on log10
        mixing ratios, temperature, log10 cloud-top pressure and reference
        radius at the N needed.
    solver : {"analytic", "layers"}
    refit : sequence of str
        Continuum parameters of the null re-fitted inside physical bounds
        before the test (:mod:`snrkit.refit`), so a feature is only credited
        if the null cannot mimic it: any of ``"temperature"``,
        ``"cloud_top_pressure"`` and ``"reference_radius"``.  For the
        species and against tests; the level is always profiled.

    Returns
    -------
    dict
        ``planets``: one summary dict per planet (keys include ``test``,
        ``test_statistic``, ``null_model``, ``degrees_of_freedom``,
        ``bins_used``, ``binning``, ``transits_needed`` (int or None),
        ``reachable``, ``limiting_term``, ``significance_per_transit_sigma``,
        ``asymptotic_significance_sigma``, ``groups_per_integration``,
        ``duty_cycle``, ``bins_saturated``, ``hours_per_transit``,
        ``hours_total``, ``transits_for_probability``, ``status`` and
        ``reason``); ``dataset``: xarray Dataset with the spectra, noise and
        significance curves; ``test``: (kind, argument); ``notes``.
    """
    import json
    import xarray as xr
    names = [str(x) for x in system.names]
    if scenario is not None:
        return _one_scenario(system, mode, scenario, **options)
    groups = {}
    for i, atm in enumerate(system.atmospheres):
        if not atm:
            raise InputError(f"planet.atmosphere ({names[i]})", None,
                             "a scenario: --scenario NAME, or a [planet.atmosphere] table")
        groups.setdefault(json.dumps(atm, sort_keys=True, default=str), []).append(i)
    if len(groups) == 1:
        return _one_scenario(system, mode, system.atmospheres[0], **options)
    parts = [(idx, _one_scenario(system.take(idx), mode, system.atmospheres[idx[0]], **options))
             for idx in groups.values()]
    order = np.argsort(np.concatenate([idx for idx, _ in parts]))
    planets = [p for _, r in parts for p in r["planets"]]
    planets = [planets[k] for k in order]
    ds = xr.concat([r["dataset"] for _, r in parts], dim="planet", combine_attrs="drop_conflicts")
    ds = ds.isel(planet=order)
    notes = list(dict.fromkeys(n for _, r in parts for n in r["notes"]))
    return {"planets": planets, "dataset": ds, "test": parts[0][1]["test"], "notes": notes}


def _noted(notes, fn, *args, **kwargs):
    """``fn(*args, **kwargs)`` with snrkit's own warnings added to ``notes``."""
    import warnings
    from .errors import SnrkitWarning
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", SnrkitWarning)
        out = fn(*args, **kwargs)
    for w in caught:
        if isinstance(w.message, SnrkitWarning):
            notes.append(str(w.message))
        else:
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    return out


def _check_options(system, sigma, probabilities, n_max, uncertainty_draws, overhead_hours, seed):
    """Validated (sigma, probabilities, n_max, overhead_hours, seed)."""
    sigma = dt.check_sigma(sigma)
    probabilities = tuple(dt.check_probability(p) for p in probabilities)
    from .units import parse_number
    n_max = parse_number(n_max, "max_transits", 1, MAX_TRANSITS_LIMIT, integer=True)
    seed = parse_number(seed, "seed", 0, 2**63 - 1, integer=True)
    if not 0 <= int(uncertainty_draws) <= MAX_UNCERTAINTY_DRAWS:
        raise InputError("uncertainty_draws", uncertainty_draws,
                         f"an integer in [0, {MAX_UNCERTAINTY_DRAWS}]")
    if overhead_hours is None:   # the system file's [planet.observation] overhead, if any
        from .io.systemfile import common_observation
        overhead_hours = common_observation(system, "overhead", None)
    if overhead_hours is not None and not (np.isfinite(overhead_hours) and 0 <= overhead_hours <= 100):
        raise InputError("overhead", overhead_hours, "hours in [0, 100]")
    return sigma, probabilities, n_max, overhead_hours, seed


def _null_spectrum(kind, arg, sc, truth_ds, truth, obs, transmission_spectrum,
                   against_wavelength_unit, against_depth_kind):
    """The null's fixed spectrum [ppm] and its label."""
    if kind in ("atmosphere", hy.GOODNESS_OF_FIT):
        return np.zeros_like(truth), "flat line"
    if kind == "species":
        gases = sorted(sc.mixing_ratios)
        if arg not in gases:
            raise InputError("species", arg, "a gas of scenario " + repr(sc.name) + ": " + ", ".join(gases))
        if "depth_without_species_ppm" not in truth_ds or arg not in truth_ds["species"].values:
            raise InputError("species", arg, "an absorbing gas of the scenario (this one has no "
                             "opacity in the band model)")
        alt = np.asarray(truth_ds["depth_without_species_ppm"].sel(species=arg)
                         .transpose("planet", "wavelength").values, dtype=np.float64)
        return alt, f"{sc.name} without {arg}"
    return _alternative_spectrum(arg, obs["rp"], obs["rs"], obs["edges_um"], obs["spec_kw"],
                                 transmission_spectrum, truth.shape, against_wavelength_unit,
                                 against_depth_kind)


def _contamination(contamination, system, truth, wl):
    """(epsilon, fitted) from the contamination options, or (None, True)."""
    if not contamination:
        return None, True
    c = dict(contamination)
    fitted = bool(c.pop("fitted", True))
    allowed = {"spot_fraction", "spot_temperature_contrast", "facula_fraction",
               "facula_temperature_contrast"}
    for k in c:
        if k not in allowed:
            raise InputError(f"contamination.{k}", c[k], "keys " + ", ".join(sorted(allowed)))
    for k in ("spot_fraction", "facula_fraction"):
        if not 0.0 <= float(c.get(k, 0.0)) < 1.0:
            raise InputError(f"contamination.{k}", c[k], "a covering fraction in [0, 1)")
    for k in ("spot_temperature_contrast", "facula_temperature_contrast"):
        v = float(c.get(k, 0.0))
        if not np.isfinite(v) or v < 0 or np.any(v >= system.star.teff_K):
            raise InputError(f"contamination.{k}", c.get(k), "a temperature contrast >= 0 K "
                             "and below the star's Teff")
    eps, _ = contamination_templates(
        truth, system.star.teff_K, wl, c.get("spot_fraction", 0.0),
        c.get("spot_temperature_contrast", 0.0), c.get("facula_fraction", 0.0),
        c.get("facula_temperature_contrast", 0.0))
    return np.broadcast_to(eps, truth.shape), fitted


def _radius_fraction(system, d):
    from .refit import DEFAULT_RADIUS_FRACTION
    sig = np.asarray(system.planet._radius_sigma, dtype=np.float64) / d["radius_m"]
    return np.where(np.isfinite(sig) & (sig > 0), sig, DEFAULT_RADIUS_FRACTION)


def _one_scenario(system, mode, scenario, *, test=None, species=None, against=None,
                  sigma=5.0, probabilities=(0.5, 0.9), n_max=DEFAULT_MAX_TRANSITS,
                  resolution=None, bin_edges=None, floor_ppm=None,
                  floor_averages_down=None, baseline=None, overhead_hours=None,
                  contamination=None, uncertainty_draws=0, seed=0, fisher=False,
                  solver="analytic", against_wavelength_unit=None, against_depth_kind="ppm",
                  refit=(), curves=True, readout=None, min_jeans=None):
    """:func:`transits_for_system` for planets sharing one scenario."""
    from .atmosphere.spectrum import transmission_spectrum
    from .atmosphere.scenarios import load_scenario
    from .refit import check_refit, refit_null
    from .transit_records import planet_records, result_dataset

    kind, arg = parse_test(test, species, against)
    sigma, probabilities, n_max, overhead_hours, seed = _check_options(
        system, sigma, probabilities, n_max, uncertainty_draws, overhead_hours, seed)
    sc = load_scenario(scenario)
    refit = check_refit(refit, kind, arg, sc)
    obs = observe(system, mode, resolution, bin_edges, floor_ppm, floor_averages_down,
                  baseline, solver, readout)
    d = obs["derived"]
    truth_ds = _noted(obs["notes"], transmission_spectrum, sc, obs["rp"], obs["rs"],
                      contributions=[arg] if kind == "species" else False, **obs["spec_kw"])
    truth = np.asarray(truth_ds["transit_depth_ppm"].values, dtype=np.float64)
    null, label = _null_spectrum(kind, arg, sc, truth_ds, truth, obs, transmission_spectrum,
                                 against_wavelength_unit, against_depth_kind)
    eps, fitted = _contamination(contamination, system, truth, obs["wl"])
    refit_values = [None] * len(obs["rp"])
    if refit:
        alt_sc = sc if kind == "species" else load_scenario(arg)
        data = truth if eps is None else truth * eps
        null, refit_values = refit_null(
            alt_sc, arg if kind == "species" else None, list(refit), data, null,
            np.sqrt(obs["white"] ** 2 + obs["floor"] ** 2), obs["rp"], obs["rs"],
            _radius_fraction(system, d), obs["spec_kw"], transmission_spectrum,
            null_scale=hy.SPECIES_SCALE if kind == "species" else None)
    models = hy.build_models("atmosphere" if kind == hy.GOODNESS_OF_FIT else kind, truth, null,
                             eps, fitted, goodness_of_fit=(kind == hy.GOODNESS_OF_FIT))
    res, used = hy.run_test(models, obs, sigma=sigma, probabilities=probabilities,
                            n_max=int(n_max), curves=curves)
    extra = _side_statistics(kind, truth, null, eps, fitted, models, used, obs, res)
    hours = _hours(d, obs, res["transits_needed"], overhead_hours)
    spread = (_spread(system, d, obs, models, used, sigma, n_max, uncertainty_draws, seed)
              if uncertainty_draws else None)
    fisher_out = None
    if fisher:
        from .refit import scenario_fisher
        n_f = np.where(res["transits_needed"] > 0, res["transits_needed"], int(n_max))
        fisher_out = scenario_fisher(sc, obs["rp"], obs["rs"], _radius_fraction(system, d),
                                     obs["spec_kw"], transmission_spectrum,
                                     np.where(used["usable"], used["white"], np.nan),
                                     np.where(used["usable"], obs["floor"], 0.0),
                                     obs["floor_averages"], n_f)
    if min_jeans is not None:
        from .units import parse_number
        min_jeans = parse_number(min_jeans, "min_jeans", 0.0, 1e4)
    ctx = dict(system=system, mode=mode, sc=sc, kind=kind, arg=arg, label=label, sigma=sigma,
               min_jeans=min_jeans,
               n_max=int(n_max), obs=obs, truth_ds=truth_ds, models=models, res=res, used=used,
               hours=hours, spread=spread, fisher=fisher_out, refit=refit_values, extra=extra)
    planets, notes = planet_records(ctx)
    ds = result_dataset(ctx, planets)
    return {"planets": planets, "dataset": ds, "test": (kind, arg),
            "notes": list(dict.fromkeys(obs["notes"] + notes))}


def _side_statistics(kind, truth, null, eps, fitted, models, used, obs, res):
    """The contamination's share of an unfitted bias, and the atmosphere test on the same noise."""
    from .hypotheses import delta_chi2_per_transit
    n = truth.shape[0]
    out = {"bias_share": np.zeros(n), "atmosphere_delta_chi2": None}
    lam = res["delta_chi2_per_transit"]
    if eps is not None and not fitted:
        clean = hy.build_models("atmosphere" if kind == hy.GOODNESS_OF_FIT else kind, truth, null,
                                goodness_of_fit=(kind == hy.GOODNESS_OF_FIT))
        lam_clean = delta_chi2_per_transit(clean, used, obs)
        with np.errstate(invalid="ignore", divide="ignore"):
            out["bias_share"] = np.clip(np.where(lam > 0, 1.0 - lam_clean / lam, 0.0), 0.0, 1.0)
    if kind in ("species", "against"):
        atm = hy.build_models("atmosphere", truth, None, eps, fitted)
        out["atmosphere_delta_chi2"] = delta_chi2_per_transit(atm, used, obs)
    return out


def _hours(d, obs, n_needed, overhead_hours):
    t14_h = d["t14_s"] / HOUR
    prec = obs["precision"]
    base_h = np.asarray(prec["baseline_time"].values, dtype=np.float64)
    return fc.programme_hours(t14_h, np.where(n_needed > 0, n_needed, 0), baseline=base_h,
                              baseline_is_multiple=False,
                              overhead_hours=fc.DEFAULT_OVERHEAD_HOURS if overhead_hours is None
                              else float(overhead_hours))


def _spread(system, d, obs, models, used, sigma, n_max, draws, seed):
    """Percentiles of the transits needed over seeded planet mass and radius draws."""
    from .metrics import mass_from_radius
    rng = np.random.default_rng(seed)
    _, dex = mass_from_radius(d["radius_m"])
    est = system.planet.mass_estimated
    scale = fc.feature_scale_draws(obs["rp"], system.planet._radius_sigma / R_EARTH,
                                   d["mass_kg"] / M_EARTH,
                                   np.where(est, np.nan, d["mass_uncertainty_kg"] / M_EARTH),
                                   int(draws), rng, mass_sigma_log10=np.where(est, dex, 0.0))
    return hy.transits_spread(models, used, obs, scale, sigma=sigma, n_max=int(n_max))


def _alternative_spectrum(arg, rp, rs, edges_um, spec_kw, transmission_spectrum, shape,
                          wavelength_unit=None, depth_kind="ppm"):
    from pathlib import Path
    text = str(arg)
    if Path(text).suffix.lower() in (".csv", ".ecsv", ".fits", ".fit", ".txt", ".dat") and Path(text).is_file():
        from .atmosphere.user_spectrum import read_user_spectrum, resample_spectrum
        spec = read_user_spectrum(text, depth_kind, wavelength_unit=wavelength_unit)
        alt = resample_spectrum(spec, edges_um, outside="nan")["transit_depth_ppm"].values
        alt = np.broadcast_to(np.asarray(alt, dtype=np.float64), shape).copy()
        return alt, f"user spectrum {Path(text).name}"
    from .atmosphere.scenarios import load_scenario
    other = load_scenario(arg)
    ds = transmission_spectrum(other, rp, rs, **spec_kw)
    return np.asarray(ds["transit_depth_ppm"].values, dtype=np.float64), other.name


def contrast_for_system(system, mode, scenarios, *, sigma=5.0, n_max=DEFAULT_MAX_TRANSITS,
                        resolution=None, bin_edges=None, floor_ppm=None,
                        floor_averages_down=None, baseline=None, overhead_hours=None,
                        solver="analytic", readout=None):
    """Transits needed to tell every ordered pair of scenarios apart.

    For each planet and each ordered pair (A true, B rejected) this is the
    ``against`` test of :func:`transits_for_system`: B with a free level is
    the null, one degree of freedom, on the same bins and with the readout
    chosen for that pair.  Spectra and noise are computed once per scenario;
    all pairs and planets go through the stacker as one array.

    Returns
    -------
    dict
        ``scenarios`` (names), ``planets``: per planet ``name``,
        ``transits_needed`` (matrix [true][rejected], None where not
        reachable and on the diagonal), ``hours_total`` and
        ``limiting_term`` (same layout), ``bins_used``; ``test_statistic``,
        ``degrees_of_freedom``, ``binning``, ``notes``.
    """
    from .atmosphere.spectrum import transmission_spectrum
    from .atmosphere.scenarios import load_scenario
    sigma = dt.check_sigma(sigma)
    from .units import parse_number
    n_max = parse_number(n_max, "max_transits", 1, MAX_TRANSITS_LIMIT, integer=True)
    if isinstance(scenarios, str):
        scenarios = [s for s in scenarios.split(",") if s]
    scs = [load_scenario(s) for s in scenarios]
    if len(scs) < 2:
        raise InputError("scenarios", scenarios, "two or more scenarios")
    if overhead_hours is None:   # the system file's [planet.observation] overhead, if any
        from .io.systemfile import common_observation
        overhead_hours = common_observation(system, "overhead", None)
    obs = observe(system, mode, resolution, bin_edges, floor_ppm, floor_averages_down,
                  baseline, solver, readout)
    ds = _noted(obs["notes"], transmission_spectrum, scs, obs["rp"], obs["rs"], **obs["spec_kw"])
    spec = np.asarray(ds["transit_depth_ppm"].transpose("scenario", "planet", "wavelength").values,
                      dtype=np.float64)
    k = len(scs)
    pairs = [(a, b) for a in range(k) for b in range(k) if a != b]
    models = hy.build_models("against", np.stack([spec[a] for a, _ in pairs]),
                             np.stack([spec[b] for _, b in pairs]))
    res, used = hy.run_test(models, obs, sigma=sigma, probabilities=(), n_max=int(n_max),
                            curves=False)
    hours = _hours(obs["derived"], obs, res["transits_needed"], overhead_hours)
    names = [sc.name for sc in scs]
    planets = []
    for i, pname in enumerate(str(x) for x in system.names):
        n_mat = [[None] * k for _ in range(k)]
        h_mat = [[None] * k for _ in range(k)]
        why = [[None] * k for _ in range(k)]
        for j, (a, b) in enumerate(pairs):
            n = int(res["transits_needed"][j, i])
            n_mat[a][b] = n if n > 0 else None
            h_mat[a][b] = float(hours["hours_total"][j, i]) if n > 0 else None
            why[a][b] = str(res["limiting_term"][j, i])
        planets.append({"name": pname, "scenarios": names, "transits_needed": n_mat,
                        "hours_total": h_mat, "limiting_term": why,
                        "bins_used": int(used["usable"][:, i].sum(axis=-1).max())})
    return {"scenarios": names, "planets": planets, "notes": obs["notes"], "target_sigma": sigma,
            "test_statistic": TEST_STATISTICS["nested"], "degrees_of_freedom": 1,
            "binning": obs["binning"], "mode": str(obs["precision"].attrs.get("mode", mode))}
