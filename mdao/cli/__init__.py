"""The command line: ``blownwing optimize|evaluate|calibrate|review|many|duct``.

The top layer of the package: argument handling, exit codes, everything printed on the console
and the progress display live here (:mod:`mdao.cli.commands`, :mod:`mdao.cli.progress`); the
studies below return data.

Exit codes (:mod:`mdao.cli.commands`): 0 success (a converged optimum; for ``many``, at least one
converged optimization), 2 bad input (a message, no traceback), 3 the optimizer did not converge
(said so; nothing is printed as an optimum).
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
    o = sub.add_parser("optimize", help="optimize a case: slot ratio, pressure rise and momentum "
                                        "coefficient per segment")
    o.add_argument("case", help="case file (TOML)")
    o.add_argument("--out", default=None, help="folder for results.json (default: none written)")
    e = sub.add_parser("evaluate", help="evaluate a case's start point without optimizing")
    e.add_argument("case")
    e.add_argument("--out", default=None)
    c = sub.add_parser("calibrate", help="fit the model constants to CFD or wind-tunnel runs")
    c.add_argument("runs", help="CSV of runs, each header with its unit in brackets")
    c.add_argument("--out", default="calibration", help="output folder (default: calibration)")
    c.add_argument("--no-plots", action="store_true", help="skip the PNG plots")
    c.add_argument("--lift-bands", type=int, default=None, metavar="N",
                   help="fit the constants in N bands of lift and write them as lift tables "
                        "(1: one value per constant; default: decided from the runs)")
    r = sub.add_parser("review", help="design-review studies: sensitivities, break-even maps, "
                                      "uncertainty, report")
    r.add_argument("case")
    r.add_argument("--out", default="review", help="output folder (default: review)")
    r.add_argument("--samples", type=int, default=None, help="Monte Carlo samples (overrides "
                                                             "[review] samples)")
    r.add_argument("--no-plots", action="store_true")
    r.add_argument("--optimum-per-sample", action="store_true",
                   help="also re-optimize every Monte Carlo sample (optimization under "
                        "uncertainty; uses Dask when --scheduler or --workers is given)")
    r.add_argument("--scheduler", default=None, help="Dask scheduler address, tcp://host:port")
    r.add_argument("--workers", type=int, default=None,
                   help="start a local Dask cluster with this many workers")
    d = sub.add_parser("duct", help="the geometric duct for CAD at the optimum: stations and "
                                    "section loops (CSV) and a figure, for one of the fans")
    d.add_argument("case", help="case file (TOML) with duct.model = \"geometric\"")
    d.add_argument("--out", default="duct", help="output folder (default: duct)")
    d.add_argument("--start", action="store_true",
                   help="the case's start point instead of the optimum (no optimization)")
    d.add_argument("--no-plots", action="store_true", help="skip duct.png")
    m = sub.add_parser("many", help="many independent optimizations: one optimum per Monte Carlo "
                                    "sample or per random start, serially or on Dask")
    m.add_argument("case")
    m.add_argument("--kind", required=True, choices=("monte-carlo", "multistart"))
    m.add_argument("--samples", type=int, default=None)
    m.add_argument("--seed", type=int, default=None)
    m.add_argument("--out", default="many", help="output folder (default: many)")
    m.add_argument("--scheduler", default=None, help="Dask scheduler address, tcp://host:port")
    m.add_argument("--workers", type=int, default=None,
                   help="start a local Dask cluster (loopback) with this many workers")
    return p


def main(argv=None):
    """Run the command line on ``argv`` (default ``sys.argv[1:]``); returns the exit code."""
    args = _parser().parse_args(argv)
    from mdao.cli.commands import run  # after parsing: --help and --version stay fast

    return run(args)

