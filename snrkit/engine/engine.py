"""The one engine: planets x scenarios x modes through the whole chain, as columns.

Every command that answers "how many transits" goes through here, for one
planet or a catalogue alike (one planet is just N = 1):

1. :func:`observe` -- once per mode and set of planets: the photon-noise
   precision on the test's bins (:mod:`snrkit.photons`), the floor, the
   readout candidates, and the keywords of the spectra on those bins;
2. :func:`scenario_context` -- per scenario: the transmission spectrum
   (:mod:`snrkit.atmosphere.spectrum`, its analytic solver in
   :mod:`snrkit.atmosphere.analytic_kernel`), the test's nested models and
   readout (:mod:`snrkit.stats.hypotheses`), the stacker (:mod:`snrkit.stats.detect`) and
   the hours (:mod:`snrkit.stats.forecast`);
3. :func:`snrkit.engine.transit_records.columns` -- the statuses and numbers as
   arrays over the planet axis (the rank table), or
   :func:`snrkit.engine.transit_records.planet_records` -- one record per planet
   for the single-target outputs.

:func:`evaluate` runs steps 1-3 for arrays of modes and scenarios and
returns the columns with leading (mode, scenario) axes.  Work is done once:
the precision once per mode, the opacity of each scenario on a fixed
temperature lattice once per process, so an answer does not depend on which
planets are computed together.
"""

import numpy as np

from ..errors import InputError
from ..stats import detect as dt
from ..stats import forecast as fc
from ..stats import hypotheses as hy
from ..constants import HOUR, R_EARTH, M_EARTH
from .observe import observe
from .shared_spectra import scenario_spectrum

__all__ = ["observe", "scenario_context", "evaluate", "parse_test", "contamination_templates",
           "DEFAULT_MAX_TRANSITS", "MAX_TRANSITS_LIMIT", "MAX_UNCERTAINTY_DRAWS"]

#: Largest number of transits considered by default.
DEFAULT_MAX_TRANSITS = 500
#: Largest accepted transit limit (far beyond any programme; keeps the
#: stacker's search bounded; common practice, no source).
MAX_TRANSITS_LIMIT = 100000
#: Largest number of planet-parameter draws (memory grows with draws x bins).
MAX_UNCERTAINTY_DRAWS = 20000


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
    from ..photons.sed import planck_flambda as planck_lambda
    lam = np.asarray(wavelength_um, dtype=np.float64) * 1e-6
    teff = np.asarray(star_teff_K, dtype=np.float64)[..., None]
    phot = planck_lambda(lam, teff)
    spot = planck_lambda(lam, np.maximum(teff - spot_temperature_contrast_K, 1.0))
    fac = planck_lambda(lam, teff + facula_temperature_contrast_K)
    eps = dt.contamination_factor(spot_fraction, spot / phot, facula_fraction, fac / phot)
    return eps, np.asarray(depth_ppm) * (eps - 1.0)


def _check_options(system, sigma, probabilities, n_max, uncertainty_draws, overhead_hours, seed):
    """Validated (sigma, probabilities, n_max, overhead_hours, seed)."""
    sigma = dt.check_sigma(sigma)
    probabilities = tuple(dt.check_probability(p) for p in probabilities)
    from ..units import parse_number
    n_max = parse_number(n_max, "max_transits", 1, MAX_TRANSITS_LIMIT, integer=True)
    seed = parse_number(seed, "seed", 0, 2**63 - 1, integer=True)
    if not 0 <= int(uncertainty_draws) <= MAX_UNCERTAINTY_DRAWS:
        raise InputError("uncertainty_draws", uncertainty_draws,
                         f"an integer in [0, {MAX_UNCERTAINTY_DRAWS}]")
    if overhead_hours is None:   # the system file's [planet.observation] overhead, if any
        from ..bodies.system import common_observation
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
        if "depth_without_species_ppm" not in truth_ds or arg not in list(truth_ds["species"]):
            raise InputError("species", arg, "an absorbing gas of the scenario (this one has no "
                             "opacity in the band model)")
        alt = np.asarray(truth_ds.sel("depth_without_species_ppm", species=arg),
                         dtype=np.float64)                          # (planet, wavelength)
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
    from ..stats.refit import DEFAULT_RADIUS_FRACTION
    sig = np.asarray(system.planet._radius_sigma, dtype=np.float64) / d["radius_m"]
    return np.where(np.isfinite(sig) & (sig > 0), sig, DEFAULT_RADIUS_FRACTION)


