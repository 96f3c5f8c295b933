"""Hostile-input generators and checks shared by the property tests and the fuzz script.

Every generator takes a :class:`random.Random` (hypothesis supplies a seeded
one through ``st.randoms(use_true_random=False)``; ``tests/fuzz_inputs.py``
a seeded one of its own) and writes files into a folder.  Every check returns
a list of problem labels (empty when the run behaved):

``internal``   exit status 1, or an exception that is not an ``InputError``
``lost_row``   a catalogue row missing or present twice
``mislabel``   a row whose name is not the one in its input row
``nan``        a NaN, infinite or impossible number in an output
``leftover``   a temporary file left in the folder
``multiline``  an exit-2 error that is not exactly one line
``warning``    a Python or numpy warning on stderr
"""

import contextlib
import io
import json
import math
import os
import warnings
from pathlib import Path

import numpy as np

from snrkit.io.tables import data_path

__all__ = ["HOSTILE_NUMBERS", "mutate_toml", "system_case", "scenario_case", "mode_case",
           "catalogue_case", "option_case", "check_system", "check_scenario", "check_mode",
           "check_catalogue", "check_options", "run_cli", "leftovers"]

#: Values written in place of a TOML value (text as it appears in the file).
HOSTILE_NUMBERS = [
    "1e400", "-1e400", "1" + "0" * 400, "-" + "1" * 30, "nan", "inf", "-inf", "0", "-0.0", "-5",
    "1e-300", "5e-324", "1e300", "1e-30", "0.0001", "99999999", '"no"', '"false"', '"x"', '""',
    '"1e400 K"', '"5 kg"', '"3 furlong"', '"-1 d"', '"nan earthRad"', "[300, 400]", "[]",
    "{ a = 1 }", "true", "false", "2000-01-01", '"t14"', '"auto"', "1", "2", "0.5", "100",
    "[" * 40 + "1" + "]" * 40, "[" * 1000 + "]" * 1000,
]

_BAD_BYTES = [b"\xff\xfe", b"\xc3\x28", b"\x00", b"\xed\xa0\x80"]


def _value_lines(lines):
    return [i for i, ln in enumerate(lines)
            if "=" in ln and not ln.lstrip().startswith(("#", "["))]


def mutate_toml(text, rng, n_max=3):
    """Return hostile bytes made from TOML ``text``: values replaced, lines cut or doubled, bad bytes."""
    lines = text.splitlines()
    for _ in range(rng.randint(1, n_max)):
        idx = _value_lines(lines)
        op = rng.random()
        if idx and op < 0.7:
            i = rng.choice(idx)
            key = lines[i].split("=", 1)[0]
            lines[i] = f"{key}= {rng.choice(HOSTILE_NUMBERS)}"
        elif idx and op < 0.8:
            del lines[rng.choice(idx)]
        elif idx and op < 0.9:
            i = rng.choice(idx)
            lines.insert(i, lines[i])
        else:
            lines.insert(rng.randint(0, len(lines)), rng.choice([
                "[planet.observation]", "overhead = 50", "floor_averages_down = \"no\"",
                "unknown_key = 1", "title = " + "[" * 30 + "]" * 30, "[[planet]]", "[star]"]))
    raw = ("\n".join(lines) + "\n").encode()
    if rng.random() < 0.08:
        pos = rng.randint(0, len(raw))
        raw = raw[:pos] + rng.choice(_BAD_BYTES) + raw[pos:]
    if rng.random() < 0.03:
        raw = raw[:rng.randint(0, len(raw))]
    return raw


_SYSTEM_BASE = """title = "Hostile test system (invented)"
[star]
name = "Fuzz star"
effective_temperature = 3400
radius = 0.40
mass = 0.40
distance = 20.0
right_ascension = 120.0
declination = -10.0
[star.magnitudes]
J = 9.5
Ks = 8.8
[[planet]]
name = "Fuzz b"
radius = 1.6
mass = 3.0
period = 4.5
impact_parameter = 0.3
transit_midtime = 2461000.5
[planet.atmosphere]
scenario = "SCENARIO"
temperature = 400
[planet.observation]
transits = 2
overhead = 1.5
floor_averages_down = false
noise_floor = 20
baseline = 1.0
in_transit = "t14"
[[planet]]
name = "Fuzz c"
radius = 2.2
period = 11.0
inclination = 89.6
"""


