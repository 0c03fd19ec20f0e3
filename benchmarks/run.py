"""Speed against the floor: the whole chain three ways, each bundled optimization, and the review's
sweep and Monte Carlo throughput. Prints a table and ratios; asserts nothing.

Run from the repository root::

    python benchmarks/run.py [--json PATH] [--quick]

The floor is the lumped chain (ISA troposphere, jet, duct, constant-efficiency fan, drag, net
power and energy) written as tightly as plain NumPy allows, on the same arithmetic as the model.
"""
import argparse
import ctypes
import os
import sys
import time
import tracemalloc
from pathlib import Path

os.environ.setdefault("OPENMDAO_REPORTS", "0")
for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_name, "1")   # as the command line does (mdao.cli.BLAS_THREADS)

import numpy as np  # noqa: E402  (after the thread counts: BLAS reads them on import)

ROOT = Path(__file__).resolve().parent.parent


def steady_memory():
    """Keep freed arrays in the process's heap (glibc ``mallopt``: no ``mmap`` below 32 MB, no
    trimming), so that every contender reuses warm pages. Otherwise an array larger than the
    allocator's current threshold comes from fresh pages, one page fault per 4 kB, and whether
    it does depends on what ran before: the floor at 1e5 points took 1 ms or 5-6 ms in the same
    process. Returns whether it applied (False off glibc)."""
    try:
        libc = ctypes.CDLL("libc.so.6")
    except OSError:
        return False
    m_trim_threshold, m_mmap_threshold = -1, -3
    return bool(libc.mallopt(m_mmap_threshold, 1 << 25) and libc.mallopt(m_trim_threshold, 1 << 30))
CASES = sorted((ROOT / "cases").glob("*.toml"))

CONST = dict(slot_ratio=0.012, chord=0.5, blown_span=2.0, jet_loss_factor=1.25,
             freestream_assist=0.9, fan_rated_efficiency=0.7, motor_efficiency=0.9,
             drag_clean=0.011, slot_drag=0.02, drag_per_momentum=-1.6, chain_efficiency=0.8,
             slot_drag_per_ratio=0.0, drag_per_momentum_per_ratio=0.0, lift_per_momentum=0.0)


def operating_points(n, seed=0):
    rng = np.random.default_rng(seed)
    return dict(altitude=rng.uniform(0.0, 10000.0, n), speed=rng.uniform(15.0, 80.0, n),
                duration=rng.uniform(60.0, 7200.0, n),
                momentum_coefficient=rng.uniform(0.01, 0.15, n))


def floor(pts, c=CONST):
    """Plain-NumPy floor: the same arithmetic, fused by hand, no intermediates kept."""
    z = pts["altitude"]
    h = 6356766.0 * z / (6356766.0 + z)
    t = 288.15 - 0.0065 * h
    rho = 1.225 * (t / 288.15) ** 4.2558797
    v = pts["speed"]
    cmu = pts["momentum_coefficient"]
    q = 0.5 * rho * v * v
    vj = v * np.sqrt(cmu / (2.0 * c["slot_ratio"]))
    area = c["chord"] * c["blown_span"]
    flow = c["slot_ratio"] * area * vj
    dp = c["jet_loss_factor"] * 0.5 * rho * vj * vj - c["freestream_assist"] * q
    shaft = flow * np.maximum(dp, 0.0) / c["fan_rated_efficiency"]
    saving = -q * area * (c["slot_drag"] + c["drag_per_momentum"] * cmu)
    net = saving * v / c["chain_efficiency"] - shaft / c["motor_efficiency"]
    return net * pts["duration"]


def direct(pts):
    from mdao.physics import chain
    return chain.evaluate(dict(CONST, **pts))["energy_saving"]


