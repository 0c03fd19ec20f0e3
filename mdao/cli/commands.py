"""What each command does: load the input, run the study, write the files, print, and return the
exit code.

The studies return data; every console line and exit code of the command line is here.
"""
import sys
from pathlib import Path

from mdao import CAUTION, __version__
from mdao.case import CaseError
from mdao.cli.progress import OptimizationCounter, StepDisplay
from mdao.studies.calibration.runs import CalibrationError

#: Exit codes: success (a converged optimum), bad input, the optimizer did not converge.
EXIT_OK, EXIT_INPUT, EXIT_NOT_CONVERGED = 0, 2, 3

#: Errors that mean bad input: a message naming the key or column, exit 2, no traceback.
INPUT_ERRORS = (CaseError, CalibrationError)


def run(args):
    """Run the parsed command ``args.command``; returns the exit code."""
    try:
        return COMMANDS[args.command](args)
    except INPUT_ERRORS as exc:
        print(f"blownwing: error: {exc}", file=sys.stderr)
        return EXIT_INPUT


def _optimize(args, optimized=True):
    """``blownwing optimize|evaluate CASE [--out DIR]``."""
    from mdao.case import load_case
    from mdao.files import write_json
    from mdao.optimum import evaluate_start_point, optimize
    from mdao.report.console import summary

    case = load_case(args.case)
    outcome = optimize(case) if optimized else evaluate_start_point(case)
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
    """``blownwing calibrate RUNS [--out DIR] [--no-plots] [--lift-bands N]``."""
    from mdao.report.calibration import format_summary
    from mdao.studies.calibration import calibrate_file

    result = calibrate_file(args.runs, args.out, plots=not args.no_plots,
                            lift_bands=args.lift_bands)
    print(format_summary(result))
    print(f"wrote {Path(args.out) / 'calibration.json'} and {Path(args.out) / 'calibration.toml'}")
    return EXIT_OK


def _review(args):
    """``blownwing review CASE [--out DIR] [--samples N] [--no-plots] [--optimum-per-sample]
    [--scheduler ADDR] [--workers N]``.

    0: the report written; 3: the optimization did not converge (said so on stderr;
    ``review.json`` records the failure and no optimum, no ``review.md``).
    """
    from mdao.case import load_case
    from mdao.report.review import review_summary, write_review, write_review_failure
    from mdao.studies.review import run_review

    case = load_case(args.case)
    if args.samples is not None and args.samples < 10:
        raise CaseError(f"--samples = {args.samples!r}: at least 10 are needed")
    steps = StepDisplay("review")
    data = run_review(case, samples=args.samples, optimum_per_sample=args.optimum_per_sample,
                      scheduler=args.scheduler, workers=args.workers, progress=steps)
    out = Path(args.out)
    if not data["converged"]:
        o = data["optimum"]
        print(f"blownwing: {case.title}\nNOT CONVERGED: {o['message']} after {o['iterations']} "
              "iterations. No review is written as an optimum; check the bounds, the start point "
              "or [optimize] max_iterations.", file=sys.stderr)
        write_review_failure(data, out)
        return EXIT_NOT_CONVERGED
    steps("writing the report", 0, 1)
    files = write_review(data, out, plots=not args.no_plots)
    steps("writing the report", 1, 1)
    print(review_summary(data))
    for f in files:
        print(f"wrote {f}")
    print(CAUTION)
    return EXIT_OK


def _many(args):
    """``blownwing many CASE --kind monte-carlo|multistart [--samples N] [--seed S] [--out DIR]
    [--scheduler ADDR] [--workers N]``: writes ``DIR/many.json``.

    0 when at least one optimization converged, 3 when none did.
    """
    from mdao.case import load_case
    from mdao.files import write_json
    from mdao.report.console import many_summary
    from mdao.studies.scaleout import run_many

    case = load_case(args.case)
    data = run_many(case, args.kind, samples=args.samples, seed=args.seed,
                    scheduler=args.scheduler, workers=args.workers,
                    progress=OptimizationCounter())
    data["case"] = str(args.case)
    path = Path(args.out) / "many.json"
    write_json(path, data)
    print(many_summary(data))
    print(f"wrote {path}")
    return EXIT_OK if data["summary"]["converged"] else EXIT_NOT_CONVERGED


def _duct(args):
    """``blownwing duct CASE [--out DIR] [--start] [--no-plots]``: writes
    ``DIR/transition.csv``, ``DIR/sections.csv`` and ``DIR/duct.png``.

    0: written; 2: bad input, or a case whose duct is not geometric; 3: the optimizer did not
    converge (nothing written; ``--start`` never optimizes).
    """
    from mdao.case import load_case
    from mdao.studies.duct_export import duct_export, write_duct_files

    case = load_case(args.case)
    if case.duct["model"] != "geometric":
        raise CaseError(f"duct.model = {case.duct['model']!r}: the duct command needs "
                        "duct.model = \"geometric\" (the lumped duct has no geometry)")
    export = duct_export(case, start=args.start)
    if not export.converged:
        o = export.outcome
        print(f"blownwing: {case.title}\nNOT CONVERGED: {export.message} after {o.iterations} "
              "iterations. No duct is written for a design that is not an optimum; check the "
              "case, or export the start point with --start.", file=sys.stderr)
        return EXIT_NOT_CONVERGED
    data = export.data
    files = write_duct_files(case, data, args.out, plots=not args.no_plots)
    span = max(data["span_wall_half_angle_deg"])
    thickness = max(data["thickness_wall_half_angle_deg"])
    print(f"blownwing {__version__}: {case.title}\n"
          f"transition duct at the {data['source']} (slot ratio {data['slot_ratio']:.5g}), one of "
          f"{data['fans']} alike: fan circle {data['fan_diameter_m'] * 1e3:.4g} mm to a "
          f"{data['slot_width_m'] * 1e3:.4g} x {data['slot_height_m'] * 1e3:.4g} mm slot over "
          f"{data['length_m'] * 1e3:.4g} mm\n"
          f"steepest walls: span {span:.2f} deg, thickness {thickness:.2f} deg (limit "
          f"{data['max_wall_half_angle_deg']:.3g} deg, + diverging); equivalent cone "
          f"{max(data['diffusion_half_angle_deg']):.2f} deg (limit "
          f"{data['max_diffusion_half_angle_deg']:.3g} deg)"
          + ("" if data["within_limits"] else "\nWARNING: the duct breaks a wall or diffusion "
             "limit at this design"))
    if not args.no_plots and len(files) < 3:
        print("note: matplotlib is not installed: no duct.png (pip install matplotlib)")
    for f in files:
        print(f"wrote {f}")
    print(CAUTION)
    return EXIT_OK


COMMANDS = {"optimize": _optimize, "evaluate": lambda a: _optimize(a, optimized=False),
            "calibrate": _calibrate, "review": _review, "many": _many, "duct": _duct}
