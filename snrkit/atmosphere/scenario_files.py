"""Scenario files and presets: reading, merging onto a base, validating every key."""

import difflib
import math
from pathlib import Path

import numpy as np
import astropy.units as u

from ..errors import InputError, UnknownKeyError
from ..io.tables import data_path
from ..units import to_si, parse_number, scalar_si
from .composition import normalise_mixing_ratios, species_molar_masses
from .scenario import (COLD_TRAP_KEYS, SCENARIO_KEYS, TEMPERATURE_PROFILES,
                       _DEFAULT_REFERENCE_PRESSURE_BAR, Scenario)

__all__ = ["TEMPERATURE_RANGE_K", "preset_names"]


def _read_toml(path, field):
    from ..io.tomlfile import read_toml
    return read_toml(path, field, "an existing scenario file or a preset name "
                     f"({', '.join(preset_names())})")


def _resolve(spec, field, base_dir=None):
    """Return (table, source, base_dir) for a preset name or a path."""
    text = str(spec)
    if text in preset_names():
        return _read_toml(data_path("scenarios", f"{text}.toml"), field), f"preset {text}", None
    from ..io.tomlfile import check_input_path
    path = check_input_path(text, field, "a preset name or a scenario file").expanduser()
    if not path.is_absolute() and base_dir is not None:
        path = Path(base_dir) / path
    if path.suffix.lower() == ".toml" or path.exists():
        return _read_toml(path, field), str(path), path.parent
    close = difflib.get_close_matches(text, preset_names(), n=1, cutoff=0.5)
    raise InputError(field, text, "a preset name (" + ", ".join(preset_names())
                     + ") or the path of a scenario TOML file",
                     detail=f"did you mean {close[0]!r}?" if close else "")


#: Accepted atmosphere temperatures [K] (a 5e-324 K atmosphere would have a zero
#: scale height; common practice, no source).
TEMPERATURE_RANGE_K = (1.0, 1e5)


def _check_keys(table, where):
    for key in table:
        if key not in SCENARIO_KEYS:
            close = difflib.get_close_matches(str(key), list(SCENARIO_KEYS), n=1, cutoff=0.5)
            raise UnknownKeyError(f"{where}.{key}", table[key], "keys " + ", ".join(SCENARIO_KEYS),
                                  detail=f"did you mean {close[0]!r}?" if close else "")


def _number(table, key, where, low=None, high=None, low_inclusive=True):
    return parse_number(table[key], f"{where}.{key}", low, high, low_inclusive=low_inclusive)


def _pressure(table, key, where):
    v = to_si(table[key], f"{where}.{key}", u.bar, 0.0, None, low_inclusive=False)
    if v.ndim != 0:
        raise InputError(f"{where}.{key}", table[key], "a single pressure")
    return float(v)


def _merge(base, over):
    out = dict(base)
    for k, v in over.items():
        if k == "scenario":
            continue
        out[k] = v
    if "mixing_ratios" in over and "fill_gas" not in over:
        # a new composition replaces the base's completely (fill gas included)
        out.pop("fill_gas", None)
        out.pop("mean_molecular_weight", None)
    if "mean_molecular_weight" in over and "mixing_ratios" not in over:
        out.pop("mixing_ratios", None)
        out.pop("fill_gas", None)
    if "temperature_factor" in over and "temperature" not in over:
        out.pop("temperature", None)
    if "temperature" in over and "temperature_factor" not in over:
        out.pop("temperature_factor", None)
    if "temperature" in over and "temperature_profile" not in over \
            and out.get("temperature_profile") == "tabulated":
        out.pop("temperature_profile", None)
        out.pop("temperature_table", None)
    if over.get("temperature_profile", "tabulated") != "tabulated" and "temperature_table" not in over:
        out.pop("temperature_table", None)
    if over.get("temperature_profile") == "tabulated" and "temperature" not in over:
        out.pop("temperature", None)
    if "mixing_ratios" in over and isinstance(over["mixing_ratios"], dict):
        # vertical structure of gases the new composition no longer has is dropped
        new = set(over["mixing_ratios"])
        trap = out.get("cold_trap")
        if "cold_trap" not in over and isinstance(trap, dict) and trap.get("gas") not in new:
            out.pop("cold_trap", None)
        prof = out.get("mixing_ratio_profiles")
        if "mixing_ratio_profiles" not in over and isinstance(prof, dict):
            out["mixing_ratio_profiles"] = {g: v for g, v in prof.items() if g in new}
    return out


