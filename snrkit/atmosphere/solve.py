"""Solving a scenario's spectrum: the solver per scenario and the radius calibration.

The profile and opaque floor of a scenario, the analytic solver (or the
layered one where the scenario has vertical structure), run in chunks of
planet x bin elements so memory stays bounded, and the reference radius
calibrated so that the band-averaged model depth equals the observed depth.
"""

import numpy as np

from ..constants import K_B
from ..errors import InputError
from .layered import bin_average_depth, layered_radius
from .mixture import mixture_opacity

__all__ = ["DEEP_FLOOR_FACTOR", "LINE_SHAPE_DECADES", "RADIUS_CALIBRATIONS"]


#: Spacing [decades] of the pressure nodes at which the analytic solver takes the
#: line shapes (k ~ P^s is interpolated between them).
LINE_SHAPE_DECADES = 2.0


def _line_shape_pressures(source):
    """Pressure nodes [Pa] (every LINE_SHAPE_DECADES decades) of the line-shape tables, or None."""
    rng = getattr(source, "PRESSURE_RANGE_PA", None)
    if rng is None:
        return None
    lo, hi = np.log10(rng[0]), np.log10(rng[1])
    return 10.0 ** np.arange(np.floor(lo), np.ceil(hi) + 0.5, LINE_SHAPE_DECADES)


def _profile_for(sc, temperature_K, gravity):
    from .profiles import IsothermalProfile, GreyTwoStreamProfile, TabulatedProfile
    if sc.temperature_profile == "tabulated":
        npl = np.size(temperature_K)
        return TabulatedProfile(*sc.temperature_table, factor=np.full(npl, sc.temperature_factor),
                                reference_pressure_Pa=np.full(npl, sc.reference_pressure_Pa))
    if sc.temperature_profile == "grey-two-stream":
        return GreyTwoStreamProfile(temperature_K, gravity, sc.internal_temperature_K,
                                    sc.thermal_opacity_m2_kg, sc.visible_to_thermal_ratio)
    return IsothermalProfile(temperature_K)


def _only_cold_trap(sc):
    """True when the scenario's one departure from the analytic solver is a cold trap."""
    return (sc.cold_trap is not None and not sc.mixing_ratio_profiles
            and sc.temperature_profile != "tabulated")


def _analytic_for(mixing_ratios, tag, *, source, sc, edges, t_iso, n_g, exclude, memo,
                  pressure_broadening, args):
    """Analytic radii (planet, bin, g), the top flags and the g weights for one composition.

    The opacity comes from the process-wide temperature lattice
    (:mod:`snrkit.atmosphere.analytic_kernel`), so it does not depend on which
    planets are solved together.  ``memo`` keeps the state of the previous
    solve of the same planets (the calibration's first solve): the second
    solve of the same composition is its exact translation, and a solve with
    one species left out starts from its roots.
    """
    from .analytic_kernel import lattice_opacity, root_radius
    grid_p = _line_shape_pressures(source) if pressure_broadening else None
    op = lattice_opacity(source, mixing_ratios, (sc.haze_enhancement, sc.haze_slope), edges, n_g,
                         exclude, grid_p, t_iso, memo=None if memo is None else memo.setdefault(
                             "lattice", {}))
    x_nodes = (np.array([np.log(_reference_pressure(source))]) if grid_p is None
               else np.log(grid_p))
    r0 = np.asarray(args[2], dtype=np.float64)
    key = ("state", tag, memo.get("slice", 0) if memo is not None else 0)
    prev = None if memo is None else memo.get(key)
    if prev is not None and prev["r0"].shape != r0.shape:
        prev = None
    start = None
    if prev is not None and exclude is not None:
        # the same planets without one species: start from the full model's roots
        du = (1.0 / r0 - 1.0 / prev["r0"])[:, None, None]
        start = 1.0 / (prev["u"].reshape(du.shape[0], -1, op["lnk"].shape[-1]) + du)
    radius, sat, state = root_radius(op["lnk"], x_nodes, op["ln_continuum"], op["ln_cia"], *args,
                                     radius_start_m=start,
                                     previous=prev if exclude is None else None,
                                     return_state=True)
    if memo is not None and exclude is None:
        memo[key] = state
    return radius, sat, op["g_weights"]


