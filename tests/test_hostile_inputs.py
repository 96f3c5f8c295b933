"""Regression tests, one per failure class of the hostile-input runs (issue 16).

Each test feeds the smallest input that used to crash snrkit, lose or
mislabel a catalogue row, or give a wrong answer with exit status 0, and
checks the clean behaviour: exit 0 or 2 (never 1), one-line errors naming
the field, every row present with its own name.  All data are invented; the
contract itself is the project's (common practice, no source).
"""

import json
import os
import signal
import subprocess
import sys

import numpy as np
import pytest
from astropy.table import Table

from snrkit.planning.catalog import read_catalogue
from snrkit.errors import InputError
from snrkit.io.systemfile import load_system
from snrkit.io.tables import data_path
from hostile import run_cli, leftovers

CEDAR = data_path("demo", "cedar.toml")
DEMO_CAT = data_path("demo", "catalogue.ecsv")
MODE = "cold6m-prism-lowres"


def _one_line_error(rc, err, *words):
    assert rc == 2, err
    assert err.count("\n") == 1 and err.startswith("error: "), err
    for w in words:
        assert w in err, (w, err)


def _demo_rows(n=6):
    t = Table.read(DEMO_CAT)[:n]
    t.meta = {}
    return t


def _rank_json(path, *extra):
    rc, out, err = run_cli(["rank", str(path), "--mode", MODE, "--scenario", "h2-clear-solar",
                            "--json", *extra])
    assert rc == 0, err
    return json.loads(out)["rows"]


@pytest.mark.parametrize("column,value", [
    ("host_distance_pc", 1e300), ("period_days", 1e300), ("planet_radius_earth", 1e-300),
    ("host_mag_all", np.nan)])
def test_class1_one_bad_row_never_fails_the_catalogue(tmp_path, column, value):
    t = _demo_rows()
    if column == "host_mag_all":
        for b in ("V", "J", "H", "Ks"):
            t[f"host_mag_{b}"][2] = value
    else:
        t[column][2] = value
    path = tmp_path / "cat.ecsv"
    t.write(path)
    rows = _rank_json(path)
    assert [r["name"] for r in rows] == list(t["planet_name"])
    assert rows[2]["status"] in ("bad_value", "missing_magnitude")
    assert rows[2]["reason"]
    assert sum(r["status"] == "ok" for r in rows) >= 3     # the neighbours are ranked


def test_class2_names_come_from_the_mapped_column(tmp_path):
    t = _demo_rows()
    t.rename_column("planet_name", "col_0")
    t["planet_name"] = [str(i) for i in range(len(t))]          # a decoy column
    path = tmp_path / "cat.ecsv"
    t.write(path)
    mapping = tmp_path / "map.toml"
    mapping.write_text('start_from_default = true\n[planet]\nname = "col_0"\n')
    cat = read_catalogue(path, mapping=mapping)
    assert list(cat.names) == list(t["col_0"])
    rows = _rank_json(path, "--mapping", str(mapping))
    assert [r["name"] for r in rows] == list(t["col_0"])


@pytest.mark.parametrize("fmt,ext", [("ascii.ecsv", "ecsv"), ("votable", "vot")])
def test_class3_duplicate_name_in_a_mapped_catalogue_is_flagged(tmp_path, fmt, ext):
    t = _demo_rows()
    t.rename_column("planet_name", "label")
    t["label"][3] = t["label"][2]
    path = tmp_path / f"cat.{ext}"
    t.write(path, format=fmt)
    mapping = tmp_path / "map.toml"
    mapping.write_text('start_from_default = true\n[planet]\nname = "label"\n')
    rows = _rank_json(path, "--mapping", str(mapping))
    assert rows[3]["status"] == "duplicate_name" and rows[3]["rank"] is None
    assert rows[2]["name"] == rows[3]["name"] == str(t["label"][2])


@pytest.mark.parametrize("where", ["system", "scenario", "mode"])
def test_class4_deep_nesting_is_a_range_error(tmp_path, where):
    deep = "[" * 1000 + "]" * 1000
    f = tmp_path / "deep.toml"
    if where == "system":
        f.write_text(f"title = {deep}\n" + CEDAR.read_text())
        rc, _, err = run_cli(["describe", str(f)])
    elif where == "scenario":
        f.write_text(f'scenario = "flat"\nname = {deep}\n')
        rc, _, err = run_cli(["spectrum", str(CEDAR), "--scenario", str(f)])
    else:
        f.write_text(f"name = {deep}\n")
        rc, _, err = run_cli(["precision", str(CEDAR), "--mode", str(f)])
    _one_line_error(rc, err, "nested at most 16 deep")