def _from_table(table, where, source, base_dir=None, depth=0):
    if not isinstance(table, dict):
        raise InputError(where, table, "a table of scenario keys")
    _check_keys(table, where)
    if "scenario" in table:
        if depth > 8:
            raise InputError(f"{where}.scenario", table["scenario"], "a chain of at most 8 bases")
        base_tbl, base_src, bdir = _resolve(table["scenario"], f"{where}.scenario", base_dir)
        base = _flatten(base_tbl, f"scenario {table['scenario']}", bdir, depth + 1)
        changed = [k for k in table if k not in ("scenario", "name", "description")]
        merged = _merge(base, table)
        if "name" not in table:
            merged["name"] = base.get("name", str(table["scenario"])) + (" (modified)" if changed else "")
        if changed:
            merged.pop("provenance", None)
            if "feature_scale_heights" not in table:
                merged.pop("feature_scale_heights", None)
        source = base_src if not changed else f"{source} (from {base_src})"
        table = merged
    return _validate(table, where, source)


def _flatten(table, where, base_dir, depth):
    """Return a scenario table with its base chain merged in (not yet validated)."""
    if not isinstance(table, dict):
        raise InputError(where, table, "a table of scenario keys")
    _check_keys(table, where)
    if "scenario" not in table:
        return dict(table)
    if depth > 8:
        raise InputError(f"{where}.scenario", table["scenario"], "a chain of at most 8 bases")
    base_tbl, _, bdir = _resolve(table["scenario"], f"{where}.scenario", base_dir)
    return _merge(_flatten(base_tbl, f"scenario {table['scenario']}", bdir, depth + 1), table)


def _validate(t, where, source):
    name = t.get("name", "custom")
    if not isinstance(name, str) or not name.strip():
        raise InputError(f"{where}.name", name, "a non-empty text")
    desc = t.get("description", "user scenario")
    if not isinstance(desc, str):
        raise InputError(f"{where}.description", desc, "text")
    fill = t.get("fill_gas")
    x, mu = _composition(t, where, fill)

    temp, factor, prof, tint, kth, gam = _temperature_rule(t, where)

    p_ref, p_surf, p_cloud = _pressures(t, where)
    haze = _number(t, "haze_enhancement", where, 0.0) if "haze_enhancement" in t else 0.0
    slope = _number(t, "haze_slope", where) if "haze_slope" in t else -4.0
    feat = t.get("featureless", False)
    if not isinstance(feat, bool):
        raise InputError(f"{where}.featureless", feat, "true or false")
    n_h = _number(t, "feature_scale_heights", where, 0.0) if "feature_scale_heights" in t else None
    if feat:
        n_h = 0.0
    prov = t.get("provenance", {})
    if not isinstance(prov, dict):
        raise InputError(f"{where}.provenance", prov, "a table of text")
    table = _temperature_table(t, where, prof)
    if table is not None and temp is not None:
        raise InputError(f"{where}.temperature", t["temperature"],
                         "either temperature or a tabulated temperature_profile, not both")
    trap = _cold_trap(t, where, x, fill, p_surf)
    profiles = _mixing_ratio_profiles(t, where, x, fill)
    if trap is not None and trap["gas"] in profiles:
        raise InputError(f"{where}.cold_trap.gas", trap["gas"],
                         "a gas without a mixing_ratio_profiles entry (one vertical rule per gas)")
    return Scenario(name=name.strip(), description=desc, mixing_ratios=x, fill_gas=fill,
                    mean_molecular_weight=mu, temperature_K=temp, temperature_factor=factor,
                    temperature_profile=prof, internal_temperature_K=tint,
                    thermal_opacity_m2_kg=kth, visible_to_thermal_ratio=gam,
                    reference_pressure_Pa=p_ref, surface_pressure_Pa=p_surf,
                    cloud_top_pressure_Pa=p_cloud, haze_enhancement=haze, haze_slope=slope,
                    featureless=feat, feature_scale_heights=n_h, source=source,
                    provenance={str(k): str(v) for k, v in prov.items()},
                    temperature_table=table, cold_trap=trap, mixing_ratio_profiles=profiles)


def _composition(t, where, fill):
    """Mixing ratios (normalised, fill gas included) and the mean molecular weight [g/mol]."""
    masses = species_molar_masses()
    if "mixing_ratios" in t:
        mr = t["mixing_ratios"]
        if not isinstance(mr, dict):
            raise InputError(f"{where}.mixing_ratios", mr, "a table such as { N2 = 0.78, O2 = 0.21 }")
        mr = {k: parse_number(v, f"{where}.mixing_ratios.{k}", 0.0, 1.0) for k, v in mr.items()}
        if fill is not None and not isinstance(fill, str):
            raise InputError(f"{where}.fill_gas", fill, "a species name")
        x = normalise_mixing_ratios(mr, fill_gas=fill, field=f"{where}.mixing_ratios")
        x = {k: float(v) for k, v in x.items()}
        mu = float(sum(x[k] * masses[k] for k in x))
        if "mean_molecular_weight" in t:
            raise InputError(f"{where}.mean_molecular_weight", t["mean_molecular_weight"],
                             "either mixing_ratios or mean_molecular_weight, not both")
    elif "mean_molecular_weight" in t:
        if fill is not None:
            raise InputError(f"{where}.fill_gas", fill, "only together with mixing_ratios")
        mu = _number(t, "mean_molecular_weight", where, 0.0, None, low_inclusive=False)
        x = {}
    else:
        raise InputError(f"{where}.mixing_ratios", None,
                         "a table of species = volume mixing ratio (or a mean_molecular_weight)")
    return x, mu


