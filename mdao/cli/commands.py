"""What each command does: check the options and the output folder, load the input, run the study,
write the files as a set, print, and return the exit code.

The studies return data; every console line and exit code of the command line is here. Every
command first checks its options and its ``--out`` folder (:class:`mdao.files.OutputSet`), so a
bad option or folder is refused before any computation; it writes into the output set's staging
folder and commits the set at the end.
"""
import socket
import sys
import time
from pathlib import Path
from urllib.parse import urlsplit

from mdao import CAUTION, __version__
from mdao.case import CaseError
from mdao.cli.progress import OptimizationCounter, StepDisplay
from mdao.files import MESSAGE_LIMIT, OutputError, OutputSet, safe_text
from mdao.studies.calibration.runs import CalibrationError
from mdao.units import UnitError

#: Exit codes: success (a converged optimum), bad input, the optimizer did not converge, an
#: internal error (a bug: one line, ``--debug`` shows the traceback), interrupted (Ctrl-C).
EXIT_OK, EXIT_INPUT, EXIT_NOT_CONVERGED, EXIT_INTERNAL, EXIT_INTERRUPTED = 0, 2, 3, 4, 130

#: Errors that mean bad input: a message naming the key or column, exit 2, no traceback.
INPUT_ERRORS = (CaseError, CalibrationError, UnitError, OutputError)

#: Seconds to wait for a ``--scheduler`` to accept a connection before refusing it.
SCHEDULER_TIMEOUT = 3.0

#: Longest report text printed on stdout (the summary tables) [characters].
REPORT_LIMIT = 200_000

#: The files each command can write in its output folder (shell patterns): files of these names
#: that a run did not write are removed when it commits, so a folder never mixes two runs.
OUTPUTS = {
    "optimize": ("results.json",),
    "evaluate": ("results.json",),
    "calibrate": ("calibration.json", "calibration.toml", "duct_collapse.png",
                  "drag_momentum.png", "residuals.png"),
    "review": ("review.md", "review.json", "optimization_history.png", "tornado.png",
               "net_power.png", "uncertainty.png", "break_even_*.png", "duct.png"),
    "many": ("many.json",),
    "duct": ("transition.csv", "sections.csv", "duct.png"),
}


def run(args):
    """Run the parsed command ``args.command``; returns the exit code.

    Bad input (a case, a table, a unit, a path, an option, a value the model cannot evaluate)
    prints one message of at most :data:`mdao.files.MESSAGE_LIMIT` characters, control
    characters escaped, and returns 2; an unexpected exception prints one line and returns 4
    (with ``args.debug`` it is raised, traceback and all).
    """
    debug = getattr(args, "debug", False)
    try:
        return COMMANDS[args.command](args)
    except KeyboardInterrupt:
        _error("interrupted; nothing new written")
        return EXIT_INTERRUPTED
    except INPUT_ERRORS as exc:
        _error(f"error: {exc}")
        return EXIT_INPUT
    except Exception as exc:            # noqa: BLE001 - every other exception is sorted here
        if debug:
            raise
        code, text = classify(exc)
        _error(text)
        return code


def classify(exc):
    """The exit code and message of an exception that is not one of :data:`INPUT_ERRORS`.

    Returns
    -------
    (int, str)
        2 for an unreadable or unwritable path (``OSError``), a file that is not UTF-8 text, a
        number or nesting too large, or a value the model cannot evaluate (``ValueError``,
        "model error"); 4 (internal error) for anything else.
    """
    if isinstance(exc, OSError):
        name = exc.filename if exc.filename is not None else ""
        reason = exc.strerror or str(exc) or type(exc).__name__
        return EXIT_INPUT, (f"error: {safe_text(name, 300, False)}: {reason}" if name != ""
                            else f"error: {reason}")
    if isinstance(exc, UnicodeError):
        return EXIT_INPUT, f"error: the input is not UTF-8 text ({exc})"
    if isinstance(exc, RecursionError):
        return EXIT_INPUT, "error: the input is nested too deeply to read"
    if isinstance(exc, MemoryError):
        return EXIT_INPUT, ("error: not enough memory for this input (fewer samples, segments "
                            "or points)")
    if isinstance(exc, OverflowError):
        return EXIT_INPUT, f"error: a number is too large: {exc}"
    if isinstance(exc, ValueError):
        return EXIT_INPUT, (f"model error: {exc} (the model cannot evaluate this input; check the "
                            "case's values)")
    return EXIT_INTERNAL, (f"internal error (a bug, not your input): {type(exc).__name__}: "
                           f"{safe_text(exc, 500, newlines=False)}; run again with --debug for "
                           "the traceback and report it")