# size: one scenario's steps in the order the engine takes them; each step is a call
def scenario_context(system, obs, mode, scenario, *, test=None, species=None, against=None,
                     sigma=5.0, probabilities=(0.5, 0.9), n_max=DEFAULT_MAX_TRANSITS,
                     overhead_hours=None, contamination=None, uncertainty_draws=0, seed=0,
                     fisher=False, against_wavelength_unit=None, against_depth_kind="ppm",
                     refit=(), curves=True, min_jeans=None, spectra=None):
    """One scenario and one test on planets already observed through a mode.

    The engine's step after :func:`observe`: the scenario's spectrum on the
    observation's bins, the null of the test, the nested models, the readout
    and the stacker (:func:`snrkit.stats.hypotheses.run_test`), the hours, and on
    request the spread, re-fits and Fisher errors.  All arrays run over the
    planet axis; nothing here loops over planets.

    Parameters
    ----------
    system : snrkit.System
    obs : dict
        From :func:`observe` for the same system.
    mode : str
        The mode's name or path (for the records).
    scenario : str, dict or Scenario
    **options :
        As in :func:`snrkit.engine.transits.transits_for_system`.
    spectra : list, optional
        Shared by the calls of one :func:`evaluate` for the same planets and
        scenario: a spectrum already computed on the same bins, with the same
        solver and contributions and calibration weights proportional to
        these (modes that differ only in aperture, throughput or floor), is
        reused instead of solved again
        (:func:`snrkit.engine.shared_spectra.scenario_spectrum`).

    Returns
    -------
    dict
        The context: ``system``, ``mode``, ``sc``, ``kind``, ``arg``, ``label``,
        ``sigma``, ``min_jeans``, ``n_max``, ``obs``, ``truth_ds``, ``models``,
        ``res``, ``used``, ``hours``, ``spread``, ``fisher``, ``refit``,
        ``extra`` -- read by :mod:`snrkit.engine.transit_records`.
    """
    from ..atmosphere.spectrum import transmission_spectrum
    from ..atmosphere.scenarios import load_scenario
    from ..stats.refit import check_refit, refit_null

    kind, arg = parse_test(test, species, against)
    sigma, probabilities, n_max, overhead_hours, seed = _check_options(
        system, sigma, probabilities, n_max, uncertainty_draws, overhead_hours, seed)
    sc = load_scenario(scenario)
    refit = check_refit(refit, kind, arg, sc)
    d = obs["derived"]
    truth_ds = scenario_spectrum(spectra, obs, sc, [arg] if kind == "species" else False,
                                  transmission_spectrum)
    truth = np.asarray(truth_ds["transit_depth_ppm"], dtype=np.float64)
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
        from ..stats.refit import scenario_fisher
        n_f = np.where(res["transits_needed"] > 0, res["transits_needed"], int(n_max))
        fisher_out = scenario_fisher(sc, obs["rp"], obs["rs"], _radius_fraction(system, d),
                                     obs["spec_kw"], transmission_spectrum,
                                     np.where(used["usable"], used["white"], np.nan),
                                     np.where(used["usable"], obs["floor"], 0.0),
                                     obs["floor_averages"], n_f)
    if min_jeans is not None:
        from ..units import parse_number
        min_jeans = parse_number(min_jeans, "min_jeans", 0.0, 1e4)
    ctx = dict(system=system, mode=mode, sc=sc, kind=kind, arg=arg, label=label, sigma=sigma,
               min_jeans=min_jeans,
               n_max=int(n_max), obs=obs, truth_ds=truth_ds, models=models, res=res, used=used,
               hours=hours, spread=spread, fisher=fisher_out, refit=refit_values, extra=extra)
    return ctx


def _side_statistics(kind, truth, null, eps, fitted, models, used, obs, res):
    """The contamination's share of an unfitted bias, and the atmosphere test on the same noise.

    The share is 1 - (Delta chi^2 without the contamination) / (with it) where
    the bias inflates the statistic, and 1 where it cancels a signal the
    planet alone would give (no Delta chi^2 with it, some without): either
    way the answer is the star's, not the planet's.
    """
    from ..stats.hypotheses import delta_chi2_per_transit
    n = truth.shape[0]
    out = {"bias_share": np.zeros(n), "atmosphere_delta_chi2": None,
           "clean_delta_chi2": None}
    lam = res["delta_chi2_per_transit"]
    if eps is not None and not fitted:
        clean = hy.build_models("atmosphere" if kind == hy.GOODNESS_OF_FIT else kind, truth, null,
                                goodness_of_fit=(kind == hy.GOODNESS_OF_FIT))
        lam_clean = delta_chi2_per_transit(clean, used, obs)
        out["clean_delta_chi2"] = lam_clean
        with np.errstate(invalid="ignore", divide="ignore"):
            share = np.where(lam > 0, 1.0 - lam_clean / lam, np.where(lam_clean > 0, 1.0, 0.0))
        out["bias_share"] = np.clip(share, 0.0, 1.0)
    if kind in ("species", "against"):
        atm = hy.build_models("atmosphere", truth, None, eps, fitted)
        out["atmosphere_delta_chi2"] = delta_chi2_per_transit(atm, used, obs)
    return out


