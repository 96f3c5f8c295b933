"""Per-planet records and the labelled Dataset of a transits result.

Public layer, no science: it reads the arrays the chain computed
(:func:`snrkit.engine.transits.transits_for_system`) and words them: the status of
each planet (``ok``, ``not_reachable``, ``no_signal``, ``saturated``,
``unbound_atmosphere``, ``escaping_atmosphere``, ``stellar_contamination``),
its reason and warnings, the test and
its degrees of freedom, the readout chosen, and the hours.
"""

import numpy as np

from ..stats import hypotheses as hy
from ..constants import HOUR, G, K_B, M_U

__all__ = ["planet_records", "result_dataset", "status_and_reason", "statuses", "columns",
           "COLUMNS", "MAX_SCALE_HEIGHT_RATIO", "HYDROGEN_RICH_MU", "JEANS_PARAMETER_MIN",
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

#: What each test's statistic is, as stated in every output.
TEST_STATISTICS = {
    "nested": "one-sided likelihood ratio q0 between nested models, 1 degree of freedom, "
              "Z = sqrt(Delta chi^2) (Cowan et al. 2011)",
    hy.GOODNESS_OF_FIT: "goodness of fit of a flat line, chi^2 with bins - 1 degrees of freedom "
                        "(model-agnostic; not a detection of the scenario)",
}


def _none_if_nan(x):
    return float(x) if np.isfinite(x) else None


def _unbound(ctx):
    """Scale-height ratio, Jeans parameter, the unbound mask and the escape flags per planet.

    Unbound (status ``unbound_atmosphere``): H/Rp above
    :data:`MAX_SCALE_HEIGHT_RATIO`, where a hydrostatic
    atmosphere is not a valid model.  Escaping: a hydrogen-rich scenario with a
    restricted Jeans parameter below the threshold (a warning; an exclusion
    only below the caller's ``min_jeans``).
    """
    d, sc = ctx["obs"]["derived"], ctx["sc"]
    h_km = np.asarray(ctx["truth_ds"]["scale_height_km"], dtype=np.float64)
    h_over_r = h_km * 1e3 / d["radius_m"]
    jeans = G * d["mass_kg"] * (1.008 * M_U) / (K_B * d["equilibrium_temperature_K"] * d["radius_m"])
    hydrogen = (sc.mean_molecular_weight < HYDROGEN_RICH_MU) & ~sc.featureless
    warn = hydrogen & (jeans < JEANS_PARAMETER_MIN)
    limit = ctx.get("min_jeans")
    excluded = hydrogen & (jeans < limit) if limit is not None else np.zeros_like(warn)
    unbound = (h_over_r > MAX_SCALE_HEIGHT_RATIO) & ~sc.featureless
    return h_km, h_over_r, jeans, unbound, warn, excluded


def status_and_reason(i, ctx, n, limiting, saturated_all, unbound, h_km, h_over_r, jeans,
                      excluded):
    """Status word and reason sentence of planet ``i``."""
    res, used, obs, sc = ctx["res"], ctx["used"], ctx["obs"], ctx["sc"]
    prec = obs["precision"]
    share = ctx["extra"]["bias_share"][i]
    n_sat, n_all = int(used["bins_saturated"][i]), used["usable"].shape[-1]
    if saturated_all[i]:
        sat_limit = float(np.asarray(prec["saturation_limit_mag"]).ravel()[i])
        return "saturated", (f"mode {prec.attrs.get('instrument_mode', ctx['mode'])} saturates on this star "
                             f"in {n_sat} of {n_all} bins at the readout that serves the test "
                             f"best (brightest usable magnitude {sat_limit:.2f})")
    if unbound[i]:
        return "unbound_atmosphere", (
            f"scale height {h_km[i]:.0f} km is {h_over_r[i]:.2f} of the planet radius "
            f"(> {MAX_SCALE_HEIGHT_RATIO:g}): scenario {sc.name!r} is not a bound "
            "hydrostatic atmosphere on this planet, so its spectrum is not used")
    if excluded[i]:
        return "escaping_atmosphere", (
            f"restricted Jeans parameter {jeans[i]:.1f} is below the requested minimum "
            f"{ctx['min_jeans']:g} for a hydrogen-rich envelope ({sc.name!r})")
    if share > 0.5 and res["no_signal"][i]:
        clean = float(ctx["extra"]["clean_delta_chi2"][i])
        return "stellar_contamination", (
            f"unmodelled stellar contamination cancels the test's signal (Delta chi^2 per "
            f"transit {clean:.3g} without it, none with it): fit the contamination or choose a "
            "quieter star")
    if res["no_signal"][i]:
        return "no_signal", (f"{ctx['label']} and {sc.name} give the same spectrum on these bins: "
                             "the test has no signal (0 sigma at any number of transits)")
    if share > 0.5:
        return "stellar_contamination", (
            f"unmodelled stellar contamination makes up {share:.0%} of the Delta chi^2: a "
            "detection would be of the star's spots and faculae, not of the planet")
    if n == 0:
        reason = (f"the noise floor limits the test to "
                  f"{float(res['asymptotic_significance'][i]):.2f} sigma"
                  if limiting[i] == "noise floor" else
                  f"not reached within {ctx['n_max']} transits ({limiting[i]})")
        if n_sat:
            reason += f"; {n_sat} of {n_all} bins saturated"
        return "not_reachable", reason
    return "ok", ""


def _test_words(ctx, i):
    kind, arg = ctx["kind"], ctx["arg"]
    gof = kind == hy.GOODNESS_OF_FIT
    name = kind if arg is None else f"{kind}:{arg}"
    return name, TEST_STATISTICS[hy.GOODNESS_OF_FIT if gof else "nested"]


def _atmosphere_note(ctx, i):
    """One plain sentence where a species test outranks the atmosphere test."""
    atm = ctx["extra"]["atmosphere_delta_chi2"]
    lam = ctx["res"]["delta_chi2_per_transit"][i]
    if atm is None or not lam > atm[i] * (1 + 1e-9):
        return None
    return (f"this test is more significant than the atmosphere test (Delta chi^2 per transit "
            f"{lam:.3g} against {atm[i]:.3g}): a flat line with a free level absorbs part of the "
            "spectrum, because the features of different gases alternate across the band")


def statuses(ctx):
    """Status of every planet at once, and the arrays its reason and limiting term need.

    Precedence (first that applies): ``saturated``, ``unbound_atmosphere``,
    ``escaping_atmosphere``, ``stellar_contamination`` where the contamination
    cancels the signal, ``no_signal``, ``stellar_contamination``,
    ``not_reachable``, ``ok`` -- the order of :func:`status_and_reason`.
    """
    res, used = ctx["res"], ctx["used"]
    h_km, h_over_r, jeans, unbound, escape_warn, excluded = _unbound(ctx)
    n_bins = used["usable"].sum(axis=-1)
    saturated_all = (n_bins < 2) & (used["bins_saturated"] > 0)
    n_arr = np.asarray(res["transits_needed"])
    share = ctx["extra"]["bias_share"]
    status = np.full(n_arr.shape, "ok", dtype=object)
    cancelled = (share > 0.5) & np.asarray(res["no_signal"], dtype=bool)
    for mask, word in ((n_arr == 0, "not_reachable"), (share > 0.5, "stellar_contamination"),
                       (res["no_signal"], "no_signal"), (cancelled, "stellar_contamination"),
                       (excluded, "escaping_atmosphere"),
                       (unbound, "unbound_atmosphere"), (saturated_all, "saturated")):
        status[np.asarray(mask, dtype=bool)] = word
    limiting = np.asarray(res["limiting_term"]).astype(str).astype(object)
    limiting = np.where(saturated_all, "saturation", limiting)
    limiting = np.where(share > 0.5, "stellar contamination (bias)", limiting)
    limiting = np.where(unbound & ~saturated_all, "unbound atmosphere", limiting)
    limiting = np.where(excluded & ~unbound & ~saturated_all, "escaping atmosphere", limiting)
    counted = (status == "ok") | (status == "stellar_contamination")
    return {"status": status, "limiting": limiting, "saturated_all": saturated_all,
            "unbound": unbound, "excluded": excluded, "escape_warning": escape_warn,
            "h_km": h_km, "h_over_r": h_over_r, "jeans": jeans, "n_bins": n_bins,
            "n_raw": n_arr, "transits_needed": np.where(counted, n_arr, 0)}


def _reasons(ctx, st):
    """Reason sentences (empty for ``ok``); worded only for the planets that need one."""
    reason = np.full(st["status"].shape, "", dtype=object)
    for i in np.flatnonzero(st["status"] != "ok"):
        reason[i] = status_and_reason(i, ctx, int(st["n_raw"][i]), st["limiting"],
                                      st["saturated_all"], st["unbound"], st["h_km"],
                                      st["h_over_r"], st["jeans"], st["excluded"])[1]
    return reason


#: Columns of :func:`columns` (one value per planet).
COLUMNS = ("status", "reason", "mode", "scenario", "transits_needed", "hours_per_transit",
           "hours_total", "significance_per_transit", "limiting_term", "groups_per_integration",
           "duty_cycle", "bins_saturated", "jeans_parameter", "escape_warning")


def columns(ctx):
    """The answer for every planet as arrays (the catalogue path; no per-planet records).

    Returns
    -------
    dict
        The :data:`COLUMNS`, each an array over the planet axis:
        ``transits_needed`` 0 and ``hours_total`` NaN where not reached.
    """
    st = statuses(ctx)
    res, used, hours = ctx["res"], ctx["used"], ctx["hours"]
    n = st["transits_needed"]
    npl = n.shape[0]
    mode_name = str(ctx["obs"]["precision"].attrs.get("instrument_mode", ctx["mode"]))
    return {
        "status": st["status"], "reason": _reasons(ctx, st),
        "mode": np.full(npl, mode_name, dtype=object),
        "scenario": np.full(npl, ctx["sc"].name, dtype=object),
        "transits_needed": n.astype(np.int64),
        "hours_per_transit": np.asarray(hours["hours_per_transit"], dtype=np.float64),
        "hours_total": np.where(n > 0, np.asarray(hours["hours_total"], dtype=np.float64), np.nan),
        "significance_per_transit": np.asarray(res["significance_per_transit"], dtype=np.float64),
        "limiting_term": np.where(st["status"] == "no_signal", "no signal", st["limiting"]),
        "groups_per_integration": np.asarray(used["groups"], dtype=np.int64),
        "duty_cycle": np.asarray(used["duty"], dtype=np.float64),
        "bins_saturated": np.asarray(used["bins_saturated"], dtype=np.int64),
        "jeans_parameter": np.asarray(st["jeans"], dtype=np.float64),
        "escape_warning": np.asarray(st["escape_warning"], dtype=bool),
    }


def planet_records(ctx):
    """One JSON-ready dict per planet, and the notes to print."""
    res, used, obs, sc, hours = ctx["res"], ctx["used"], ctx["obs"], ctx["sc"], ctx["hours"]
    d = obs["derived"]
    names = [str(x) for x in ctx["system"].names]
    st = statuses(ctx)
    reasons = _reasons(ctx, st)
    h_km, h_over_r, jeans, escape_warn = st["h_km"], st["h_over_r"], st["jeans"], st["escape_warning"]
    n_bins, limiting = st["n_bins"], st["limiting"]
    n_arr = st["n_raw"]
    share = ctx["extra"]["bias_share"]
    annulus = np.asarray(ctx["truth_ds"]["annulus_ppm_per_scale_height"], dtype=np.float64)
    feat = np.where(used["usable"], ctx["models"].data - ctx["models"].null, np.nan)
    with np.errstate(invalid="ignore"):
        amp = np.array([np.nanmax(f) - np.nanmin(f) if np.any(np.isfinite(f)) else np.nan
                        for f in feat])
    probs = {f"{p:g}": np.asarray(v) for p, v in res["transits_for_probability"].items()}
    t14_h = d["t14_s"] / HOUR
    base_h = np.asarray(obs["precision"]["baseline_time"], dtype=np.float64)
    t_in_h = np.asarray(obs["precision"]["in_transit_time"], dtype=np.float64)
    mode_name = str(obs["precision"].attrs.get("instrument_mode", ctx["mode"]))
    planets, notes = [], []
    for i, name in enumerate(names):
        status, reason = str(st["status"][i]), str(reasons[i])
        n = int(st["transits_needed"][i])
        test, statistic = _test_words(ctx, i)
        rec = {
            "name": name, "scenario": sc.name, "test": test, "test_statistic": statistic,
            "null_model": ctx["label"], "mode": mode_name,
            "target_sigma": ctx["sigma"], "status": status, "reason": reason,
            "transits_needed": n if n > 0 else None, "reachable": bool(n > 0),
            "limiting_term": str(limiting[i]) if status != "no_signal" else "no signal",
            "significance_per_transit_sigma": float(res["significance_per_transit"][i]),
            "asymptotic_significance_sigma": float(res["asymptotic_significance"][i]),
            "delta_chi2_per_transit": float(res["delta_chi2_per_transit"][i]),
            "degrees_of_freedom": int(np.broadcast_to(res["dof"], n_arr.shape)[i]),
            "binning": obs["binning"], "bins_used": int(n_bins[i]),
            "bins_saturated": int(used["bins_saturated"][i]),
            "wavelength_range_um": [float(obs["edges_um"][0]), float(obs["edges_um"][-1])],
            "groups_per_integration": int(used["groups"][i]),
            "duty_cycle": float(used["duty"][i]),
            "transits_for_probability": {k: (int(v[i]) if v[i] > 0 and n > 0 else None)
                                         for k, v in probs.items()},
            "scale_height_over_radius": float(h_over_r[i]),
            "jeans_parameter": float(jeans[i]),
            "escape_warning": (f"restricted Jeans parameter {jeans[i]:.1f} < "
                               f"{JEANS_PARAMETER_MIN:g} (Fossati et al. 2017): the hydrogen "
                               "envelope may be escaping; the spectrum assumes it is hydrostatic"
                               if escape_warn[i] else None),
            "contamination_share": float(share[i]),
            "t14_hours": float(t14_h[i]), "in_transit_hours": float(t_in_h[i]),
            "baseline_hours": float(base_h[i]),
            "hours_per_transit": float(hours["hours_per_transit"][i]),
            "hours_total": (float(hours["hours_total"][i]) if n > 0 else None),
            "period_days": float(ctx["system"].planet.period_s[i] / 86400.0),
            "scale_height_km": float(h_km[i]),
            "annulus_ppm_per_scale_height": float(annulus[i]),
            "feature_amplitude_ppm": _none_if_nan(amp[i]) if n_bins[i] else None,
        }
        note = _atmosphere_note(ctx, i)
        if note:
            rec["exceeds_atmosphere_test"] = note
            notes.append(f"{name}: {note}")
        spread = ctx["spread"]
        if spread is not None:
            rec["transits_needed_spread"] = {k: _none_if_nan(spread[k][i])
                                             for k in ("p16", "median", "p84")}
            rec["fraction_of_draws_reachable"] = float(spread["fraction_reachable"][i])
        if ctx["refit"][i] is not None:
            rec["refit"] = ctx["refit"][i]
        if ctx["fisher"] is not None:
            rec["fisher_errors"] = {k: v[i] for k, v in ctx["fisher"].items()}
        planets.append(rec)
    return planets, notes


def _shown_transits(planets, res):
    """Per planet: its transits needed, else the last of the curve's transits (as the figures)."""
    last = int(np.asarray(res["curve_transits"])[-1]) if len(res["curve_transits"]) else 1
    return np.array([p["transits_needed"] or last for p in planets], dtype=np.float64)


def result_dataset(ctx, planets):
    """Spectra, noise and significance curves as an xarray Dataset."""
    import xarray as xr
    res, used, obs, models = ctx["res"], ctx["used"], ctx["obs"], ctx["models"]
    usable = used["usable"]
    names = [p["name"] for p in planets]
    edges_um = obs["edges_um"]
    floor = np.broadcast_to(obs["floor"], usable.shape)
    white = used["white"]
    null = models.null
    chances = sorted(res["curve_significance_at_probability"])
    reached = np.stack([res["curve_significance_at_probability"][p] for p in chances], axis=-2) \
        if chances else np.zeros(usable.shape[:-1] + (0, len(res["curve_transits"])))
    return xr.Dataset(
        {
            "model_ppm": (("planet", "wavelength"), models.data,
                          {"units": "ppm", "long_name": "true spectrum (as observed)"}),
            "null_ppm": (("planet", "wavelength"), null,
                                {"units": "ppm", "long_name": f"null model: {ctx['label']}"}),
            "null_fitted_ppm": (("planet", "wavelength"),
                                hy.fitted_null_at(models, used, obs, _shown_transits(planets, res)),
                                {"units": "ppm", "long_name": "the null at its best fit to the "
                                 "model after the transits needed (else the curve's last), as "
                                 "the test profiles it: level, templates, species factor"}),
            "noise_ppm_per_transit": (("planet", "wavelength"),
                                      np.where(usable, np.sqrt(white ** 2 + floor ** 2), np.nan),
                                      {"units": "ppm"}),
            "white_noise_ppm_per_transit": (("planet", "wavelength"), np.where(usable, white, np.nan),
                                            {"units": "ppm"}),
            "floor_ppm": (("planet", "wavelength"), np.array(floor),
                          {"units": "ppm", "long_name": "floor per bin (quoted at the mode's "
                           "reference resolving power, white in wavelength)"}),
            "significance": (("planet", "transits"), res["curve_significance"], {"units": "sigma"}),
            "probability": (("planet", "transits"), res["curve_probability"],
                            {"long_name": "probability of reaching the target significance"}),
            "significance_reached": (("planet", "chance", "transits"), reached,
                                     {"units": "sigma", "long_name": "significance reached or "
                                      "exceeded with the probability `chance` (noncentral chi^2 "
                                      "quantile; 0.5: the expected curve)"}),
            "transits_needed": ("planet", np.array([p["transits_needed"] or 0 for p in planets])),
            "groups_per_integration": ("planet", np.asarray(used["groups"])),
            "observed_depth_ppm": ("planet", np.asarray(ctx["truth_ds"]["observed_depth_ppm"]),
                                   {"units": "ppm", "long_name": "observed transit depth, to which "
                                    "the model's photon-weighted band average is calibrated"}),
        },
        coords={"planet": names, "wavelength": ("wavelength", obs["wl"], {"units": "um"}),
                "wavelength_lower": ("wavelength", edges_um[:-1], {"units": "um"}),
                "wavelength_upper": ("wavelength", edges_um[1:], {"units": "um"}),
                "transits": res["curve_transits"],
                "chance": ("chance", np.asarray(chances, dtype=np.float64),
                           {"long_name": "probability that a real data set reaches the curve"})},
        attrs={"scenario": ctx["sc"].name, "test": planets[0]["test"] if planets else ctx["kind"],
               "null_model": ctx["label"], "target_sigma": ctx["sigma"],
               "floor_averages_down": int(obs["floor_averages"]),
               "instrument_mode": str(obs["precision"].attrs.get("instrument_mode", ctx["mode"]))},
    )