def _error(text):
    """``blownwing: TEXT`` on stderr, escaped and cut (:func:`mdao.files.safe_text`)."""
    print("blownwing: " + safe_text(text, MESSAGE_LIMIT), file=sys.stderr, flush=True)


def _say(text):
    """A report on stdout, control characters escaped (titles and names come from the user)."""
    print(safe_text(text, REPORT_LIMIT), flush=True)


# --- options ------------------------------------------------------------------------------------
def _at_least(option, value, low):
    if value is not None and value < low:
        raise CaseError(f"{option} {value}: a whole number >= {low} is needed")


def _check_sampling(args, least_samples):
    """The options of a command that samples and may scale out (``--samples``, ``--seed``,
    ``--workers``, ``--scheduler``), refused before any computation."""
    _at_least("--samples", args.samples, least_samples)
    _at_least("--seed", args.seed, 0)
    _at_least("--workers", args.workers, 1)
    check_scheduler(args.scheduler)


def check_scheduler(address, timeout=None):
    """Refuse a ``--scheduler`` that is not ``tcp://host:port`` (or ``tls://``) or that does not
    accept a connection within ``timeout`` seconds (raises :class:`mdao.case.CaseError`)."""
    if address is None:
        return
    timeout = SCHEDULER_TIMEOUT if timeout is None else timeout
    text = safe_text(address, 200, False)
    parts = urlsplit(address if "://" in address else "tcp://" + address)
    try:
        port = parts.port
    except ValueError:
        port = None
    if parts.scheme not in ("tcp", "tls") or not parts.hostname or port is None:
        raise CaseError(f"--scheduler {text}: expected tcp://host:port")
    start = time.monotonic()
    try:
        with socket.create_connection((parts.hostname, port), timeout=timeout) as sock:
            if parts.scheme == "tcp":
                # a Dask scheduler writes its handshake as soon as it accepts; a port that
                # accepts and stays silent (a firewall, a proxy, another program) is refused
                sock.settimeout(max(timeout - (time.monotonic() - start), 0.1))
                if not sock.recv(1):
                    raise ConnectionResetError(0, "closed without a handshake")
    except (OSError, UnicodeError) as exc:
        reason = "no handshake" if isinstance(exc, TimeoutError) else (
            getattr(exc, "strerror", None) or str(exc) or type(exc).__name__)
        raise CaseError(f"--scheduler {text}: no Dask scheduler answers there within "
                        f"{timeout:g} s ({reason})") from None


def _outputs(args):
    """The command's checked output set (staging folder created), or None without ``--out``."""
    if getattr(args, "out", None) is None:
        return None
    return OutputSet(args.out, OUTPUTS[args.command]).open()


def _talk(args):
    """Whether the command prints its report (not with ``--quiet`` nor ``--json``)."""
    return not (getattr(args, "quiet", False) or getattr(args, "json", False))


def _progress(args):
    """Progress display setting: off with ``--quiet`` or ``--json``, else on a terminal."""
    return False if not _talk(args) else None


def _wrote(args, outputs, files):
    if _talk(args):
        for f in files:
            _say(f"wrote {outputs.final(f) if outputs.path in Path(f).parents else f}")


def _document(args, outputs, name):
    """With ``--json``: the committed JSON document ``name`` of the output folder on stdout,
    byte for byte the file's text."""
    if getattr(args, "json", False) and outputs is not None:
        sys.stdout.write((outputs.target / name).read_text(encoding="utf-8"))
        sys.stdout.flush()