def group_problem(n, fused=False, outputs=None):
    import openmdao.api as om
    from mdao.system import BlownWingGroup
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("wing", BlownWingGroup(num_nodes=n, follow_requirement=True,
                                                    fused=fused, outputs=outputs),
                             promotes=["*"])
    prob.setup()
    for k, v in CONST.items():
        prob.set_val(k, v)
    return prob


def framework_floor_problem(n):
    """The floor's own arithmetic inside one OpenMDAO component with the same four per-node
    inputs and one output: what OpenMDAO's run costs around any physics (moving the inputs in,
    zeroing residuals), whatever the physics."""
    import openmdao.api as om

    class FloorComp(om.ExplicitComponent):
        def setup(self):
            for name in operating_points(1):
                self.add_input(name, shape=n)
            self.add_output("energy_saving", shape=n)

        def compute(self, inputs, outputs):
            outputs["energy_saving"] = floor({k: inputs[k] for k in operating_points(1)})

    prob = om.Problem(reports=False)
    prob.model.add_subsystem("floor", FloorComp(), promotes=["*"])
    prob.setup()
    return prob


def group(prob, pts):
    for k, v in pts.items():
        prob.set_val(k, v)
    prob.run_model()
    return prob.get_val("energy_saving")


def best_of(fn, repeat):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out


def bench_chain(sizes, repeat):
    rows = []
    for n in sizes:
        pts = operating_points(n)
        t_floor, e_floor = best_of(lambda: floor(pts), repeat)
        t_direct, e_direct = best_of(lambda: direct(pts), repeat)
        prob = group_problem(n)
        t_group, e_group = best_of(lambda: group(prob, pts), repeat)
        fused = group_problem(n, fused=True)
        t_fused, e_fused = best_of(lambda: group(fused, pts), repeat)
        # the fused group declaring only the output the floor computes (option outputs)
        one = group_problem(n, fused=True, outputs=("energy_saving",))
        t_one, e_one = best_of(lambda: group(one, pts), repeat)
        framework = framework_floor_problem(n)
        t_om, e_om = best_of(lambda: group(framework, pts), repeat)
        assert np.array_equal(e_om, e_floor), "the floor in a component changed the answer"
        assert np.array_equal(e_one, e_fused), "declaring fewer outputs changed the answer"
        # the three must agree, or the timing is meaningless
        scale = np.abs(e_floor).max()
        assert np.abs(e_direct - e_floor).max() < 1e-6 * scale, "direct path disagrees with floor"
        assert np.abs(e_group - e_floor).max() < 1e-6 * scale, "group disagrees with floor"
        assert np.abs(e_fused - e_floor).max() < 1e-6 * scale, "fused group disagrees with floor"
        rows.append(dict(points=n, floor_s=t_floor, direct_s=t_direct, group_s=t_group,
                         fused_s=t_fused, direct_over_floor=t_direct / t_floor,
                         group_over_floor=t_group / t_floor,
                         fused_over_floor=t_fused / t_floor, fused_one_output_s=t_one,
                         fused_one_output_over_floor=t_one / t_floor,
                         framework_floor_s=t_om, framework_floor_over_floor=t_om / t_floor,
                         fused_one_output_over_framework_floor=t_one / t_om,
                         group_over_framework_floor=t_group / t_om))
    return rows


def optimize_with_fd_totals(case):
    """The same optimization with OpenMDAO's finite-difference totals instead of analytic."""
    from mdao.optimum import optimize
    return optimize(case, problem=fd_problem(case))


