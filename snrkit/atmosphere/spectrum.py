"""Transmission spectra: the public :func:`transmission_spectrum`.

The solvers take the same opacity arrays, in SI, with a leading planet axis
and the sub-bin structure carried as k-distribution points ``g``:

``line_sigma``
    line cross-section of the gas mixture per molecule [m2], the
    k-distribution of each wavelength bin on its g-points, ascending;
``continuum_sigma``
    cross-section per molecule that is smooth across a bin [m2] (Rayleigh
    scattering and haze), so the extinction it adds is ``n * sigma``;
``cia_coefficient``
    collision-induced absorption of the mixture [m5], so the extinction it adds
    is ``c * n**2`` (``c = sum_pairs k_pair x_1 x_2``).

They are the analytic reference solver
(:mod:`snrkit.atmosphere.analytic`, its fast kernel in
:mod:`snrkit.atmosphere.analytic_kernel`) and the layered chord solver
(:mod:`snrkit.atmosphere.layered`).  :mod:`snrkit.atmosphere.mixture` builds
the opacity arrays, :mod:`snrkit.atmosphere.solve` runs a solver per scenario
and calibrates the radius to the observed depth.

Transit depths are ``(R/R_s)**2`` computed per g-point and averaged over the
g-weights (the bin-average depth, not the depth of the bin-mean opacity).
"""


import numpy as np

from ..errors import InputError
from .mixture import _CIA_SPECIES, _default_opacity_source
from .solve import (RADIUS_CALIBRATIONS, _calibrated, _calibration_weights, _shift_radius,
                    _solve_depth)
from .spectrum_inputs import _checked_scenarios, _grids, _planet_arrays
# public names whose code lives in the modules above
from .spectrum_inputs import DEFAULT_TOP_PRESSURE_PA  # noqa: F401
from .mixture import wavelength_bin_edges  # noqa: F401

__all__ = ["transmission_spectrum", "wavelength_bin_edges", "SOLVERS", "DEFAULT_TOP_PRESSURE_PA"]

# ---------------------------------------------------------------------------
# Public layer
# ---------------------------------------------------------------------------

SOLVERS = ("analytic", "layers")