def _file_option(option, value):
    """A ``--n2``/``--record`` FILE, checked before any computation: its folder exists and it is
    not a folder itself (:class:`mdao.files.OutputError`, exit 2). None stays None."""
    if value is None:
        return None
    text = safe_text(value, 300, False)
    if "\0" in value or not value.strip():
        raise OutputError(f"{option} {text}: not a file name")
    path = Path(value)
    if path.is_dir():
        raise OutputError(f"{option} {text}: is a folder; give a file name")
    if not path.parent.is_dir():
        raise OutputError(f"{option} {text}: the folder {safe_text(str(path.parent), 300, False)} "
                          "does not exist")
    return path


class _AtomicFile:
    """A temporary file beside ``path`` (``.NAME.XXXX.tmp``, cleaned by the next output set),
    renamed to ``path`` when the ``with`` block ends normally and removed otherwise."""

    def __init__(self, path):
        self.path = path
        self.tmp = None

    def __enter__(self):
        import os
        import tempfile
        fd, tmp = tempfile.mkstemp(dir=self.path.parent, prefix=f".{self.path.name}.",
                                   suffix=".tmp")
        os.close(fd)
        os.unlink(tmp)          # the writer creates it (SQLite refuses an empty file)
        self.tmp = Path(tmp)
        return self.tmp

    def __exit__(self, kind, value, trace):
        import os
        from mdao.files import file_mode
        if kind is None and self.tmp.exists():
            os.chmod(self.tmp, file_mode())
            os.replace(self.tmp, self.path)
        elif self.tmp.exists():
            self.tmp.unlink()
        return False


def _write_n2(prob, path, title):
    """OpenMDAO's N2 diagram of ``prob`` (HTML) to ``path``, atomically."""
    from openmdao.visualization.n2_viewer.n2_viewer import n2
    with _AtomicFile(path) as tmp:
        n2(prob, outfile=str(tmp), show_browser=False, display_in_notebook=False, title=title)


# --- commands -----------------------------------------------------------------------------------
def _optimize(args, optimized=True):
    """``blownwing optimize|evaluate CASE [--out DIR] [--json] [--quiet] [--n2 FILE]
    [--record FILE]``."""
    from mdao.case import load_case
    from mdao.files import write_json
    from mdao.optimum import evaluate_start_point, optimize
    from mdao.report.console import summary

    n2_file = _file_option("--n2", getattr(args, "n2", None))
    record_file = _file_option("--record", getattr(args, "record", None))
    outputs = _outputs(args)
    with outputs or _Nothing():
        case = load_case(args.case)
        if not optimized:
            outcome = evaluate_start_point(case)
        elif record_file is not None:
            with _AtomicFile(record_file) as tmp:
                outcome = optimize(case, record=tmp)
        else:
            outcome = optimize(case)
        if n2_file is not None:
            _write_n2(outcome.problem, n2_file, safe_text(case.title, 300, False))
        data = outcome.to_json()
        data.update(case=str(args.case), title=case.title, version=__version__, caution=CAUTION)
        if outputs:
            write_json(outputs.path / "results.json", data)
            outputs.commit()
        if optimized and not outcome.converged:
            _error(f"{safe_text(case.title, 300, False)}\nNOT CONVERGED: {outcome.message} "
                   f"({outcome.iterations} iterations, {outcome.model_evaluations} model "
                   "evaluations); no optimum is reported.")
            _document(args, outputs, "results.json")
            return EXIT_NOT_CONVERGED
        _document(args, outputs, "results.json")
        if _talk(args):
            _say(summary(outcome, case, optimized=optimized))
            written = ([outputs.shown / "results.json"] if outputs else []) + [
                f for f in (n2_file, record_file) if f is not None]
            for f in written:
                _say(f"wrote {f}")
    return EXIT_OK


