"""The Scenario: an atmosphere's composition, temperature rule, pressures, clouds and vertical structure."""

import dataclasses
import math

import numpy as np

from ..errors import InputError
from .composition import species_molar_masses

__all__ = ["SCENARIO_KEYS", "TEMPERATURE_PROFILES", "COLD_TRAP_KEYS", "Scenario"]


#: key -> what it holds (also the list shown in unknown-key errors)
SCENARIO_KEYS = {
    "name": "text",
    "description": "text",
    "scenario": "preset name or path of a scenario TOML to start from",
    "mixing_ratios": "table of species = volume mixing ratio",
    "fill_gas": "species taking the remainder",
    "mean_molecular_weight": "g/mol (only without mixing_ratios)",
    "temperature": "K (fixed temperature)",
    "temperature_factor": "T = factor x equilibrium temperature",
    "temperature_profile": "isothermal, grey-two-stream or tabulated",
    "temperature_table": "table of pressure (bar, list) and temperature (K, list)",
    "internal_temperature": "K",
    "thermal_opacity": "m2/kg",
    "visible_to_thermal_ratio": "number",
    "reference_pressure": "bar",
    "surface_pressure": "bar",
    "cloud_top_pressure": "bar",
    "haze_enhancement": "number >= 0",
    "haze_slope": "number",
    "featureless": "true or false",
    "feature_scale_heights": "band amplitude in scale heights (quick-estimate N_H)",
    "cold_trap": "table of gas, tropopause_pressure (bar) and mixing_ratio_above",
    "mixing_ratio_profiles": "table of species = { pressure = [bar...], mixing_ratio = [...] }",
    "provenance": "table of text",
}

TEMPERATURE_PROFILES = ("isothermal", "grey-two-stream", "tabulated")
#: keys of the ``[cold_trap]`` table
COLD_TRAP_KEYS = {"gas": "a species of mixing_ratios (not the fill gas)",
                  "tropopause_pressure": "bar",
                  "mixing_ratio_above": "number in [0, the gas's mixing ratio]"}

_DEFAULT_REFERENCE_PRESSURE_BAR = 1.0