# size: the docstring documents every parameter of the public spectrum function; the body
# is the per-scenario loop, its checks and assembly in helpers
def transmission_spectrum(scenario, planet_radius, stellar_radius, *, planet_mass=None,
                          gravity=None, equilibrium_temperature=None, semi_major_axis=None,
                          wavelength_edges=None, resolution=100, solver="analytic",
                          n_layers=None, n_g=8, top_pressure=None, refraction=False,
                          pressure_broadening=True, contributions=False, planet_names=None,
                          opacity_source=None, exclude_species=None,
                          radius_calibration="observed-depth", calibration_weights=None,
                          calibration_band=None, as_arrays=False):
    """Transmission spectrum of one or more atmosphere scenarios.

    Parameters
    ----------
    scenario : str, dict, Scenario or list of them
        Preset name, scenario file, table of scenario keys (see
        :mod:`snrkit.atmosphere.scenarios`), or a list (adds a ``scenario``
        dimension).
    planet_radius : Quantity or float, shape (n_planet,)
        The planet's observed (white-light) transit radius (bare numbers:
        Earth radii); see ``radius_calibration``.
    stellar_radius : Quantity or float
        Bare numbers: solar radii.
    planet_mass : Quantity or float, optional
        Bare numbers: Earth masses.  Give this or ``gravity``.
    gravity : Quantity or float, optional
        Gravity at the reference radius (bare numbers: m s-2).
    equilibrium_temperature : Quantity or float, optional
        Bare numbers: K.  Needed unless every scenario fixes its temperature.
    semi_major_axis : Quantity or float, optional
        Bare numbers: AU.  Needed for ``refraction=True``.
    wavelength_edges : Quantity or array_like, optional
        Bin edges (bare numbers: um).  Default: :func:`wavelength_bin_edges`
        at ``resolution`` over 0.3-30 um.
    resolution : float
        Resolving power of the default grid.
    solver : {"analytic", "layers"}
        Analytic isothermal formula or chord integration through layers.  The
        analytic solver is isothermal: with a ``grey-two-stream`` scenario it
        uses the scenario temperature (factor x T_eq) throughout.
    n_layers : int, optional
        Layers of the layered solver (default
        :data:`snrkit.atmosphere.profiles.DEFAULT_N_LAYERS`).
    n_g : int
        k-distribution points per bin.
    top_pressure : Quantity or float, optional
        Top of the model atmosphere (bare numbers: Pa; default 1e-6 Pa).
    refraction : bool
        Limit the deepest pressure probed by refraction (needs
        ``semi_major_axis``; see
        :func:`snrkit.atmosphere.profiles.refraction_floor_pressure`).
    pressure_broadening : bool
        Layered solver: line shapes at each level's pressure (default), or,
        if False, at the opacity tables' reference pressure everywhere (as the
        analytic solver, which has no pressure axis).
    exclude_species : str, optional
        Leave this species' opacity out (mean molecular weight unchanged), as
        in the ``depth_without_species_ppm`` contributions.
    contributions : bool or sequence of str
        Also compute the spectrum with each absorbing species removed
        (``depth_without_species_ppm``), on the same reference radius; a
        sequence limits this to the species named.
    radius_calibration : {"observed-depth", "reference-pressure"}
        ``"observed-depth"`` (default): the radius at the scenario's
        reference pressure is solved so that the model's band-averaged depth
        over the bins equals the observed depth (planet_radius /
        stellar_radius)^2 -- the measured radius is a white-light quantity,
        not the radius of a deep pressure level.  ``"reference-pressure"``:
        the planet radius is placed at the reference pressure (the older
        convention; features then sit many scale heights above the observed
        depth).  Removing a species keeps the calibrated radius of the full
        model (the same planet without that opacity).
    calibration_weights : array_like, shape (n_wave,) or (n_planet, n_wave), optional
        Weights of the bins in the band average (for example the detected
        photons per bin, so that the average is the instrument's white-light
        depth).  Default: each bin's width in ln(wavelength).
    planet_names : list of str, optional
        Labels of the planet axis.
    opacity_source : object, optional
        Replacement for snrkit's opacity tables (an object with the functions
        of :mod:`snrkit.atmosphere.opacity` and
        :mod:`snrkit.atmosphere.continuum`); for tests and experts.
    as_arrays : bool
        Return the same variables as a :class:`snrkit.labelled.Labelled`
        (numpy arrays; xarray is not imported), as the engine does.

    Returns
    -------
    xarray.Dataset or snrkit.labelled.Labelled
        Dims ``(planet, wavelength)`` (and ``scenario`` for a list):
        ``transit_depth_ppm``, ``effective_height_km`` (above the observed
        radius), per planet ``scale_height_km``,
        ``annulus_ppm_per_scale_height`` (``2 H R_p / R_s**2``),
        ``observed_depth_ppm`` ((R_p/R_s)^2, the line the spectrum is
        calibrated to), ``reference_radius_km`` (radius at the reference
        pressure) and ``reference_depth_ppm``, ``temperature_K``,
        ``mean_molecular_weight``, ``floor_pressure_bar``; coordinates
        ``wavelength`` (bin centres, um), ``wavelength_lower`` and
        ``wavelength_upper`` (um).  Units are in each variable's attrs.
    """
    from .profiles import scale_height

    many, scenarios, names = _checked_scenarios(scenario)
    if solver not in SOLVERS:
        raise InputError("solver", solver, " or ".join(SOLVERS))
    rp, rs, g0, teq, a_m = _planet_arrays(planet_radius, stellar_radius, planet_mass, gravity,
                                          equilibrium_temperature, semi_major_axis, refraction)
    npl = rp.shape[0]
    edges, n_layers, p_top = _grids(wavelength_edges, resolution, n_g, n_layers, top_pressure)
    if planet_names is None:
        planet_names = [f"planet {i}" for i in range(npl)] if npl > 1 else ["planet"]
    planet_names = [str(n) for n in planet_names]
    if len(planet_names) != npl:
        raise InputError("planet_names", planet_names, f"{npl} names")
    needs_opacity = any(not s.featureless for s in scenarios)
    source = opacity_source if opacity_source is not None else (
        _default_opacity_source() if needs_opacity else None)

    if radius_calibration not in RADIUS_CALIBRATIONS:
        raise InputError("radius_calibration", radius_calibration, " or ".join(RADIUS_CALIBRATIONS))
    weights = _calibration_weights(calibration_weights, edges, npl, calibration_band)
    solve_kw = dict(source=source, edges=edges, rs=rs, teq=teq, a_m=a_m, solver=solver,
                    n_layers=n_layers, n_g=n_g, p_top=p_top, refraction=refraction,
                    pressure_broadening=pressure_broadening)

    datasets, contrib = [], []
    for sc in scenarios:
        solve_kw["memo"] = {}             # opacity shared by this scenario's solves
        if radius_calibration == "observed-depth" and not sc.featureless:
            r0, g0c, depth, ex, delta = _calibrated(sc, rp, g0, weights, exclude_species,
                                                    solve_kw)
        else:
            r0, g0c, delta = rp, g0, np.zeros(npl)
            depth, ex = _solve_depth(sc, rp=rp, g0=g0, exclude=exclude_species, **solve_kw)
        _warn_top(sc, ex, p_top)
        h = scale_height(ex["temperature"], ex["mu"], g0)
        _warn_extended(sc, h, rp, planet_names)
        ds = _dataset(sc, depth, rp, rs, h, ex, edges, planet_names, r0 + delta)
        if contributions:
            contrib.append(_contribution(sc, source, contributions, r0, g0c, rs, delta, npl,
                                         edges, solve_kw))
        datasets.append(ds)
    attrs = _attributes(solver, n_g, p_top, refraction, radius_calibration, calibration_band,
                        n_layers)
    out = _stacked(datasets, contrib, scenarios, names, many, attrs)
    return out if as_arrays else out.to_dataset()


