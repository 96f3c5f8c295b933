"""Transits needed: the whole chain for a system, a scenario, a mode and a test.

:func:`transits_for_system` ties the layers together: the photon-noise
precision of an instrument mode (:mod:`snrkit.photons`) sets the wavelength
bins and the per-transit noise; the transmission spectrum of the scenario
(:mod:`snrkit.atmosphere.spectrum`) is computed on the same bins; the test
(atmosphere vs flat line, one species, or scenario A vs scenario B) picks
the alternative spectrum; the stacker (:mod:`snrkit.detect`) finds the
transits needed, the detection probabilities and the limiting term; and
:mod:`snrkit.forecast` adds the programme hours, the spread from planet
mass and radius uncertainties, and optional Fisher errors.

Everything runs on whole arrays over the planet axis; the result holds one
summary record per planet plus an xarray Dataset of curves and spectra.
"""

import numpy as np

from .errors import InputError
from . import detect as dt
from . import forecast as fc
from .constants import HOUR, R_EARTH, M_EARTH, R_SUN, AU

__all__ = ["parse_test", "transits_for_system", "contrast_for_system", "contamination_templates", "TESTS",
           "DEFAULT_MAX_TRANSITS", "REFIT_PARAMETERS", "MAX_SCALE_HEIGHT_RATIO",
           "JEANS_PARAMETER_MIN", "HYDROGEN_RICH_MU"]

#: Largest scale height, as a fraction of the planet radius, at which a scenario
#: is treated as a bound hydrostatic atmosphere (R/H >= 10; a planet with a
#: smaller ratio loses its atmosphere hydrodynamically -- cf. the Jeans escape
#: parameter of Fossati et al. 2017, A&A 598, A90; threshold: common practice,
#: no source).
MAX_SCALE_HEIGHT_RATIO = 0.1
#: Hydrogen-rich scenarios (mean molecular weight below this, g/mol) need the
#: planet to retain hydrogen: the restricted Jeans escape parameter
#: Lambda = G Mp m_H / (k Teq Rp) must be at least JEANS_PARAMETER_MIN
#: (Fossati et al. 2017, A&A 598, A90, who find that planets below about 20
#: lose their hydrogen envelopes by "boil-off"; value from memory).
HYDROGEN_RICH_MU = 4.0
JEANS_PARAMETER_MIN = 20.0
#: Largest number of planet-parameter draws (memory grows with draws x bins).
MAX_UNCERTAINTY_DRAWS = 20000

#: Continuum parameters the alternative may re-fit.
REFIT_PARAMETERS = ("temperature", "cloud_top_pressure", "reference_radius")

#: Test kinds: "atmosphere" (vs a flat line), "species" (one molecule removed),
#: "against" (another scenario).
TESTS = ("atmosphere", "species", "against")
#: Largest number of transits considered by default.
DEFAULT_MAX_TRANSITS = 500
#: Largest accepted transit limit (far beyond any programme; keeps the
#: stacker's search bounded; common practice, no source).
MAX_TRANSITS_LIMIT = 100000


