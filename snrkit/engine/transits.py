"""Transits needed: the whole chain for a system, a scenario, a mode and a test.

:func:`transits_for_system` ties the layers together: the photon-noise
precision of an instrument mode (:mod:`snrkit.photons`) sets the bins (by
default :data:`snrkit.photons.precision.DEFAULT_RESOLUTION`, the same for
every command) and the per-transit noise; the transmission spectrum of the
scenario (:mod:`snrkit.atmosphere.spectrum`) is computed on the same bins;
the test picks its nested models (:mod:`snrkit.stats.hypotheses`: atmosphere
against a flat line, one species, scenario A against B, each one degree of
freedom; or, on request only, the goodness of fit of a flat line); the
readout of a bright star is chosen for that test; the stacker
(:mod:`snrkit.stats.detect`) finds the transits needed, the detection
probabilities and the limiting term; and :mod:`snrkit.stats.forecast` and
:mod:`snrkit.stats.refit` add the programme hours, the spread from planet mass and
radius uncertainties, bounded re-fits and Fisher errors with priors.

Everything runs on whole arrays over the planet axis; the result holds one
summary record per planet plus an xarray Dataset of curves and spectra.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from ..errors import InputError
from ..stats import detect as dt
from ..stats.refit import REFIT_PARAMETERS
from ..stats import hypotheses as hy
from .transit_records import (HYDROGEN_RICH_MU, JEANS_PARAMETER_MIN,  # noqa: F401
                              MAX_SCALE_HEIGHT_RATIO, TEST_STATISTICS)
from .engine import (observe, scenario_context, parse_test, contamination_templates,  # noqa: F401
                     DEFAULT_MAX_TRANSITS, MAX_TRANSITS_LIMIT, _hours)
from .observe import _noted

__all__ = ["parse_test", "transits_for_system", "contrast_for_system", "contamination_templates",
           "observe", "TESTS", "DEFAULT_MAX_TRANSITS", "REFIT_PARAMETERS",
           "MAX_SCALE_HEIGHT_RATIO", "JEANS_PARAMETER_MIN", "HYDROGEN_RICH_MU", "STATUSES",
           "TEST_STATISTICS"]

if TYPE_CHECKING:   # annotations only: not imported at run time
    from collections.abc import Sequence
    from typing import Any
    from ..bodies.system import System
    from ..units import PathLike, QuantityLike


#: Test kinds: "atmosphere" (vs a flat line), "species" (one molecule removed),
#: "against" (another scenario), and the goodness of fit of a flat line.
TESTS = ("atmosphere", "species", "against", hy.GOODNESS_OF_FIT)
#: Per-planet statuses.
STATUSES = ("ok", "not_reachable", "no_signal", "saturated", "unbound_atmosphere",
            "escaping_atmosphere", "stellar_contamination")


# size: the docstring documents every option of the public entry point; the body is 20 lines
def transits_for_system(system: System, mode: str | PathLike, scenario: str | PathLike | None = None, *,
                        dataset: bool = True, **options: Any) -> dict[str, Any]:
    """How many transits each planet needs to pass a test, and what they cost.

    Parameters
    ----------
    system : snrkit.System
    mode : str or path
        Instrument mode preset or file (see ``snrkit presets``).
    scenario : str, dict or Scenario, optional
        Atmosphere scenario assumed true; default each planet's own
        ``[planet.atmosphere]`` table (planets are grouped by scenario).
    dataset : bool
        Also return the spectra, noise and significance curves as an xarray
        Dataset (``dataset``; default).  Without it xarray is not imported
        and ``dataset`` is None.
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
        bin; default: chosen per target for the test (:mod:`snrkit.stats.hypotheses`).
    overhead_hours : float, optional
        Per-visit overhead (default :data:`snrkit.stats.forecast.DEFAULT_OVERHEAD_HOURS`).
    contamination : dict, optional
        ``spot_fraction``, ``spot_temperature_contrast`` [K],
        ``facula_fraction``, ``facula_temperature_contrast`` [K] and
        ``fitted`` (bool, default True); see :mod:`snrkit.stats.hypotheses`.
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
        before the test (:mod:`snrkit.stats.refit`), so a feature is only credited
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
        significance curves (None without ``dataset``); ``test``: (kind,
        argument); ``notes``.
    """
    import json
    names = [str(x) for x in system.names]
    options["dataset"] = dataset
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
    ds = None
    if dataset:
        import xarray as xr
        ds = xr.concat([r["dataset"] for _, r in parts], dim="planet",
                       combine_attrs="drop_conflicts").isel(planet=order)
    notes = list(dict.fromkeys(n for _, r in parts for n in r["notes"]))
    return {"planets": planets, "dataset": ds, "test": parts[0][1]["test"], "notes": notes}


def _one_scenario(system, mode, scenario, *, resolution=None, bin_edges=None, floor_ppm=None,
                  floor_averages_down=None, baseline=None, solver="analytic", readout=None,
                  dataset=True, **options):
    """:func:`transits_for_system` for planets sharing one scenario: the engine, then records."""
    from .transit_records import planet_records, result_dataset
    obs = observe(system, mode, resolution, bin_edges, floor_ppm, floor_averages_down,
                  baseline, solver, readout)
    ctx = scenario_context(system, obs, mode, scenario, **options)
    planets, notes = planet_records(ctx)
    ds = result_dataset(ctx, planets) if dataset else None
    return {"planets": planets, "dataset": ds, "test": (ctx["kind"], ctx["arg"]),
            "notes": list(dict.fromkeys(obs["notes"] + notes))}


def contrast_for_system(system: System, mode: str | PathLike, scenarios: str | Sequence[str], *,
                        sigma: float = 5.0, n_max: int = DEFAULT_MAX_TRANSITS,
                        resolution: float | str | None = None, bin_edges: QuantityLike | None = None,
                        floor_ppm: float | None = None, floor_averages_down: bool | None = None,
                        baseline: float | str | None = None, overhead_hours: float | None = None,
                        solver: str = "analytic", readout: int | str | None = None) -> dict[str, Any]:
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
    from ..atmosphere.spectrum import transmission_spectrum
    from ..atmosphere.scenarios import load_scenario
    sigma = dt.check_sigma(sigma)
    from ..units import parse_number
    n_max = parse_number(n_max, "max_transits", 1, MAX_TRANSITS_LIMIT, integer=True)
    if isinstance(scenarios, str):
        scenarios = [s for s in scenarios.split(",") if s]
    scs = [load_scenario(s) for s in scenarios]
    if len(scs) < 2:
        raise InputError("scenarios", scenarios, "two or more scenarios")
    if overhead_hours is None:   # the system file's [planet.observation] overhead, if any
        from ..bodies.system import common_observation
        overhead_hours = common_observation(system, "overhead", None)
    obs = observe(system, mode, resolution, bin_edges, floor_ppm, floor_averages_down,
                  baseline, solver, readout)
    ds = _noted(obs["notes"], transmission_spectrum, scs, obs["rp"], obs["rs"], **obs["spec_kw"])
    spec = np.asarray(ds["transit_depth_ppm"],                 # (scenario, planet, wavelength)
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
            "binning": obs["binning"], "mode": str(obs["precision"].attrs.get("instrument_mode", mode))}