def bench_optimizations(repeat):
    from mdao.case import load_case
    from mdao.optimum import optimize
    rows = []
    for path in CASES:
        case = load_case(path)
        t_an, out = best_of(lambda: optimize(case), repeat)

        t_fd, out_fd = best_of(lambda: optimize_with_fd_totals(case), repeat)
        # one gradient (all totals the driver needs) at the optimum, analytic against FD
        prob = out.problem
        t_grad, _ = best_of(lambda: [prob.driver._compute_totals() for _ in range(20)], repeat)
        prob_fd = out_fd.problem
        t_grad_fd, _ = best_of(lambda: [prob_fd.driver._compute_totals() for _ in range(20)],
                               repeat)
        t_model, _ = best_of(lambda: [prob.run_model() for _ in range(20)], repeat)
        rows.append(dict(case=path.stem, wall_s=t_an, converged=out.converged,
                         gradient_ms=t_grad / 20 * 1e3, fd_gradient_ms=t_grad_fd / 20 * 1e3,
                         model_ms=t_model / 20 * 1e3,
                         gradient_fd_over_analytic=t_grad_fd / t_grad,
                         iterations=out.iterations, model_evaluations=out.model_evaluations,
                         derivative_evaluations=out.derivative_evaluations,
                         fd_wall_s=t_fd, fd_converged=out_fd.converged,
                         fd_model_evaluations=out_fd.model_evaluations,
                         fd_over_analytic=t_fd / t_an))
    return rows


def survey_over(count):
    """The survey drone's wing flown over ``count`` segments at spread speeds and heights."""
    import copy
    from mdao.case import parse_case
    try:
        import tomllib
    except ModuleNotFoundError:  # Python 3.10
        import tomli as tomllib
    raw = copy.deepcopy(tomllib.loads((ROOT / "cases" / "survey-drone.toml").read_text()))
    raw["segment"] = [{"name": f"s{i}", "altitude": f"{50 + 40 * (i % 7)} m",
                       "speed": f"{15 + (i % 5) * 2.5} m/s", "duration": "10 min"}
                      for i in range(count)]
    raw.pop("uncertainty", None)
    return parse_case(raw)


def fd_problem(case):
    """The case's problem with OpenMDAO's finite-difference totals (no coloring)."""
    from mdao.system import build_problem, set_case_values
    prob = build_problem(case, coloring=False)
    prob.model.approx_totals(method="fd", step=1e-7, form="forward", step_calc="rel")
    prob.setup()
    set_case_values(prob, case)
    prob.final_setup()
    return prob


def scalar_constraint_problem(case):
    """The case's problem (analytic, colored totals) with OpenMDAO's own ScipyOptimizeDriver,
    which hands SciPy one function per scalar constraint, instead of the package's
    VectorSLSQPDriver: what the vector constraints save."""
    import openmdao.api as om
    from mdao import system
    kept = system.VectorSLSQPDriver
    system.VectorSLSQPDriver = om.ScipyOptimizeDriver
    try:
        return system.build_problem(case)
    finally:
        system.VectorSLSQPDriver = kept


