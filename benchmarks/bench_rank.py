"""Benchmark: the one engine over a synthetic catalogue, against the memory floor and the per-planet path.

Builds an invented catalogue (default 10^5 planets; F to M hosts, 0.7-14
R_earth, hosts from J = 8.5, partly saturating the prism, to 14) and ranks it
for 4 scenarios through the engine (:func:`snrkit.planning.rank.rank_catalogue`) at
R = 30 and R = 100 with 8 g-points.  Prints, on separate lines, all measured
in this one process:

* the streaming floor: ns per element of ``np.add(a, b, out=c)`` on float64
  arrays far larger than the caches, times the elements of the job
  (planets x scenarios x bins x g-points);
* the cost of one ``np.exp`` per element in float64 and float32, for scale:
  the floor target allows 10 floors per element in all, and each root needs
  a few evaluations of ln tau with exponentials and logarithms in them;
* the engine's time at each resolving power, as a multiple of that floor;
* the per-planet path, like for like (the same outputs: one planet at a
  time through :func:`snrkit.engine.transits.transits_for_system` with no curves
  and no probabilities, which is what a rank row holds) on a sample, and the
  ratio of planets per second;
* the peak resident memory of the process.

    python benchmarks/bench_rank.py [--planets 100000] [--loop-sample 20]
"""

import argparse
import resource
import time
import warnings

import numpy as np
from astropy.table import Table

from snrkit.planning.catalog import catalogue_from_table
from snrkit.planning.rank import rank_catalogue
from snrkit.engine.transits import transits_for_system

SCENARIOS = ("h2-clear-solar", "h2-metal-rich", "steam", "co2-thick")
N_G = 8


def synthetic(n, seed=2):
    """An invented catalogue of n transiting planets (no real systems)."""
    rng = np.random.default_rng(seed)
    teff = rng.uniform(3000, 6500, n)
    ms = np.clip((teff / 5772) ** 1.8, 0.12, 1.4)
    rs = ms ** 0.85
    t = Table()
    t["planet_name"] = [f"Bench-{i:06d} b" for i in range(n)]
    t["planet_radius_earth"] = rng.uniform(0.7, 14.0, n)
    t["period_days"] = 10 ** rng.uniform(0.0, 1.7, n)
    t["impact_parameter"] = rng.uniform(0.0, 0.6, n)
    t["host_teff_K"] = teff
    t["host_radius_sun"] = rs
    t["host_mass_sun"] = ms
    t["host_mag_J"] = rng.uniform(8.5, 14.0, n)       # includes partly saturating hosts
    return t


def streaming_ns_per_element(n=20_000_000, repeats=5):
    """ns per element of one float64 streaming pass (np.add into a preallocated output)."""
    a = np.ones(n)
    b = np.ones(n)
    c = np.empty(n)
    np.add(a, b, out=c)                               # touch every page first
    best = np.inf
    for _ in range(repeats):
        t0 = time.perf_counter()
        np.add(a, b, out=c)
        best = min(best, time.perf_counter() - t0)
    return best / n * 1e9


def exp_ns_per_element(dtype, n=16384, repeats=200):
    """ns per element of np.exp on an in-cache array (the kernel's work arrays are in cache)."""
    x = np.linspace(-30.0, 0.0, n).astype(dtype)
    y = np.empty_like(x)
    best = np.inf
    for _ in range(5):
        t0 = time.perf_counter()
        for _ in range(repeats):
            np.exp(x, out=y)
        best = min(best, (time.perf_counter() - t0) / repeats)
    return best / n * 1e9


def n_bins(mode, resolution):
    from snrkit.engine.transits import observe
    one = catalogue_from_table(synthetic(1, seed=9), source="synthetic")
    return int(observe(one.system, mode, resolution)["wl"].size)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--planets", type=int, default=100_000)
    ap.add_argument("--loop-sample", type=int, default=20)
    ap.add_argument("--resolutions", type=float, nargs="+", default=[30.0, 100.0])
    ap.add_argument("--mode", default="cold6m-prism-lowres")
    args = ap.parse_args()
    warnings.simplefilter("ignore")  # clamped-temperature notes for random planets
    cat = catalogue_from_table(synthetic(args.planets), source="synthetic")
    n = len(cat.good_index)
    ns = streaming_ns_per_element()
    print(f"catalogue      : {args.planets} rows ({n} usable) x {len(SCENARIOS)} scenarios, "
          f"mode {args.mode}, {N_G} g-points")
    print(f"streaming floor: {ns:.2f} ns per element (np.add, float64, measured in this run)")
    e64, e32 = exp_ns_per_element(np.float64), exp_ns_per_element(np.float32)
    print(f"one exp        : {e64:.1f} ns per element in float64 ({e64 / ns:.1f} x the floor), "
          f"{e32:.1f} ns in float32 (in cache, this run)")
    for r in args.resolutions:
        nb = n_bins(args.mode, r)
        elements = n * len(SCENARIOS) * nb * N_G
        floor_s = elements * ns * 1e-9
        t0 = time.perf_counter()
        table = rank_catalogue(cat, args.mode, list(SCENARIOS), resolution=r)
        t = time.perf_counter() - t0
        print(f"engine R={r:g}   : {t:.1f} s for {elements:.3g} elements ({nb} bins) = "
              f"{t / floor_s:.1f} x the streaming floor ({floor_s:.2f} s)")
    k = min(args.loop_sample, n)
    t0 = time.perf_counter()
    for j in range(k):
        for sc in SCENARIOS:
            transits_for_system(cat.system.take([j]), args.mode, sc, resolution=r,
                                probabilities=(), curves=False)
    t_loop = time.perf_counter() - t0
    print(f"per-planet path: {t_loop:.1f} s for {k} planets x {len(SCENARIOS)} scenarios at "
          f"R={r:g} (same outputs) -> engine is {(n / t) / (k / t_loop):.0f} x faster per planet")
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"peak RSS       : {rss:.0f} MB")
    print(f"status counts  : {table.meta['status_counts']}")


if __name__ == "__main__":
    main()