def _temperature_rule(t, where):
    """Temperature [K] or factor x Teq, the profile kind and the grey two-stream parameters."""
    temp = None
    if "temperature" in t:
        temp = scalar_si(t["temperature"], f"{where}.temperature", u.K, *TEMPERATURE_RANGE_K)
        if "temperature_factor" in t:
            raise InputError(f"{where}.temperature_factor", t["temperature_factor"],
                             "either temperature or temperature_factor, not both")
    factor = _number(t, "temperature_factor", where, 0.0, None, False) if "temperature_factor" in t else 1.0
    prof = t.get("temperature_profile", "isothermal")
    if prof not in TEMPERATURE_PROFILES:
        close = difflib.get_close_matches(str(prof), TEMPERATURE_PROFILES, n=1, cutoff=0.4)
        raise InputError(f"{where}.temperature_profile", prof, " or ".join(TEMPERATURE_PROFILES),
                         detail=f"did you mean {close[0]!r}?" if close else "")
    tint = (scalar_si(t["internal_temperature"], f"{where}.internal_temperature", u.K, 0.0,
                      TEMPERATURE_RANGE_K[1])
            if "internal_temperature" in t else 0.0)
    kth = (scalar_si(t["thermal_opacity"], f"{where}.thermal_opacity", u.m**2 / u.kg, 0.0,
                       low_inclusive=False) if "thermal_opacity" in t else 1e-3)
    gam = (_number(t, "visible_to_thermal_ratio", where, 0.0, None, False)
           if "visible_to_thermal_ratio" in t else 0.4)
    return temp, factor, prof, tint, kth, gam


def _pressures(t, where):
    """Reference, surface and cloud-top pressures [Pa], in a consistent order."""
    p_ref = (_pressure(t, "reference_pressure", where) if "reference_pressure" in t
             else _DEFAULT_REFERENCE_PRESSURE_BAR * 1e5)
    p_surf = _pressure(t, "surface_pressure", where) if "surface_pressure" in t else None
    p_cloud = _pressure(t, "cloud_top_pressure", where) if "cloud_top_pressure" in t else None
    if p_surf is not None and p_ref > p_surf * (1 + 1e-9):
        raise InputError(f"{where}.reference_pressure", f"{p_ref / 1e5:.6g} bar",
                         f"at most the surface pressure ({p_surf / 1e5:.6g} bar)")
    if p_surf is not None and p_cloud is not None and p_cloud >= p_surf:
        raise InputError(f"{where}.cloud_top_pressure", f"{p_cloud / 1e5:.6g} bar",
                         f"below the surface pressure ({p_surf / 1e5:.6g} bar)")
    return p_ref, p_surf, p_cloud


def _number_list(value, field, low, high, unit, low_inclusive=True):
    """A list of >= 2 finite numbers in [low, high] (or (low, high])."""
    if not isinstance(value, (list, tuple)) or len(value) < 2 or any(
            isinstance(v, bool) or not isinstance(v, (int, float)) for v in value):
        raise InputError(field, value, f"a list of at least 2 numbers{' (' + unit + ')' if unit else ''}")
    arr = np.asarray(value, dtype=np.float64)
    bad = ~np.isfinite(arr) | (arr < low if low_inclusive else arr <= low) | (arr > high)
    if np.any(bad):
        raise InputError(field, float(arr[bad][0]),
                         f"numbers in {'[' if low_inclusive else '('}{low:g}, {high:g}] {unit}".rstrip())
    return arr


def _pressure_list(value, field):
    arr = _number_list(value, field, 0.0, 1e4, "bar", low_inclusive=False)
    d = np.diff(arr)
    if not (np.all(d > 0) or np.all(d < 0)):
        raise InputError(field, value, "strictly increasing or strictly decreasing pressures (bar)")
    return arr * 1e5