def bench_segments(counts, repeat):
    """How the cost grows with the number of segments (survey case's wing, segments repeated
    at spread speeds and altitudes), analytic (colored) against finite-difference totals: one
    gradient at the optimum, the optimization proper (the driver's run from the same start on
    a built problem) and the whole ``optimize`` (building the problem and the start-point
    search, then the break-even and feasibility reading, the same work for both)."""
    from mdao.optimum import optimize
    from mdao.system import build_problem
    rows = []
    for count in counts:
        case = survey_over(count)
        t_an, out = best_of(lambda: optimize(case), repeat)
        t_fd, out_fd = best_of(lambda: optimize(case, problem=fd_problem(case)), 1)
        t_build, _ = best_of(lambda: build_problem(case), repeat)
        makers = (lambda: build_problem(case), lambda: fd_problem(case),
                  lambda: scalar_constraint_problem(case))
        drv = [None] * len(makers)
        for _ in range(repeat if count <= 48 else 1):   # interleaved: shared machine state
            for i, make in enumerate(makers):
                prob = make()
                t0 = time.perf_counter()
                result = prob.run_driver()
                wall = time.perf_counter() - t0
                drv[i] = (wall, prob, result) if drv[i] is None or wall < drv[i][0] else drv[i]
        (t_drv, prob, res), (t_drv_fd, prob_fd, res_fd), (t_scalar, prob_scalar, _) = drv
        assert (prob_scalar.driver._scipy_optimize_result.nit
                == prob.driver._scipy_optimize_result.nit), "the drivers took different steps"
        n_grad = 10 if count <= 48 else 3
        t_grad, _ = best_of(lambda: [prob.driver._compute_totals() for _ in range(n_grad)], repeat)
        t_grad_fd, _ = best_of(lambda: prob_fd.driver._compute_totals(), 1)
        coloring = prob.driver._coloring_info.coloring
        rows.append(dict(segments=count, design_variables=int(coloring._shape[1]),
                         linear_solves=int(coloring.total_solves()),
                         gradient_ms=t_grad / n_grad * 1e3, fd_gradient_ms=t_grad_fd * 1e3,
                         gradient_fd_over_analytic=t_grad_fd / (t_grad / n_grad),
                         driver_s=t_drv, fd_driver_s=t_drv_fd,
                         driver_iterations=int(res.iter_count),
                         fd_driver_iterations=int(res_fd.iter_count),
                         driver_fd_over_analytic=t_drv_fd / t_drv,
                         scalar_constraint_driver_s=t_scalar,
                         scalar_constraint_over_vector=t_scalar / t_drv,
                         build_s=t_build, wall_s=t_an, iterations=out.iterations,
                         converged=out.converged, fd_wall_s=t_fd,
                         fd_converged=out_fd.converged, fd_over_analytic=t_fd / t_an))
    return rows


def bench_startup(repeat=5):
    """The command's whole wall (``blownwing optimize`` on the survey drone, a fresh Python
    each time) over ``python -c "import openmdao.api"``, best of ``repeat`` each, in an empty
    temporary folder."""
    import subprocess
    import tempfile
    env = dict(os.environ, OPENMDAO_REPORTS="0")
    case = str(ROOT / "cases" / "survey-drone.toml")
    commands = {"import_openmdao_api": [sys.executable, "-c", "import openmdao.api"],
                "optimize_command": [sys.executable, "-m", "mdao", "optimize", case]}
    walls = {}
    with tempfile.TemporaryDirectory() as folder:
        for _ in range(repeat):          # interleaved: the machine's state is shared
            for name, cmd in commands.items():
                t0 = time.perf_counter()
                subprocess.run(cmd, cwd=folder, env=env, check=True, stdout=subprocess.DEVNULL)
                walls.setdefault(name, []).append(time.perf_counter() - t0)
    best = {name: min(w) for name, w in walls.items()}
    return dict(best, startup_ratio=best["optimize_command"] / best["import_openmdao_api"])


