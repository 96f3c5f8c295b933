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
from pathlib import Path

# Asplund et al. (2009) Table 1, photospheric log eps (value from memory)
LOG_EPS = {"He": 10.93, "C": 8.43, "N": 7.83, "O": 8.69, "Na": 6.24, "K": 5.03, "S": 7.12}

SCRIPT = "data_tables/scripts/make_scenario_presets.py"
SOLAR_SOURCE = ("Asplund, Grevesse, Sauval & Scott 2009, ARA&A 47, 481, Table 1 "
                "(photospheric log eps; value from memory)")


def hydrogen_rich(metallicity=1.0, case="hot"):
    """Volume mixing ratios (without H2, the fill gas) for scaled-solar metals."""
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
    return {k: v / total for k, v in mol.items()}


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
    lines += ["", "[provenance]",
              f"source = \"{p['source']}\"",
              f"method = \"{p['method']}\"",
              "units = \"mixing ratios: volume (mole) fractions; pressures: bar\"",
              f"date = \"{datetime.date.today().isoformat()}\"",
              f"feature_reference_planet = \"{REFERENCE[p['name']]}\"",
              f"script = \"{SCRIPT}\"", ""]
    return "\n".join(lines)


def presets():
    hot = hydrogen_rich(1.0, "hot")
    warm = hydrogen_rich(1.0, "warm")
    rich = hydrogen_rich(100.0, "hot")
    h2_method = ("solar metals placed in molecules by the hot (T > ~1000 K) equilibrium rules: "
                 "C in CO, remaining O in H2O, N in N2, S in H2S, Na and K atomic; H2 fills")
    return [
        dict(name="h2-clear-solar",
             description="hydrogen-helium envelope, solar metals (hot chemistry), no clouds",
             mixing_ratios=hot, fill_gas="H2", reference_pressure=10.0,
             source=SOLAR_SOURCE, method=h2_method),
        dict(name="h2-cloudy-solar",
             description="as h2-clear-solar with a grey cloud deck at 1 mbar",
             mixing_ratios=hot, fill_gas="H2", reference_pressure=10.0,
             cloud_top_pressure=1e-3, source=SOLAR_SOURCE,
             method=h2_method + "; opaque grey cloud top at 1e-3 bar (illustrative choice)"),
        dict(name="h2-warm-solar",
             description="hydrogen-helium envelope, solar metals (warm chemistry: CH4, NH3, H2O)",
             mixing_ratios=warm, fill_gas="H2", reference_pressure=10.0,
             source=SOLAR_SOURCE,
             method=("solar metals placed by the warm (T < ~800 K) equilibrium rules: C in CH4, "
                     "O in H2O, N in NH3, S in H2S, Na and K condensed out; H2 fills")),
        dict(name="h2-metal-rich",
             description="hydrogen-rich envelope with 100x solar metals (hot chemistry), no clouds",
             mixing_ratios=rich, fill_gas="H2", reference_pressure=10.0,
             source=SOLAR_SOURCE, method="metals 100 x solar; " + h2_method),
        dict(name="steam",
             description="water-dominated (steam) atmosphere with 1 per cent CO2",
             mixing_ratios={"CO2": 0.01}, fill_gas="H2O", reference_pressure=1.0,
             source="illustrative composition (common practice, no source)",
             method="H2O fills; CO2 1e-2 by volume"),
        dict(name="n2-o2-temperate",
             description="N2-O2 temperate atmosphere with trace CO2, CH4, O3, N2O and H2O, 1 bar surface",
             mixing_ratios={"O2": 0.21, "Ar": 0.0093, "H2O": 3e-3, "CO2": 4e-4,
                            "CH4": 1.8e-6, "N2O": 3.2e-7, "O3": 5e-7},
             fill_gas="N2", reference_pressure=1.0, surface_pressure=1.0,
             source=("present-day dry-air fractions of O2, Ar, CO2, CH4, N2O (rounded "
                     "handbook values, value from memory); H2O and O3 column-mean "
                     "illustrative values (common practice, no source)"),
             method="well-mixed; N2 fills; O3 5e-7 stands for a layer peaking near 1e-5"),
        dict(name="n2-co2-ch4-anoxic",
             description="anoxic N2 atmosphere with 1 per cent CO2 and 0.1 per cent CH4, 1 bar surface",
             mixing_ratios={"CO2": 0.01, "CH4": 1e-3, "H2O": 3e-3},
             fill_gas="N2", reference_pressure=1.0, surface_pressure=1.0,
             source="illustrative anoxic composition (common practice, no source)",
             method="well-mixed; N2 fills"),
        dict(name="co2-thick",
             description="thick CO2-dominated atmosphere (3.5 per cent N2, trace SO2, H2O), 10 bar surface",
             mixing_ratios={"N2": 0.035, "SO2": 1.5e-4, "H2O": 3e-5},
             fill_gas="CO2", reference_pressure=10.0, surface_pressure=10.0,
             source="illustrative composition (common practice, no source)",
             method="well-mixed; CO2 fills"),
        dict(name="flat",
             description="featureless: constant depth at the planet radius (the null hypothesis)",
             featureless=True, mixing_ratios={"He": 0.15}, fill_gas="H2", reference_pressure=10.0,
             source="none (null model)",
             method="transit depth (Rp/Rs)^2 at every wavelength; composition only sets the quoted scale height"),
    ]


def main():
    from snrkit.atmosphere.scenarios import load_scenario
    from snrkit.atmosphere.spectrum import feature_scale_heights
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
