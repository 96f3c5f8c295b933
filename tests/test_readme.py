"""The README's examples run as written (common practice, no source).

The Python blocks are executed; the TOML block is read as a system file and
described; every command in the tour is a registered command.
"""

import re
from pathlib import Path

import pytest

README = (Path(__file__).resolve().parents[1] / "README.md").read_text()


def _blocks(lang):
    return re.findall(rf"```{lang}\n(.*?)```", README, flags=re.S)


@pytest.mark.filterwarnings("ignore::snrkit.errors.SnrkitWarning")  # spectrum-layer notes
def test_python_examples_run(tmp_path, monkeypatch):
    # The stellar-spectrum example reads "my_star_spectrum.csv": a 2900 K Planck curve in the
    # README's CSV format stands in for the user's file.
    import numpy as np
    from snrkit.photons.sed import planck_flambda
    lam = np.geomspace(0.3, 15.0, 400)
    flux = planck_flambda(lam * 1e-6, 2900.0) * 1e-7           # W m-3 -> erg s-1 cm-2 A-1
    (tmp_path / "my_star_spectrum.csv").write_text(
        "wavelength [um],flux [erg / (s cm2 Angstrom)]\n"
        + "\n".join(f"{a:.6g},{b:.6g}" for a, b in zip(lam, flux)))
    monkeypatch.chdir(tmp_path)
    blocks = _blocks("python")
    assert len(blocks) == 2
    for code in blocks:
        exec(compile(code, "README.md", "exec"), {"__name__": "__readme__"})


def test_toml_example_is_a_valid_system_file(tmp_path, capsys):
    from snrkit.cli.entry import main
    (text,) = _blocks("toml")
    f = tmp_path / "readme.toml"
    f.write_text(text)
    assert main(["describe", str(f), "--json"]) == 0
    assert "My star b" in capsys.readouterr().out


def test_tour_commands_exist():
    from snrkit.cli.entry import COMMANDS
    (sh, *_rest) = [b for b in _blocks("sh") if "snrkit describe" in b]
    used = set(re.findall(r"^snrkit (\w+)", sh, flags=re.M))
    assert used and used <= set(COMMANDS)