@pytest.mark.parametrize("text,field", [
    ("effective_temperature = 1" + "0" * 400, "star.effective_temperature"),
    ("effective_temperature = 1e400", "star.effective_temperature")])
def test_class5_overflowing_numbers_in_a_system_file(tmp_path, text, field):
    f = tmp_path / "sys.toml"
    f.write_text(CEDAR.read_text().replace("effective_temperature = 2900", text))
    rc, _, err = run_cli(["describe", str(f)])
    _one_line_error(rc, err, field)


@pytest.mark.parametrize("body,field", [
    ('scenario = "flat"\ntemperature = 1' + "0" * 400, "temperature"),
    ('name = "x"\nmixing_ratios = { N2 = 1' + "0" * 400 + " }", "mixing_ratios.N2")])
def test_class5_overflowing_numbers_in_a_scenario(tmp_path, body, field):
    f = tmp_path / "sc.toml"
    f.write_text(body + "\n")
    rc, _, err = run_cli(["spectrum", str(CEDAR), "--scenario", str(f)])
    _one_line_error(rc, err, field)


def test_class5_overflowing_numbers_in_a_mode_curve(tmp_path):
    text = (data_path("instruments", f"{MODE}.toml")).read_text()
    f = tmp_path / "mode.toml"
    f.write_text(text.replace("[systematics]", "[systematics]\n", 1)
                 .replace("read_noise_electrons = ", "read_noise_electrons = 1" + "0" * 400 + " #"))
    from snrkit.photons.instruments import load_mode
    with pytest.raises(InputError, match="read_noise"):
        load_mode(str(f))


@pytest.mark.parametrize("option", ["--scenario", "--mode", "--mapping"])
def test_class6_non_utf8_files_are_input_errors(tmp_path, option):
    f = tmp_path / "bad.toml"
    f.write_bytes(b'name = "\xff\xfe"\n')
    if option == "--scenario":
        argv = ["spectrum", str(CEDAR), "--scenario", str(f)]
    elif option == "--mode":
        argv = ["precision", str(CEDAR), "--mode", str(f)]
    else:
        argv = ["rank", str(DEMO_CAT), "--mapping", str(f), "--mode", MODE, "--scenario", "flat"]
    rc, _, err = run_cli(argv)
    _one_line_error(rc, err, "UTF-8")


def test_class7_wrong_types_in_a_scenario(tmp_path):
    from snrkit.atmosphere.scenarios import load_scenario
    for body in ('scenario = "flat"\ntemperature = [300, 400]\n',
                 'scenario = "flat"\nhaze_slope = "steep"\n',
                 'name = "x"\nmixing_ratios = { N2 = [1] }\n'):
        f = tmp_path / "sc.toml"
        f.write_text(body)
        with pytest.raises(InputError):
            load_scenario(str(f))


def test_class8_extreme_sizes_are_refused_not_nan(tmp_path):
    for old, new in (("radius = 1.20 ", "radius = 1e-300 "), ("mass = 1.60 ", "mass = 1e-300 ")):
        f = tmp_path / "sys.toml"
        f.write_text(CEDAR.read_text().replace(old, new, 1))
        rc, _, err = run_cli(["describe", str(f), "--json"])
        _one_line_error(rc, err, "planet.")


def _slow_rank_child(tmp_path):
    """A child that holds its temporary output open until it is signalled."""
    # Ctrl-C as in a terminal: a process started in the background of a non-interactive
    # shell (as some CI runners do) inherits SIGINT ignored, and Python then leaves it so
    code = (
        "import signal, sys, time\n"
        "signal.signal(signal.SIGINT, signal.default_int_handler)\n"
        "import snrkit.cli._common as c\n"
        "from snrkit.io.atomic import atomic_path\n"
        "def slow(table, path):\n"
        "    with atomic_path(path) as tmp:\n"
        "        table.write(tmp, format='ascii.ecsv', overwrite=True)\n"
        "        print('written', flush=True)\n"
        "        time.sleep(60)\n"
        "c.write_table = slow\n"
        "from snrkit.cli.entry import main\n"
        "sys.exit(main(sys.argv[1:]))\n")
    return subprocess.Popen(
        [sys.executable, "-c", code, "rank", str(DEMO_CAT), "--mode", MODE, "--scenario", "flat",
         "--out", "out.ecsv", "--quiet", "--json"], cwd=tmp_path, stdout=subprocess.PIPE,
        stderr=subprocess.PIPE, text=True)


