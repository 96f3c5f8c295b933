"""Command line: conventions (stdout/stderr, JSON, exit codes) and the describe/demo commands."""

import json
import subprocess
import sys

import pytest

from snrkit.cli.entry import main
from snrkit.io.tables import data_path

CEDAR = str(data_path("demo", "cedar.toml"))
REQUIRED_KEYS = {"name", "surface_gravity_m_s2", "equilibrium_temperature_K", "scale_height_km",
                 "transit_depth_ppm", "annulus_ppm_per_scale_height", "t14_hours", "t23_hours",
                 "tsm", "esm", "mass_estimated", "habitable_zone"}


def run_cli(capsys, *args):
    rc = main(list(args))
    out, err = capsys.readouterr()
    return rc, out, err


def test_version_and_help(capsys):
    rc, out, _ = run_cli(capsys, "--version")
    assert rc == 0 and out.startswith("snrkit ")
    rc, out, _ = run_cli(capsys, "--help")
    assert rc == 0 and "describe" in out and "demo" in out


def test_describe_json_has_required_keys(capsys):
    rc, out, err = run_cli(capsys, "describe", CEDAR, "--json")
    assert rc == 0
    doc = json.loads(out)  # exactly one JSON object on stdout
    assert set(doc) == {"star", "planets"}
    assert doc["star"]["name"] == "Cedar"
    assert [p["name"] for p in doc["planets"]] == ["Cedar b", "Cedar c"]
    for p in doc["planets"]:
        assert REQUIRED_KEYS <= set(p)
    c = doc["planets"][1]
    assert c["mass_estimated"] is True
    # Cedar c (invented): S = 0.78 S_earth around a 2900 K star lies between the
    # runaway- and maximum-greenhouse limits of Kopparapu et al. 2014 (0.92, 0.23)
    assert c["habitable_zone"] == "conservative"
    assert 0.23 < c["insolation_earth"] < 0.92
    assert isinstance(c["t14_hours"], float)


def test_describe_planet_option(capsys):
    rc, out, _ = run_cli(capsys, "describe", CEDAR, "--planet", "Cedar b", "--json")
    assert rc == 0
    assert [p["name"] for p in json.loads(out)["planets"]] == ["Cedar b"]
    rc, out, err = run_cli(capsys, "describe", CEDAR, "--planet", "Cedar z")
    assert rc == 2 and out == ""
    assert err.count("\n") == 1 and "Cedar b" in err


def test_describe_table(capsys):
    rc, out, _ = run_cli(capsys, "describe", CEDAR)
    assert rc == 0
    assert "scale height [km]" in out and "Cedar c" in out


def test_bad_input_exits_2_with_one_line(capsys, tmp_path):
    f = tmp_path / "bad.toml"
    f.write_text('[star]\neffective_temperature = 3000\nradius = 0.2\nmass = 0.2\n'
                 '[[planet]]\nname = "x"\nradius = "1.2 kg"\nperiod = 3\n')
    rc, out, err = run_cli(capsys, "describe", str(f))
    assert rc == 2 and out == ""
    assert err.startswith("error: ") and err.count("\n") == 1
    assert "planet.radius" in err and "kg" in err
    assert "Traceback" not in err


@pytest.mark.parametrize("content", [
    b'[star]\nname = "\xff"\n',                                     # not UTF-8
    b'[star]\neffective_temperature = 5000\nradius = 1\nmass = 1\n'
    b'[[planet]]\nname = "x"\nradius = 2\nperiod = 10\ninclination = 170\n',  # b = 22
    b'[star]\neffective_temperature = 5000\nradius = 0.8\nmass = 0.8\n'
    b'[[planet]]\nname = "x"\nradius = 2\nperiod = 1\neccentricity = 0.8\n',  # periastron in star
    b'[star]\neffective_temperature = 5000\nradius = 1\nmass = 1\n'
    b'[[planet]]\nname = "x"\nradius = [2, 3]\nperiod = 10\n',                # two values
])
def test_more_bad_files_exit_2(capsys, tmp_path, content):
    f = tmp_path / "bad.toml"
    f.write_bytes(content)
    rc, out, err = run_cli(capsys, "describe", str(f), "--json")
    assert rc == 2 and out == ""
    assert err.startswith("error: ") and err.count("\n") == 1