def parse_test(test=None, species=None, against=None):
    """Normalise the test description to ``(kind, argument)``.

    Accepts ``test="atmosphere"``, ``"species:CO2"``, ``"against:steam"``,
    or the keyword forms ``species="CO2"`` / ``against="steam"``.
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
    if isinstance(test, str) and ":" in test:
        kind, arg = test.split(":", 1)
        if kind in ("species", "against") and arg:
            return kind, arg
    raise InputError("test", test, "'atmosphere', 'species:NAME' or 'against:SCENARIO'")


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


def _white_and_floor(prec):
    budget = prec["noise_budget_ppm"]
    white_terms = [t for t in budget["term"].values if t != "floor"]
    white = np.sqrt((budget.sel(term=white_terms) ** 2).sum("term")).transpose("planet", "wavelength")
    floor = budget.sel(term="floor").transpose("planet", "wavelength")
    return np.asarray(white.values, dtype=np.float64), np.asarray(floor.values, dtype=np.float64)


def _edges_from_precision(prec):
    lo = np.asarray(prec["wavelength_low"].values, dtype=np.float64)
    hi = np.asarray(prec["wavelength_high"].values, dtype=np.float64)
    if lo.ndim > 1:
        lo, hi = lo[0], hi[0]
    if not np.allclose(lo[1:], hi[:-1], rtol=1e-9):
        raise InputError("wavelength bins", "gaps between bins", "contiguous bins")
    return np.concatenate([lo, hi[-1:]])


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
        test).
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
        Binning of the precision (default: the mode's native bins).
    floor_ppm, floor_averages_down, baseline :
        Override the mode's floor and the observation's baseline.
    overhead_hours : float, optional
        Per-visit overhead (default :data:`snrkit.forecast.DEFAULT_OVERHEAD_HOURS`).
    contamination : dict, optional
        ``spot_fraction``, ``spot_temperature_contrast`` [K],
        ``facula_fraction``, ``facula_temperature_contrast`` [K] and
        ``fitted`` (bool, default True).  The data include the unocculted
        active regions (Rackham et al. 2018); when ``fitted`` their
        signature's amplitude is a profiled nuisance (it can mask features),
        otherwise it is an unmodelled bias (it can mimic them).
    uncertainty_draws : int
        Seeded Monte Carlo draws of planet mass and radius (0: none).
    seed : int
        Seed of those draws.
    fisher : bool
        Also forecast 1-sigma errors on log10 mixing ratios, temperature,
        log10 cloud-top pressure and reference radius at the N needed.
    solver : {"analytic", "layers"}
    refit : sequence of str
        Continuum parameters of the alternative re-fitted (scipy.optimize,
        Nelder-Mead on the one-transit weights) before the test, so a
        feature is only credited if the alternative cannot mimic it:
        any of ``"temperature"`` (a factor on the scenario temperature),
        ``"cloud_top_pressure"`` (log10, bar) and ``"reference_radius"``
        (a factor).  For the species and against tests; the vertical offset
        is always profiled.

    Returns
    -------
    dict
        ``planets``: one summary dict per planet (keys include
        ``transits_needed`` (int or None), ``reachable``, ``limiting_term``,
        ``significance_per_transit_sigma``, ``asymptotic_significance_sigma``,
        ``hours_per_transit``, ``hours_total``, ``transits_for_probability``,
        ``status`` and ``reason``); ``dataset``: xarray Dataset with the
        spectra, noise and significance curves; ``test``: (kind, argument).
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
    notes = [n for _, r in parts for n in r["notes"]]
    return {"planets": planets, "dataset": ds, "test": parts[0][1]["test"], "notes": notes}


def _one_scenario(system, mode, scenario, *, test=None, species=None, against=None,
                  sigma=5.0, probabilities=(0.5, 0.9), n_max=DEFAULT_MAX_TRANSITS,
                  resolution=None, bin_edges=None, floor_ppm=None,
                  floor_averages_down=None, baseline=None, overhead_hours=None,
                  contamination=None, uncertainty_draws=0, seed=0, fisher=False,
                  solver="analytic", against_wavelength_unit=None, against_depth_kind="ppm",
                  refit=(), curves=True):
    """:func:`transits_for_system` for planets sharing one scenario."""
    from .atmosphere.spectrum import transmission_spectrum
    from .atmosphere.scenarios import load_scenario
    import xarray as xr

    kind, arg = parse_test(test, species, against)
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
    names = [str(x) for x in system.names]
    sc = load_scenario(scenario)
    obs = _observation(system, mode, resolution, bin_edges, floor_ppm, floor_averages_down,
                       baseline, solver)
    d, prec, notes = obs["derived"], obs["precision"], obs["notes"]
    white, floor, floor_avg = obs["white"], obs["floor"], obs["floor_averages"]
    edges_um, wl, spec_kw, rp, rs = obs["edges_um"], obs["wl"], obs["spec_kw"], obs["rp"], obs["rs"]
    truth_ds = transmission_spectrum(sc, rp, rs, contributions=(kind == "species"), **spec_kw)
    truth = np.asarray(truth_ds["transit_depth_ppm"].values, dtype=np.float64)

    if kind == "atmosphere":
        alt = np.repeat(np.nanmean(truth, axis=-1, keepdims=True), truth.shape[-1], axis=-1)
        label = "flat line"
    elif kind == "species":
        gases = sorted(sc.mixing_ratios)
        if arg not in gases:
            raise InputError("species", arg, "a gas of scenario " + repr(sc.name) + ": " + ", ".join(gases))
        if "depth_without_species_ppm" not in truth_ds or arg not in truth_ds["species"].values:
            raise InputError("species", arg, "an absorbing gas of the scenario (this one has no "
                             "opacity in the band model)")
        alt = np.asarray(truth_ds["depth_without_species_ppm"].sel(species=arg)
                         .transpose("planet", "wavelength").values, dtype=np.float64)
        label = f"{sc.name} without {arg}"
    else:
        alt, label = _alternative_spectrum(arg, rp, rs, edges_um, spec_kw, transmission_spectrum,
                                           truth.shape, against_wavelength_unit, against_depth_kind)

    refit = tuple(refit or ())
    refit_values = [None] * len(names)
    if refit:
        for k in refit:
            if k not in REFIT_PARAMETERS:
                raise InputError("refit", k, "any of " + ", ".join(REFIT_PARAMETERS))
        if kind == "atmosphere":
            raise InputError("refit", refit, "the species or against tests (the flat line "
                             "has only its level, which is always fitted)")
        if kind == "against" and not isinstance(arg, str) or (
                kind == "against" and str(arg).lower().endswith((".csv", ".ecsv", ".fits", ".fit",
                                                                 ".txt", ".dat"))):
            raise InputError("refit", refit, "a scenario alternative (a spectrum file has no "
                             "parameters)")
        alt_sc = sc if kind == "species" else load_scenario(arg)
        excl = arg if kind == "species" else None
        total1 = np.sqrt(white ** 2 + floor ** 2)
        alt, refit_values = _refit(alt_sc, excl, refit, truth, alt, total1, rp, rs, spec_kw,
                                   transmission_spectrum)

    data = truth.copy()
    templates = None
    template_sigma = None
    contamination_signature = None
    if contamination:
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
        # Rackham et al. 2018: the data are epsilon x the true depth; a model of the
        # alternative sees epsilon x its own depth.  The signature the fit can use is
        # alt (epsilon - 1), scaled to the stated covering fractions, with a prior of
        # its own size (amplitude 1 +/- 1): a vanishing contamination changes nothing.
        data = truth * eps
        contamination_signature = alt * (eps - 1.0)
        if fitted:
            templates = contamination_signature[..., None]
            template_sigma = np.array([1.0])

    saturated = obs["saturated"]
    usable = (~saturated & np.isfinite(white) & (white > 0) & np.isfinite(data) & np.isfinite(alt))
    n_bins = usable.sum(axis=-1)
    # Unusable (saturated) bins get NaN noise: zero weight in the stacker.
    w_sig = np.where(usable, white, np.nan)
    f_sig = np.where(usable, floor, 0.0)
    resid_data = np.where(usable, data, 0.0)
    resid_alt = np.where(usable, alt, 0.0)
    k_templates = 0 if templates is None else templates.shape[-1]
    dof = np.maximum(n_bins - 1 - k_templates, 1) if kind == "atmosphere" else 1
    tmpl = None if templates is None else np.where(usable[..., None], templates, 0.0)
    res = dt.stack_transits(resid_data, resid_alt, w_sig, floor=f_sig, floor_averages=floor_avg,
                            dof=dof, templates=tmpl, template_sigma=template_sigma,
                            sigma=sigma, probabilities=probabilities, n_max=int(n_max),
                            n_curve=None if curves else [1])
    bias_share = np.zeros(len(names))
    if contamination_signature is not None and templates is None:
        # unmodelled contamination: how much of the Delta chi^2 it makes up
        clean = dt.profiled_delta_chi2(np.where(usable, truth - alt, 0.0),
                                       np.where(usable, np.sqrt(white ** 2 + floor ** 2), np.nan))
        with np.errstate(invalid="ignore", divide="ignore"):
            bias_share = np.where(res["delta_chi2_per_transit"] > 0,
                                  1.0 - clean / res["delta_chi2_per_transit"], 0.0)
    t14_h = d["t14_s"] / HOUR
    base_h = np.asarray(prec["baseline_time"].values, dtype=np.float64) if "baseline_time" in prec else t14_h
    if base_h.ndim == 0:
        base_h = np.full(len(names), float(base_h))
    hours = fc.programme_hours(t14_h, np.where((np.asarray(res["transits_needed"]) > 0), res["transits_needed"], 0),
                               baseline=base_h, baseline_is_multiple=False,
                               overhead_hours=fc.DEFAULT_OVERHEAD_HOURS if overhead_hours is None
                               else float(overhead_hours))

    spread = None
    if uncertainty_draws:
        rng = np.random.default_rng(seed)
        from .metrics import mass_from_radius
        _, dex = mass_from_radius(d["radius_m"])
        est = system.planet.mass_estimated
        draws = fc.feature_scale_draws(rp, system.planet._radius_sigma / R_EARTH,
                                       d["mass_kg"] / M_EARTH, np.where(est, np.nan, d["mass_uncertainty_kg"] / M_EARTH),
                                       int(uncertainty_draws), rng,
                                       mass_sigma_log10=np.where(est, dex, 0.0))
        spread = fc.transits_distribution(resid_data, resid_alt, w_sig, draws, floor=f_sig,
                                          floor_averages=floor_avg, dof=dof, sigma=sigma,
                                          n_max=int(n_max), templates=tmpl,
                                          template_sigma=template_sigma)

    fisher_out = None
    if fisher:
        # errors at the N needed; for planets that never reach the target, at n_max
        n_f = np.where(np.asarray(res["transits_needed"]) > 0, res["transits_needed"], int(n_max))
        fisher_out = _fisher(sc, rp, rs, spec_kw, transmission_spectrum, w_sig, f_sig, floor_avg,
                             n_f)

    # an offset-profiled test needs two usable bins
    saturated_all = (n_bins < 2) & (saturated.sum(axis=-1) > 0)
    h_km = np.asarray(truth_ds["scale_height_km"].values, dtype=np.float64)
    annulus = np.asarray(truth_ds["annulus_ppm_per_scale_height"].values, dtype=np.float64)
    h_over_r = h_km * 1e3 / d["radius_m"]
    from .constants import G, K_B, M_U
    jeans = G * d["mass_kg"] * (1.008 * M_U) / (K_B * d["equilibrium_temperature_K"] * d["radius_m"])
    hydrogen_rich = sc.mean_molecular_weight < HYDROGEN_RICH_MU
    escaping = hydrogen_rich & (jeans < JEANS_PARAMETER_MIN)
    unbound = ((h_over_r > MAX_SCALE_HEIGHT_RATIO) | escaping) & ~sc.featureless
    sat_limit = np.asarray(prec["saturation_limit_mag"].values, dtype=np.float64).ravel()
    n_arr = np.asarray(res["transits_needed"])
    limiting = np.asarray(res["limiting_term"]).astype(str).astype(object)
    limiting = np.where(saturated_all, "saturation", limiting)
    limiting = np.where((n_arr == 0) & (bias_share > 0.5), "stellar contamination (bias)", limiting)
    limiting = np.where((n_arr > 0) & (bias_share > 0.5), "stellar contamination (bias)", limiting)
    z1, zinf = res["significance_per_transit"], res["asymptotic_significance"]
    lam1 = res["delta_chi2_per_transit"]
    probs = {f"{p:g}": np.asarray(v) for p, v in res["transits_for_probability"].items()}
    dof_b = np.broadcast_to(dof, (len(names),))
    feat = np.where(usable, data - alt, np.nan)
    with np.errstate(invalid="ignore"), __import__("warnings").catch_warnings():
        __import__("warnings").simplefilter("ignore", RuntimeWarning)  # all-NaN rows
        amp = np.nanmax(feat, axis=-1) - np.nanmin(feat, axis=-1)
    planets = []
    for i, name in enumerate(names):
        n = int(n_arr[i])
        status, reason = "ok", ""
        if saturated_all[i]:
            status = "saturated"
            reason = (f"mode {prec.attrs.get('mode', mode)} saturates on this star in "
                      f"{int(saturated[i].sum())} of {saturated.shape[-1]} bins "
                      f"(brightest usable magnitude {sat_limit[i]:.2f})")
        elif unbound[i]:
            status = "unbound_atmosphere"
            if h_over_r[i] > MAX_SCALE_HEIGHT_RATIO:
                reason = (f"scale height {h_km[i]:.0f} km is {h_over_r[i]:.2f} of the planet radius "
                          f"(> {MAX_SCALE_HEIGHT_RATIO:g}): scenario {sc.name!r} is not a bound "
                          "hydrostatic atmosphere on this planet, so its spectrum is not used")
            else:
                reason = (f"Jeans escape parameter {jeans[i]:.1f} < {JEANS_PARAMETER_MIN:g}: a "
                          f"hydrogen-rich envelope ({sc.name!r}) is not retained by this planet, "
                          "so its spectrum is not used")
            n = 0
        elif n == 0:
            status = "not_reachable"
            reason = (f"{limiting[i]} limits the test to {float(zinf[i]):.2f} sigma"
                      if limiting[i] == "noise floor" else
                      f"not reached within {int(n_max)} transits ({limiting[i]})")
            if saturated[i].any():
                reason += f"; {int(saturated[i].sum())} of {saturated.shape[-1]} bins saturated"
        if bias_share[i] > 0.5:
            reason = (reason + "; " if reason else "") + (
                f"unmodelled stellar contamination makes up {bias_share[i]:.0%} of the signal")
        rec = {
            "name": name, "scenario": sc.name, "test": kind if arg is None else f"{kind}:{arg}",
            "alternative": label, "mode": str(prec.attrs.get("mode", mode)),
            "target_sigma": sigma, "status": status, "reason": reason,
            "transits_needed": n if n > 0 else None, "reachable": bool(n > 0),
            "limiting_term": "unbound atmosphere" if unbound[i] and not saturated_all[i]
            else str(limiting[i]),
            "significance_per_transit_sigma": float(z1[i]),
            "asymptotic_significance_sigma": float(zinf[i]),
            "delta_chi2_per_transit": float(lam1[i]),
            "degrees_of_freedom": int(dof_b[i]),
            "bins_used": int(n_bins[i]),
            "bins_saturated": int(saturated[i].sum()),
            "transits_for_probability": {k: (int(v[i]) if v[i] > 0 and n > 0 else None)
                                         for k, v in probs.items()},
            "scale_height_over_radius": float(h_over_r[i]),
            "jeans_parameter": float(jeans[i]),
            "contamination_share": float(bias_share[i]),
            "t14_hours": float(t14_h[i]), "baseline_hours": float(base_h[i]),
            "hours_per_transit": float(hours["hours_per_transit"][i]),
            "hours_total": (float(hours["hours_total"][i]) if n > 0 else None),
            "period_days": float(system.planet.period_s[i] / 86400.0),
            "scale_height_km": float(h_km[i]),
            "annulus_ppm_per_scale_height": float(annulus[i]),
            "feature_amplitude_ppm": float(amp[i]) if n_bins[i] else None,
        }
        if spread is not None:
            rec["transits_needed_spread"] = {k: (None if not np.isfinite(spread[k][i]) else float(spread[k][i]))
                                             for k in ("p16", "median", "p84")}
            rec["fraction_of_draws_reachable"] = float(spread["fraction_reachable"][i])
        if refit_values[i] is not None:
            rec["refit"] = refit_values[i]
        if fisher_out is not None:
            rec["fisher_errors"] = {k: (float(v[i]) if np.isfinite(v[i]) else None)
                                    for k, v in fisher_out.items()}
        planets.append(rec)

    ds = xr.Dataset(
        {
            "model_ppm": (("planet", "wavelength"), data, {"units": "ppm", "long_name": "true spectrum (as observed)"}),
            "alternative_ppm": (("planet", "wavelength"), alt, {"units": "ppm", "long_name": label}),
            "noise_ppm_per_transit": (("planet", "wavelength"), np.where(usable, np.sqrt(white ** 2 + floor ** 2), np.nan),
                                      {"units": "ppm"}),
            "white_noise_ppm_per_transit": (("planet", "wavelength"), np.where(usable, white, np.nan), {"units": "ppm"}),
            "floor_ppm": (("planet", "wavelength"), floor, {"units": "ppm"}),
            "significance": (("planet", "transits"), res["curve_significance"], {"units": "sigma"}),
            "probability": (("planet", "transits"), res["curve_probability"]),
            "transits_needed": ("planet", res["transits_needed"]),
        },
        coords={"planet": names, "wavelength": ("wavelength", wl, {"units": "um"}),
                "wavelength_lower": ("wavelength", edges_um[:-1], {"units": "um"}),
                "wavelength_upper": ("wavelength", edges_um[1:], {"units": "um"}),
                "transits": res["curve_transits"]},
        attrs={"scenario": sc.name, "test": planets[0]["test"] if planets else kind,
               "alternative": label, "target_sigma": sigma, "floor_averages_down": int(floor_avg),
               "mode": str(prec.attrs.get("mode", mode))},
    )
    return {"planets": planets, "dataset": ds, "test": (kind, arg), "notes": notes}


def _observation(system, mode, resolution, bin_edges, floor_ppm, floor_averages_down, baseline,
                 solver):
    """Precision of the mode on its bins, and the keywords for spectra on the same bins."""
    from .photons.precision import system_precision
    from .errors import SnrkitWarning
    import warnings
    d = system.derived_arrays()
    names = [str(x) for x in system.names]
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", SnrkitWarning)
        prec = system_precision(system, mode, resolution=resolution, bin_edges=bin_edges,
                                floor_ppm=floor_ppm, floor_averages_down=floor_averages_down,
                                baseline=baseline, warn=True)
    white, floor = _white_and_floor(prec)
    edges_um = _edges_from_precision(prec)
    return {
        "derived": d, "precision": prec, "notes": [str(w.message) for w in caught],
        "white": white, "floor": floor,
        "floor_averages": bool(prec.attrs.get("floor_averages_down", False)),
        "saturated": np.asarray(prec["saturated"].transpose("planet", "wavelength").values, dtype=bool),
        "edges_um": edges_um, "wl": np.sqrt(edges_um[1:] * edges_um[:-1]),
        "rp": d["radius_m"] / R_EARTH, "rs": system.star.radius_m / R_SUN,
        "spec_kw": dict(planet_mass=d["mass_kg"] / M_EARTH,
                        equilibrium_temperature=d["equilibrium_temperature_K"],
                        semi_major_axis=d["semi_major_axis_m"] / AU, wavelength_edges=edges_um,
                        planet_names=names, solver=solver),
    }


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


def _refit(alt_sc, exclude, names, truth, alt0, sigma, rp, rs, spec_kw, transmission_spectrum):
    """Best-fitting alternative spectrum per planet over the chosen continuum parameters."""
    import dataclasses
    from scipy.optimize import minimize
    out = np.array(alt0, dtype=np.float64, copy=True)
    values = []
    for i in range(len(rp)):
        kw = dict(spec_kw)
        kw["planet_names"] = [kw["planet_names"][i]]
        for key in ("planet_mass", "equilibrium_temperature", "semi_major_axis"):
            kw[key] = np.atleast_1d(kw[key])[i:i + 1]
        ok = np.isfinite(sigma[i]) & np.isfinite(truth[i])

        def model(theta):
            p = dict(zip(names, theta))
            changes = {}
            if "temperature" in p:
                if alt_sc.temperature_K is not None:
                    changes["temperature_K"] = alt_sc.temperature_K * np.exp(p["temperature"])
                else:
                    changes["temperature_factor"] = alt_sc.temperature_factor * np.exp(p["temperature"])
            if "cloud_top_pressure" in p:
                changes["cloud_top_pressure_Pa"] = 1e5 * 10.0 ** p["cloud_top_pressure"]
            sc_i = dataclasses.replace(alt_sc, **changes)
            scale = np.exp(p.get("reference_radius", 0.0))
            ds = transmission_spectrum(sc_i, np.atleast_1d(rp)[i:i + 1] * scale, np.atleast_1d(rs)[i:i + 1],
                                       exclude_species=exclude, **kw)
            return np.asarray(ds["transit_depth_ppm"].values[0], dtype=np.float64)

        def cost(theta):
            m = model(theta)
            return float(dt.profiled_delta_chi2(np.where(ok, truth[i] - m, 0.0),
                                                np.where(ok, sigma[i], np.nan)))

        start = []
        for k in names:
            if k == "cloud_top_pressure":
                p0 = alt_sc.cloud_top_pressure_Pa or alt_sc.surface_pressure_Pa or 1e6
                start.append(float(np.log10(p0 / 1e5)))
            else:
                start.append(0.0)
        res = minimize(cost, np.array(start), method="Nelder-Mead",
                       options={"xatol": 1e-3, "fatol": 1e-3, "maxfev": 150 * len(names)})
        best = res.x if res.fun <= cost(np.array(start)) else np.array(start)
        out[i] = model(best)
        rec = {}
        for k, v in zip(names, best):
            if k == "temperature":
                rec["temperature_factor"] = float(np.exp(v))
            elif k == "cloud_top_pressure":
                rec["cloud_top_pressure_bar"] = float(10.0 ** v)
            else:
                rec["reference_radius_factor"] = float(np.exp(v))
        values.append(rec)
    return out, values


def _fisher(sc, rp, rs, spec_kw, transmission_spectrum, w_sig, f_sig, floor_avg, n_needed):
    """Fisher errors per planet on the scenario's main parameters at the N needed.

    Parameters: log10 of each trace absorber's mixing ratio (the fill gas takes
    the remainder and mu is recomputed), the temperature (as a factor on the
    scenario's temperature), log10 of the cloud-top pressure [bar] where the
    scenario has a cloud deck, and the reference radius (as a factor), with
    a free vertical offset.
    """
    import dataclasses
    from .atmosphere.composition import mean_molecular_weight
    from .atmosphere.opacity import OPACITY_SPECIES
    params = {}
    fill = sc.fill_gas
    for gas, x in sorted(sc.mixing_ratios.items()):
        # trace absorbers with bands of their own (He, N2, Ar only change mu and CIA)
        if 0 < x < 0.5 and gas != fill and gas in OPACITY_SPECIES:
            params[f"log10_{gas}"] = (float(np.log10(x)), 0.05)
    params["temperature_factor"] = (1.0, 0.02)
    if sc.cloud_top_pressure_Pa is not None:
        params["log10_cloud_top_pressure_bar"] = (float(np.log10(sc.cloud_top_pressure_Pa / 1e5)), 0.05)
    params["radius_factor"] = (1.0, 1e-4)
    out = {k: np.full(len(rp), np.nan) for k in params}

    def scenario_for(p):
        mr = dict(sc.mixing_ratios)
        for k, v in p.items():
            if k.startswith("log10_") and k[6:] in mr:
                mr[k[6:]] = 10.0 ** v
        changes = {}
        if fill is not None and fill in mr:
            rest = 1.0 - sum(v for g, v in mr.items() if g != fill)
            if rest <= 0:
                raise InputError("fisher step", p, "mixing ratios leaving room for the fill gas")
            mr[fill] = rest
        if mr:
            changes["mixing_ratios"] = mr
            changes["mean_molecular_weight"] = float(mean_molecular_weight(mr))
        if sc.temperature_K is not None:
            changes["temperature_K"] = sc.temperature_K * p["temperature_factor"]
        else:
            changes["temperature_factor"] = sc.temperature_factor * p["temperature_factor"]
        if "log10_cloud_top_pressure_bar" in p:
            changes["cloud_top_pressure_Pa"] = 1e5 * 10.0 ** p["log10_cloud_top_pressure_bar"]
        return dataclasses.replace(sc, **changes)

    def model_for(i):
        kw = dict(spec_kw)
        kw["planet_names"] = [kw["planet_names"][i]]
        for key in ("planet_mass", "equilibrium_temperature", "semi_major_axis"):
            kw[key] = np.atleast_1d(kw[key])[i:i + 1]

        def model(p):
            ds = transmission_spectrum(scenario_for(p), np.atleast_1d(rp)[i:i + 1] * p["radius_factor"],
                                       np.atleast_1d(rs)[i:i + 1], **kw)
            return np.asarray(ds["transit_depth_ppm"].values[0], dtype=np.float64)
        return model

    for i in range(len(rp)):
        # The reference radius plays the part of the vertical offset here.
        f = fc.fisher_forecast(model_for(i), params, w_sig[i], int(n_needed[i]),
                               floor=f_sig[i], floor_averages=floor_avg, fit_offset=False)
        for j, k in enumerate(f["names"]):
            out[k][i] = f["errors"][0, j]
    return out


def contrast_for_system(system, mode, scenarios, *, sigma=5.0, n_max=DEFAULT_MAX_TRANSITS,
                        resolution=None, bin_edges=None, floor_ppm=None,
                        floor_averages_down=None, baseline=None, overhead_hours=None,
                        solver="analytic"):
    """Transits needed to tell every ordered pair of scenarios apart.

    For each planet and each ordered pair (A true, B rejected) the stacker
    finds the transits for B to be rejected at ``sigma`` when A is true,
    with B's vertical offset profiled (a 1-dof template test between the
    two spectra).  Noise and spectra are computed once per scenario on the
    mode's bins; all pairs and planets go through the stacker as one array.

    Returns
    -------
    dict
        ``scenarios`` (names), ``planets``: per planet ``name``,
        ``transits_needed`` (matrix [true][rejected], None off the diagonal
        where not reachable, None on the diagonal), ``hours_total`` (same
        layout), ``limiting_term`` (same layout); ``notes``.
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
    obs = _observation(system, mode, resolution, bin_edges, floor_ppm, floor_averages_down,
                       baseline, solver)
    ds = transmission_spectrum(scs, obs["rp"], obs["rs"], **obs["spec_kw"])
    spec = np.asarray(ds["transit_depth_ppm"].transpose("scenario", "planet", "wavelength").values,
                      dtype=np.float64)
    k = len(scs)
    pairs = [(a, b) for a in range(k) for b in range(k) if a != b]
    usable = ~obs["saturated"] & np.isfinite(obs["white"]) & (obs["white"] > 0)
    w = np.where(usable, obs["white"], np.nan)
    f = np.where(usable, obs["floor"], 0.0)
    truth = np.stack([np.where(usable, spec[a], 0.0) for a, _ in pairs])
    alt = np.stack([np.where(usable, spec[b], 0.0) for _, b in pairs])
    res = dt.stack_transits(truth, alt, w[None], floor=f[None], floor_averages=obs["floor_averages"],
                            sigma=sigma, probabilities=(), n_max=int(n_max), n_curve=[1])
    d = obs["derived"]
    t14_h = d["t14_s"] / HOUR
    base_h = np.asarray(obs["precision"]["baseline_time"].values, dtype=np.float64)
    hours = fc.programme_hours(t14_h[None], res["transits_needed"], baseline=base_h[None],
                               baseline_is_multiple=False,
                               overhead_hours=fc.DEFAULT_OVERHEAD_HOURS if overhead_hours is None
                               else float(overhead_hours))
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
                        "bins_used": int(usable[i].sum())})
    return {"scenarios": names, "planets": planets, "notes": obs["notes"], "target_sigma": sigma,
            "mode": str(obs["precision"].attrs.get("mode", mode))}
