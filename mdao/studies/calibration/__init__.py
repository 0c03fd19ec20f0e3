"""Calibration of the reduced-order constants from the designer's own CFD or wind-tunnel runs.

- :mod:`~mdao.studies.calibration.runs`: the runs table (CSV with pint units), its checks, the
  derived model variables (momentum coefficient, slot ratio, Reynolds number) and the fit plan;
- :mod:`~mdao.studies.calibration.fitting`: least squares by QR, the duct, drag and lift fits,
  the plausibility warnings, :func:`calibrate`;
- :mod:`~mdao.studies.calibration.energy`: the energy balance (first law) of the runs and of the
  fitted model;
- :mod:`~mdao.studies.calibration.fragment`: writing the TOML fragment a case includes (reading it
  back is :func:`mdao.case.fragment.load_fragment`, below case loading);
- :mod:`~mdao.studies.calibration.plots`: the PNG figures (matplotlib, imported only to plot);
- :mod:`~mdao.studies.calibration.files`: :func:`calibrate_file`, the study that reads the runs
  and writes the outputs.

The console text is :func:`mdao.report.calibration.format_summary` (the report layer).
"""
import importlib

#: Public name -> the module that holds it. Loaded on first use (PEP 562), so that reading the
#: runs table or catching its error does not import SciPy's statistics.
_WHERE = {
    "FragmentError": "mdao.case.fragment", "load_fragment": "mdao.case.fragment",
    "calibrate_file": "mdao.studies.calibration.files",
    "energy_balance": "mdao.studies.calibration.energy",
    "model_margin": "mdao.studies.calibration.energy",
    "run_margins": "mdao.studies.calibration.energy",
    "CAUTION": "mdao.studies.calibration.fitting",
    "CONSTANT_ORDER": "mdao.studies.calibration.fitting",
    "MAX_CONDITION": "mdao.studies.calibration.fitting",
    "MIN_RELATIVE_SPREAD": "mdao.studies.calibration.fitting",
    "OUTLIER_LIMIT": "mdao.studies.calibration.fitting",
    "PLAUSIBLE": "mdao.studies.calibration.fitting",
    "CalibrationWarning": "mdao.studies.calibration.fitting",
    "calibrate": "mdao.studies.calibration.fitting",
    "least_squares": "mdao.studies.calibration.fitting",
    "fragment_text": "mdao.studies.calibration.fragment",
    "COLUMNS": "mdao.studies.calibration.runs", "CalibrationError": "mdao.studies.calibration.runs",
    "atmosphere_state": "mdao.studies.calibration.runs",
    "check_runs": "mdao.studies.calibration.runs", "derived": "mdao.studies.calibration.runs",
    "fit_plan": "mdao.studies.calibration.runs", "read_runs": "mdao.studies.calibration.runs",
}

__all__ = sorted(_WHERE)


def __getattr__(name):
    if name in _WHERE:
        return getattr(importlib.import_module(_WHERE[name]), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