def test_user_written_file(capsys, tmp_path):
    f = tmp_path / "mine.toml"
    f.write_text('[star]\nname = "Mine"\neffective_temperature = "3300 K"\nradius = 0.3\n'
                 'log_gravity = 4.95\n[star.magnitudes]\nJ = 9.8\n'
                 '[[planet]]\nname = "Mine b"\nradius = 1.4\nperiod = "6.2 d"\n'
                 'impact_parameter = 0.3\n')
    rc, out, err = run_cli(capsys, "describe", str(f), "--json")
    assert rc == 0
    p = json.loads(out)["planets"][0]
    assert p["mass_estimated"] is True
    assert p["esm"] is None          # no Ks magnitude given
    assert p["tsm"] > 0


def test_grazing_warning_goes_to_stderr(capsys, tmp_path):
    f = tmp_path / "graze.toml"
    f.write_text('[star]\neffective_temperature = 5000\nradius = 0.8\nmass = 0.8\n'
                 '[[planet]]\nname = "g"\nradius = 11\nmass = 300\nperiod = 3\n'
                 'impact_parameter = 1.0\n')
    rc, out, err = run_cli(capsys, "describe", str(f), "--json")
    assert rc == 0
    assert json.loads(out)["planets"][0]["t23_hours"] == 0.0
    assert "warning: grazing" in err


def test_demo_describe_only(capsys):
    rc, out, _ = run_cli(capsys, "demo", "--describe-only")
    assert rc == 0
    for name in ("Alder b", "Birch b", "Cedar c"):
        assert name in out
    rc, out, _ = run_cli(capsys, "demo", "--describe-only", "--json")
    assert rc == 0 and len(json.loads(out)["systems"]) >= 3
    rc, out, err = run_cli(capsys, "demo", "--only", "nosuch")
    assert rc == 2 and "cedar" in err


def test_presets_json(capsys):
    rc, out, _ = run_cli(capsys, "presets", "--json")
    doc = json.loads(out)
    assert rc == 0 and {"scenarios", "modes", "demo_systems"} <= set(doc)


def test_console_entry_point_subprocess():
    # The real process: exit status and a one-line error, no traceback.
    r = subprocess.run([sys.executable, "-m", "snrkit", "describe", "no-such-file.toml"],
                       capture_output=True, text=True)
    assert r.returncode == 2
    assert r.stdout == "" and "no-such-file.toml" in r.stderr and "Traceback" not in r.stderr
    r = subprocess.run([sys.executable, "-m", "snrkit", "describe", CEDAR, "--json"],
                       capture_output=True, text=True)
    assert r.returncode == 0 and json.loads(r.stdout)["planets"]


def test_help_does_not_import_heavy_modules():
    code = ("import sys; from snrkit.cli.entry import main; main(['--help']); "
            "bad = [m for m in ('matplotlib', 'scipy', 'dask', 'astropy', 'numpy', 'xarray', "
            "'pandas', 'yaml', 'jinja2') if m in sys.modules]; "
            "print('HEAVY', bad)")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert "HEAVY []" in r.stdout, r.stdout


def test_transits_reads_its_tables_without_astropy_table():
    # the shipped tables on the start-up path go through snrkit.io.tables.read_columns, and the
    # engine passes labelled numpy arrays (snrkit.labelled), so xarray (and with it pandas, and
    # dask where installed) stays out of a cold call
    alder = str(data_path("demo", "alder.toml"))
    code = ("import sys, io, contextlib; from snrkit.cli.entry import main\n"
            "with contextlib.redirect_stdout(io.StringIO()):\n"
            f"    rc = main(['transits', {alder!r}])\n"
            "bad = [m for m in ('astropy.table', 'astropy.io.ascii', 'matplotlib', 'scipy.stats', "
            "'xarray', 'pandas', 'dask', 'jinja2') if m in sys.modules]\n"
            "print('RC', rc, 'HEAVY', bad)")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert "RC 0 HEAVY []" in r.stdout, r.stdout + r.stderr


def test_unknown_unit_message_has_no_library_advice(capsys, tmp_path):
    text = data_path("demo", "alder.toml").read_text()
    assert 'radius = "1.12 jupiterRad"' in text
    bad = tmp_path / "bad_unit.toml"
    bad.write_text(text.replace('radius = "1.12 jupiterRad"', 'radius = "1.12 furlong"'))
    rc, _, err = run_cli(capsys, "transits", str(bad))
    assert rc == 2 and len(err.strip().splitlines()) == 1
    assert "furlong" in err and "planet.radius" in err
    assert "http" not in err and "def_unit" not in err


