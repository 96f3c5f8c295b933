"""Regenerate data_tables/scenarios/*.toml: the atmosphere scenario presets.

Method
------
Hydrogen-rich presets start from the solar photospheric abundances of
Asplund, Grevesse, Sauval & Scott (2009, ARA&A 47, 481, Table 1), given as
log eps(X) = 12 + log10(N_X/N_H); the values below are transcribed from
memory of that table and should be checked before being relied on.  Metals
are placed in molecules with simple rules motivated by chemical equilibrium
near 1 bar (e.g. Burrows & Sharp 1999, ApJ 512, 843; Lodders & Fegley 2002,
Icarus 155, 393):

* hot case (above ~1000 K): all C in CO, the remaining O in H2O, N in N2,
  S in H2S, Na and K atomic;
* warm case (below ~800 K): C in CH4, O in H2O, N in NH3, S in H2S, Na and K
  condensed out (omitted).

The oxygen taken up by silicate condensates (~20 per cent) is ignored.  Every
H atom not in a molecule is in H2, which is the fill gas.  Mixing ratios are
molecules per molecule of gas (volume mixing ratios).

CO2 then follows from the equilibrium CO + H2O <-> CO2 + H2 (pressure
independent, equal numbers of molecules on both sides), solved exactly for
the CO2 formed, with the equilibrium constant of Moe (1962, Chem. Eng. Prog.
58, 33), K = exp(4577.8 / T - 4.33) (value from memory), evaluated at the
preset's chemistry temperature (the equilibrium temperature of its reference
planet).  At fixed T this gives CO2 proportional to Z^2 (both CO and H2O
scale with the metallicity Z), the scaling of equilibrium CO2 with
metallicity noted by Zahnle, Marley & Fortney (2009, arXiv:0911.0728) and
Moses et al. (2013, ApJ 777, 34) (value from memory; those papers were not
read).  In the warm case CO is first obtained from CH4 + H2O <-> CO + 3 H2
at 1 bar with Delta G = 225 kJ/mol - 0.253 kJ/mol/K x T (a linear fit to
standard Gibbs energies of reaction, NIST-JANAF Thermochemical Tables,
Chase 1998; value from memory), which puts the CH4 = CO boundary of a solar
gas at 1 bar near 1150 K, as in Lodders & Fegley (2002, Icarus 155, 393;
value from memory).  Gases below :data:`MIN_MIXING_RATIO` are left out and
the value is recorded in the file's provenance.

Temperate presets carry a cold-trapped water profile ([cold_trap]): the
tropospheric value below the tropopause pressure of the U.S. Standard
Atmosphere 1976 (226.32 hPa at 11 km geopotential, 216.65 K; NOAA, NASA &
USAF 1976, Table 4), and a stratospheric value of 4 ppmv above it, within
the 2.6-3.6 ppmv minima measured 2-3 km above the tropopause by Kley et al.
(1979, J. Atmos. Sci. 36, 2513; abstract read: 2.6 ppmv at 5 S, 3.6 ppmv at
41 N, 20 per cent error) and the "few ppmv" of the stratospheric overworld
(Dessler et al. 1995, J. Geophys. Res. 100, 23167; abstract read), rising
above them with methane oxidation.  The tropospheric value 3e-3 is close to
the global-mean column of water vapour (about 25 kg m-2, i.e. a column-mean
volume mixing ratio near 4e-3; Trenberth & Smith 2005, J. Clim. 18, 864,
value from memory).

Terrestrial-type presets are simple illustrative compositions (common
practice, no single source); each value is commented in the written file.

``feature_scale_heights`` (the quick estimate's N_H) is then computed with
snrkit itself: the peak-to-trough effective height, in scale heights, of the
preset's analytic spectrum at R = 100 over 0.6-5 um on the reference planet
named in the file (snrkit.atmosphere.spectrum.FEATURE_REFERENCE_PLANETS).
Rerun this script whenever the opacity tables change; a test checks the
stored values against the current model.

Run from the repository root:  python data_tables/scripts/make_scenario_presets.py
"""

import datetime
import math
from pathlib import Path

#: Gases below this volume mixing ratio are left out of a preset (recorded in the file's
#: method).  Solar CO2 at 1300 K (9e-8) moves the hot-giant reference spectrum by at most
#: 0.27 scale heights (4.26 um bin at R = 100; measured with snrkit) while one more gas
#: costs the layered solver about 30 per cent more time (common practice, no source).
MIN_MIXING_RATIO = 1e-7