# size: a frozen dataclass: one documented field per scenario key, and five short methods
@dataclasses.dataclass(frozen=True)
class Scenario:
    """A validated atmosphere scenario (SI units).

    Attributes
    ----------
    name, description : str
    mixing_ratios : dict of str to float
        Volume mixing ratios including the fill gas, summing to one (empty
        when only a mean molecular weight was given).
    fill_gas : str or None
    mean_molecular_weight : float
        g/mol.
    temperature_K : float or None
        Fixed temperature, or None to use ``temperature_factor`` x T_eq.
    temperature_factor : float
    temperature_profile : str
        One of :data:`TEMPERATURE_PROFILES`.
    internal_temperature_K, thermal_opacity_m2_kg, visible_to_thermal_ratio : float
        Parameters of the grey-two-stream profile.
    reference_pressure_Pa : float
    surface_pressure_Pa, cloud_top_pressure_Pa : float or None
    haze_enhancement, haze_slope : float
    featureless : bool
    feature_scale_heights : float or None
        Peak-to-trough band amplitude of the full model in scale heights, for
        the quick "N_H scale heights" estimate (presets: computed by
        ``make_scenario_presets.py`` on a documented reference planet).
    source : str
        Where the scenario came from (preset, file path or "table").
    provenance : dict
    temperature_table : tuple or None
        ``(pressures [Pa], temperatures [K])`` of a ``tabulated`` profile.
    cold_trap : dict or None
        ``{"gas", "tropopause_pressure_Pa", "mixing_ratio_above"}``.
    mixing_ratio_profiles : dict
        species -> ``(pressures [Pa], mixing ratios)``.
    """

    name: str
    description: str
    mixing_ratios: dict
    fill_gas: object
    mean_molecular_weight: float
    temperature_K: object = None
    temperature_factor: float = 1.0
    temperature_profile: str = "isothermal"
    internal_temperature_K: float = 0.0
    thermal_opacity_m2_kg: float = 1e-3
    visible_to_thermal_ratio: float = 0.4
    reference_pressure_Pa: float = _DEFAULT_REFERENCE_PRESSURE_BAR * 1e5
    surface_pressure_Pa: object = None
    cloud_top_pressure_Pa: object = None
    haze_enhancement: float = 0.0
    haze_slope: float = -4.0
    featureless: bool = False
    feature_scale_heights: object = None
    source: str = "table"
    provenance: dict = dataclasses.field(default_factory=dict)
    temperature_table: object = None
    cold_trap: object = None
    mixing_ratio_profiles: dict = dataclasses.field(default_factory=dict)

    @property
    def well_mixed(self):
        """True when every gas has one mixing ratio at all heights."""
        return self.cold_trap is None and not self.mixing_ratio_profiles

    @property
    def needs_layers(self):
        """True when only the layered solver represents the scenario.

        A vertical composition (:attr:`well_mixed` False) or a ``tabulated``
        temperature profile: the analytic solver is isothermal and well-mixed.
        """
        return not self.well_mixed or self.temperature_profile == "tabulated"

    def level_mixing_ratios(self, pressure_Pa):
        """Mixing ratios and mean molecular weight at given pressures.

        Parameters
        ----------
        pressure_Pa : array_like
            Level pressures [Pa], any shape.

        Returns
        -------
        mixing_ratios : dict of str to numpy.ndarray
            Every gas at every pressure (shape of ``pressure_Pa``), summing to
            one: the cold-trapped gas at ``mixing_ratio_above`` where the
            pressure is below the tropopause's, profiled gases interpolated
            linearly in ln P (constant beyond their tables), the fill gas the
            remainder (or, without one, all renormalised).
        mu : numpy.ndarray
            Mean molecular weight [g/mol], same shape.
        """
        p = np.asarray(pressure_Pa, dtype=np.float64)
        x = {k: np.full(p.shape, float(v)) for k, v in self.mixing_ratios.items()}
        for gas, (pp, xx) in self.mixing_ratio_profiles.items():
            order = np.argsort(pp)
            x[gas] = np.interp(np.log(p), np.log(np.asarray(pp)[order]), np.asarray(xx)[order])
        if self.cold_trap is not None:
            gas = self.cold_trap["gas"]
            above = min(float(self.cold_trap["mixing_ratio_above"]), float(self.mixing_ratios[gas]))
            x[gas] = np.where(p < self.cold_trap["tropopause_pressure_Pa"], above, x[gas])
        if self.fill_gas is not None and self.fill_gas in x:
            rest = sum(v for k, v in x.items() if k != self.fill_gas)
            x[self.fill_gas] = np.clip(1.0 - rest, 0.0, None)
        total = sum(x.values())
        x = {k: v / total for k, v in x.items()}
        masses = species_molar_masses()
        mu = sum(v * masses[k] for k, v in x.items())
        return x, np.asarray(mu, dtype=np.float64)

    def temperature(self, equilibrium_temperature_K):
        """Atmosphere temperature [K] for planets of the given T_eq [K] (array)."""
        teq = np.atleast_1d(np.asarray(equilibrium_temperature_K, dtype=np.float64))
        if self.temperature_table is not None:
            pp, tt = self.temperature_table
            order = np.argsort(pp)
            t_ref = np.interp(math.log(self.reference_pressure_Pa),
                              np.log(np.asarray(pp)[order]), np.asarray(tt)[order])
            return np.full(teq.shape, self.temperature_factor * float(t_ref))
        if self.temperature_K is not None:
            return np.full(teq.shape, float(self.temperature_K))
        if np.any(~(teq > 0)):
            raise InputError("equilibrium_temperature", float(np.min(teq)),
                             "> 0 K (needed by the scenario's temperature rule)",
                             detail=f"scenario {self.name!r}; or give it a fixed temperature")
        return self.temperature_factor * teq

    def as_dict(self):
        """Plain-dict description (JSON-ready; pressures in bar)."""
        bar = lambda p: None if p is None else p / 1e5  # noqa: E731
        return {
            "name": self.name, "description": self.description,
            "mixing_ratios": dict(self.mixing_ratios), "fill_gas": self.fill_gas,
            "mean_molecular_weight_g_mol": self.mean_molecular_weight,
            "temperature_K": self.temperature_K, "temperature_factor": self.temperature_factor,
            "temperature_profile": self.temperature_profile,
            "reference_pressure_bar": bar(self.reference_pressure_Pa),
            "surface_pressure_bar": bar(self.surface_pressure_Pa),
            "cloud_top_pressure_bar": bar(self.cloud_top_pressure_Pa),
            "haze_enhancement": self.haze_enhancement, "haze_slope": self.haze_slope,
            "featureless": self.featureless,
            "feature_scale_heights": self.feature_scale_heights, "source": self.source,
            "temperature_table": None if self.temperature_table is None else {
                "pressure_bar": [v / 1e5 for v in self.temperature_table[0]],
                "temperature_K": list(self.temperature_table[1])},
            "cold_trap": None if self.cold_trap is None else {
                "gas": self.cold_trap["gas"],
                "tropopause_pressure_bar": self.cold_trap["tropopause_pressure_Pa"] / 1e5,
                "mixing_ratio_above": self.cold_trap["mixing_ratio_above"]},
            "mixing_ratio_profiles": {g: {"pressure_bar": [v / 1e5 for v in pp],
                                          "mixing_ratio": list(xx)}
                                      for g, (pp, xx) in self.mixing_ratio_profiles.items()},
        }
