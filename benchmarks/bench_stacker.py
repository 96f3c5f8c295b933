"""Benchmark: the transit stacker for 10^4 planets x 4 scenarios.

Builds invented spectra (a Gaussian band of random amplitude per planet and
scenario on 100 bins) and per-transit noise, then times
:func:`snrkit.detect.stack_transits` on the whole (planet, scenario) array,
once with white noise only and once with a 20 ppm floor that does not
average down; it also times a per-row loop on a sample and prints the ratio,
all measured in this one run.

    python benchmarks/bench_stacker.py [--planets 10000] [--scenarios 4]
"""

import argparse
import time

import numpy as np

from snrkit.detect import stack_transits


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--planets", type=int, default=10_000)
    ap.add_argument("--scenarios", type=int, default=4)
    ap.add_argument("--bins", type=int, default=100)
    ap.add_argument("--loop-sample", type=int, default=200)
    args = ap.parse_args()
    rng = np.random.default_rng(3)
    wl = np.linspace(0.6, 5.0, args.bins)
    shape = (args.planets, args.scenarios)
    amp = 10 ** rng.uniform(0.5, 2.5, shape)[..., None]
    centre = rng.uniform(1.0, 4.5, shape)[..., None]
    truth = amp * np.exp(-0.5 * ((wl - centre) / 0.2) ** 2)
    sigma1 = 10 ** rng.uniform(1.0, 2.5, (args.planets, 1, 1)) * np.ones(args.bins)
    rows = args.planets * args.scenarios
    for label, floor in (("white noise only", 0.0), ("20 ppm floor, not averaging", 20.0)):
        t0 = time.perf_counter()
        res = stack_transits(truth, np.zeros_like(truth), sigma1, floor=floor, sigma=5.0,
                             n_max=1000)
        t_arr = time.perf_counter() - t0
        k = min(args.loop_sample, args.planets)
        t0 = time.perf_counter()
        for i in range(k):
            one = stack_transits(truth[i, 0], np.zeros(args.bins), sigma1[i, 0], floor=floor,
                                 sigma=5.0, n_max=1000)
            assert int(one["transits_needed"]) == int(res["transits_needed"][i, 0])
        t_loop = time.perf_counter() - t0
        print(f"{label}: {rows} planet-scenario rows in {t_arr:.2f} s "
              f"({rows / t_arr:.0f} rows/s); loop {k / t_loop:.0f} rows/s; "
              f"ratio {(rows / t_arr) / (k / t_loop):.0f}x")


if __name__ == "__main__":
    main()
