"""Benchmark of the review's vectorized studies: a 1e6-point net-power sweep, a 1e5-sample
Monte Carlo and the two break-even maps (31 x 31 points, a grid and golden-section search at
each), for each bundled case. Prints wall time (best of 3; the maps once) and peak traced memory
(tracemalloc, a separate run); asserts nothing.

    python benchmarks/review_bench.py
"""
import os
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

os.environ.setdefault("OPENMDAO_REPORTS", "0")

from mdao.case import load_case  # noqa: E402
from mdao.optimum import optimize  # noqa: E402
from mdao.studies.sweeps import net_power_sweep, review_maps, sweep_efficiencies  # noqa: E402
from mdao.studies.uncertainty import monte_carlo  # noqa: E402

CASES = Path(__file__).resolve().parents[1] / "cases"


def _measure(fn, repeat=3):
    best = min(_timed(fn) for _ in range(repeat))
    tracemalloc.start()
    fn()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return best, peak / 2**20


def _timed(fn):
    t0 = time.perf_counter()
    fn()
    return time.perf_counter() - t0


def main():
    os.chdir(tempfile.mkdtemp(prefix="review_bench_"))
    print(f"python {sys.version.split()[0]}, {os.cpu_count()} CPUs")
    for name in ("survey-drone.toml", "coastal-patrol.toml"):
        case = load_case(CASES / name)
        out = optimize(case)
        nseg = len(case.segments)
        effs, _ = sweep_efficiencies(case)
        points = -(-1_000_000 // (len(effs) * nseg))
        total = points * len(effs) * nseg
        t, mem = _measure(lambda: net_power_sweep(case, out, points=points))
        print(f"{name}: sweep of {total:,} operating points ({len(effs)} efficiencies x "
              f"{points:,} C_mu x {nseg} segments): {t:.3f} s, peak {mem:.0f} MiB")
        t, mem = _measure(lambda: monte_carlo(case, out, samples=100_000))
        print(f"{name}: Monte Carlo of 100,000 samples x {nseg} segments: {t:.3f} s, "
              f"peak {mem:.0f} MiB")
        t, mem = _measure(lambda: review_maps(case, out), repeat=1)
        print(f"{name}: the review's two break-even maps (31 x 31 points x {nseg} segments): "
              f"{t:.3f} s, peak {mem:.0f} MiB")


if __name__ == "__main__":
    main()
