"""Bounded re-fits of the rejected model and Fisher forecasts with physical priors.

Every continuum parameter that a fit may move has a physical range:

* ``temperature``: a factor on the scenario's temperature within
  :data:`TEMPERATURE_FACTOR_RANGE` (0.5 to 2; common practice, no source);
* ``cloud_top_pressure``: between the model's top pressure
  (:data:`snrkit.atmosphere.spectrum.DEFAULT_TOP_PRESSURE_PA`) and its floor
  (the surface, or the deep boundary of the model);
* ``reference_radius``: a factor on the observed transit radius, to which
  every model is calibrated (its band-averaged depth equals the observed
  depth), within its uncertainty: 1 +/- 3 sigma_R/R, with a Gaussian prior
  of width sigma_R/R in the fit (:data:`DEFAULT_RADIUS_FRACTION` when the
  planet states no uncertainty; common practice, no source).

:func:`refit_null` moves the null (the scenario without a species, or the
other scenario) to its best fit inside these bounds (scipy.optimize
Nelder-Mead with bounds, on the one-transit weights), so a feature is only
credited when the null cannot mimic it; a parameter that ends on a bound is
reported as such.  :func:`fisher_errors_with_priors` forecasts 1-sigma errors
with uniform priors over the same ranges (variance (hi - lo)^2 / 12; the
reference radius keeps its Gaussian prior of width sigma_R/R); an error whose
data-only value spans more than the whole range is reported as
"unconstrained".  The re-fit works on the one-transit weights and its prior
penalty is not added to the test's statistic (both conservative).
"""

import dataclasses

import numpy as np

from . import detect as dt
from ..errors import InputError

__all__ = ["refit_null", "parameter_ranges", "fisher_errors_with_priors",
           "TEMPERATURE_FACTOR_RANGE", "DEFAULT_RADIUS_FRACTION", "LOG10_MIXING_RANGE",
           "UNCONSTRAINED", "REFIT_PARAMETERS"]

#: Continuum parameters the null may re-fit (bounded).
REFIT_PARAMETERS = ("temperature", "cloud_top_pressure", "reference_radius")

TEMPERATURE_FACTOR_RANGE = (0.5, 2.0)
#: Fractional radius uncertainty assumed when a planet states none.
DEFAULT_RADIUS_FRACTION = 0.02
#: Range of log10 volume mixing ratios for Fisher priors (common practice, no source).
LOG10_MIXING_RANGE = (-12.0, 0.0)
#: Marker of a Fisher error that spans more than its whole physical range.
UNCONSTRAINED = "unconstrained"


def _pressure_range_bar(sc):
    from ..atmosphere.spectrum import DEFAULT_TOP_PRESSURE_PA
    from ..atmosphere.solve import DEEP_FLOOR_FACTOR
    top = DEFAULT_TOP_PRESSURE_PA / 1e5
    floor = (sc.surface_pressure_Pa if sc.surface_pressure_Pa is not None
             else DEEP_FLOOR_FACTOR * sc.reference_pressure_Pa) / 1e5
    return float(np.log10(top)), float(np.log10(floor))


def parameter_ranges(sc, radius_fraction):
    """Internal coordinates and bounds of each re-fit parameter.

    Returns ``{name: (start, low, high)}`` with temperature as ln(factor),
    cloud top as log10(bar) and reference radius as the factor itself.
    """
    lo_p, hi_p = _pressure_range_bar(sc)
    p0 = sc.cloud_top_pressure_Pa
    start_p = hi_p if p0 is None else float(np.clip(np.log10(p0 / 1e5), lo_p, hi_p))
    f = float(radius_fraction)
    return {
        "temperature": (0.0, float(np.log(TEMPERATURE_FACTOR_RANGE[0])),
                        float(np.log(TEMPERATURE_FACTOR_RANGE[1]))),
        "cloud_top_pressure": (start_p, lo_p, hi_p),
        "reference_radius": (1.0, max(1.0 - 3.0 * f, 0.05), 1.0 + 3.0 * f),
    }


def _one_planet(kw, i):
    """Slice the per-planet spectrum keywords to planet ``i`` (in place)."""
    for key in ("planet_mass", "equilibrium_temperature", "semi_major_axis"):
        kw[key] = np.atleast_1d(kw[key])[i:i + 1]
    w = kw.get("calibration_weights")
    if w is not None and np.ndim(w) == 2:
        kw["calibration_weights"] = np.asarray(w)[i:i + 1]


