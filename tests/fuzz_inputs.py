"""Hostile-input run: at least 10^4 generated inputs through the CLI and the API.

Usage::

    .venv/bin/python tests/fuzz_inputs.py [--cases 10000] [--seed 16]

Generates hostile system files, scenario files, instrument-mode files,
catalogues (with and without a renaming mapping; some of them ranked) and
command lines (see ``tests/hostile.py``), runs each, and prints the counts
of internal errors, lost and mislabelled catalogue rows, NaN or impossible
outputs, leftover temporary files, multi-line errors and leaked warnings.
Exits 1 if any count is not zero.  The property tests in
``tests/test_hostile_properties.py`` run the same generators with a few
hundred examples each inside the suite.
"""

import argparse
import collections
import random
import shutil
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

import hostile  # noqa: E402

__all__ = ["run"]

#: share of the cases per kind (the rest of 1 goes to command lines)
MIX = {"system": 0.36, "scenario": 0.2, "mode": 0.2, "catalogue": 0.18, "options": 0.06}
#: one catalogue in this many is also ranked through the CLI (ranking is the slow part)
RANK_EVERY = 40
LABELS = ("internal", "lost_row", "mislabel", "nan", "leftover", "multiline", "warning")


def _one(kind, rng, folder, i):
    if kind == "system":
        return hostile.check_system(hostile.system_case(rng, folder), folder)
    if kind == "scenario":
        return hostile.check_scenario(hostile.scenario_case(rng, folder))
    if kind == "mode":
        return hostile.check_mode(hostile.mode_case(rng, folder))
    if kind == "catalogue":
        path, mapping, names = hostile.catalogue_case(rng, folder)
        return hostile.check_catalogue(path, mapping, names, rank=(i % RANK_EVERY == 0),
                                       folder=folder)
    return hostile.check_options(hostile.option_case(rng, folder), folder)


def run(cases=10000, seed=16, verbose=False):
    """Run ``cases`` hostile inputs; return (counts by label, cases by kind, examples)."""
    rng = random.Random(seed)
    counts = collections.Counter({k: 0 for k in LABELS})
    kinds = collections.Counter()
    examples = {}
    plan = []
    for kind, share in MIX.items():
        plan += [kind] * int(round(share * cases))
    plan += ["options"] * max(cases - len(plan), 0)
    rng.shuffle(plan)
    for i, kind in enumerate(plan):
        folder = Path(tempfile.mkdtemp(prefix="snrkit-fuzz-"))
        state = rng.getstate()
        try:
            probs = _one(kind, rng, folder, kinds[kind])
        finally:
            shutil.rmtree(folder, ignore_errors=True)
        kinds[kind] += 1
        for p in probs:
            counts[p] += 1
            examples.setdefault(p, (kind, i, state))
        if verbose and probs:
            print(f"case {i} ({kind}): {probs}", file=sys.stderr)
    return counts, kinds, examples


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cases", type=int, default=10000)
    ap.add_argument("--seed", type=int, default=16)
    ap.add_argument("--verbose", action="store_true")
    a = ap.parse_args(argv)
    t0 = time.time()
    counts, kinds, examples = run(a.cases, a.seed, a.verbose)
    print(f"hostile inputs: {sum(kinds.values())} cases in {time.time() - t0:.0f} s "
          f"({', '.join(f'{k} {v}' for k, v in sorted(kinds.items()))})")
    for label in LABELS:
        where = f"  first: {examples[label][0]} case {examples[label][1]}" if label in examples else ""
        print(f"  {label:<10} {counts[label]}{where}")
    return 1 if any(counts.values()) else 0


if __name__ == "__main__":
    sys.exit(main())