def bench_studies(repeat):
    """Net-power sweep over 1e6 (momentum coefficient x fan efficiency) points and a 1e5-sample
    Monte Carlo, each one vectorized call of the direct chain; peak memory by tracemalloc."""
    from mdao.case import load_case
    from mdao.physics import chain
    from mdao.system import chain_options, chain_parameters
    case = load_case(ROOT / "cases" / "survey-drone.toml")
    opts = chain_options(case)
    params = chain_parameters(case)
    nseg = len(case.segments)
    ngrid = 10**6 // nseg
    cmu = np.linspace(*case.airfoil["momentum_coefficient_range"], ngrid)[:, None]

    def sweep():
        return chain.evaluate(dict(params, momentum_coefficient=cmu), opts)["net_power_saving"]
    tracemalloc.start()
    t_sweep, out = best_of(sweep, repeat)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    rng = np.random.default_rng(1)
    samples = 10**5
    draws = dict(params, momentum_coefficient=np.full(nseg, 0.05),
                 drag_per_momentum=rng.normal(params["drag_per_momentum"], 0.15, (samples, 1)),
                 jet_loss_factor=rng.normal(params["jet_loss_factor"], 0.08, (samples, 1)))

    def monte_carlo():
        return chain.evaluate(draws, opts)["energy_saving"].sum(axis=-1)
    t_mc, _ = best_of(monte_carlo, repeat)
    return dict(sweep_points=int(out.size), sweep_1e6_s=t_sweep, sweep_1e6_peak_MB=peak / 2**20,
                monte_carlo_samples=samples, monte_carlo_1e5_s=t_mc)


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--json", default=None, help="also write the figures to this JSON file")
    parser.add_argument("--quick", action="store_true", help="smaller sizes, one repeat")
    parser.add_argument("--fresh-memory", action="store_true",
                        help="leave the allocator as it is (freed arrays go back to the system, "
                             "and large ones page-fault afresh), instead of steady_memory()")
    args = parser.parse_args(argv)
    steady = False if args.fresh_memory else steady_memory()
    print(f"memory: {'steady (freed arrays stay in the heap)' if steady else 'as the allocator leaves it'}")
    sizes = (10**3, 10**4) if args.quick else (10**3, 10**5, 10**6)
    repeat = 1 if args.quick else 3

    chain_rows = bench_chain(sizes, repeat)
    print("Whole chain, lumped duct and constant fan (best of %d)" % repeat)
    print(f"{'points':>9} {'floor s':>9} {'direct s':>9} {'group s':>9} {'fused s':>9} "
          f"{'fused 1 out s':>14} {'direct/floor':>13} {'group/floor':>12} {'fused/floor':>12} "
          f"{'fused 1 out/floor':>18} {'framework floor/floor':>22}")
    for r in chain_rows:
        print(f"{r['points']:>9} {r['floor_s']:>9.4f} {r['direct_s']:>9.4f} {r['group_s']:>9.4f} "
              f"{r['fused_s']:>9.4f} {r['fused_one_output_s']:>14.4f} "
              f"{r['direct_over_floor']:>13.2f} {r['group_over_floor']:>12.2f} "
              f"{r['fused_over_floor']:>12.2f} {r['fused_one_output_over_floor']:>18.2f} "
              f"{r['framework_floor_over_floor']:>22.2f}")
    opt_rows = bench_optimizations(repeat)
    print("\nBundled optimizations: analytic totals against finite-difference totals")
    print(f"{'case':>16} {'wall s':>8} {'iter':>5} {'model ev':>9} {'deriv ev':>9} {'FD wall s':>10} "
          f"{'FD/analytic':>12} {'model ms':>9} {'grad ms':>8} {'FD grad ms':>11} {'grad FD/an':>11}")
    for r in opt_rows:
        print(f"{r['case']:>16} {r['wall_s']:>8.3f} {r['iterations']:>5} {r['model_evaluations']:>9} "
              f"{r['derivative_evaluations']:>9} {r['fd_wall_s']:>10.3f} {r['fd_over_analytic']:>12.2f} "
              f"{r['model_ms']:>9.2f} {r['gradient_ms']:>8.2f} {r['fd_gradient_ms']:>11.2f} "
              f"{r['gradient_fd_over_analytic']:>11.2f}")
    seg_rows = bench_segments((3, 12, 48, 192) if not args.quick else (3, 12), repeat)
    print("\nCost against the number of segments (survey case's wing): analytic colored totals "
          "against finite differences")
    print(f"{'segments':>9} {'DVs':>5} {'solves':>7} {'grad ms':>8} {'FD grad ms':>11} "
          f"{'grad FD/an':>11} {'driver s':>9} {'FD driver s':>12} {'driver FD/an':>13} "
          f"{'build s':>8} {'whole s':>8} {'FD whole s':>11} {'whole FD/an':>12} "
          f"{'scalar-con driver s':>20} {'scalar/vector':>14}")
    for r in seg_rows:
        print(f"{r['segments']:>9} {r['design_variables']:>5} {r['linear_solves']:>7} "
              f"{r['gradient_ms']:>8.2f} {r['fd_gradient_ms']:>11.2f} "
              f"{r['gradient_fd_over_analytic']:>11.1f} {r['driver_s']:>9.3f} "
              f"{r['fd_driver_s']:>12.3f} {r['driver_fd_over_analytic']:>13.2f} "
              f"{r['build_s']:>8.3f} {r['wall_s']:>8.3f} {r['fd_wall_s']:>11.3f} "
              f"{r['fd_over_analytic']:>12.2f} {r['scalar_constraint_driver_s']:>20.3f} "
              f"{r['scalar_constraint_over_vector']:>14.2f}")
    startup = bench_startup(2 if args.quick else 5)
    print(f"\nStart-up (best of {2 if args.quick else 5}): blownwing optimize survey-drone "
          f"{startup['optimize_command']:.2f} s, python -c 'import openmdao.api' "
          f"{startup['import_openmdao_api']:.2f} s, ratio {startup['startup_ratio']:.2f}")
    studies = bench_studies(repeat)
    print(f"\nSweep of {studies['sweep_points']} points: {studies['sweep_1e6_s']:.3f} s, peak "
          f"{studies['sweep_1e6_peak_MB']:.0f} MB; Monte Carlo of {studies['monte_carlo_samples']} "
          f"samples: {studies['monte_carlo_1e5_s']:.3f} s")

    by_n = {r["points"]: r for r in chain_rows}
    figures = {
        "direct_over_floor_1e6": by_n.get(10**6, chain_rows[-1])["direct_over_floor"],
        "group_over_floor_1e5": by_n.get(10**5, chain_rows[-1])["group_over_floor"],
        "fused_group_over_floor_1e5": by_n.get(10**5, chain_rows[-1])["fused_over_floor"],
        "fused_group_one_output_over_floor_1e5":
            by_n.get(10**5, chain_rows[-1])["fused_one_output_over_floor"],
        "framework_floor_over_floor_1e5":
            by_n.get(10**5, chain_rows[-1])["framework_floor_over_floor"],
        "fused_group_one_output_over_framework_floor_1e5":
            by_n.get(10**5, chain_rows[-1])["fused_one_output_over_framework_floor"],
        "group_over_framework_floor_1e5":
            by_n.get(10**5, chain_rows[-1])["group_over_framework_floor"],
        "optimize_wall_s": {r["case"]: r["wall_s"] for r in opt_rows},
        "fd_over_analytic": {r["case"]: r["fd_over_analytic"] for r in opt_rows},
        "gradient_fd_over_analytic": {r["case"]: r["gradient_fd_over_analytic"] for r in opt_rows},
        "fd_over_analytic_by_segments": {r["segments"]: r["driver_fd_over_analytic"]
                                         for r in seg_rows},
        "fd_over_analytic_by_segments_whole": {r["segments"]: r["fd_over_analytic"]
                                               for r in seg_rows},
        "gradient_fd_over_analytic_by_segments": {r["segments"]: r["gradient_fd_over_analytic"]
                                                  for r in seg_rows},
        "gradient_ms_by_segments": {r["segments"]: r["gradient_ms"] for r in seg_rows},
        "scalar_constraint_driver_over_vector_by_segments":
            {r["segments"]: r["scalar_constraint_over_vector"] for r in seg_rows},
        "startup_ratio": startup["startup_ratio"],
        "startup": startup,
        "sweep_1e6_s": studies["sweep_1e6_s"],
        "sweep_1e6_peak_MB": studies["sweep_1e6_peak_MB"],
        "monte_carlo_1e5_s": studies["monte_carlo_1e5_s"],
        "steady_memory": steady,
        "chain": chain_rows, "optimizations": opt_rows, "segments": seg_rows,
        "studies": studies,
    }
    if args.json:
        sys.path.insert(0, str(ROOT))
        from mdao.files import write_json
        write_json(args.json, figures)
        print(f"wrote {args.json}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
