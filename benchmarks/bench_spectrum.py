"""Benchmark: analytic transmission spectra for many planets at R = 100.

Prints spectra per second for the whole-array path over N planets (default
10^4) and, on a small sample, for a per-planet loop, with their ratio,
measured in this one run.  The first call builds and caches the opacity
k-tables for the grid; it is timed separately as the warm-up.

    python benchmarks/bench_spectrum.py [--planets 10000] [--loop-sample 20]
"""

import argparse
import time
import warnings

import numpy as np

from snrkit.atmosphere.spectrum import transmission_spectrum
from snrkit.atmosphere.mixture import wavelength_bin_edges


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--planets", type=int, default=10_000)
    ap.add_argument("--loop-sample", type=int, default=20)
    ap.add_argument("--scenario", default="h2-clear-solar")
    args = ap.parse_args()
    warnings.simplefilter("ignore")  # temperature clamping warnings for random planets
    rng = np.random.default_rng(5)
    n = args.planets
    rp = rng.uniform(2.0, 14.0, n)          # Earth radii
    mp = 1.436 * rp ** 1.70                 # Earth masses (Chen & Kipping form)
    rs = rng.uniform(0.5, 1.3, n)           # solar radii
    teq = rng.uniform(400.0, 2000.0, n)     # K
    edges = wavelength_bin_edges(100, 0.6e-6, 5.0e-6) * 1e6
    t0 = time.perf_counter()
    transmission_spectrum(args.scenario, rp[:2], rs[:2], planet_mass=mp[:2],
                          equilibrium_temperature=teq[:2], wavelength_edges=edges)
    warm = time.perf_counter() - t0
    t0 = time.perf_counter()
    ds = transmission_spectrum(args.scenario, rp, rs, planet_mass=mp,
                               equilibrium_temperature=teq, wavelength_edges=edges)
    t_arr = time.perf_counter() - t0
    k = min(args.loop_sample, n)
    t0 = time.perf_counter()
    worst = 0.0
    for i in range(k):
        one = transmission_spectrum(args.scenario, rp[i:i + 1], rs[i:i + 1], planet_mass=mp[i:i + 1],
                                    equilibrium_temperature=teq[i:i + 1], wavelength_edges=edges)
        worst = max(worst, float(np.max(np.abs(one["transit_depth_ppm"].values[0]
                                               - ds["transit_depth_ppm"].values[i]))))
    t_loop = time.perf_counter() - t0
    print(f"grid: R = 100, 0.6-5 um, {ds.sizes['wavelength']} bins; scenario {args.scenario}")
    print(f"warm-up (k-table build)   : {warm:.2f} s")
    print(f"array path, {n} planets : {t_arr:.2f} s  -> {n / t_arr:.0f} spectra/s")
    print(f"loop path, {k} planets     : {t_loop:.2f} s  -> {k / t_loop:.1f} spectra/s")
    print(f"ratio array/loop          : {(n / t_arr) / (k / t_loop):.1f}x")
    print(f"largest difference, array path (temperature grid) vs loop: {worst:.3g} ppm")


if __name__ == "__main__":
    main()