def system_case(rng, folder):
    """Write a hostile system file (and a scenario file beside it); return its path."""
    folder = Path(folder)
    sub = folder / "sys"
    sub.mkdir(exist_ok=True)
    (sub / "local-scenario.toml").write_text('scenario = "n2-o2-temperate"\n')
    scen = rng.choice(["steam", "local-scenario.toml", "missing.toml", "flat"])
    raw = mutate_toml(_SYSTEM_BASE.replace("SCENARIO", scen), rng)
    path = sub / "system.toml"
    path.write_bytes(raw)
    return path


def scenario_case(rng, folder):
    """Write a hostile scenario file made from a shipped preset; return its path."""
    name = rng.choice(["n2-o2-temperate", "h2-clear-solar", "steam", "co2-thick"])
    text = Path(data_path("scenarios", f"{name}.toml")).read_text()
    path = Path(folder) / "scenario.toml"
    path.write_bytes(mutate_toml(text, rng))
    return path


def mode_case(rng, folder):
    """Write a hostile instrument-mode file made from a shipped preset; return its path."""
    name = rng.choice(["cold6m-prism-lowres", "space2.4m-grism-scan", "survey1m-lowres"])
    text = Path(data_path("instruments", f"{name}.toml")).read_text()
    path = Path(folder) / "mode.toml"
    path.write_bytes(mutate_toml(text, rng))
    return path


_CELLS = [np.nan, np.inf, -np.inf, 1e300, -1.0, 0.0, 1e-300, 5e-324, "abc", "", "1e400", "--"]
_NUMERIC_FIELDS = ("planet_radius_earth", "planet_mass_earth", "period_days", "impact_parameter",
                   "host_teff_K", "host_radius_sun", "host_mass_sun", "host_mag_J",
                   "host_distance_pc", "eccentricity", "semi_major_axis_au")


def catalogue_case(rng, folder, n_rows=6):
    """Write a catalogue with hostile cells (and maybe a renaming mapping).

    Returns
    -------
    (path, mapping path or None, expected names in input order)
    """
    from astropy.table import Table
    base = Table.read(data_path("demo", "catalogue.ecsv"))
    start = rng.randint(0, len(base) - n_rows)
    t = base[start:start + n_rows]
    t.meta = {}
    cols = {}
    for c in t.colnames:
        data = np.ma.asarray(t[c])
        fill = "" if data.dtype.kind in "US" else np.nan
        cols[c] = list(np.ma.filled(data.astype(object), fill))
    names = [str(x) for x in cols["planet_name"]]
    for _ in range(rng.randint(1, 4)):
        i = rng.randrange(n_rows)
        op = rng.random()
        if op < 0.15:
            names[i] = rng.choice(["", names[(i + 1) % n_rows], " spaced name ", "ü-name"])
        elif op < 0.25:
            for b in ("V", "J", "H", "Ks"):
                cols[f"host_mag_{b}"][i] = np.nan
        else:
            c = rng.choice(_NUMERIC_FIELDS)
            cols[c][i] = rng.choice(_CELLS)
    cols["planet_name"] = names
    out = Table()
    for c, vals in cols.items():
        if c == "planet_name" or any(isinstance(v, str) for v in vals):
            out[c] = np.array(["" if (isinstance(v, float) and math.isnan(v) and c == "planet_name")
                               else str(v) for v in vals])
        else:
            out[c] = np.array(vals, dtype=np.float64)
    mapping = None
    if rng.random() < 0.5:                     # renamed columns, a decoy name column
        from snrkit.planning.catalog import DEFAULT_COLUMNS
        parts = {"planet": [], "star": [], "mags": []}
        for k, c in DEFAULT_COLUMNS.items():
            if c not in out.colnames:
                continue
            new = f"col_{len(parts['planet']) + len(parts['star']) + len(parts['mags'])}"
            out.rename_column(c, new)
            part, key = k.split(".", 1)
            if key.startswith("magnitudes."):
                parts["mags"].append(f'{key.split(".")[1]} = "{new}"')
            else:
                parts[part].append(f'{key} = "{new}"')
        out["planet_name"] = [str(i) for i in range(n_rows)]
        mapping = Path(folder) / "mapping.toml"
        mapping.write_text("[planet]\n" + "\n".join(parts["planet"]) + "\n[star]\n"
                           + "\n".join(parts["star"]) + "\n[star.magnitudes]\n"
                           + "\n".join(parts["mags"]) + "\n")
    ext = rng.choice(["csv", "ecsv", "vot"])
    path = Path(folder) / f"catalogue.{ext}"
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")        # astropy's notes on odd column contents
        out.write(path, overwrite=True, format={"csv": "ascii.csv", "ecsv": "ascii.ecsv",
                                                "vot": "votable"}[ext])
    return path, mapping, [n.strip() for n in names]