def _sub_table(t, key, where, keys):
    tab = t[key]
    if not isinstance(tab, dict):
        raise InputError(f"{where}.{key}", tab, "a table of " + ", ".join(keys))
    for k in tab:
        if k not in keys:
            close = difflib.get_close_matches(str(k), list(keys), n=1, cutoff=0.5)
            raise UnknownKeyError(f"{where}.{key}.{k}", tab[k], "keys " + ", ".join(keys),
                                  detail=f"did you mean {close[0]!r}?" if close else "")
    for k in keys:
        if k not in tab:
            raise InputError(f"{where}.{key}.{k}", None, f"a value ({keys[k]}); the key is required")
    return tab


def _temperature_table(t, where, prof):
    if prof != "tabulated":
        if "temperature_table" in t:
            raise InputError(f"{where}.temperature_profile", prof,
                             'tabulated (a temperature_table needs temperature_profile = "tabulated")')
        return None
    if "temperature_table" not in t:
        raise InputError(f"{where}.temperature_table", None,
                         "a table { pressure = [bar...], temperature = [K...] } "
                         '(needed by temperature_profile = "tabulated")')
    tab = _sub_table(t, "temperature_table", where,
                     {"pressure": "a list of pressures (bar)",
                      "temperature": "a list of temperatures (K)"})
    p = _pressure_list(tab["pressure"], f"{where}.temperature_table.pressure")
    temp = _number_list(tab["temperature"], f"{where}.temperature_table.temperature",
                        0.0, 1e5, "K", low_inclusive=False)
    if temp.size != p.size:
        raise InputError(f"{where}.temperature_table.temperature", f"{temp.size} values",
                         f"one temperature per pressure ({p.size})")
    return (tuple(float(v) for v in p), tuple(float(v) for v in temp))


def _cold_trap(t, where, x, fill, p_surf):
    if "cold_trap" not in t or t["cold_trap"] == {}:
        return None
    tab = _sub_table(t, "cold_trap", where, COLD_TRAP_KEYS)
    gas = tab["gas"]
    if not isinstance(gas, str) or gas not in x or gas == fill:
        raise InputError(f"{where}.cold_trap.gas", gas,
                         "a gas of mixing_ratios other than the fill gas ("
                         + ", ".join(k for k in x if k != fill) + ")")
    p_trop = _pressure(tab, "tropopause_pressure", f"{where}.cold_trap")
    if p_surf is not None and p_trop >= p_surf:
        raise InputError(f"{where}.cold_trap.tropopause_pressure", f"{p_trop / 1e5:.6g} bar",
                         f"below the surface pressure ({p_surf / 1e5:.6g} bar)")
    above = tab["mixing_ratio_above"]
    if isinstance(above, bool) or not isinstance(above, (int, float)) or not math.isfinite(above) \
            or not 0.0 <= above <= float(x[gas]) * (1 + 1e-12):
        raise InputError(f"{where}.cold_trap.mixing_ratio_above", above,
                         f"a number in [0, {float(x[gas]):.6g}] (at most the {gas} mixing ratio below)")
    return {"gas": gas, "tropopause_pressure_Pa": p_trop, "mixing_ratio_above": float(above)}


def _mixing_ratio_profiles(t, where, x, fill):
    if "mixing_ratio_profiles" not in t:
        return {}
    tab = t["mixing_ratio_profiles"]
    if not isinstance(tab, dict):
        raise InputError(f"{where}.mixing_ratio_profiles", tab,
                         "a table of species = { pressure = [bar...], mixing_ratio = [...] }")
    out = {}
    for gas in tab:
        field = f"{where}.mixing_ratio_profiles.{gas}"
        if gas not in x or gas == fill:
            raise InputError(field, gas, "a gas of mixing_ratios other than the fill gas ("
                             + ", ".join(k for k in x if k != fill) + ")")
        sub = _sub_table(tab, gas, f"{where}.mixing_ratio_profiles",
                         {"pressure": "a list of pressures (bar)",
                          "mixing_ratio": "a list of volume mixing ratios in [0, 1]"})
        p = _pressure_list(sub["pressure"], f"{field}.pressure")
        v = _number_list(sub["mixing_ratio"], f"{field}.mixing_ratio", 0.0, 1.0, "")
        if v.size != p.size:
            raise InputError(f"{field}.mixing_ratio", f"{v.size} values",
                             f"one mixing ratio per pressure ({p.size})")
        out[str(gas)] = (tuple(float(a) for a in p), tuple(float(a) for a in v))
    if out:
        fixed = sum(float(v) for k, v in x.items() if k != fill and k not in out)
        peak = fixed + sum(max(v) for _, v in out.values())
        if fill is not None and peak > 1.0 + 1e-6:
            raise InputError(f"{where}.mixing_ratio_profiles", f"peak sum {peak:.6g}",
                             "profiles leaving room for the fill gas (sum of mixing ratios <= 1)")
    return out


def preset_names():
    """Names of the shipped scenario presets, sorted."""
    return sorted(p.stem for p in data_path("scenarios").glob("*.toml"))
