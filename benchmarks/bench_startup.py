"""Benchmark: start-up cost of the command line and of the layered solver.

Each figure is measured in new Python processes (the median of a few), so
it includes the interpreter start, the imports and the first-call work:

* ``snrkit --help``;
* ``snrkit transits <demo system>`` on the invented demo planet Alder b,
  with the per-user disk cache (``$SNRKIT_CACHE_DIR``) already filled and the
  bytecode of the imported modules already written, as on any machine after
  the first run (an untimed first run fills both);
* the layered solver's first call in a new process against a second (warm)
  call in the same process, on the default R = 100 grid over 0.3-30 um with
  the disk cache filled; the first call includes the lazy imports it needs.

Wall times on a shared 2-core machine are noisy, so the CPU time (user +
system) of the same processes is printed beside them.  With
``--empty-cache`` the transits figure is also measured once against an empty
cache folder (the first run on a new machine: it builds the opacity tables
the command needs, several seconds on two cores).

    python benchmarks/bench_startup.py [--repeats 5] [--empty-cache]
"""

import argparse
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "data_tables" / "demo" / "alder.toml"

LAYERS = """
import time
t0 = time.perf_counter()
from snrkit.atmosphere.spectrum import transmission_spectrum
t1 = time.perf_counter()
kw = dict(planet_mass=[300.0], equilibrium_temperature=[1400.0], solver="layers")
transmission_spectrum("h2-clear-solar", [13.0], [1.0], **kw)
t2 = time.perf_counter()
transmission_spectrum("h2-clear-solar", [13.0], [1.0], **kw)
t3 = time.perf_counter()
print(t1 - t0, t2 - t1, t3 - t2)
"""


def _env(cache):
    env = dict(os.environ)
    env.pop("PYTHONDONTWRITEBYTECODE", None)      # an installed package has its bytecode
    env["PYTHONPATH"] = os.pathsep.join([str(ROOT)] + [p for p in env.get("PYTHONPATH", "").split(
        os.pathsep) if p])
    env["SNRKIT_CACHE_DIR"] = str(cache)
    return env


def run(args, env):
    """Wall and CPU seconds of one new process, and its stdout."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    r = subprocess.run([sys.executable, *args], env=env, capture_output=True, text=True)
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if r.returncode != 0:
        raise SystemExit(f"{args}: exit {r.returncode}\n{r.stderr}")
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu, r.stdout


def medians(args, env, repeats):
    runs = [run(args, env) for _ in range(repeats)]
    return statistics.median(r[0] for r in runs), statistics.median(r[1] for r in runs)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=5)
    ap.add_argument("--empty-cache", action="store_true")
    ap.add_argument("--cache-dir", default=None,
                    help="cache folder (default: $SNRKIT_CACHE_DIR or ~/.cache/snrkit)")
    args = ap.parse_args()
    if args.cache_dir:
        cache = Path(args.cache_dir)
    else:
        sys.path.insert(0, str(ROOT))
        from snrkit.atmosphere.kcache import cache_dir
        cache = cache_dir()
    env = _env(cache)
    transits = ["-m", "snrkit", "transits", str(DEMO)]
    run(transits, env)                                          # fills cache and bytecode
    run(["-c", LAYERS], env)
    run(["-m", "snrkit", "--help"], env)

    wall, cpu = medians(["-m", "snrkit", "--help"], env, args.repeats)
    print(f"cold `snrkit --help`: {wall:.3f} s wall ({cpu:.3f} s CPU), median of "
          f"{args.repeats} new process(es) (goal 0.1 s)")
    wall, cpu = medians(transits, env, args.repeats)
    print(f"cold `snrkit transits {DEMO.name}`: {wall:.3f} s wall ({cpu:.3f} s CPU), median of "
          f"{args.repeats} new process(es), disk cache filled (goal 0.8 s)")
    imports, firsts, warms = [], [], []
    for _ in range(max(3, args.repeats // 2)):
        out = run(["-c", LAYERS], env)[2].split()
        imports.append(float(out[0]))
        firsts.append(float(out[1]))
        warms.append(float(out[2]))
    first, warm = statistics.median(firsts), statistics.median(warms)
    print(f"layered solver, R = 100 over 0.3-30 um: first call {first:.2f} s, warm {warm:.2f} s, "
          f"first/warm {first / warm:.2f} (goal at most 2; disk cache filled; "
          f"module import before it {statistics.median(imports):.2f} s)")
    if args.empty_cache:
        with tempfile.TemporaryDirectory() as tmp:
            wall, cpu, _ = run(transits, _env(tmp))
        print(f"cold `snrkit transits {DEMO.name}` with an empty disk cache: {wall:.1f} s wall "
              f"({cpu:.1f} s CPU), one process (first run on a new machine)")


if __name__ == "__main__":
    main()