#: Attributes of the depths with one species removed.
_CONTRIBUTION_ATTRS = {"units": "ppm", "long_name": "transit depth with this species' opacity "
                       "removed (mean molecular weight unchanged)"}


def _contribution(sc, source, contributions, r0, g0c, rs, delta, npl, edges, solve_kw):
    """Depths [ppm] with each (wanted) absorber's opacity removed: (planet, species, wavelength).

    Returns the array and the species names.
    """
    wanted = None if contributions is True else set(contributions)
    absorbers = ([] if sc.featureless else
                 [k for k in sc.mixing_ratios if _absorbs(source, k)
                  and (wanted is None or k in wanted)])
    rows = []
    for sp in absorbers:
        d_x, _ = _solve_depth(sc, rp=r0, g0=g0c, exclude=sp, **solve_kw)
        rows.append(_shift_radius(d_x, rs, delta) * 1e6)
    data = (np.stack(rows, axis=1) if rows else np.zeros((npl, 0, edges.size - 1)))
    return data, absorbers


def _attributes(solver, n_g, p_top, refraction, radius_calibration, calibration_band, n_layers):
    """The settings and the method, as Dataset attributes."""
    attrs = {"solver": solver, "n_g": int(n_g), "top_pressure_Pa": p_top,
             "refraction_limit": int(bool(refraction)), "radius_calibration": radius_calibration,
             "calibration_band_um": ("bins" if calibration_band is None else
                                     f"{float(calibration_band[0]):g}-{float(calibration_band[1]):g}"),
             "method": ("analytic: Heng & Kitzmann 2017 (MNRAS 470, 2972) at its own reference "
                        "level; layers: chord integration through spherical shells, "
                        "A = pi r_floor^2 + 2 pi int (1 - exp(-tau)) b db; depths averaged "
                        "over k-distribution g-points")}
    if solver == "layers":
        attrs["n_layers"] = int(n_layers)
    return attrs


def _stacked(datasets, contrib, scenarios, names, many, attrs):
    """One scenario's arrays, or several stacked on a ``scenario`` axis, contributions included.

    Several scenarios share the planets and bins, so every variable is
    stacked on a leading ``scenario`` axis; the species of the contributions
    are the union of the scenarios' (NaN where a scenario lacks one).
    """
    from ..labelled import Labelled
    first = datasets[0]
    coords = {k: (first.dims(k), first[k], first.attrs_of(k)) for k in first.coords}
    if not many:
        out = datasets[0]
        out.set_coord("scenario", ((), scenarios[0].name))
    else:
        coords["scenario"] = ("scenario", np.asarray(names))
        keys = list(dict.fromkeys(k for d in datasets for k in d.variables))
        out = Labelled(coords=coords)
        for k in keys:              # a variable some scenarios lack is NaN for them
            have = next(d for d in datasets if k in d)
            fill = np.full(np.shape(have[k]), np.nan)
            out[k] = (("scenario",) + have.dims(k),
                      np.stack([d[k] if k in d else fill for d in datasets]), have.attrs_of(k))
        out["scenario_description"] = ("scenario", [s.description for s in scenarios])
    if contrib:
        # the union of the scenarios' species, sorted (one order for any set of scenarios)
        species = (sorted({name for _, names_i in contrib for name in names_i}) if many
                   else list(contrib[0][1]))
        rows = []
        for data, names_i in contrib:
            full = np.full((data.shape[0], len(species), data.shape[2]), np.nan)
            full[:, [species.index(x) for x in names_i]] = data
            rows.append(full)
        out.set_coord("species", ("species", species))
        dims = ("planet", "species", "wavelength")
        if many:
            out["depth_without_species_ppm"] = (("scenario",) + dims, np.stack(rows),
                                                _CONTRIBUTION_ATTRS)
        else:
            out["depth_without_species_ppm"] = (dims, rows[0], _CONTRIBUTION_ATTRS)
    out.attrs.update(attrs)
    return out


