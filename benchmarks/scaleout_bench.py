"""Scale-out timing: many optimizations of a bundled case serially and on a local Dask cluster of
1, 2, ... worker processes (mdao.studies.scaleout.optimize_many). Prints wall times and the
speed-up over the serial run, and whether every run gave the serial results bit for bit;
asserts nothing (the figures depend on the machine and on what else runs on it).

    python benchmarks/scaleout_bench.py [--case cases/survey-drone.toml] [--starts 64]
                                        [--workers 1 2] [--seed 2026] [--repeat 1]

The cluster times include starting and stopping the cluster (as ``blownwing many --workers N``
pays them). Each cluster is a LocalCluster on 127.0.0.1 without a dashboard.
"""
import argparse
import os
import sys
import tempfile
import time
from pathlib import Path

os.environ.setdefault("OPENMDAO_REPORTS", "0")

ROOT = Path(__file__).resolve().parents[1]


def _best(fn, repeat):
    """Best wall time of ``repeat`` calls [s] and the last result."""
    best, out = float("inf"), None
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--case", default=str(ROOT / "cases" / "survey-drone.toml"))
    parser.add_argument("--starts", type=int, default=64, help="optimizations per run")
    parser.add_argument("--workers", type=int, nargs="+", default=[1, 2],
                        help="local cluster sizes to time")
    parser.add_argument("--seed", type=int, default=2026)
    parser.add_argument("--repeat", type=int, default=1, help="best of this many runs")
    args = parser.parse_args(argv)

    from mdao.case import load_case
    from mdao.studies.scaleout import multistart_overrides, optimize_many

    os.chdir(tempfile.mkdtemp(prefix="scaleout_bench_"))
    case = load_case(args.case)
    overrides = multistart_overrides(case, args.starts, args.seed)
    serial_s, serial = _best(lambda: optimize_many(case, overrides), args.repeat)
    converged = sum(r["converged"] for r in serial)
    print(f"{case.title}: {args.starts} optimizations (multistart, seed {args.seed}), "
          f"{converged} converged; {os.cpu_count()} CPUs; best of {args.repeat}")
    print(f"{'run':<14} {'wall [s]':>9} {'per opt. [ms]':>14} {'speed-up':>9}  same as serial")
    print(f"{'serial':<14} {serial_s:9.2f} {1e3 * serial_s / args.starts:14.1f} {1.0:9.2f}  -")
    for n in args.workers:
        wall, res = _best(lambda: optimize_many(case, overrides, workers=n), args.repeat)
        print(f"{f'{n} worker(s)':<14} {wall:9.2f} {1e3 * wall / args.starts:14.1f} "
              f"{serial_s / wall:9.2f}  {'yes' if res == serial else 'NO'}")
    return 0


if __name__ == "__main__":  # worker processes are spawned and import this module
    sys.exit(main())
