"""The ``snrkit spectrum`` command module: options, files, JSON and exit codes.

CLI conventions only (DEVELOPERS.md); the physics of the spectra is checked against
its sources in test_spectrum*.py.
"""

import argparse
import json

import numpy as np
import pytest
import xarray as xr
from astropy.table import Table

from snrkit.cli import spectrum as cmd
from snrkit.errors import InputError
from snrkit.io.tables import data_path

ALDER = str(data_path("demo", "alder.toml"))
CEDAR = str(data_path("demo", "cedar.toml"))


def _run(argv):
    p = argparse.ArgumentParser()
    cmd.add_parser(p)
    return cmd.run(p.parse_args(argv))


def test_json_single_spectrum(capsys):
    assert _run([ALDER, "--scenario", "h2-clear-solar", "--resolution", "10", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    for key in ("scenario", "wavelength_um", "transit_depth_ppm", "scale_height_km",
                "annulus_ppm_per_scale_height", "spectra"):
        assert key in out
    assert out["scenario"] == "h2-clear-solar"
    assert len(out["wavelength_um"]) == len(out["transit_depth_ppm"])
    # annulus = 2 H Rp / Rs^2, consistent with the quoted scale height (Alder b: 1.12 R_J,
    # 1.28 R_sun)
    rp, rs = 1.12 * 7.1492e7, 1.28 * 6.957e8
    assert out["annulus_ppm_per_scale_height"] == pytest.approx(
        2 * out["scale_height_km"] * 1e3 * rp / rs**2 * 1e6, rel=1e-6)


def test_files_and_table(tmp_path, capsys):
    ecsv, nc, png = tmp_path / "s.ecsv", tmp_path / "s.nc", tmp_path / "s.png"
    assert _run([ALDER, "--scenario", "h2-clear-solar", "--scenario", "flat", "--resolution", "8",
                 "--out", str(ecsv), "--plot", str(png)]) == 0
    text = capsys.readouterr().out
    assert "h2-clear-solar" in text and "flat" in text and "wavelength_um" in text
    t = Table.read(ecsv, format="ascii.ecsv")
    assert set(t["scenario"]) == {"h2-clear-solar", "flat"}
    assert str(t["wavelength"].unit) == "um"
    assert png.stat().st_size > 1000
    # Cedar b's thick CO2 atmosphere stays optically thick at the preset's top
    # pressure in the CO2 15 um band core with the SP-3080 / RADCAL tables (their
    # effective 1/d puts ~2x more lines per cm^-1 there than the earlier band
    # list); the model says so, and the run still succeeds.
    from snrkit.errors import SnrkitWarning
    with pytest.warns(SnrkitWarning, match="optically thick near the top pressure"):
        assert _run([CEDAR, "--resolution", "8", "--solver", "layers", "--layers", "100",
                     "--out", str(nc)]) == 0
    ds = xr.open_dataset(nc, engine="scipy")
    assert ds.transit_depth_ppm.dims == ("planet", "wavelength")
    assert list(ds.planet.values) == ["Cedar b", "Cedar c"]
    assert np.all(np.isfinite(ds.transit_depth_ppm.values))
    ds.close()


@pytest.mark.parametrize("argv,match", [
    (["--scenario", "nope"], "preset name"),
    (["--scenario", "flat", "--out", "x.txt"], ".ecsv or .nc"),
    (["--scenario", "flat", "--plot", "x.jpg"], ".png"),
    (["--scenario", "flat", "--range", "5", "1"], "MIN < MAX"),
    (["--scenario", "flat", "--layers", "100"], "only with --solver layers"),
    ([], "no \\[planet.atmosphere\\]"),
])
def test_bad_arguments(argv, match, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    # the Birch demo system without its [planet.atmosphere] table
    text = data_path("demo", "birch.toml").read_text().split("[planet.atmosphere]")[0]
    (tmp_path / "bare.toml").write_text(text)
    system = str(tmp_path / "bare.toml")
    with pytest.raises(InputError, match=match):
        _run([system, "--resolution", "5"] + argv)


def test_registered_command_exit_codes(capsys):
    from snrkit.cli import entry as cli
    if "spectrum" not in cli.COMMANDS:
        pytest.skip("spectrum command not registered in snrkit.cli.entry yet")
    assert cli.main(["spectrum", ALDER, "--scenario", "h2-clear-solr"]) == 2
    assert "did you mean" in capsys.readouterr().err
    assert cli.main(["spectrum", ALDER, "--scenario", "flat", "--resolution", "5",
                     "--json"]) == 0
    json.loads(capsys.readouterr().out)


def test_json_has_planets_list(capsys):
    # CLI convention (DEVELOPERS.md): per-planet answers in a "planets" list whose
    # objects carry the keys the issue names.
    from snrkit.cli import entry as cli
    cedar = str(data_path("demo", "cedar.toml"))
    assert cli.main(["spectrum", cedar, "--resolution", "10", "--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert [p["name"] for p in doc["planets"]] == ["Cedar b", "Cedar c"]
    for p in doc["planets"]:
        assert len(p["wavelength_um"]) == len(p["transit_depth_ppm"]) > 10
        assert p["scale_height_km"] > 0 and p["annulus_ppm_per_scale_height"] > 0
        assert isinstance(p["scenario"], str)


def test_cross_sections_option(tmp_path, capsys):
    # A user's own H2O table (a smooth power law in wavenumber, an invented table)
    # replaces the band model; outside its coverage the command refuses (exit 2).
    from snrkit.cli import entry as cli
    nu = np.linspace(1500.0, 20000.0, 4000)              # cm-1, 0.5-6.7 um
    sigma = 1e-22 * (nu / 5000.0) ** 2
    f = tmp_path / "h2o.csv"
    f.write_text("wavenumber [cm-1],cross_section [cm2]\n"
                 + "\n".join(f"{a},{b}" for a, b in zip(nu, sigma)))
    cedar = str(data_path("demo", "cedar.toml"))
    rc = cli.main(["spectrum", cedar, "--planet", "Cedar b", "--scenario", "steam",
                   "--resolution", "20", "--range", "1", "5", "--cross-sections", f"H2O={f}",
                   "--json"])
    assert rc == 0
    assert json.loads(capsys.readouterr().out)["planets"][0]["transit_depth_ppm"]
    rc = cli.main(["spectrum", cedar, "--planet", "Cedar b", "--scenario", "steam",
                   "--resolution", "20", "--range", "0.3", "10", "--cross-sections", f"H2O={f}"])
    assert rc == 2
    assert cli.main(["spectrum", cedar, "--scenario", "steam", "--cross-sections", "H2O"]) == 2


def test_contributions_reach_every_output(tmp_path, capsys):
    # --contributions: the spectrum without each species in the JSON, the ECSV, the text
    # and the figure; and a species removed (same calibrated radius) can only lower the
    # depth in every bin -- less opacity, a lower effective radius (a molecule is nested
    # within its atmosphere)
    from snrkit.cli.entry import main
    out_ecsv, png = tmp_path / "c.ecsv", tmp_path / "c.png"
    rc = main(["spectrum", CEDAR, "--resolution", "30", "--contributions", "--json",
               "--out", str(out_ecsv), "--plot", str(png)])
    doc = json.loads(capsys.readouterr().out)
    assert rc == 0 and png.stat().st_size > 0
    table = Table.read(out_ecsv, format="ascii.ecsv")
    for spec in doc["spectra"]:
        without = spec["depth_without_species_ppm"]
        assert "CO2" in without
        rows = (table["planet"] == spec["planet"]) & (table["scenario"] == spec["scenario"])
        # the analytic solver's local power-law chord factor can move a bin by a few
        # 1e-3 H the wrong way when a weak absorber changes the local slope of ln k
        # (measured 2.6e-3 H for O2 at 1.65 um on Cedar c); the layered solver holds
        # the law to rounding (below)
        tol = 5e-3 * spec["annulus_ppm_per_scale_height"]
        for sp, values in without.items():
            np.testing.assert_allclose(np.asarray(table[f"depth_without_{sp}_ppm"])[rows], values)
            assert np.all(np.asarray(values) <= np.asarray(spec["transit_depth_ppm"]) + tol), sp
    rc = main(["spectrum", CEDAR, "--resolution", "30", "--contributions"])
    assert rc == 0 and "CO2 adds up to" in capsys.readouterr().out


def test_removing_a_species_never_deepens_the_layered_spectrum(capsys):
    from snrkit.cli.entry import main
    rc = main(["spectrum", CEDAR, "--resolution", "30", "--contributions", "--solver", "layers",
               "--json"])
    doc = json.loads(capsys.readouterr().out)
    assert rc == 0
    for spec in doc["spectra"]:
        full = np.asarray(spec["transit_depth_ppm"])
        for sp, values in spec["depth_without_species_ppm"].items():
            assert np.all(np.asarray(values) <= full + 1e-6), sp
