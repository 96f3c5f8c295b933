"""Property tests: hostile system files, scenario and mode files, catalogues and options.

Hypothesis draws a seeded ``random.Random`` and the generators of
``tests/hostile.py`` turn it into a hostile input; every run must exit 0 or
2 (never 1), keep every catalogue row once with its own name, give finite
outputs, leave no temporary file and print one-line errors.  The same
generators drive ``tests/fuzz_inputs.py`` (10^4 cases).  Example counts are
kept small so the whole file runs in well under a minute.  The contract is
the project's own (common practice, no source).
"""

import shutil
import tempfile
from pathlib import Path

from hypothesis import given, settings, strategies as st

import hostile

SEEDED = settings(max_examples=150, deadline=None, derandomize=True, database=None)
rngs = st.randoms(use_true_random=False)


def _in_fresh_folder(fn):
    folder = Path(tempfile.mkdtemp(prefix="snrkit-prop-"))
    try:
        return fn(folder)
    finally:
        shutil.rmtree(folder, ignore_errors=True)


@settings(max_examples=100, deadline=None, derandomize=True, database=None)
@given(rngs)
def test_hostile_system_files(rng):
    assert _in_fresh_folder(lambda f: hostile.check_system(hostile.system_case(rng, f), f)) == []


@SEEDED
@given(rngs)
def test_hostile_scenario_files(rng):
    assert _in_fresh_folder(lambda f: hostile.check_scenario(hostile.scenario_case(rng, f))) == []


@SEEDED
@given(rngs)
def test_hostile_mode_files(rng):
    assert _in_fresh_folder(lambda f: hostile.check_mode(hostile.mode_case(rng, f))) == []


@SEEDED
@given(rngs)
def test_hostile_catalogue_rows(rng):
    def go(folder):
        path, mapping, names = hostile.catalogue_case(rng, folder)
        return hostile.check_catalogue(path, mapping, names, folder=folder)
    assert _in_fresh_folder(go) == []


@settings(max_examples=3, deadline=None, derandomize=True, database=None)
@given(rngs)
def test_hostile_catalogues_ranked(rng):
    # ranking is the slow path: a few examples, each a whole catalogue of hostile rows
    def go(folder):
        path, mapping, names = hostile.catalogue_case(rng, folder)
        return hostile.check_catalogue(path, mapping, names, rank=True, folder=folder)
    assert _in_fresh_folder(go) == []


@settings(max_examples=40, deadline=None, derandomize=True, database=None)
@given(rngs)
def test_hostile_options(rng):
    assert _in_fresh_folder(lambda f: hostile.check_options(hostile.option_case(rng, f), f)) == []
