"""A built, non-editable install carries and finds the data tables."""

import json
import os
import subprocess
import sys
import zipfile

import pytest


@pytest.mark.slow
def test_wheel_install_finds_data_tables(tmp_path):
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    wheel_dir = tmp_path / "wheel"
    r = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation",
                        "-q", "-w", str(wheel_dir), root], capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    wheels = list(wheel_dir.glob("snrkit-*.whl"))
    assert len(wheels) == 1
    wheel = zipfile.ZipFile(wheels[0])
    names = wheel.namelist()
    assert "snrkit/data_tables/README.md" in names
    # the licence travels with the wheel, with PEP 639 metadata (Python Packaging
    # Authority, PEP 639, "Improving license clarity with better package metadata")
    assert any(n.endswith(".dist-info/licenses/LICENSE") for n in names)
    meta = wheel.read(next(n for n in names if n.endswith(".dist-info/METADATA"))).decode()
    assert "License-Expression: BSD-3-Clause" in meta
    assert "License-File: LICENSE" in meta
    assert "Classifier: Topic :: Scientific/Engineering :: Astronomy" in meta
    assert "Project-URL: Source, " in meta
    # PEP 561 (Smith 2017, "Distributing and Packaging Type Information"): the marker
    # file tells type checkers that the installed package's annotations are to be used
    assert "snrkit/py.typed" in names
    assert any(n.startswith("snrkit/data_tables/demo/") for n in names)
    # the report's templates travel with the package (jinja2's PackageLoader reads them there)
    assert {"snrkit/output/templates/report.html.j2", "snrkit/output/templates/report.css"} <= set(names)
    site = tmp_path / "site"
    r = subprocess.run([sys.executable, "-m", "pip", "install", "--no-deps", "-q", "--target",
                        str(site), str(wheels[0])], capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    # Run from an empty folder with the installed copy first on the path, so the
    # source checkout cannot be what answers.
    code = (
        "import sys, json; sys.path.insert(0, sys.argv[1]); import snrkit, snrkit.io.tables as t; "
        "from snrkit.cli import main; "
        "from snrkit.output.report import render_report; "
        "from snrkit.output.report_data import preset_provenance; "
        "doc = dict(title='t', version='0', command_line='', created_utc='', planets=[], catalogue=None, "
        "provenance=[], presets=preset_provenance(['flat'], ['cold6m-prism-lowres']), caution='c'); "
        "html = render_report(doc, {'_all': {}}); "
        "print(json.dumps({'pkg': snrkit.__file__, 'data': str(t.data_path('species.ecsv')), "
        "'html': 'id=\"caution\"' in html and 'detector.read_noise_electrons' in html})); "
        "sys.stdout.flush(); rc = main(['demo', '--describe-only', '--json']); sys.exit(rc)"
    )
    work = tmp_path / "elsewhere"
    work.mkdir()
    r = subprocess.run([sys.executable, "-c", code, str(site)], capture_output=True, text=True,
                       cwd=work)
    assert r.returncode == 0, r.stderr
    first, rest = r.stdout.split("\n", 1)
    where = json.loads(first)
    assert where["pkg"].startswith(str(site))
    assert where["data"].startswith(str(site / "snrkit" / "data_tables"))
    assert where["html"]
    assert json.loads(rest)["systems"]


#: The public API named in the README and by the package's lazy top-level names.
PUBLIC_API = [
    ("snrkit.bodies.star", "Star.__init__"), ("snrkit.bodies.star", "Star.magnitude"),
    ("snrkit.bodies.planet", "Planet.__init__"), ("snrkit.bodies.system", "System.__init__"),
    ("snrkit.bodies.system", "System.select"), ("snrkit.bodies.system", "System.take"),
    ("snrkit.bodies.system", "System.derived"), ("snrkit.bodies.system", "System.derived_arrays"),
    ("snrkit.io.systemfile", "load_system"), ("snrkit.io.systemfile", "read_system_text"),
    ("snrkit.atmosphere.composition", "mean_molecular_weight"),
    ("snrkit.engine.transits", "transits_for_system"), ("snrkit.engine.transits", "contrast_for_system"),
    ("snrkit.output.transit_figures", "plot_transits"),
    ("snrkit.output.transit_figures", "plot_significance"),
    ("snrkit.photons.stellar_spectrum", "read_spectrum"),
    ("snrkit.photons.stellar_spectrum", "StellarSpectrum.normalised"),
    ("snrkit.photons.stellar_spectrum", "StellarSpectrum.magnitude"),
    ("snrkit.photons.precision", "transit_precision"),
    ("snrkit.photons.targets", "system_precision"), ("snrkit.photons.targets", "limiting_magnitudes"),
]


@pytest.mark.parametrize("module,name", PUBLIC_API)
def test_public_api_is_annotated(module, name):
    # Every parameter and the return value carry a type hint, and the hints resolve
    # (typing.get_type_hints evaluates them; names imported only for type checkers
    # are supplied here, as a checker would see them).
    import importlib
    import inspect
    import typing
    from collections.abc import Mapping, Sequence
    import numpy.typing as npt
    import xarray
    from astropy.table import QTable
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure
    from snrkit.bodies.system import System
    from snrkit.labelled import Labelled
    from snrkit.photons.mode import Mode
    from snrkit.photons.stellar_spectrum import StellarSpectrum
    from snrkit.units import PathLike, QuantityLike
    mod = importlib.import_module(module)
    obj = mod
    for part in name.split("."):
        obj = getattr(obj, part)
    sig = inspect.signature(obj)
    missing = [p for p, par in sig.parameters.items()
               if p != "self" and par.annotation is inspect.Parameter.empty]
    assert not missing, f"{module}.{name}: no hint for {missing}"
    assert sig.return_annotation is not inspect.Signature.empty, f"{module}.{name}: no return hint"
    extra = {"Mapping": Mapping, "Sequence": Sequence, "Any": typing.Any, "npt": npt, "xarray": xarray,
             "QTable": QTable, "Axes": Axes, "Figure": Figure, "System": System, "Labelled": Labelled,
             "Mode": Mode, "StellarSpectrum": StellarSpectrum, "PathLike": PathLike,
             "QuantityLike": QuantityLike}
    hints = typing.get_type_hints(obj, globalns={**vars(mod), **extra})
    assert "return" in hints