def _bounded_minimum(cost, start, lows, highs):
    from scipy.optimize import minimize
    x0 = np.asarray(start, dtype=np.float64)
    lo, hi = np.asarray(lows), np.asarray(highs)
    span = hi - lo
    def simplex_at(x0, fraction):
        """A start and one step of ``fraction`` of each range, stepping inwards."""
        pts = [x0]
        for k in range(x0.size):
            x = x0.copy()
            step = fraction * span[k]
            x[k] = x[k] + step if x[k] + step <= hi[k] else x[k] - step
            pts.append(x)
        return np.array(pts)
    opts = {"xatol": 1e-4 * span.max(), "fatol": 1e-4, "maxfev": 200 * x0.size}
    res = minimize(cost, x0, method="Nelder-Mead", bounds=list(zip(lo, hi)),
                   options={"initial_simplex": simplex_at(x0, 0.1), **opts})
    best = np.clip(res.x, lo, hi)
    # one restart from the best point with a fresh simplex: Nelder-Mead can stall on a
    # collapsed simplex, and a stalled null would overstate the significance
    res2 = minimize(cost, best, method="Nelder-Mead", bounds=list(zip(lo, hi)),
                    options={"initial_simplex": simplex_at(best, 0.05), **opts})
    cands = [x0, best, np.clip(res2.x, lo, hi)]
    return min(cands, key=cost)


# size: one bounded fit, read top to bottom: the parameters, their bounds, the minimiser, the result
def refit_null(alt_sc, exclude, names, data, null0, sigma, rp, rs, radius_fraction, spec_kw,
               transmission_spectrum, null_scale=None):
    """Best-fitting null spectrum per planet over the chosen continuum parameters.

    Parameters
    ----------
    alt_sc : Scenario
        The null's scenario (the true one for a species test).
    exclude : str or None
        The species removed from it.
    names : sequence of str
        Parameters to fit (see the module docstring).
    data, null0 : numpy.ndarray (planet, bin)
        Data and the null at its nominal parameters [ppm].
    sigma : numpy.ndarray (planet, bin)
        One-transit noise (NaN: bin unused).
    rp, rs, radius_fraction : numpy.ndarray (planet,)
        Radii [R_earth, R_sun] and fractional radius uncertainty.
    null_scale : (float, float), optional
        Bounds of the free factor on the null (species test), so that the fit
        minimises the same statistic the test then evaluates.

    Returns
    -------
    (numpy.ndarray, list of dict)
        The re-fitted null spectra and, per planet, the fitted values and
        ``at_bound`` (the parameters that ended on a bound).
    """
    out = np.array(null0, dtype=np.float64, copy=True)
    values = []
    for i in range(len(rp)):
        kw = dict(spec_kw)
        kw["planet_names"] = [kw["planet_names"][i]]
        _one_planet(kw, i)
        ok = np.isfinite(sigma[i]) & np.isfinite(data[i])
        ranges = parameter_ranges(alt_sc, radius_fraction[i])

        def model(theta, kw=kw, i=i):
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
            scale = p.get("reference_radius", 1.0)
            ds = transmission_spectrum(sc_i, np.atleast_1d(rp)[i:i + 1] * scale,
                                       np.atleast_1d(rs)[i:i + 1], exclude_species=exclude, **kw)
            return np.asarray(ds["transit_depth_ppm"][0], dtype=np.float64)

        def cost(theta, ok=ok, i=i, model=model):
            m = model(theta)
            chi = float(dt.nested_delta_chi2(np.where(ok, data[i], 0.0), np.where(ok, m, 0.0),
                                             np.where(ok, sigma[i], np.nan),
                                             null_scale=null_scale))
            if "reference_radius" in names:
                f = theta[names.index("reference_radius")]
                chi += ((f - 1.0) / radius_fraction[i]) ** 2
            return chi

        start = [ranges[k][0] for k in names]
        best = _bounded_minimum(cost, start, [ranges[k][1] for k in names],
                                [ranges[k][2] for k in names])
        out[i] = model(best)
        rec, at_bound = {}, []
        for k, v in zip(names, best):
            _, lo, hi = ranges[k]
            if v <= lo + 1e-3 * (hi - lo):
                at_bound.append(f"{k} (lower)")
            elif v >= hi - 1e-3 * (hi - lo):
                at_bound.append(f"{k} (upper)")
            if k == "temperature":
                rec["temperature_factor"] = float(np.exp(v))
            elif k == "cloud_top_pressure":
                rec["cloud_top_pressure_bar"] = float(10.0 ** v)
            else:
                rec["reference_radius_factor"] = float(v)
        rec["at_bound"] = at_bound
        values.append(rec)
    return out, values


