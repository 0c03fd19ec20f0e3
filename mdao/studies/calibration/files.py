"""The calibration study on files: read a runs table, fit, and write ``calibration.json``,
``calibration.toml`` and the figures, each atomically. It returns data and prints nothing; the
console text is :func:`mdao.report.calibration.format_summary`.
"""
import hashlib
import json
import os

from mdao.files import write_atomic
from mdao.studies.calibration.fitting import calibrate
from mdao.studies.calibration.fragment import fragment_text
from mdao.studies.calibration.plots import write_plots
from mdao.studies.calibration.runs import read_runs

__all__ = ["calibrate_file"]


def calibrate_file(csv_path, out_dir, plots=True, lift_bands=None):
    """Read runs, fit, and write ``calibration.json``, ``calibration.toml`` and the plots.

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

    Returns
    -------
    dict
        The result of :func:`~mdao.studies.calibration.fitting.calibrate` with ``source``
        (``csv``, ``sha256``) and ``files``.
    """
    runs = read_runs(csv_path)
    result = calibrate(runs, lift_bands=lift_bands)
    with open(csv_path, "rb") as handle:
        digest = hashlib.sha256(handle.read()).hexdigest()
    result["source"] = {"csv": os.fspath(csv_path), "sha256": digest}
    os.makedirs(out_dir, exist_ok=True)
    json_path = os.path.join(out_dir, "calibration.json")
    toml_path = os.path.join(out_dir, "calibration.toml")
    files = [json_path, toml_path]
    if plots:
        files += write_plots(runs, result, out_dir)
    result["files"] = [os.fspath(f) for f in files]
    text = fragment_text(result, result["source"])
    write_atomic(toml_path, text)
    blob = json.dumps(result, indent=2, allow_nan=False) + "\n"
    write_atomic(json_path, blob)
    return result
