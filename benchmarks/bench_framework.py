"""Benchmark: what the test-chosen readout and the per-element floor cost in a ranking.

Ranks one invented catalogue (default 2 x 10^4 planets, 4 scenarios, hosts from
J = 8.5, partly saturating the prism) three times in this one run and prints the
times as ratios:

* readout chosen per row for the test (the default) against the largest
  unsaturated readout (``readout="unsaturated"``, what the chain did before),
  both at R = 30 -- the cost of the readout optimisation;
* the default binning (R = 100) against R = 30, both with the chosen readout.

The floor per resolution element keeps the covariance diagonal, so it costs
nothing beyond the division by sqrt(elements per bin); it is part of every run.

    python benchmarks/bench_framework.py [--planets 20000]
"""

import argparse
import time
import warnings

from snrkit.planning.catalog import catalogue_from_table
from snrkit.planning.rank import rank_catalogue

from bench_rank import synthetic, SCENARIOS


def timed(cat, mode, **kw):
    t0 = time.perf_counter()
    table = rank_catalogue(cat, mode, list(SCENARIOS), **kw)
    return time.perf_counter() - t0, table


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--planets", type=int, default=20_000)
    ap.add_argument("--mode", default="cold6m-prism-lowres")
    args = ap.parse_args()
    warnings.simplefilter("ignore")  # clamped-temperature notes for random planets
    cat = catalogue_from_table(synthetic(args.planets), source="synthetic")
    t_old, old = timed(cat, args.mode, resolution=30, readout="unsaturated")
    t_new, new = timed(cat, args.mode, resolution=30)
    t_100, _ = timed(cat, args.mode)
    n = len(cat.good_index)
    ok_old = old["status"] == "ok"
    faster = int(((new["transits_needed"] < old["transits_needed"]) & ok_old).sum())
    print(f"catalogue: {args.planets} rows ({n} usable), {len(SCENARIOS)} scenarios, mode {args.mode}")
    print(f"unsaturated readout, R = 30 : {t_old:.1f} s")
    print(f"readout chosen for the test, R = 30 : {t_new:.1f} s -> {t_new / t_old:.2f}x "
          f"(target: at most 2x)")
    print(f"readout chosen, default R = 100 : {t_100:.1f} s -> {t_100 / t_new:.2f}x the R = 30 run")
    print(f"rows needing fewer transits with the chosen readout: {faster} of {int(ok_old.sum())}")


if __name__ == "__main__":
    main()
