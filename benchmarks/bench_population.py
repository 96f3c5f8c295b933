"""Benchmark: population yields on a 2-worker dask LocalCluster against the in-process engine.

Draws an invented population from the seeded generator (whole blocks of
4096 stars, enough blocks for ``--planets`` transiting planets), and runs 4
scenarios x 2 designs (the low-resolution prism preset at 6 m and 9 m) for
the atmosphere test through :func:`snrkit.planning.yields.population_yields`,
once on a LocalCluster of 2 single-threaded worker processes and once in this
process (the engine's default threads), same chunks.  Prints, all measured in
this one run on this machine:

* throughput in planet-scenario-designs per second on the cluster, and per
  worker;
* the ratio of the cluster's time to the in-process engine's (dask overhead;
  target at most 1.3), and whether the two gave identical yields;
* the peak resident memory of each worker (target at most 1.5 GB);
* the size measured, and the extrapolated times for 10^6 and 10^8 planets x
  4 scenarios x 2 designs on N workers: the measured engine cost per planet
  (in process) times the measured cluster / in-process ratio, divided by the
  workers (linear scaling assumed: chunks are independent, nothing is shared
  between workers).

The target figure is 10^6 planets; on a 2-core machine shared with other
jobs that takes hours, so the default size (3000 planets) keeps the two
runs (cluster and in process) to about a minute there, and the output
extrapolates from it (the figures are per planet and per worker; they were
the same at 3000 and 30000 planets).  ``--planets 1000000`` runs the full size.

    python benchmarks/bench_population.py [--planets 3000] [--chunk-blocks 2]
"""

import argparse
import logging
import math
import tempfile
import time
import warnings

SCENARIOS = ["h2-clear-solar", "h2-metal-rich", "steam", "co2-thick"]
DESIGNS = ["name=6m,aperture_m=6", "name=9m,aperture_m=9"]
MODE = "cold6m-prism-lowres"
TARGET = 10**6
#: Default size: the two runs take about a minute on the 2-core development
#: machine (measured: about 350 planet-scenario-designs/s for the two runs together).
DEFAULT_PLANETS = 3000


def _peak_rss():
    import resource
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024     # Linux: kB


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--planets", type=int, default=DEFAULT_PLANETS,
                    help=f"transiting planets wanted (default {DEFAULT_PLANETS}, about 2-3 "
                         "minutes on 2 cores; the target figure is 10^6)")
    ap.add_argument("--chunk-blocks", type=int, default=2, help="generator blocks per chunk")
    ap.add_argument("--seed", type=int, default=5)
    args = ap.parse_args()
    import dask
    from distributed import Client, LocalCluster
    from snrkit.planning.population import BLOCK_STARS, generate_block
    from snrkit.planning.yields import population_yields
    from snrkit.planning.yields.cluster import WORKER_CONFIG

    per_block = sum(len(generate_block(args.seed, b)) for b in range(4)) / 4
    stars = math.ceil(args.planets / per_block) * BLOCK_STARS
    settings = dict(generate=stars, seed=args.seed, mode=MODE, design_texts=DESIGNS,
                    scenarios=SCENARIOS, chunk_blocks=args.chunk_blocks)
    warnings.simplefilter("ignore")
    t_start = time.perf_counter()
    with dask.config.set(WORKER_CONFIG):
        cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                               dashboard_address=":0", silence_logs=logging.ERROR,
                               env={"SNRKIT_THREADS": "1"})
    try:
        with tempfile.TemporaryDirectory() as tmp:
            t0 = time.perf_counter()
            res = population_yields(**settings, scheduler=cluster.scheduler_address,
                                    out_dir=f"{tmp}/cluster")
            t_cluster = time.perf_counter() - t0
        with Client(cluster.scheduler_address) as client:
            peaks = client.run(_peak_rss)
    finally:
        cluster.close()
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        ref = population_yields(**settings, scheduler="in-process", out_dir=f"{tmp}/local")
        t_local = time.perf_counter() - t0
    n = res["planets"]
    work = n * len(SCENARIOS) * len(DESIGNS)
    rate = work / t_cluster
    ratio = t_cluster / t_local
    same = bool((res["dataset"]["reached"].values == ref["dataset"]["reached"].values).all())
    print(f"SIZE MEASURED: {n} transiting planets ({stars} invented stars, {res['chunks']} chunks "
          f"of {args.chunk_blocks} blocks) x {len(SCENARIOS)} scenarios x {len(DESIGNS)} designs, "
          f"atmosphere test at R = 100 (the target figure is {TARGET:.0e} planets; larger sizes "
          f"below are extrapolated)")
    print(f"cluster (2 workers x 1 thread): {t_cluster:.1f} s, {rate:.0f} planet-scenario-designs/s, "
          f"{rate / 2:.0f} per worker")
    print(f"in process (engine threads): {t_local:.1f} s, {work / t_local:.0f} planet-scenario-designs/s")
    print(f"dask overhead, cluster / in-process time: {ratio:.2f} (target <= 1.3); "
          f"identical yields: {same}")
    for addr, peak in sorted(peaks.items()):
        print(f"peak memory of worker {addr}: {peak / 1e9:.2f} GB (target <= 1.5 GB)")
    # per-planet cost on one core: the in-process run used the engine's threads on
    # the same 2 cores, so one core's share is twice its time per planet
    cost = 2 * t_local / n
    print(f"measured cost: {cost:.3f} s per planet (x {len(SCENARIOS)} scenarios x "
          f"{len(DESIGNS)} designs) per core in process, x {ratio:.2f} on the cluster")
    for size, label in ((1e6, "10^6"), (1e8, "10^8")):
        for workers in (2, 16, 64, 256):
            hours = size * cost * ratio / workers / 3600
            print(f"extrapolated: {label} planets x {len(SCENARIOS)} x {len(DESIGNS)} on "
                  f"{workers} workers: {hours:.3g} h (linear in workers)")
    print(f"benchmark wall time: {time.perf_counter() - t_start:.0f} s")

if __name__ == "__main__":
    main()
