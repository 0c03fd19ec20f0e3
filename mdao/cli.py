"""The command line: ``blownwing optimize|evaluate|calibrate|review|many``.

Exit codes: 0 success (a converged optimum), 2 bad input (a message, no traceback), 3 the
optimizer did not converge (said so; nothing is printed as an optimum).
"""
import argparse
import sys
from pathlib import Path

from mdao import CAUTION, __version__

EXIT_OK, EXIT_INPUT, EXIT_NOT_CONVERGED = 0, 2, 3


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
    args = _parser().parse_args(argv)
    try:
        return _COMMANDS[args.command](args)
    except _InputErrors() as exc:
        print(f"blownwing: error: {exc}", file=sys.stderr)
        return EXIT_INPUT


def _InputErrors():
    from mdao.case import CaseError
    errors = [CaseError]
    try:
        from mdao.studies.calibration import CalibrationError
        errors.append(CalibrationError)
    except ImportError:
        pass
    return tuple(errors)


def _optimize(args, optimized=True):
    from mdao.case import load_case
    from mdao.optimum import evaluate, optimize
    from mdao.files import write_json
    from mdao.report import summary

    case = load_case(args.case)
    outcome = optimize(case) if optimized else evaluate(case)
    if optimized and not outcome.converged:
        print(f"blownwing: {case.title}\nNOT CONVERGED: {outcome.message} after "
              f"{outcome.iterations} iterations ({outcome.model_evaluations} model evaluations). "
              "No optimum is reported; check the bounds, the start point "
              "([[segment]] momentum_coefficient) or [optimize] max_iterations.", file=sys.stderr)
        if args.out:
            write_json(Path(args.out) / "results.json", outcome.to_json())
        return EXIT_NOT_CONVERGED
    print(summary(outcome, case, optimized=optimized))
    if args.out:
        data = outcome.to_json()
        data.update(case=str(args.case), title=case.title, version=__version__, caution=CAUTION)
        write_json(Path(args.out) / "results.json", data)
        print(f"wrote {Path(args.out) / 'results.json'}")
    return EXIT_OK


def _calibrate(args):
    from mdao.studies.calibration import calibrate_file, format_summary

    result = calibrate_file(args.runs, args.out, plots=not args.no_plots)
    print(format_summary(result))
    print(f"wrote {Path(args.out) / 'calibration.json'} and {Path(args.out) / 'calibration.toml'}")
    return EXIT_OK


def _review(args):
    from mdao.studies.review import run_review_cli
    return run_review_cli(args)


def _many(args):
    from mdao.studies.scaleout import run_many_cli
    return run_many_cli(args.case, args.kind, args.samples, args.seed, args.out, args.scheduler,
                        args.workers)


_COMMANDS = {"optimize": _optimize, "evaluate": lambda a: _optimize(a, optimized=False),
             "calibrate": _calibrate, "review": _review, "many": _many}


if __name__ == "__main__":
    sys.exit(main())