#: U.S. Standard Atmosphere 1976 tropopause (11 km geopotential) [bar]
TROPOPAUSE_BAR = 0.22632
#: Stratospheric water above the cold trap (Kley et al. 1979; Dessler et al. 1995)
STRATOSPHERIC_H2O = 4e-6
COLD_TRAP_SOURCE = ("H2O below the tropopause: column-mean value (about 4e-3 from the global-mean "
                    "25 kg m-2 of water vapour, Trenberth & Smith 2005, J. Clim. 18, 864; value "
                    "from memory); tropopause 0.22632 bar (U.S. Standard Atmosphere 1976, 11 km "
                    "geopotential, 216.65 K); above it 4 ppmv (Kley et al. 1979, J. Atmos. Sci. "
                    "36, 2513: minima 2.6-3.6 ppmv; Dessler et al. 1995, JGR 100, 23167: a few "
                    "ppmv)")
CO2_SOURCE = ("CO2 from CO + H2O <-> CO2 + H2 with K = exp(4577.8/T - 4.33) (Moe 1962, Chem. "
              "Eng. Prog. 58, 33; value from memory); CO2 ~ Z^2 as in Zahnle, Marley & Fortney "
              "2009 and Moses et al. 2013, ApJ 777, 34 (value from memory)")

# Asplund et al. (2009) Table 1, photospheric log eps (value from memory)
LOG_EPS = {"He": 10.93, "C": 8.43, "N": 7.83, "O": 8.69, "Na": 6.24, "K": 5.03, "S": 7.12}

SCRIPT = "data_tables/scripts/make_scenario_presets.py"
SOLAR_SOURCE = ("Asplund, Grevesse, Sauval & Scott 2009, ARA&A 47, 481, Table 1 "
                "(photospheric log eps; value from memory)")


def water_gas_shift_constant(temperature_K):
    """K = [CO2][H2] / ([CO][H2O]) of CO + H2O <-> CO2 + H2 (Moe 1962; value from memory)."""
    return math.exp(4577.8 / temperature_K - 4.33)


def methane_reforming_constant(temperature_K):
    """K = p_CO p_H2^3 / (p_CH4 p_H2O) [bar^2] of CH4 + H2O <-> CO + 3 H2.

    Delta G = 225 kJ/mol - 0.253 kJ/mol/K x T (linear fit to NIST-JANAF
    standard Gibbs energies, Chase 1998; value from memory).
    """
    dg = 225e3 - 253.0 * temperature_K
    return math.exp(-dg / (8.314462618 * temperature_K))


def _shift(n_co, n_h2o, n_h2, k):
    """Moles of CO2 formed by CO + H2O -> CO2 + H2 at equilibrium constant k."""
    # k (a - y)(b - y) = y (h + y)  ->  (k - 1) y^2 - (k (a + b) + h) y + k a b = 0
    a2, a1, a0 = k - 1.0, -(k * (n_co + n_h2o) + n_h2), k * n_co * n_h2o
    if abs(a2) < 1e-12:
        return -a0 / a1
    disc = math.sqrt(a1 * a1 - 4 * a2 * a0)
    roots = [(-a1 - disc) / (2 * a2), (-a1 + disc) / (2 * a2)]
    return min(r for r in roots if 0 <= r <= min(n_co, n_h2o) + 1e-300)