@pytest.mark.slow
@pytest.mark.parametrize("sig,status", [(signal.SIGTERM, 143), (signal.SIGINT, 130)])
def test_class9_and_13_signals_remove_the_temporary_file(tmp_path, sig, status):
    proc = _slow_rank_child(tmp_path)
    assert proc.stdout.readline().strip() == "written"
    assert len(leftovers(tmp_path)) == 1
    proc.send_signal(sig)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == status
    assert "Traceback" not in err and "KeyboardInterrupt" not in err
    assert leftovers(tmp_path) == []


def test_class9_partial_file_from_a_killed_run_is_removed_next_time(tmp_path):
    from snrkit.io.atomic import atomic_write_text
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()                      # a process id that no longer runs
    stale = tmp_path / f".out.txt.{dead.pid}.snrkit-partialabc.txt"
    stale.write_text("half")
    mine = tmp_path / f".other.txt.{os.getpid()}.snrkit-partialdef.txt"   # a live process's
    mine.write_text("in use")
    atomic_write_text(tmp_path / "new.txt", "x")
    assert not stale.exists() and mine.exists()
    assert (tmp_path / "new.txt").read_text() == "x"


@pytest.mark.parametrize("umask,expected", [(0o022, 0o644), (0o077, 0o600), (0o002, 0o664)])
def test_outputs_get_the_users_umask(tmp_path, umask, expected):
    # A file written atomically gets the mode a plain open() would give it (0666 less
    # the umask; POSIX open(2)), not mkstemp's 0600; a table through `--out` too.
    from astropy.table import Table as T
    from snrkit.io.atomic import atomic_write_text
    from snrkit.cli._common import write_table
    old = os.umask(umask)
    try:
        atomic_write_text(tmp_path / "a.txt", "x")
        write_table(T({"x": [1.0]}), tmp_path / "t.ecsv")
    finally:
        os.umask(old)
    for name in ("a.txt", "t.ecsv"):
        assert (tmp_path / name).stat().st_mode & 0o777 == expected, name


def _system_with_observation(tmp_path, lines):
    f = tmp_path / "sys.toml"
    f.write_text(CEDAR.read_text().replace(
        'scenario = "co2-thick"', 'scenario = "co2-thick"\n[planet.observation]\n' + lines, 1))
    return f


def test_class10_observation_keys_are_typed(tmp_path):
    f = _system_with_observation(tmp_path, 'floor_averages_down = "no"')
    _one_line_error(*run_cli(["describe", str(f)])[::2], "floor_averages_down", "true or false")
    f = _system_with_observation(tmp_path, "overhead = -5")
    _one_line_error(*run_cli(["describe", str(f)])[::2], "overhead", "[0, 100]")
    f = _system_with_observation(tmp_path, "floor_averages_down = false\novertime = 1")
    _one_line_error(*run_cli(["describe", str(f)])[::2], "overhead")       # suggests the key


def test_class10_overhead_is_honoured(tmp_path):
    f = _system_with_observation(tmp_path, "overhead = 50")
    system = load_system(f, planet="Cedar b")
    assert system.observations[0]["overhead"] == 50.0
    from snrkit.engine.transits import transits_for_system
    with_50 = transits_for_system(system, MODE, "co2-thick", probabilities=(), curves=False)
    default = transits_for_system(load_system(CEDAR, planet="Cedar b"), MODE, "co2-thick",
                                  probabilities=(), curves=False)
    a, b = with_50["planets"][0], default["planets"][0]
    # hours per transit = T14 + baseline + overhead; the default overhead is 1 h
    assert a["hours_per_transit"] - b["hours_per_transit"] == pytest.approx(49.0, abs=1e-9)


def test_class11_long_paths_and_bad_values_exit_2(tmp_path):
    long = "a" * 300 + ".toml"
    for argv in (["describe", long], ["spectrum", str(CEDAR), "--scenario", long],
                 ["precision", str(CEDAR), "--mode", long],
                 ["rank", "c" * 300 + ".ecsv", "--mode", MODE, "--scenario", "flat"],
                 ["rank", str(DEMO_CAT), "--mode", MODE, "--scenario", "flat",
                  "--out", "o" * 300 + ".ecsv"],
                 ["transits", str(CEDAR), "--mode", MODE, "--seed", "-1"]):
        rc, _, err = run_cli(argv, cwd=tmp_path)
        _one_line_error(rc, err)
    f = tmp_path / "sys.toml"
    f.write_text(CEDAR.read_text().replace('scenario = "co2-thick"',
                                           'scenario = "co2-thick"\ntemperature = [300, 400]'))
    _one_line_error(*run_cli(["describe", str(f)])[::2], "temperature")


