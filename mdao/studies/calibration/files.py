"""The calibration study on files: read a runs table, fit, and write ``calibration.json``,
``calibration.toml`` and the figures, each atomically. It returns data and prints nothing; the
console text is :func:`mdao.report.calibration.format_summary`.
"""
import hashlib
import json
import math
import os

from mdao.files import write_atomic
from mdao.studies.calibration.fitting import calibrate
from mdao.studies.calibration.fragment import fragment_text
from mdao.studies.calibration.plots import PLOTS, write_plots
from mdao.studies.calibration.runs import CalibrationError, read_runs

__all__ = ["calibrate_file"]


def calibrate_file(csv_path, out_dir, plots=True, lift_bands=None, named_in=None):
    """Read runs, fit, and write ``calibration.json``, ``calibration.toml`` and the plots.

    Everything is computed and checked before the first file is written: a fit with a
    non-finite value raises :class:`~mdao.studies.calibration.runs.CalibrationError` and writes
    nothing.

    Parameters
    ----------
    csv_path : str or path-like
        Table of runs (see :func:`~mdao.studies.calibration.runs.read_runs`).
    out_dir : str or path-like
        Output folder (created if absent). Each file is written atomically.
    plots : bool
        Also write PNG plots when matplotlib is installed.
    lift_bands : int, optional
        Lift bands (see :func:`~mdao.studies.calibration.fitting.calibrate`).
    named_in : str or path-like, optional
        The folder the files are named in, in ``files`` (default ``out_dir``; the command line
        writes into a staging folder that is moved to ``named_in`` afterwards).

    Returns
    -------
    dict
        The result of :func:`~mdao.studies.calibration.fitting.calibrate` with ``source``
        (``csv``, ``sha256``) and ``files``.

    Raises
    ------
    CalibrationError
        Unusable runs, or a fitted value that is not finite.
    """
    with open(csv_path, "rb") as handle:
        digest = hashlib.sha256(handle.read()).hexdigest()
    runs = read_runs(csv_path)
    result = calibrate(runs, lift_bands=lift_bands)
    result["source"] = {"csv": os.fspath(csv_path), "sha256": digest}
    _check_finite(result)
    names = ["calibration.json", "calibration.toml"]
    if plots and _have_matplotlib():
        names += list(PLOTS)
    named_in = out_dir if named_in is None else named_in
    result["files"] = [os.path.join(os.fspath(named_in), n) for n in names]
    text = fragment_text(result, result["source"])
    blob = json.dumps(result, indent=2, allow_nan=False) + "\n"
    os.makedirs(out_dir, exist_ok=True)
    if plots:
        write_plots(runs, result, out_dir)
    write_atomic(os.path.join(out_dir, "calibration.toml"), text)
    write_atomic(os.path.join(out_dir, "calibration.json"), blob)
    return result


def _have_matplotlib():
    try:
        import matplotlib  # noqa: F401
    except ImportError:
        return False
    return True


def _check_finite(obj, where="calibration"):
    """Raise :class:`CalibrationError` naming the first non-finite number in ``obj``."""
    if isinstance(obj, float) and not math.isfinite(obj):
        raise CalibrationError(f"the fit gave {obj} for {where}: the runs do not determine it "
                               "(check the table for extreme or repeated values); nothing written")
    if isinstance(obj, dict):
        for key, value in obj.items():
            _check_finite(value, f"{where}.{key}")
    elif isinstance(obj, (list, tuple)):
        for i, value in enumerate(obj):
            _check_finite(value, f"{where}[{i}]")
    elif hasattr(obj, "tolist"):
        _check_finite(obj.tolist(), where)