def _reference_pressure(source):
    from .opacity import REFERENCE_PRESSURE_PA
    return getattr(source, "REFERENCE_PRESSURE_PA", REFERENCE_PRESSURE_PA)


def _analytic_cold_trap(**kw):
    """Analytic radii for a gas cold-trapped above a tropopause.

    The chord at impact parameter b above the tropopause radius r_t sees only
    the stratospheric composition; a chord below it is dominated by the gas
    near its lowest point, i.e. the troposphere.  With r_s and r_l the roots of
    the isothermal formula for the stratospheric and the tropospheric
    compositions (r_s <= r_l), the radius is therefore r_s if r_s lies above
    the tropopause, r_l if r_l lies below it, and r_t where the opacity jump
    at the tropopause itself makes the atmosphere turn opaque: median(r_s,
    r_t, r_l) (derived here; checked against the layered solver).
    """
    from ..constants import M_U
    sc = kw["sc"]
    trap = sc.cold_trap
    strat = dict(sc.mixing_ratios)
    strat[trap["gas"]] = min(float(trap["mixing_ratio_above"]), float(strat[trap["gas"]]))
    r_l, sat_l, gw = _analytic_for(sc.mixing_ratios, "troposphere", **kw)
    r_s, sat_s, _ = _analytic_for(strat, "stratosphere", **kw)
    t_iso, mu, r0, p0, g0 = kw["args"][:5]
    h0 = K_B * t_iso / (mu * M_U * g0)
    with np.errstate(divide="ignore", invalid="ignore"):
        u_t = (1.0 + np.log(trap["tropopause_pressure_Pa"] / p0) * h0 / r0) / r0
    r_t = np.where(u_t > 0, 1.0 / u_t, np.inf)[:, None, None]
    radius = np.clip(r_t, r_s, r_l)
    return radius, np.where(radius >= r_l, sat_l, sat_s), gw