_OPTION_VALUES = ["x", "-1", "0", "nan", "inf", "1e400", "1" + "0" * 400, "", "-0", "1e-300",
                  "9" * 30, "3.5", "a" * 300, "--json"]


def option_case(rng, folder):
    """A hostile command line (quick to refuse or to run)."""
    system = str(Path(data_path("demo", "cedar.toml")))
    opt, value = rng.choice([
        ("--resolution", None), ("--sigma", None), ("--max-transits", None), ("--seed", None),
        ("--transits", None), ("--band", None), ("--planet", None), ("--overhead", None),
        ("--out", None), ("--plot", None), ("--top", None), ("--mode", None)])
    value = rng.choice(_OPTION_VALUES)
    if opt in ("--out", "--plot") and rng.random() < 0.5:
        value = str(Path(folder) / rng.choice(["ro-missing/x.ecsv", "x" * 300 + ".ecsv",
                                               "plain.txt"]))
    command = rng.choice(["transits", "precision", "describe", "rank"])
    if command == "rank":
        return ["rank", str(Path(folder) / "missing.ecsv"), "--mode", "cold6m-prism-lowres",
                "--scenario", "flat", opt, value]
    extra = ["--mode", "cold6m-prism-lowres"] if command in ("transits", "precision") else []
    # an invalid --max-transits keeps transits quick; any accepted run is still checked
    return [command, system, *extra, "--json", opt, value]


# ----------------------------------------------------------------------------- checks

def run_cli(argv, cwd=None):
    """Run ``snrkit.cli.entry.main(argv)`` in process; return (status, stdout, stderr)."""
    from snrkit.cli.entry import main
    out, err = io.StringIO(), io.StringIO()
    old = os.getcwd()
    try:
        if cwd is not None:
            os.chdir(cwd)
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                rc = main(list(argv))
            except SystemExit as exc:     # never expected: main returns
                rc = 1 if exc.code not in (0, 2) else exc.code
    finally:
        os.chdir(old)
    return rc, out.getvalue(), err.getvalue()


def leftovers(folder):
    """Temporary files left in ``folder`` (or its sub-folders)."""
    return [p for p in Path(folder).rglob("*") if ".snrkit-partial" in p.name]


def _cli_problems(rc, err):
    probs = []
    if rc not in (0, 2):
        probs.append("internal")
    lines = [ln for ln in err.splitlines() if ln.startswith("error")]
    if rc == 2 and (len(lines) != 1 or not err.rstrip("\n").splitlines()[-1].startswith("error")):
        probs.append("multiline")
    import re
    from snrkit.errors import SnrkitWarning
    ours, todo = set(), [SnrkitWarning]
    while todo:                     # snrkit's own warnings (its channel), wherever defined
        cls = todo.pop()
        ours.add(cls.__name__)
        todo += cls.__subclasses__()
    foreign = [w for w in re.findall(r"\b(\w*Warning)\b", err) if w not in ours]
    if foreign or "encountered in" in err or "Traceback" in err:
        probs.append("warning")
    return probs


