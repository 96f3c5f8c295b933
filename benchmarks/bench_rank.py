"""Benchmark: rank synthetic catalogues, whole arrays against the per-planet path.

Builds an invented catalogue (default 10^5 planets; F to M hosts, 0.7-14
R_earth), ranks it for 4 scenarios with the array path
(:func:`snrkit.rank.rank_catalogue`), times the per-planet path (one planet at
a time through :func:`snrkit.transits.transits_for_system`) on a sample, and
prints planets per second for both and their ratio, measured in this one run.
Hosts from J = 8.5 (partly saturating the prism, so the test's degrees of
freedom vary by row) to 14.  With the defaults the array run takes a few
minutes on 2 cores; use
``--planets 20000`` for a quick look.

    python benchmarks/bench_rank.py [--planets 100000] [--loop-sample 40]
"""

import argparse
import time
import warnings

import numpy as np
from astropy.table import Table

from snrkit.catalog import catalogue_from_table
from snrkit.rank import rank_catalogue
from snrkit.transits import transits_for_system

SCENARIOS = ("h2-clear-solar", "h2-metal-rich", "steam", "co2-thick")


def synthetic(n, seed=2):
    rng = np.random.default_rng(seed)
    teff = rng.uniform(3000, 6500, n)
    ms = np.clip((teff / 5772) ** 1.8, 0.12, 1.4)
    rs = ms ** 0.85
    t = Table()
    t["planet_name"] = [f"Bench-{i:06d} b" for i in range(n)]
    t["planet_radius_earth"] = rng.uniform(0.7, 14.0, n)
    t["period_days"] = 10 ** rng.uniform(0.0, 1.7, n)
    t["impact_parameter"] = rng.uniform(0.0, 0.6, n)
    t["star_teff_K"] = teff
    t["star_radius_sun"] = rs
    t["star_mass_sun"] = ms
    t["star_mag_J"] = rng.uniform(8.5, 14.0, n)       # includes partly saturating hosts
    return t


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--planets", type=int, default=100_000)
    ap.add_argument("--loop-sample", type=int, default=40)
    ap.add_argument("--mode", default="cold6m-prism-lowres")
    args = ap.parse_args()
    warnings.simplefilter("ignore")  # clamped-temperature notes for random planets
    cat = catalogue_from_table(synthetic(args.planets), source="synthetic")
    t0 = time.perf_counter()
    table = rank_catalogue(cat, args.mode, list(SCENARIOS), resolution=30)
    t_arr = time.perf_counter() - t0
    k = min(args.loop_sample, len(cat.good_index))
    t0 = time.perf_counter()
    for j in range(k):
        for sc in SCENARIOS:
            transits_for_system(cat.system.take([j]), args.mode, sc, resolution=30, probabilities=())
    t_loop = time.perf_counter() - t0
    n = len(cat.good_index)
    print(f"catalogue: {args.planets} rows ({n} usable), {len(SCENARIOS)} scenarios, mode {args.mode}")
    print(f"array path : {t_arr:.1f} s -> {n / t_arr:.0f} planets/s ({n * len(SCENARIOS) / t_arr:.0f} planet-scenarios/s)")
    print(f"loop path  : {t_loop:.1f} s for {k} planets -> {k / t_loop:.1f} planets/s")
    print(f"ratio      : {(n / t_arr) / (k / t_loop):.0f}x")
    print(f"status counts: {table.meta['status_counts']}")


if __name__ == "__main__":
    main()
