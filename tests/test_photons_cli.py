"""`snrkit precision` command (snrkit.cli.precision): output layout, JSON and exit codes.

These tests check CLI conventions (DEVELOPERS.md), not physics values; the physics
of the precision model is checked against its sources in test_photons_precision.py.
"""

import argparse
import json

import pytest

from snrkit.cli import precision as cmd
from snrkit.errors import InputError, UnknownKeyError
from snrkit.photons.precision import SaturationWarning
from snrkit.io.tables import data_path

CEDAR = str(data_path("demo", "cedar.toml"))
ALDER = str(data_path("demo", "alder.toml"))


def run_cmd(capsys, *argv):
    p = argparse.ArgumentParser()
    cmd.add_parser(p)
    rc = cmd.run(p.parse_args(list(argv)))
    out, err = capsys.readouterr()
    return rc, out, err


def test_json_per_planet(capsys):
    rc, out, _ = run_cmd(capsys, CEDAR, "--mode", "cold6m-xdisp-medres", "--resolution", "50",
                         "--transits", "3", "--json")
    assert rc == 0
    doc = json.loads(out)
    assert doc["mode"] == "cold6m-xdisp-medres" and doc["transits"] == 3
    assert [p["name"] for p in doc["planets"]] == ["Cedar b", "Cedar c"]
    for p in doc["planets"]:
        for key in ("mode", "saturated", "groups_per_integration", "duty_cycle",
                    "wavelength_um", "noise_ppm_per_transit"):
            assert key in p
        assert p["saturated"] is False
        assert len(p["wavelength_um"]) == len(p["noise_ppm_per_transit"]) > 10
        assert set(p["noise_budget_ppm"]) == {"photon", "background", "dark", "read", "floor"}
        assert 0 < p["duty_cycle"] < 1


def test_table_and_plot(capsys, tmp_path):
    png = tmp_path / "noise.png"
    rc, out, _ = run_cmd(capsys, ALDER, "--mode", "space2.4m-grism-scan", "--plot", str(png))
    assert rc == 0
    assert "readout: scan" in out and "median budget per transit" in out and "lambda_um" in out
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_too_bright_star_is_flagged(capsys, tmp_path):
    text = data_path("demo", "alder.toml").read_text().replace("J = 10.27", "J = 5.00")
    assert "J = 5.00" in text
    p = tmp_path / "bright.toml"
    p.write_text(text)
    with pytest.warns(SaturationWarning, match="too bright"):
        rc, out, _ = run_cmd(capsys, str(p), "--mode", "cold6m-prism-lowres", "--json")
    assert rc == 0
    planet = json.loads(out)["planets"][0]
    assert planet["saturated"] is True and planet["star_too_bright"] is True
    assert planet["saturation_limit_mag"] > 10
    assert None in planet["noise_ppm_per_transit"]          # saturated bins carry no noise
    with pytest.warns(SaturationWarning):
        rc, out, _ = run_cmd(capsys, str(p), "--mode", "cold6m-prism-lowres")
    assert "SATURATED" in out


def test_bad_arguments(capsys):
    with pytest.raises(UnknownKeyError, match="cold6m-prism-lowres"):
        run_cmd(capsys, CEDAR, "--mode", "nonesuch")
    with pytest.raises(InputError, match="--transits"):
        run_cmd(capsys, CEDAR, "--mode", "cold6m-prism-lowres", "--transits", "0")
    with pytest.raises(InputError, match="mode"):
        run_cmd(capsys, CEDAR)


def test_command_through_cli_main(capsys, monkeypatch):
    # Exit codes and one JSON object through the real entry point; the command is registered
    # here in case snrkit.cli.entry.COMMANDS does not list it yet.
    from snrkit.cli import entry as cli
    monkeypatch.setitem(cli.COMMANDS, "precision",
                        ("precision", "per-bin transit-depth precision for an instrument mode"))
    assert cli.main(["precision", CEDAR, "--mode", "nonesuch"]) == 2
    _, err = capsys.readouterr()
    assert err.startswith("error: mode") and "cold6m-prism-lowres" in err
    assert cli.main(["precision", CEDAR, "--mode", "cold6m-xdisp-medres", "--json"]) == 0
    out, _ = capsys.readouterr()
    assert json.loads(out)["mode"] == "cold6m-xdisp-medres"     # exactly one JSON object


def test_limits_command(capsys):
    # `snrkit limits` reports the helper's numbers (checked against the saturation
    # rule in test_photons_precision.py); the scan mode has no bright limit.
    from snrkit.cli.entry import main
    from snrkit.photons.targets import limiting_magnitudes
    rc = main(["limits", "--mode", "cold6m-prism-lowres", "--mode", "space2.4m-grism-scan",
               "--teff", "3300", "--json"])
    assert rc == 0
    rows = json.loads(capsys.readouterr().out)["modes"]
    ref = limiting_magnitudes("cold6m-prism-lowres", 3300.0, "J")
    assert rows[0]["saturation_mag"] == pytest.approx(ref["saturation_mag"])
    assert rows[1]["saturation_mag"] is None
    assert main(["limits", "--mode", "nope", "--teff", "3300"]) == 2