def check_refit(refit, kind, arg, sc):
    """Validate the parameters to re-fit for a test (one-line errors)."""
    refit = tuple(refit or ())
    for k in refit:
        if k not in REFIT_PARAMETERS:
            raise InputError("refit", k, "any of " + ", ".join(REFIT_PARAMETERS))
    if refit and kind == "atmosphere":
        raise InputError("refit", ",".join(refit), "the species or against tests (the flat line "
                         "has only its level, which is always fitted)")
    is_file = kind == "against" and isinstance(arg, str) and arg.lower().endswith(
        (".csv", ".ecsv", ".fits", ".fit", ".txt", ".dat"))
    if refit and is_file:
        raise InputError("refit", ",".join(refit), "a scenario alternative (a spectrum file has "
                         "no parameters)")
    return refit


def fisher_errors_with_priors(fisher_data, lows, highs, gaussian_sigma=None):
    """1-sigma errors with priors over [low, high], and which are unconstrained.

    A uniform prior enters as a Gaussian of the uniform distribution's
    variance (high - low)^2 / 12; where ``gaussian_sigma`` is finite that
    Gaussian width is used instead (the reference radius, whose re-fit prior
    is Gaussian too).  Fisher information adds.  A parameter whose data-only
    error exceeds half its range, so that +/- 1 sigma spans more than the
    whole range, is unconstrained.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray of bool)
        Errors with the priors (..., n_par) and the unconstrained mask.
    """
    from .forecast import fisher_errors
    f = np.asarray(fisher_data, dtype=np.float64)
    span = np.asarray(highs, dtype=np.float64) - np.asarray(lows, dtype=np.float64)
    var = span ** 2 / 12.0
    if gaussian_sigma is not None:
        gs = np.asarray(gaussian_sigma, dtype=np.float64)
        var = np.where(np.isfinite(gs), gs ** 2, var)
    prior = np.diag(1.0 / var)
    with_prior = fisher_errors(f + prior)
    data_only = fisher_errors(f)
    return with_prior, ~(data_only <= 0.5 * span)


def scenario_fisher(sc, rp, rs, radius_fraction, spec_kw, transmission_spectrum, white, floor,
                    floor_averages, n_transits):
    """Fisher errors per planet on the scenario's main parameters at N transits.

    Parameters: log10 of each trace absorber's mixing ratio (the fill gas
    takes the remainder and mu is recomputed), the temperature factor,
    log10 of the cloud-top pressure [bar] where the scenario has a deck, and
    the reference-radius factor (which plays the part of the free level),
    each with a uniform prior over its range (module docstring).

    Returns
    -------
    dict
        name -> list per planet of the error (float) or :data:`UNCONSTRAINED`.
    """
    from ..atmosphere.composition import mean_molecular_weight
    from ..atmosphere.opacity import OPACITY_SPECIES
    from . import forecast as fc
    params = {}
    fill = sc.fill_gas
    for gas, x in sorted(sc.mixing_ratios.items()):
        # trace absorbers with bands of their own (He, N2, Ar only change mu and CIA)
        if 0 < x < 0.5 and gas != fill and gas in OPACITY_SPECIES:
            params[f"log10_{gas}"] = (float(np.log10(x)), 0.05) + LOG10_MIXING_RANGE
    params["temperature_factor"] = (1.0, 0.02) + TEMPERATURE_FACTOR_RANGE
    if sc.cloud_top_pressure_Pa is not None:
        params["log10_cloud_top_pressure_bar"] = ((float(np.log10(sc.cloud_top_pressure_Pa / 1e5)),
                                                   0.05) + _pressure_range_bar(sc))

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

    names = list(params) + ["radius_factor"]
    out = {k: [] for k in names}
    for i in range(len(rp)):
        kw = dict(spec_kw)
        kw["planet_names"] = [kw["planet_names"][i]]
        _one_planet(kw, i)
        f = float(radius_fraction[i])
        par = dict(params)
        par["radius_factor"] = (1.0, 1e-4, max(1.0 - 3 * f, 0.05), 1.0 + 3 * f)

        def model(p, kw=kw, i=i):
            ds = transmission_spectrum(scenario_for(p), np.atleast_1d(rp)[i:i + 1] * p["radius_factor"],
                                       np.atleast_1d(rs)[i:i + 1], **kw)
            return np.asarray(ds["transit_depth_ppm"][0], dtype=np.float64)
        res = fc.fisher_forecast(model, {k: v[:2] for k, v in par.items()}, white[i],
                                 int(n_transits[i]), floor=floor[i], floor_averages=floor_averages,
                                 fit_offset=False)
        gauss = [f if k == "radius_factor" else np.nan for k in names]
        err, free = fisher_errors_with_priors(res["fisher"][0], [par[k][2] for k in names],
                                              [par[k][3] for k in names], gauss)
        for j, k in enumerate(names):
            out[k].append(UNCONSTRAINED if free[j] else float(err[j]))
    return out