def _absorbs(source, species):
    return (species in source.OPACITY_SPECIES or species in source.RAYLEIGH_SPECIES
            or any(species in _CIA_SPECIES.get(p, ()) for p in source.CIA_PAIRS))


#: Above this scale height, as a fraction of the planet radius, a hydrostatic
#: spectrum is only indicative (R/H < 10; common practice, no source).
EXTENDED_SCALE_HEIGHT_RATIO = 0.1


def _warn_extended(sc, h, rp, names):
    """Note planets on which the scenario is too extended for a hydrostatic spectrum."""
    ratio = np.asarray(h) / np.asarray(rp)
    bad = (ratio > EXTENDED_SCALE_HEIGHT_RATIO) & ~sc.featureless
    if np.any(bad):
        import warnings
        from ..errors import ExtremeValueWarning
        j = int(np.flatnonzero(bad)[0])
        warnings.warn(f"scenario {sc.name!r} on {names[j]}: the scale height is "
                      f"{ratio[j]:.2f} of the planet radius (> {EXTENDED_SCALE_HEIGHT_RATIO:g}); "
                      "the atmosphere is not a bound hydrostatic one and its spectrum is only "
                      "indicative", ExtremeValueWarning, stacklevel=3)


def _warn_top(sc, ex, p_top):
    lim = ex.get("top_limited")
    if lim is not None and np.any(lim):
        import warnings
        from ..errors import SnrkitWarning
        warnings.warn(f"scenario {sc.name!r}: the atmosphere is still optically thick near the "
                      f"top pressure {p_top:.3g} Pa for {int(np.sum(lim))} planet(s); the "
                      "strongest bins are capped there (lower top_pressure)",
                      SnrkitWarning, stacklevel=3)


def _dataset(sc, depth, rp, rs, h, ex, edges, planet_names, r0):
    """One scenario's spectrum as labelled arrays (:meth:`Labelled.to_dataset` for xarray)."""
    from ..labelled import Labelled
    centres = np.sqrt(edges[1:] * edges[:-1]) * 1e6
    r_eff = rs[:, None] * np.sqrt(depth)
    ds = Labelled(
        {
            "transit_depth_ppm": (("planet", "wavelength"), depth * 1e6,
                                  {"units": "ppm", "long_name": "transit depth (Rp,eff/Rs)^2, "
                                   "bin average over the k-distribution"}),
            "effective_height_km": (("planet", "wavelength"), (r_eff - rp[:, None]) / 1e3,
                                    {"units": "km", "long_name": "effective radius minus the "
                                     "observed (white-light) planet radius"}),
            "scale_height_km": ("planet", h / 1e3, {"units": "km", "long_name":
                                "pressure scale height k T / (mu m_u g) at the reference radius"}),
            "annulus_ppm_per_scale_height": ("planet", 2.0 * h * rp / rs**2 * 1e6,
                                             {"units": "ppm", "long_name": "2 H Rp / Rs^2"}),
            "observed_depth_ppm": ("planet", (rp / rs) ** 2 * 1e6,
                                   {"units": "ppm", "long_name": "observed transit depth "
                                    "(Rp/Rs)^2"}),
            "reference_radius_km": ("planet", r0 / 1e3, {"units": "km", "long_name":
                                    "radius at the scenario's reference pressure"}),
            "reference_depth_ppm": ("planet", (r0 / rs) ** 2 * 1e6,
                                    {"units": "ppm", "long_name": "(R0/Rs)^2 with R0 the radius "
                                     "at the reference pressure"}),
            "temperature_K": ("planet", ex["temperature"], {"units": "K"}),
            "mean_molecular_weight": ("planet", ex["mu"], {"units": "g/mol"}),
            "floor_pressure_bar": ("planet", ex["floor"] / 1e5, {
                "units": "bar", "long_name": "opaque floor: surface, cloud top, deep "
                "atmosphere or refraction limit"}),
        },
        coords={
            "planet": planet_names,
            "wavelength": ("wavelength", centres, {"units": "um", "long_name":
                           "bin centre (geometric mean of the edges)"}),
            "wavelength_lower": ("wavelength", edges[:-1] * 1e6, {"units": "um"}),
            "wavelength_upper": ("wavelength", edges[1:] * 1e6, {"units": "um"}),
        },
        attrs={"scenario": sc.name, "scenario_description": sc.description},
    )
    if np.any(ex.get("layered_fallback", False)):
        ds.attrs["solver_used"] = ("layers (the scenario has a vertical composition or a tabulated "
                                   "temperature profile, which the isothermal, well-mixed "
                                   "analytic solver cannot represent)")
    if np.any(np.isfinite(ex["refraction_floor"])):
        ds["refraction_floor_bar"] = ("planet", ex["refraction_floor"] / 1e5, {"units": "bar"})
    return ds