def _solve(sc, source, edges, rp, rs, g0, teq, a_m, solver, n_layers, n_g, p_top, refraction,
           exclude=None, pressure_broadening=True, memo=None):
    """Effective radius per g-point (n_planet, n_wave, n_g), g weights, extras.

    ``memo`` (a dict) keeps the analytic solver's mixture opacity between calls
    for the same planets (it depends on the temperatures, not on the radius),
    so the calibration's second solve does not rebuild it.
    """
    from .profiles import pressure_levels, hydrostatic_radius, scale_height
    from .refraction import mixture_refractivity, refraction_floor_pressure
    npl = rp.shape[0]
    T = sc.temperature(teq) * np.ones(npl)
    mu = np.full(npl, sc.mean_molecular_weight)
    p0 = np.full(npl, sc.reference_pressure_Pa)
    profile = _profile_for(sc, T, g0)
    floor = np.full(npl, sc.surface_pressure_Pa if sc.surface_pressure_Pa is not None
                    else DEEP_FLOOR_FACTOR * sc.reference_pressure_Pa)
    if sc.cloud_top_pressure_Pa is not None:
        floor = np.minimum(floor, sc.cloud_top_pressure_Pa)
    p_refr = np.full(npl, np.nan)
    if refraction:
        p_refr = refraction_floor_pressure(mixture_refractivity(sc.mixing_ratios), profile, mu,
                                           rp, g0, rs, a_m)
        floor = np.minimum(floor, p_refr)
    if np.any(floor <= p_top):
        raise InputError("top_pressure", f"{p_top:.3g} Pa",
                         f"below the opaque floor ({float(np.min(floor)):.3g} Pa: surface, cloud "
                         "top or refraction limit)", detail=f"scenario {sc.name!r}")
    extras = {"temperature": profile.reference_temperature(), "mu": mu,
              "floor": floor, "refraction_floor": p_refr}
    nw = edges.size - 1
    if sc.featureless:
        _, gw = source.g_quadrature(n_g) if source is not None else (None, np.ones(1))
        return np.broadcast_to(rp[:, None, None], (npl, nw, np.size(gw))).copy(), \
            np.asarray(gw, dtype=np.float64), extras
    # the analytic solver is isothermal and well-mixed (a cold trap through the two
    # compositions, _analytic_cold_trap); other scenarios take the layered one
    analytic_ok = sc.well_mixed or _only_cold_trap(sc)
    extras["layered_fallback"] = np.full(npl, solver == "analytic" and not analytic_ok)
    if solver == "analytic" and analytic_ok:
        t_iso = profile.reference_temperature()
        kw = dict(source=source, sc=sc, edges=edges, t_iso=t_iso, n_g=n_g, exclude=exclude,
                  memo=memo, pressure_broadening=pressure_broadening,
                  args=(t_iso, mu, rp, p0, g0, floor, np.full(npl, p_top)))
        if sc.well_mixed:
            radius, sat, gw = _analytic_for(sc.mixing_ratios, "mixed", **kw)
        else:
            radius, sat, gw = _analytic_cold_trap(**kw)
        extras["top_limited"] = sat.any(axis=(1, 2))
        return radius, gw, extras
    levels = pressure_levels(floor, np.full(npl, p_top), n_layers)
    mix, mu_lv = (sc.mixing_ratios, mu) if sc.well_mixed else sc.level_mixing_ratios(levels)
    r = hydrostatic_radius(levels, profile, mu_lv, rp, p0, g0)
    bad = ~np.all(np.isfinite(r), axis=1)
    if bad.any():
        import warnings
        from ..errors import SnrkitWarning
        warnings.warn(f"scenario {sc.name!r}: the hydrostatic atmosphere is unbound below the top "
                      f"pressure for {int(bad.sum())} planet(s); their spectra are NaN (raise "
                      "top_pressure)", SnrkitWarning, stacklevel=3)
        r = np.where(bad[:, None], rp[:, None] * (1.0 + np.linspace(0, 1, r.shape[1])), r)
    temp = profile.temperature(levels)
    n = levels / (K_B * temp)
    op = mixture_opacity(source, mix, edges, temp, n_g, sc.haze_enhancement,
                         sc.haze_slope, exclude,
                         pressure_Pa=levels if pressure_broadening else None)
    alpha = n[:, :, None, None] * (op["line"] + op["continuum"][..., None]) \
        + (op["cia"] * (n * n)[:, :, None])[..., None]
    radius = layered_radius(alpha, r)
    radius[bad] = np.nan
    # opacity still significant at the top: chord depth of the top level > 1e-2
    h_top = scale_height(temp[:, -1], mu_lv[:, -1] if np.ndim(mu_lv) == 2 else mu,
                         g0 * (rp / r[:, -1]) ** 2)
    tau_top = alpha[:, -1] * np.sqrt(2.0 * np.pi * r[:, -1] * h_top)[:, None, None]
    extras["top_limited"] = np.any(tau_top > 1e-2, axis=(1, 2))
    return radius, op["g_weights"], extras


#: Work-array budget (elements) per planet chunk; planets are processed in chunks
#: so that catalogues of 1e4-1e5 planets fit in memory.
_CHUNK_ELEMENTS = 4_000_000