def test_catalogue_given_to_a_system_command_points_to_rank(capsys):
    rc, _, err = run_cli(capsys, "transits", str(data_path("demo", "catalogue.ecsv")))
    assert rc == 2 and "snrkit rank" in err


def test_presets_show_prints_a_preset_and_its_path(capsys):
    from snrkit.io.tomlfile import loads_toml
    rc, out, _ = run_cli(capsys, "presets", "--show", "steam")
    assert rc == 0
    first, _, body = out.partition("\n")
    assert first.startswith("# ") and first.endswith("steam.toml")
    assert loads_toml(body, "shown")["name"] == "steam"     # the file itself, ready to copy
    rc, out, _ = run_cli(capsys, "presets", "--show", "cold6m-prism-lowres")
    assert rc == 0 and "cold6m-prism-lowres.toml" in out.splitlines()[0]
    for bad in ("no-such-preset", "../demo/alder"):
        rc, _, err = run_cli(capsys, "presets", "--show", bad)
        assert rc == 2 and "preset" in err


def test_describe_words_the_habitable_zone(capsys):
    # Alder b receives hundreds of times Earth's instellation: inside the inner edge
    rc, out, _ = run_cli(capsys, "describe", str(data_path("demo", "alder.toml")))
    line = next(x for x in out.splitlines() if x.strip().startswith("habitable zone"))
    assert rc == 0 and "inside the inner edge" in line


def test_calendar_observable_only_keeps_the_observable_windows(capsys):
    cedar = str(data_path("demo", "cedar.toml"))
    args = ("calendar", cedar, "--from", "2027-01-01", "--to", "2027-06-30", "--json")
    rc, out, _ = run_cli(capsys, *args)
    every = [w for p in json.loads(out)["planets"] for w in p["windows"]]
    rc2, out2, _ = run_cli(capsys, *args, "--observable-only")
    kept = [w for p in json.loads(out2)["planets"] for w in p["windows"]]
    assert rc == rc2 == 0
    assert any(not w["observable"] for w in every)            # the range has both kinds
    assert kept == [w for w in every if w["observable"]] and kept


def test_plan_starts_today_by_default(capsys, monkeypatch):
    import datetime
    from snrkit.cli import plan as plan_cmd
    today = datetime.datetime.now(datetime.timezone.utc).date().isoformat()
    assert plan_cmd.today_utc() == today
    # the default start is that date: moved to 2031, the windows follow
    monkeypatch.setattr(plan_cmd, "today_utc", lambda: "2031-03-01")
    cedar = str(data_path("demo", "cedar.toml"))
    rc, out, _ = run_cli(capsys, "plan", cedar, "--planet", "Cedar b", "--mode",
                         "cold6m-prism-lowres", "--years", "1", "--json")
    first = min(w["start_utc"] for p in json.loads(out)["planets"] for w in p["windows"])
    assert rc == 0 and "2031-03-01" <= first[:10] < "2032-03-02"


def test_every_option_has_help_text():
    from snrkit.cli.entry import _build_parser, COMMANDS
    missing = []
    for name in COMMANDS:
        parser = _build_parser(name)
        sub = next(a for a in parser._actions if a.dest == "command").choices[name]
        missing += [(name, a.option_strings[-1]) for a in sub._actions
                    if a.option_strings and a.dest != "help" and not a.help]
    assert not missing


def test_demo_writes_a_readable_summary(demo_run):
    # the whole `make demo` job, end to end: every demo system, the ranked catalogue
    # and the plans, summed up in plain sentences (no Python objects printed); the
    # run is shared with tests/test_report_browser.py (fixture in conftest.py)
    text = (demo_run["out"] / "summary.txt").read_text()
    assert demo_run["rc"] == 0 and demo_run["stdout"] == text
    for name in ("Alder b", "Birch b", "Cedar b", "Cedar c", "demo catalogue", "plan Cedar c",
                 "invented population", "400 h:"):
        assert name in text, name
    assert (demo_run["out"] / "yields_by_budget.png").stat().st_size > 0
    assert "{" not in text and "}" not in text
    import re
    assert not re.search(r"(?<![0-9.])1 transits", text)      # "1 transit", not "1 transits"