def _calibrate(args):
    """``blownwing calibrate RUNS [--out DIR] [--no-plots] [--lift-bands N]``."""
    from mdao.report.calibration import format_summary
    from mdao.studies.calibration import calibrate_file

    with _outputs(args) as outputs:
        result = calibrate_file(args.runs, outputs.path, plots=not args.no_plots,
                                lift_bands=args.lift_bands, named_in=outputs.shown)
        outputs.commit()
    _document(args, outputs, "calibration.json")
    if _talk(args):
        _say(format_summary(result))
        _say(f"wrote {outputs.shown / 'calibration.json'} and "
             f"{outputs.shown / 'calibration.toml'}")
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

    _check_sampling(args, least_samples=10)
    with _outputs(args) as outputs:
        case = load_case(args.case)
        steps = StepDisplay("review", enabled=_progress(args))
        data = run_review(case, samples=args.samples, optimum_per_sample=args.optimum_per_sample,
                          scheduler=args.scheduler, workers=args.workers, progress=steps,
                          seed=args.seed)
        if not data["converged"]:
            o = data["optimum"]
            _error(f"{safe_text(case.title, 300, False)}\nNOT CONVERGED: {o['message']} "
                   f"({o['iterations']} iterations); no review is written for a design that is "
                   "not an optimum.")
            write_review_failure(data, outputs.path)
            outputs.commit()
            _document(args, outputs, "review.json")
            return EXIT_NOT_CONVERGED
        steps("writing the report", 0, 1)
        files = write_review(data, outputs.path, plots=not args.no_plots)
        outputs.commit()
        steps("writing the report", 1, 1)
    _document(args, outputs, "review.json")
    if _talk(args):
        _say(review_summary(data))
        _wrote(args, outputs, files)
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

    _check_sampling(args, least_samples=1)
    with _outputs(args) as outputs:
        case = load_case(args.case)
        data = run_many(case, args.kind, samples=args.samples, seed=args.seed,
                        scheduler=args.scheduler, workers=args.workers,
                        progress=OptimizationCounter(enabled=_progress(args)))
        data["case"] = str(args.case)
        write_json(outputs.path / "many.json", data)
        outputs.commit()
    _document(args, outputs, "many.json")
    if _talk(args):
        _say(many_summary(data))
        _say(f"wrote {outputs.shown / 'many.json'}")
    return EXIT_OK if data["summary"]["converged"] else EXIT_NOT_CONVERGED


def _duct(args):
    """``blownwing duct CASE [--out DIR] [--start] [--no-plots]``: writes
    ``DIR/transition.csv``, ``DIR/sections.csv`` and ``DIR/duct.png``.

    0: written; 2: bad input, or a case whose duct is not geometric; 3: the optimizer did not
    converge (nothing written; ``--start`` never optimizes).
    """
    from mdao.case import load_case
    from mdao.studies.duct_export import duct_export, write_duct_files

    with _outputs(args) as outputs:
        case = load_case(args.case)
        if case.duct["model"] != "geometric":
            raise CaseError(f"duct.model = {case.duct['model']!r}: the duct command needs "
                            "duct.model = \"geometric\" (the lumped duct has no geometry)")
        export = duct_export(case, start=args.start)
        if not export.converged:
            o = export.outcome
            _error(f"{safe_text(case.title, 300, False)}\nNOT CONVERGED: {export.message} "
                   f"({o.iterations} iterations); no duct is written for a design that is not "
                   "an optimum (export the start point with --start).")
            return EXIT_NOT_CONVERGED
        data = export.data
        files = write_duct_files(case, data, outputs.path, plots=not args.no_plots)
        outputs.commit()
    if not _talk(args):
        return EXIT_OK
    span = max(data["span_wall_half_angle_deg"])
    thickness = max(data["thickness_wall_half_angle_deg"])
    _say(f"blownwing {__version__}: {safe_text(case.title, 300, False)}\n"
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
    _wrote(args, outputs, files)
    print(CAUTION)
    return EXIT_OK


class _Nothing:
    """A ``with`` block that does nothing (a command run without ``--out``)."""

    def __enter__(self):
        return None

    def __exit__(self, *exc):
        return False


COMMANDS = {"optimize": _optimize, "evaluate": lambda a: _optimize(a, optimized=False),
            "calibrate": _calibrate, "review": _review, "many": _many, "duct": _duct}
