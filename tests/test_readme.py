"""The README's examples run as written (common practice, no source).

The Python block is executed; the TOML block is read as a system file and
described; every command in the tour is a registered command.
"""

import re
from pathlib import Path

import pytest

README = (Path(__file__).resolve().parents[1] / "README.md").read_text()


def _blocks(lang):
    return re.findall(rf"```{lang}\n(.*?)```", README, flags=re.S)


@pytest.mark.filterwarnings("ignore::snrkit.errors.SnrkitWarning")  # spectrum-layer notes
def test_python_example_runs():
    (code,) = _blocks("python")
    exec(compile(code, "README.md", "exec"), {"__name__": "__readme__"})


def test_toml_example_is_a_valid_system_file(tmp_path, capsys):
    from snrkit.cli import main
    (text,) = _blocks("toml")
    f = tmp_path / "readme.toml"
    f.write_text(text)
    assert main(["describe", str(f), "--json"]) == 0
    assert "My star b" in capsys.readouterr().out


def test_tour_commands_exist():
    from snrkit.cli import COMMANDS
    (sh, *_rest) = [b for b in _blocks("sh") if "snrkit describe" in b]
    used = set(re.findall(r"^snrkit (\w+)", sh, flags=re.M))
    assert used and used <= set(COMMANDS)