_POSITIVE = ("radius_earth", "mass_earth", "surface_gravity_m_s2", "equilibrium_temperature_K",
             "scale_height_km", "t14_hours", "a_over_rs")   # tsm needs a J magnitude


def check_system(path, folder, cwd=None):
    """describe --json on a system file: exit 0/2, one-line errors, finite outputs."""
    rc, out, err = run_cli(["describe", str(path), "--json"], cwd=cwd)
    probs = _cli_problems(rc, err)
    if rc == 0:
        doc = json.loads(out)
        for p in doc["planets"]:
            for k in _POSITIVE:
                v = p.get(k)
                if v is None or not (math.isfinite(v) and v > 0):
                    probs.append("nan")
            d = p.get("transit_depth_ppm")
            if d is None or not 0 < d < 1e6:
                probs.append("nan")
    if leftovers(folder):
        probs.append("leftover")
    return sorted(set(probs))


def _api(fn):
    """Run ``fn()``: [] if it worked or raised InputError, ["internal"] otherwise."""
    from snrkit.errors import InputError
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            fn()
        except InputError as exc:
            if "\n" in str(exc):
                return ["multiline"]
        except Warning:
            return ["warning"]
        except Exception:  # noqa: BLE001 - counting internal errors is the point
            return ["internal"]
    return []


def check_scenario(path):
    """Load a scenario file through the public function."""
    from snrkit.atmosphere.scenarios import load_scenario

    def go():
        sc = load_scenario(str(path))
        mu = sc.mean_molecular_weight
        if not (math.isfinite(mu) and mu > 0):
            raise AssertionError("mean molecular weight not finite")
    return _api(go)


def check_mode(path):
    """Load an instrument-mode file through the public function."""
    from snrkit.photons.instruments import load_mode
    return _api(lambda: load_mode(str(path)))


def check_catalogue(path, mapping, names, rank=False, folder=None):
    """Screen (and maybe rank) a hostile catalogue: every row once, with its own name."""
    from snrkit.planning.catalog import read_catalogue
    probs = []
    holder = {}
    probs += _api(lambda: holder.setdefault("cat", read_catalogue(path, mapping=mapping)))
    cat = holder.get("cat")
    if cat is None:
        return sorted(set(probs + ["lost_row"]))
    if len(cat) != len(names):
        probs.append("lost_row")
    elif list(cat.names) != names:
        probs.append("mislabel")
    for i, n in enumerate(names):
        if n and names.index(n) != i and cat.status[i] != "duplicate_name":
            probs.append("mislabel")
    if rank:
        argv = ["rank", str(path), "--mode", "cold6m-prism-lowres", "--scenario", "h2-clear-solar",
                "--json", "--out", str(Path(folder) / "ranked.ecsv")]
        if mapping is not None:
            argv += ["--mapping", str(mapping)]
        rc, out, err = run_cli(argv)
        probs += _cli_problems(rc, err)
        if rc == 0:
            rows = json.loads(out)["rows"]
            if [r["input_index"] for r in rows] != list(range(len(names))):
                probs.append("lost_row")
            elif [r["name"] for r in rows] != names:
                probs.append("mislabel")
            for r in rows:
                if r["status"] == "ok" and r["rank"] is not None and names[r["input_index"]] \
                        and names.index(names[r["input_index"]]) != r["input_index"]:
                    probs.append("mislabel")        # a duplicate ranked as ok
                if r["status"] == "ok" and not (r["hours_total"] and math.isfinite(r["hours_total"])):
                    probs.append("nan")
        elif rc == 2:
            probs.append("lost_row")                # a bad row must not fail the file
        if leftovers(folder):
            probs.append("leftover")
    return sorted(set(probs))


def check_options(argv, folder):
    """A hostile command line: exit 0/2, one-line errors, no leftovers."""
    rc, out, err = run_cli(argv, cwd=folder)
    probs = _cli_problems(rc, err)
    if leftovers(folder):
        probs.append("leftover")
    return sorted(set(probs))