def hydrogen_rich(metallicity=1.0, case="hot", temperature_K=1300.0, pressure_bar=1.0):
    """Volume mixing ratios (without H2, the fill gas) for scaled-solar metals.

    Returns the mixing ratios and a dict of gases left out (below
    :data:`MIN_MIXING_RATIO`) with their equilibrium values.
    """
    a = {el: 10 ** (v - 12.0) for el, v in LOG_EPS.items()}      # per H atom
    for el in ("C", "N", "O", "Na", "K", "S"):
        a[el] *= metallicity
    mol = {"He": a["He"], "H2S": a["S"]}
    h_used = 2 * a["S"]
    if case == "hot":
        mol["CO"] = a["C"]
        mol["H2O"] = a["O"] - a["C"]
        mol["N2"] = a["N"] / 2
        mol["Na"] = a["Na"]
        mol["K"] = a["K"]
        h_used += 2 * mol["H2O"]
    elif case == "warm":
        mol["CH4"] = a["C"]
        mol["H2O"] = a["O"]
        mol["NH3"] = a["N"]
        h_used += 4 * a["C"] + 2 * a["O"] + 3 * a["N"]
    else:
        raise ValueError(case)
    n_h2 = (1.0 - h_used) / 2
    total = n_h2 + sum(mol.values())
    if case == "warm":
        # CO from CH4 + H2O <-> CO + 3 H2 (a trace here: first order in the small CO)
        x_co = (methane_reforming_constant(temperature_K) * (mol["CH4"] / total)
                * (mol["H2O"] / total) / ((n_h2 / total) ** 3 * pressure_bar ** 2))
        if x_co > 0.1 * mol["CH4"] / total:
            raise ValueError("the warm rules need CO << CH4 (T well below ~1100 K at 1 bar)")
        mol["CO"] = x_co * total
        mol["CH4"] -= mol["CO"]
        mol["H2O"] -= mol["CO"]
        n_h2 += 3 * mol["CO"]
        total = n_h2 + sum(mol.values())
    y = _shift(mol["CO"], mol["H2O"], n_h2, water_gas_shift_constant(temperature_K))
    mol["CO"] -= y
    mol["H2O"] -= y
    mol["CO2"] = y
    n_h2 += y
    total = n_h2 + sum(mol.values())
    x = {k: v / total for k, v in mol.items()}
    dropped = {k: v for k, v in x.items() if v < MIN_MIXING_RATIO}
    return {k: v for k, v in x.items() if k not in dropped}, dropped


def fmt(x):
    return f"{x:.4g}"


#: preset -> reference planet for feature_scale_heights
REFERENCE = {
    "h2-clear-solar": "hot-giant", "h2-cloudy-solar": "hot-giant", "h2-metal-rich": "hot-giant",
    "h2-warm-solar": "warm-sub-neptune", "steam": "warm-sub-neptune",
    "n2-o2-temperate": "temperate-rocky", "n2-co2-ch4-anoxic": "temperate-rocky",
    "co2-thick": "temperate-rocky", "flat": "hot-giant",
}


def toml_text(p):
    lines = [
        f"# Atmosphere scenario preset {p['name']!r} (snrkit).",
        f"# Written by {SCRIPT}; edit the script, not this file.",
        "",
        f"name = {p['name']!r}".replace("'", '"'),
        f"description = \"{p['description']}\"",
    ]
    if p.get("featureless"):
        lines.append("featureless = true")
    lines.append("mixing_ratios = { " + ", ".join(
        f"{k} = {fmt(v)}" for k, v in p["mixing_ratios"].items()) + " }")
    lines.append(f"fill_gas = \"{p['fill_gas']}\"")
    for key, unit in (("reference_pressure", "bar"), ("surface_pressure", "bar"),
                      ("cloud_top_pressure", "bar")):
        if key in p:
            lines.append(f"{key} = {fmt(p[key])}        # {unit}")
    lines.append(f"temperature_factor = {p.get('temperature_factor', 1.0)}   "
                 "# T = factor x equilibrium temperature")
    lines.append(f"temperature_profile = \"{p.get('temperature_profile', 'isothermal')}\"")
    for key in ("haze_enhancement", "haze_slope"):
        if key in p:
            lines.append(f"{key} = {p[key]}")
    if "feature_scale_heights" in p:
        lines.append(f"feature_scale_heights = {p['feature_scale_heights']:.2f}   "
                     f"# peak-to-trough, 0.6-5 um, R = 100, on the {REFERENCE[p['name']]} "
                     "reference planet")
    if "cold_trap" in p:
        ct = p["cold_trap"]
        lines += ["", "[cold_trap]",
                  f"gas = \"{ct['gas']}\"",
                  f"tropopause_pressure = {ct['tropopause_pressure']}   # bar",
                  f"mixing_ratio_above = {fmt(ct['mixing_ratio_above'])}"]
    lines += ["", "[provenance]",
              f"source = \"{p['source']}\"",
              f"method = \"{p['method']}\""]
    for gas, src in p.get("abundances", {}).items():
        lines.append(f"source_{gas} = \"{src}\"")
    lines += [
              
              "units = \"mixing ratios: volume (mole) fractions; pressures: bar\"",
              f"date = \"{datetime.date.today().isoformat()}\"",
              f"feature_reference_planet = \"{REFERENCE[p['name']]}\"",
              f"script = \"{SCRIPT}\"", ""]
    return "\n".join(lines)


