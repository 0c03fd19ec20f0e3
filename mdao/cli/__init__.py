"""The command line: ``blownwing optimize|evaluate|calibrate|review|many|duct``.

The top layer of the package: argument handling, exit codes, everything printed on the console
and the progress display live here (:mod:`mdao.cli.commands`, :mod:`mdao.cli.progress`); the
studies below return data.

Exit codes (:mod:`mdao.cli.commands`): 0 success (a converged optimum; for ``many``, at least one
converged optimization), 2 bad input (a message, no traceback), 3 the optimizer did not converge
(said so; nothing is printed as an optimum), 4 internal error (a bug: one line naming the
exception; ``--debug`` shows the traceback), 130 interrupted. An option or ``--out`` folder that
cannot be used is refused with exit 2 before any computation.
"""
import argparse

from mdao import CAUTION, __version__


def _parser():
    p = argparse.ArgumentParser(
        prog="blownwing",
        description="Design optimization of wings with recirculating blown airfoils. "
                    + CAUTION)
    p.add_argument("--version", action="version", version=f"blownwing {__version__}")
    sub = p.add_subparsers(dest="command", required=True)
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument("--debug", action="store_true",
                        help="on an internal error, show the Python traceback (exit 1) instead "
                             "of one line (exit 4)")
    common.add_argument("--quiet", action="store_true",
                        help="print nothing but errors: no progress, no report (the files are "
                             "written all the same)")
    document = argparse.ArgumentParser(add_help=False)
    document.add_argument("--json", action="store_true",
                          help="print the command's JSON document on stdout instead of the "
                               "report (the same text as the file it writes in --out)")

    def out(parser, command, writes):
        parser.add_argument("--out", default=command, metavar="DIR",
                            help=f"folder for {writes} (default: ./{command}/, like every "
                                 "command: a folder named after it)")

    o = sub.add_parser("optimize", parents=[common, document],
                       help="optimize a case: slot ratio, pressure rise and momentum coefficient "
                            "per segment")
    o.add_argument("case", help="case file (TOML)")
    out(o, "optimize", "results.json")
    o.add_argument("--n2", default=None, metavar="FILE",
                   help="also write OpenMDAO's N2 diagram of the built problem (HTML) to FILE")
    o.add_argument("--record", default=None, metavar="FILE",
                   help="also record the optimizer's iterations to FILE with OpenMDAO's SQLite "
                        "case recorder (read it with openmdao.api.CaseReader)")
    e = sub.add_parser("evaluate", parents=[common, document],
                       help="evaluate a case's start point without optimizing")
    e.add_argument("case", help="case file (TOML)")
    out(e, "evaluate", "results.json")
    e.add_argument("--n2", default=None, metavar="FILE",
                   help="also write OpenMDAO's N2 diagram of the built problem (HTML) to FILE")
    c = sub.add_parser("calibrate", parents=[common, document],
                       help="fit the model constants to CFD or wind-tunnel runs")
    c.add_argument("runs", help="CSV of runs, each header with its unit in brackets")
    out(c, "calibrate", "calibration.json, calibration.toml and the plots")
    c.add_argument("--no-plots", action="store_true", help="skip the PNG plots")
    c.add_argument("--lift-bands", type=int, default=None, metavar="N",
                   help="fit the constants in N bands of lift and write them as lift tables "
                        "(1: one value per constant; default: decided from the runs)")
    r = sub.add_parser("review", parents=[common, document],
                       help="design-review studies: sensitivities, break-even maps, uncertainty, "
                            "report")
    r.add_argument("case", help="case file (TOML) with an [uncertainty] table")
    out(r, "review", "review.md, review.json and the figures")
    r.add_argument("--samples", type=int, default=None, metavar="N",
                   help="Monte Carlo samples, at least 10 (overrides [review] samples)")
    r.add_argument("--seed", type=int, default=None, metavar="S",
                   help="random seed of the Monte Carlo draws, at least 0 (overrides [review] "
                        "seed)")
    r.add_argument("--no-plots", action="store_true", help="skip the PNG figures")
    r.add_argument("--optimum-per-sample", action="store_true",
                   help="also re-optimize every Monte Carlo sample (optimization under "
                        "uncertainty; uses Dask when --scheduler or --workers is given)")
    r.add_argument("--scheduler", default=None,
                   help="Dask scheduler address, tcp://host:port (refused when it does not "
                        "answer within 3 s)")
    r.add_argument("--workers", type=int, default=None, metavar="N",
                   help="start a local Dask cluster with this many workers (at least 1)")
    d = sub.add_parser("duct", parents=[common],
                       help="the geometric duct for CAD at the optimum: stations and section "
                            "loops (CSV) and a figure, for one of the fans")
    d.add_argument("case", help="case file (TOML) with duct.model = \"geometric\"")
    out(d, "duct", "transition.csv, sections.csv and duct.png")
    d.add_argument("--start", action="store_true",
                   help="the case's start point instead of the optimum (no optimization)")
    d.add_argument("--no-plots", action="store_true", help="skip duct.png")
    m = sub.add_parser("many", parents=[common, document],
                       help="many independent optimizations: one optimum per Monte Carlo sample "
                            "or per random start, serially or on Dask")
    m.add_argument("case", help="case file (TOML)")
    m.add_argument("--kind", required=True, choices=("monte-carlo", "multistart"),
                   help="one optimum per Monte Carlo sample of [uncertainty], or one per random "
                        "start point")
    m.add_argument("--samples", type=int, default=None, metavar="N",
                   help="number of samples or starts, at least 1 (default: [review] samples)")
    m.add_argument("--seed", type=int, default=None, metavar="S",
                   help="random seed, at least 0 (default: [review] seed)")
    out(m, "many", "many.json")
    m.add_argument("--scheduler", default=None,
                   help="Dask scheduler address, tcp://host:port (refused when it does not "
                        "answer within 3 s)")
    m.add_argument("--workers", type=int, default=None, metavar="N",
                   help="start a local Dask cluster (loopback) with this many workers "
                        "(at least 1)")
    return p


def main(argv=None):
    """Run the command line on ``argv`` (default ``sys.argv[1:]``); returns the exit code."""
    args = _parser().parse_args(argv)
    _single_threaded_blas()
    from mdao.cli.commands import run  # after parsing: --help and --version stay fast

    _without_report_plugins()
    return run(args)


#: Thread counts of the BLAS libraries NumPy and SciPy may be built on.
BLAS_THREADS = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


def _single_threaded_blas():
    """One BLAS thread unless the user set otherwise (before NumPy is imported). The linear
    algebra here is small (SLSQP's subproblem over at most a few hundred design variables),
    where extra threads only add start-up and wait: on a machine whose other cores are busy,
    threaded BLAS made SLSQP's 48-segment subproblem 100 times slower (1.5 s against 14 ms,
    benchmarks/run.py). Scale-out spreads whole optimizations over processes instead."""
    import os
    for name in BLAS_THREADS:
        os.environ.setdefault(name, "1")


def _without_report_plugins():
    """The command line writes no OpenMDAO reports (its problems have ``reports=False``), but
    OpenMDAO's ``Problem()`` loads every report plugin on first use, importing
    matplotlib.pyplot (about 0.6 s). Mark the plugins as loaded for this process. Only the
    command line does this: a model that imports the package keeps its reports."""
    try:
        from openmdao.utils import reports_system
    except ImportError:     # pragma: no cover - OpenMDAO is a dependency
        return
    if hasattr(reports_system, "_plugins_loaded"):
        reports_system._plugins_loaded = True