def test_several_modes_side_by_side_and_one_mode_elsewhere(capsys):
    modes = ("cold6m-prism-lowres", "cold6m-grism-2.4-5um")
    rc, out, _ = run_cli(capsys, "transits", CEDAR, "--mode", modes[0], "--mode", modes[1],
                         "--json")
    doc = json.loads(out)
    assert rc == 0 and [m["mode"] for m in doc["comparison"][0]["modes"]] == list(modes)
    # each mode's answer is the one that mode gives alone
    for k, mode in enumerate(modes):
        rc, alone, _ = run_cli(capsys, "transits", CEDAR, "--mode", mode, "--json")
        n_alone = [p["transits_needed"] for p in json.loads(alone)["planets"]]
        assert [row["modes"][k]["transits_needed"] for row in doc["comparison"]] == n_alone
    rc, out, _ = run_cli(capsys, "transits", CEDAR, "--mode", modes[0], "--mode", modes[1])
    assert rc == 0 and "side by side" in out
    for command in ("precision", "contrast", "plan"):
        extra = ("--scenarios", "steam,flat") if command == "contrast" else ()
        rc, _, err = run_cli(capsys, command, CEDAR, "--mode", modes[0], "--mode", modes[1], *extra)
        assert rc == 2 and "one mode" in err, command


def test_presets_show_writes_every_kind_of_starting_point(capsys, tmp_path):
    # a system file, a scenario, a mode and a catalogue mapping, each readable by the
    # reader of its kind after the header line
    from snrkit.io.tomlfile import read_toml
    from snrkit.planning.catalog import load_mapping
    for name in ("cedar", "steam", "cold6m-prism-lowres", "example-renamed"):
        out = tmp_path / f"{name}.toml"
        rc, printed, _ = run_cli(capsys, "presets", "--show", name, "--out", str(out))
        assert rc == 0 and str(out) in printed
        assert out.read_text().startswith("# from ") and read_toml(out, name)
        assert "not this file" not in out.read_text()          # the copy is the user's to edit
    assert load_mapping(str(tmp_path / "example-renamed.toml"))
    rc, _, err = run_cli(capsys, "presets", "--out", str(tmp_path / "x.toml"))
    assert rc == 2 and "--show" in err


@pytest.mark.parametrize("old,new,field", [
    ('radius = "1.12 jupiterRad"', 'radius = "4.5 jupiterRad"', "planet.radius"),
    ('mass = "1.45 jupiterMass"', 'mass = "20 jupiterMass"', "planet.mass"),
    ("mass = 1.18                           # solar masses", "mass = 0.05", "star.mass"),
    ('radius = "1.12 jupiterRad"', 'radius = "0.5 earthRad"', "planet.surface_gravity"),
])
def test_unusual_values_need_allow_unusual(capsys, tmp_path, old, new, field):
    # a value outside the usual range of a planet or host (most often a unit mistake) is
    # refused with one line naming it; --allow-unusual lets an expert through
    text = data_path("demo", "alder.toml").read_text()
    assert old in text
    f = tmp_path / "unusual.toml"
    f.write_text(text.replace(old, new, 1))
    rc, _, err = run_cli(capsys, "describe", str(f))
    assert rc == 2 and field in err and "--allow-unusual" in err and len(err.strip().splitlines()) == 1
    rc, out, _ = run_cli(capsys, "--allow-unusual", "describe", str(f))
    assert rc == 0 and "Alder b" in out


def test_tables_write_to_fits_and_read_back_without_warnings(capsys, tmp_path):
    # rank and calendar tables as FITS: units FITS does not name (earthRad) move to the
    # description, the settings to one JSON header value; read back with warnings as errors
    import warnings
    from astropy.table import Table
    cat = str(data_path("demo", "catalogue.ecsv"))
    rank_fits, cal_fits = tmp_path / "rank.fits", tmp_path / "windows.fits"
    rc, _, _ = run_cli(capsys, "rank", cat, "--mode", "cold6m-prism-lowres", "--scenario",
                       "h2-clear-solar", "--resolution", "20", "--out", str(rank_fits), "--json")
    assert rc == 0
    rc, _, _ = run_cli(capsys, "calendar", CEDAR, "--from", "2027-01-01", "--to", "2027-02-01",
                       "--out", str(cal_fits))
    assert rc == 0
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        ranked = Table.read(rank_fits)
        windows = Table.read(cal_fits)
    assert len(ranked) == 269 and "[earthRad]" in ranked["radius_earth"].description
    assert str(ranked["hours_total"].unit) == "h"
    assert json.loads(ranked.meta["SNRKIT"])["test"] == "atmosphere"
    assert len(windows) > 0 and "mid_utc" in windows.colnames