def test_class12_unwritable_output_checked_before_the_work(tmp_path, monkeypatch):
    # the ranking must never start: it is replaced by a function that fails the test
    import snrkit.planning.rank

    def must_not_run(*a, **k):
        raise AssertionError("ranked before checking --out")
    monkeypatch.setattr(snrkit.planning.rank, "rank_catalogue", must_not_run)
    folder = tmp_path / "missing-folder"
    rc, _, err = run_cli(["rank", str(DEMO_CAT), "--mode", MODE, "--scenario", "flat",
                          "--out", str(folder / "x.ecsv")])
    _one_line_error(rc, err, "--out", "existing folder")
    (tmp_path / "adir.ecsv").mkdir()
    rc, _, err = run_cli(["rank", str(DEMO_CAT), "--mode", MODE, "--scenario", "flat",
                          "--out", str(tmp_path / "adir.ecsv")])
    _one_line_error(rc, err, "--out", "not a folder")


@pytest.mark.skipif(os.geteuid() == 0, reason="root may write into a read-only folder")
def test_class12_read_only_folder(tmp_path):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    rc, _, err = run_cli(["rank", str(DEMO_CAT), "--mode", MODE, "--scenario", "flat",
                          "--out", str(ro / "x.ecsv")])
    _one_line_error(rc, err, "--out", str(ro / "x.ecsv"), "may write")


def test_class14_relative_scenario_path_is_relative_to_the_system_file(tmp_path):
    sub = tmp_path / "sub"
    sub.mkdir()
    (sub / "mine.toml").write_text('scenario = "steam"\n')
    (sub / "sys.toml").write_text(CEDAR.read_text().replace('scenario = "co2-thick"',
                                                            'scenario = "mine.toml"'))
    rc, out, err = run_cli(["describe", "sub/sys.toml", "--json"], cwd=tmp_path)
    assert rc == 0, err


def test_class16_argparse_errors_are_one_line():
    rc, _, err = run_cli(["rank", "x.ecsv", "--mode", MODE, "--scenario", "flat", "--sigma", "x"])
    assert rc == 2 and err == "error: --sigma: got 'x'; allowed: a number > 0\n"
    rc, _, err = run_cli(["rank", "x.ecsv"])
    _one_line_error(rc, err, "--mode")
    rc, _, err = run_cli(["describe", str(CEDAR), "--no-such-option"])
    _one_line_error(rc, err, "--no-such-option")


def test_class16_messages_stay_short(tmp_path):
    t = _demo_rows()
    for b in ("V", "J", "H", "Ks"):
        t[f"host_mag_{b}"] = np.nan
    path = tmp_path / "cat.ecsv"
    t.write(path)
    rc, out, err = run_cli(["rank", str(path), "--mode", MODE, "--scenario", "flat", "--json"])
    assert rc == 0
    assert {r["status"] for r in json.loads(out)["rows"]} <= {"missing_magnitude", "bad_value",
                                                              "duplicate_name", "missing_mass"}
    with pytest.raises(InputError) as exc:
        raise InputError("x", list(range(1000)), "a number")
    assert len(str(exc.value)) < 300


def test_class15_questionable_valid_extremes_are_noted(tmp_path):
    # A scenario whose scale height is 0.126 of the planet radius: the spectrum is given,
    # with a one-line note that it is not a bound hydrostatic atmosphere (threshold R/H < 10,
    # common practice, no source); and calendar windows longer than the orbit are noted.
    import warnings
    from snrkit.atmosphere.spectrum import transmission_spectrum
    from snrkit.errors import ExtremeValueWarning
    from snrkit.errors import SnrkitWarning
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", SnrkitWarning)
        transmission_spectrum("h2-clear-solar", 0.6, 0.2, planet_mass=0.2,
                              equilibrium_temperature=1500.0, resolution=10)
    assert any(isinstance(w.message, ExtremeValueWarning) and "scale height" in str(w.message)
               for w in caught)
    with warnings.catch_warnings():
        warnings.simplefilter("error", ExtremeValueWarning)
        transmission_spectrum("h2-clear-solar", 11.0, 1.0, planet_mass=300.0,
                              equilibrium_temperature=1300.0, resolution=10)
    text = CEDAR.read_text().replace("period = 3.10 ", "period = 0.20 ")
    f = tmp_path / "fast.toml"
    f.write_text(text)
    rc, _, err = run_cli(["calendar", str(f), "--planet", "Cedar b", "--from", "2027-01-01",
                          "--to", "2027-01-03", "--baseline", "12 h"])
    assert rc == 0 and "longer than the orbit" in err
    assert all(len(line) < 400 for line in err.splitlines())