def _hours(d, obs, n_needed, overhead_hours):
    t14_h = d["t14_s"] / HOUR
    prec = obs["precision"]
    base_h = np.asarray(prec["baseline_time"], dtype=np.float64)
    return fc.programme_hours(t14_h, np.where(n_needed > 0, n_needed, 0), baseline=base_h,
                              baseline_is_multiple=False,
                              overhead_hours=fc.DEFAULT_OVERHEAD_HOURS if overhead_hours is None
                              else float(overhead_hours))


def _spread(system, d, obs, models, used, sigma, n_max, draws, seed):
    """Percentiles of the transits needed over seeded planet mass and radius draws."""
    from ..bodies.metrics import mass_from_radius
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
        from ..atmosphere.user_spectrum import read_user_spectrum, resample_spectrum
        spec = read_user_spectrum(text, depth_kind, wavelength_unit=wavelength_unit)
        alt = resample_spectrum(spec, edges_um, outside="nan")["transit_depth_ppm"].values
        alt = np.broadcast_to(np.asarray(alt, dtype=np.float64), shape).copy()
        return alt, f"user spectrum {Path(text).name}"
    from ..atmosphere.scenarios import load_scenario
    other = load_scenario(arg)
    ds = transmission_spectrum(other, rp, rs, **spec_kw)
    return np.asarray(ds["transit_depth_ppm"], dtype=np.float64), other.name


def evaluate(system, modes, scenarios, *, resolution=None, bin_edges=None, floor_ppm=None,
             floor_averages_down=None, baseline=None, solver="analytic", readout=None,
             **options):
    """Every mode x scenario for a set of planets, as columns.

    The precision is computed once per mode and reused by every scenario;
    a scenario's spectrum is solved once for all modes that share its bins
    (modes that differ only in aperture, throughput or floor: see
    :func:`snrkit.engine.shared_spectra.scenario_spectrum`); each scenario's
    test and hours run over all planets at once (:func:`scenario_context`),
    and the statuses and numbers are read off as arrays
    (:func:`snrkit.engine.transit_records.columns`).

    Parameters
    ----------
    system : snrkit.System
    modes : sequence of str
        Instrument mode presets or files.
    scenarios : sequence of (str, dict or Scenario)
    resolution, bin_edges, floor_ppm, floor_averages_down, baseline, solver, readout :
        As in :func:`snrkit.engine.transits.transits_for_system` (the observation).
    **options :
        The test and its settings, as in
        :func:`snrkit.engine.transits.transits_for_system` (``curves`` defaults to
        False here).

    Returns
    -------
    dict
        ``columns``: {name: array of shape (n_mode, n_scenario, n_planet)}
        for :data:`snrkit.engine.transit_records.COLUMNS`; ``modes`` and
        ``scenarios`` (names); ``notes`` (list of str).
    """
    from .transit_records import columns, COLUMNS
    options.setdefault("curves", False)
    out = {c: [] for c in COLUMNS}
    notes, names = [], []
    spectra = [[] for _ in scenarios]          # per scenario: spectra to reuse across modes
    for mode in modes:
        obs = observe(system, mode, resolution, bin_edges, floor_ppm, floor_averages_down,
                      baseline, solver, readout)
        rows = {c: [] for c in COLUMNS}
        for sc, memo in zip(scenarios, spectra):
            ctx = scenario_context(system, obs, mode, sc, spectra=memo, **options)
            cols = columns(ctx)
            for c in COLUMNS:
                rows[c].append(cols[c])
            if len(names) < len(scenarios):
                names.append(ctx["sc"].name)
        for c in COLUMNS:
            out[c].append(np.stack(rows[c]))
        notes.extend(obs["notes"])
    return {"columns": {c: np.stack(v) for c, v in out.items()}, "modes": list(modes),
            "scenarios": names, "notes": list(dict.fromkeys(notes))}
