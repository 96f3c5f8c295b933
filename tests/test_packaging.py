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