def _solar_sources(mix, fill="H2"):
    """Source of each abundance of a hydrogen-rich preset."""
    out = {}
    for gas in list(mix) + [fill]:
        if gas == fill:
            out[gas] = "fills the remainder (every H atom not in a molecule)"
        elif gas == "CO2":
            out[gas] = CO2_SOURCE
        elif gas == "CO" and "CH4" in mix:
            out[gas] = ("CH4 + H2O <-> CO + 3 H2 at 1 bar, Delta G from NIST-JANAF (Chase 1998; "
                        "value from memory), then " + CO2_SOURCE.split(" with ")[0])
        else:
            out[gas] = "element abundance from " + SOLAR_SOURCE + ", placed by the rules in method"
    return out


def _dropped(d, temperature_K):
    return "; ".join(f"{k} {v:.2g} at {temperature_K:g} K" for k, v in d.items()) or "none"


#: chemistry temperature [K] of each hydrogen-rich preset: the equilibrium
#: temperature of its reference planet (snrkit.atmosphere.spectrum.FEATURE_REFERENCE_PLANETS)
CHEMISTRY_TEMPERATURE_K = {"hot": 1300.0, "warm": 600.0}


def presets():
    t_hot, t_warm = CHEMISTRY_TEMPERATURE_K["hot"], CHEMISTRY_TEMPERATURE_K["warm"]
    hot, hot_drop = hydrogen_rich(1.0, "hot", t_hot)
    warm, warm_drop = hydrogen_rich(1.0, "warm", t_warm)
    rich, rich_drop = hydrogen_rich(100.0, "hot", t_hot)
    h2_method = ("solar metals placed in molecules by the hot (T > ~1000 K) equilibrium rules: "
                 "C in CO, remaining O in H2O, N in N2, S in H2S, Na and K atomic; then CO + H2O "
                 f"<-> CO2 + H2 in equilibrium at {t_hot:g} K; H2 fills")
    cold_trap = dict(gas="H2O", tropopause_pressure=TROPOPAUSE_BAR,
                     mixing_ratio_above=STRATOSPHERIC_H2O)
    return [
        dict(name="h2-clear-solar",
             description="hydrogen-helium envelope, solar metals (hot chemistry), no clouds",
             mixing_ratios=hot, fill_gas="H2", reference_pressure=10.0,
             source=SOLAR_SOURCE, method=(h2_method + f"; left out (below {MIN_MIXING_RATIO:g}): "
                                          + _dropped(hot_drop, t_hot)),
             abundances=_solar_sources(hot)),
        dict(name="h2-cloudy-solar",
             description="as h2-clear-solar with a grey cloud deck at 1 mbar",
             mixing_ratios=hot, fill_gas="H2", reference_pressure=10.0,
             cloud_top_pressure=1e-3, source=SOLAR_SOURCE,
             method=(h2_method + "; opaque grey cloud top at 1e-3 bar (illustrative choice); "
                     f"left out (below {MIN_MIXING_RATIO:g}): " + _dropped(hot_drop, t_hot)),
             abundances=_solar_sources(hot)),
        dict(name="h2-warm-solar",
             description="hydrogen-helium envelope, solar metals (warm chemistry: CH4, NH3, H2O)",
             mixing_ratios=warm, fill_gas="H2", reference_pressure=10.0,
             source=SOLAR_SOURCE,
             method=("solar metals placed by the warm (T < ~800 K) equilibrium rules: C in CH4, "
                     "O in H2O, N in NH3, S in H2S, Na and K condensed out; CO and CO2 from "
                     f"equilibrium at {t_warm:g} K and 1 bar; H2 fills; left out (below "
                     f"{MIN_MIXING_RATIO:g}): " + _dropped(warm_drop, t_warm)),
             abundances=_solar_sources(warm)),
        dict(name="h2-metal-rich",
             description="hydrogen-rich envelope with 100x solar metals (hot chemistry, CO2 in "
                         "equilibrium), no clouds",
             mixing_ratios=rich, fill_gas="H2", reference_pressure=10.0,
             source=SOLAR_SOURCE, method="metals 100 x solar; " + h2_method,
             abundances=_solar_sources(rich)),
        dict(name="steam",
             description="water-dominated (steam) atmosphere with 1 per cent CO2",
             mixing_ratios={"CO2": 0.01}, fill_gas="H2O", reference_pressure=1.0,
             source="illustrative composition (common practice, no source)",
             method="H2O fills; CO2 1e-2 by volume",
             abundances={"CO2": "common practice, no source", "H2O": "fills the remainder"}),
        dict(name="n2-o2-temperate",
             description="N2-O2 temperate atmosphere with trace CO2, CH4, O3, N2O and "
                         "cold-trapped H2O, 1 bar surface",
             mixing_ratios={"O2": 0.21, "Ar": 0.0093, "H2O": 3e-3, "CO2": 4e-4,
                            "CH4": 1.8e-6, "N2O": 3.2e-7, "O3": 5e-7},
             fill_gas="N2", reference_pressure=1.0, surface_pressure=1.0, cold_trap=cold_trap,
             source=("present-day dry-air fractions of O2, Ar, CO2, CH4, N2O (rounded "
                     "handbook values, value from memory); H2O cold-trapped (see source_H2O); "
                     "O3 column-mean illustrative value (common practice, no source)"),
             method=("N2 fills; H2O 3e-3 below the tropopause and 4e-6 above it ([cold_trap]; "
                     "the analytic solver falls back to the layered one); other gases "
                     "well-mixed; O3 5e-7 stands for a layer peaking near 1e-5"),
             abundances={"O2": "dry-air fraction 0.2095 (U.S. Standard Atmosphere 1976, "
                               "Table 3; value from memory), rounded",
                         "Ar": "dry-air fraction 0.00934 (U.S. Standard Atmosphere 1976, "
                               "Table 3; value from memory), rounded",
                         "CO2": "present-day dry-air value, about 4.1e-4 (rounded handbook "
                                "value, value from memory)",
                         "CH4": "present-day dry-air value (value from memory)",
                         "N2O": "present-day dry-air value (value from memory)",
                         "O3": "column-mean of a ~300 Dobson-unit ozone layer, about 3.7e-7 "
                               "(common practice, no source), rounded up",
                         "H2O": COLD_TRAP_SOURCE,
                         "N2": "fills the remainder"}),
        dict(name="n2-co2-ch4-anoxic",
             description="anoxic N2 atmosphere with 1 per cent CO2, 0.1 per cent CH4 and "
                         "cold-trapped H2O, 1 bar surface",
             mixing_ratios={"CO2": 0.01, "CH4": 1e-3, "H2O": 3e-3},
             fill_gas="N2", reference_pressure=1.0, surface_pressure=1.0, cold_trap=cold_trap,
             source="illustrative anoxic composition (common practice, no source)",
             method=("N2 fills; H2O cold-trapped as in n2-o2-temperate (the same present-day "
                     "tropopause, common practice, no source); CO2 and CH4 well-mixed"),
             abundances={"CO2": "common practice, no source",
                         "CH4": "common practice, no source",
                         "H2O": COLD_TRAP_SOURCE + "; applied to an anoxic planet (common "
                                "practice, no source)",
                         "N2": "fills the remainder"}),
        dict(name="co2-thick",
             description="thick CO2-dominated atmosphere (3.5 per cent N2, trace SO2, H2O), 10 bar surface",
             mixing_ratios={"N2": 0.035, "SO2": 1.5e-4, "H2O": 3e-5},
             fill_gas="CO2", reference_pressure=10.0, surface_pressure=10.0,
             source="illustrative composition (common practice, no source)",
             method="well-mixed; CO2 fills",
             abundances={"N2": "common practice, no source", "SO2": "common practice, no source",
                         "H2O": "common practice, no source", "CO2": "fills the remainder"}),
        dict(name="flat",
             description="featureless: constant depth at the planet radius (the null hypothesis)",
             featureless=True, mixing_ratios={"He": 0.15}, fill_gas="H2", reference_pressure=10.0,
             source="none (null model)",
             method="transit depth (Rp/Rs)^2 at every wavelength; composition only sets the quoted scale height",
             abundances={"He": "common practice, no source (only sets the quoted scale height)",
                         "H2": "fills the remainder"}),
    ]


def main():
    from snrkit.atmosphere.scenarios import load_scenario
    from snrkit.atmosphere.features import feature_scale_heights
    out = Path(__file__).resolve().parents[1] / "scenarios"
    out.mkdir(exist_ok=True)
    for p in presets():
        path = out / f"{p['name']}.toml"
        path.write_text(toml_text(p))                     # composition first
        p["feature_scale_heights"] = feature_scale_heights(load_scenario(path),
                                                           REFERENCE[p["name"]])
        path.write_text(toml_text(p))


if __name__ == "__main__":
    main()
