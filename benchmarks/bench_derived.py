"""Benchmark: derived quantities for 10^5 planets as whole arrays vs a per-planet loop.

Prints the time per planet of each path and their ratio, measured in this one
run.  The loop path builds one System per planet (what a naive catalogue tool
would do); it is timed on a subsample and reported per planet, so the ratio
does not depend on the subsample size.

    python benchmarks/bench_derived.py [--planets 100000] [--loop-sample 2000]
"""

import argparse
import time
import warnings

import numpy as np

from snrkit.bodies.star import Star
from snrkit.bodies.planet import Planet
from snrkit.bodies.system import System


def make_catalogue(n, seed=1):
    rng = np.random.default_rng(seed)
    teff = rng.uniform(2800, 6500, n)
    ms = rng.uniform(0.12, 1.3, n)
    rs = ms ** 0.8 * rng.uniform(0.9, 1.1, n)
    rp = rng.uniform(0.6, 14.0, n)
    per = 10 ** rng.uniform(0.0, 2.0, n)
    b = rng.uniform(0, 0.7, n)
    mags = {"J": rng.uniform(6, 13, n), "Ks": rng.uniform(5.5, 12.5, n)}
    return teff, rs, ms, rp, per, b, mags


def vector_path(cat):
    teff, rs, ms, rp, per, b, mags = cat
    s = System(Star(teff=teff, radius=rs, mass=ms, magnitudes=mags),
               Planet(radius=rp, period=per, impact_parameter=b))
    return s.derived_arrays()


def loop_path(cat, idx):
    teff, rs, ms, rp, per, b, mags = cat
    out = []
    for i in idx:
        s = System(Star(teff=teff[i], radius=rs[i], mass=ms[i],
                        magnitudes={k: v[i] for k, v in mags.items()}),
                   Planet(radius=rp[i], period=per[i], impact_parameter=b[i]))
        out.append(s.derived_arrays()["tsm"][0])
    return np.array(out)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--planets", type=int, default=100_000)
    ap.add_argument("--loop-sample", type=int, default=2000)
    args = ap.parse_args()
    warnings.simplefilter("ignore")  # grazing-transit warnings for random rows
    cat = make_catalogue(args.planets)
    vector_path(make_catalogue(100))  # warm caches (table reads)
    t0 = time.perf_counter()
    d = vector_path(cat)
    t_vec = time.perf_counter() - t0
    idx = np.arange(min(args.loop_sample, args.planets))
    t0 = time.perf_counter()
    tsm_loop = loop_path(cat, idx)
    t_loop = time.perf_counter() - t0
    np.testing.assert_allclose(tsm_loop, d["tsm"][idx], rtol=1e-12)
    per_vec = t_vec / args.planets
    per_loop = t_loop / len(idx)
    print(f"planets (array path)      : {args.planets}")
    print(f"array path total          : {t_vec:.3f} s  ({per_vec * 1e6:.2f} us/planet)")
    print(f"loop path (sample {len(idx):>6}) : {t_loop:.3f} s  ({per_loop * 1e6:.1f} us/planet)")
    print(f"speed-up, loop/array      : {per_loop / per_vec:.0f}x per planet")


if __name__ == "__main__":
    main()
