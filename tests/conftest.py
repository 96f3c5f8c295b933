"""Shared test configuration."""

import os

import pytest
from hypothesis import settings

# Property tests: enough examples to find edge cases, bounded for CI's 2 cores.
settings.register_profile("snrkit", max_examples=60, deadline=None)
settings.load_profile(os.environ.get("SNRKIT_HYPOTHESIS_PROFILE", "snrkit"))


@pytest.fixture(scope="session")
def demo_run(tmp_path_factory):
    """``snrkit demo`` once per session (the whole chain, about 20 s): its folder, status and output.

    Shared by the summary test (tests/test_cli.py) and the browser check of the
    report (tests/test_report_browser.py), which read the same run.
    """
    import contextlib
    import io
    import os
    from snrkit.cli import main
    out = tmp_path_factory.mktemp("demo") / "demo"
    printed, errors = io.StringIO(), io.StringIO()
    # the population yield on one generator block, in process (the cluster has its own
    # tests in tests/test_yields_cluster.py)
    before = os.environ.get("SNRKIT_SCHEDULER")
    os.environ["SNRKIT_SCHEDULER"] = "in-process"
    try:
        with contextlib.redirect_stdout(printed), contextlib.redirect_stderr(errors):
            rc = main(["demo", "--out", str(out), "--yield-stars", "4096"])
    finally:
        if before is None:
            os.environ.pop("SNRKIT_SCHEDULER")
        else:
            os.environ["SNRKIT_SCHEDULER"] = before
    return {"rc": rc, "out": out, "stdout": printed.getvalue(), "stderr": errors.getvalue()}