def _solve_depth(sc, *, source, edges, rp, rs, g0, teq, a_m, solver, n_layers, n_g, p_top,
                 refraction, exclude=None, pressure_broadening=True, memo=None):
    """Bin-average depth (n_planet, n_wave) and extras, solving planet chunks in turn."""
    npl = rp.shape[0]
    per_planet = (edges.size - 1) * max(int(n_g), 1) * (
        (n_layers or 150) + 1 if solver == "layers" or not (sc.well_mixed or _only_cold_trap(sc))
        else 16)
    step = max(1, int(_CHUNK_ELEMENTS // per_planet))
    depths, extras = [], []
    for i in range(0, npl, step):
        sl = slice(i, min(npl, i + step))
        if memo is not None:
            memo["slice"] = i
        radius, gw, ex = _solve(sc, source, edges, rp[sl], rs[sl], g0[sl], teq[sl], a_m[sl],
                                solver, n_layers, n_g, p_top, refraction, exclude,
                                pressure_broadening, memo)
        depths.append(bin_average_depth(radius, rs[sl], gw))
        extras.append(ex)
    ex = {k: np.concatenate([e[k] for e in extras]) for k in extras[0]}
    return np.concatenate(depths, axis=0), ex


#: Ways of placing the model against the observed radius (see transmission_spectrum).
RADIUS_CALIBRATIONS = ("observed-depth", "reference-pressure")


def _calibration_weights(weights, edges, npl, band=None):
    """Per-planet bin weights of the band average (default: width in ln wavelength)."""
    nw = edges.size - 1
    if band is not None:
        try:
            lo, hi = (float(b) * 1e-6 for b in band)
        except (TypeError, ValueError):
            raise InputError("calibration_band", band, "two wavelengths MIN MAX in um") from None
        if not (np.isfinite(lo) and np.isfinite(hi) and 0 < lo < hi) or hi <= edges[0] \
                or lo >= edges[-1]:
            raise InputError("calibration_band", band, f"MIN < MAX [um] overlapping the bins "
                             f"{edges[0] * 1e6:.4g}-{edges[-1] * 1e6:.4g} um")
        a, b = np.maximum(edges[:-1], lo), np.minimum(edges[1:], hi)
        inside = np.where(b > a, np.log(np.maximum(b, a) / a) / np.log(edges[1:] / edges[:-1]), 0.0)
    else:
        inside = np.ones(nw)
    if weights is None:
        w = np.log(edges[1:] / edges[:-1]) * inside
    else:
        w = np.asarray(weights, dtype=np.float64)
        if w.shape not in ((nw,), (npl, nw)) or np.any(~np.isfinite(w)) or np.any(w < 0) \
                or np.any(np.sum(np.broadcast_to(w, (npl, nw)), axis=-1) <= 0):
            raise InputError("calibration_weights", f"shape {w.shape}",
                             f"finite weights >= 0, shape ({nw},) or ({npl}, {nw}), not all zero")
        w = w * inside
    return np.broadcast_to(w, (npl, nw))


def _band_radius(depth, rs, weights):
    """Radius whose area is the weighted band average of the depth (NaN bins ignored)."""
    ok = np.isfinite(depth)
    w = np.where(ok, weights, 0.0)
    mean = np.sum(np.where(ok, depth, 0.0) * w, axis=-1) / np.maximum(np.sum(w, axis=-1), 1e-300)
    return rs * np.sqrt(mean)


def _exact_shift(depth, rs, rp, weights):
    """delta with sum w (R_i + delta)^2 / sum w = Rp^2, R_i = Rs sqrt(depth_i)."""
    ok = np.isfinite(depth)
    w = np.where(ok, weights, 0.0)
    w = w / np.maximum(np.sum(w, axis=-1, keepdims=True), 1e-300)
    r = rs[:, None] * np.sqrt(np.where(ok, depth, 0.0))
    m1, m2 = np.sum(w * r, axis=-1), np.sum(w * r * r, axis=-1)
    return -m1 + np.sqrt(np.maximum(m1 * m1 - m2 + rp * rp, 0.0))


def _calibrated(sc, rp, g0, weights, exclude, kw):
    """Reference radius R0 that makes the band-averaged depth equal (Rp/Rs)^2.

    Two solves: the first at R0 = Rp gives the offset of the band-averaged
    effective radius; shifting R0 by it moves every radius by the same
    amount to first order in H/R, so the second solve is within
    O(offset H/R) of the target; that remainder is removed exactly by a
    uniform shift of the effective radii (itself second order, well below
    1e-3 H).  Gravity
    follows R0 as g0 (Rp/R0)^2.  With ``exclude`` the calibration is that of
    the full model and the species is removed afterwards.
    """
    rs = kw["rs"]
    d1, _ = _solve_depth(sc, rp=rp, g0=g0, **kw)
    r0 = rp - (_band_radius(d1, rs, weights) - rp)
    r0 = np.where(np.isfinite(r0) & (r0 > 0.5 * rp), r0, rp)
    g0c = g0 * (rp / r0) ** 2
    d2, ex = _solve_depth(sc, rp=r0, g0=g0c, **kw)
    delta = _exact_shift(d2, rs, rp, weights)
    if exclude is not None:
        d2, ex = _solve_depth(sc, rp=r0, g0=g0c, exclude=exclude, **kw)
    return r0, g0c, _shift_radius(d2, rs, delta), ex, delta


def _shift_radius(depth, rs, delta):
    """Depths whose effective radii are moved by ``delta`` [m] (per planet)."""
    r_eff = rs[:, None] * np.sqrt(depth)
    return ((r_eff + np.asarray(delta)[:, None]) / rs[:, None]) ** 2


#: Without a surface, the opaque floor lies this factor below the reference pressure.
DEEP_FLOOR_FACTOR = 10.0
