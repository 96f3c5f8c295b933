"""The worked-example notebooks run: every code cell is executed in order.

Reference: the notebooks use only the public API, so this catches API drift
(common practice, no source).
"""

import json
from pathlib import Path

import pytest

NOTEBOOKS = sorted((Path(__file__).resolve().parents[1] / "notebooks").glob("*.ipynb"))


# the spectrum layer's notes (optically thick top, clamped temperatures) are warnings
@pytest.mark.filterwarnings("ignore::snrkit.errors.SnrkitWarning")
@pytest.mark.parametrize("path", NOTEBOOKS, ids=[p.name for p in NOTEBOOKS])
def test_notebook_code_cells_run(path, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    monkeypatch.setenv("MPLBACKEND", "Agg")
    nb = json.loads(path.read_text())
    namespace = {"__name__": "__notebook__"}
    ran = 0
    for cell in nb["cells"]:
        if cell["cell_type"] == "code":
            exec(compile("".join(cell["source"]), f"{path.name}", "exec"), namespace)
            ran += 1
    assert ran > 0
