"""Calibration of the reduced-order constants from the designer's own CFD or wind-tunnel runs.

- :mod:`~mdao.studies.calibration.runs`: the runs table (CSV with pint units), its checks, the
  derived model variables (momentum coefficient, slot ratio, Reynolds number) and the fit plan;
- :mod:`~mdao.studies.calibration.fitting`: least squares by QR, the duct, drag and lift fits,
  the plausibility warnings, :func:`calibrate`;
- :mod:`~mdao.studies.calibration.fragment`: writing the TOML fragment a case includes (reading it
  back is :func:`mdao.case.fragment.load_fragment`, below case loading);
- :mod:`~mdao.studies.calibration.plots`: the PNG figures (matplotlib, imported only to plot);
- :mod:`~mdao.studies.calibration.files`: :func:`calibrate_file`, the study that reads the runs
  and writes the outputs.

The console text is :func:`mdao.report.calibration.format_summary` (the report layer).
"""
from mdao.case.fragment import FragmentError, load_fragment
from mdao.studies.calibration.files import calibrate_file
from mdao.studies.calibration.fitting import (CAUTION, CONSTANT_ORDER, MAX_CONDITION,
                                              MIN_RELATIVE_SPREAD, OUTLIER_LIMIT, PLAUSIBLE,
                                              CalibrationWarning, calibrate, least_squares)
from mdao.studies.calibration.fragment import fragment_text
from mdao.studies.calibration.runs import (COLUMNS, CalibrationError, atmosphere_state,
                                           check_runs, derived, fit_plan, read_runs)

__all__ = ["CalibrationError", "CalibrationWarning", "PLAUSIBLE", "CAUTION", "CONSTANT_ORDER",
           "OUTLIER_LIMIT", "MIN_RELATIVE_SPREAD", "MAX_CONDITION", "COLUMNS", "read_runs",
           "check_runs", "derived", "fit_plan", "atmosphere_state", "least_squares", "calibrate",
           "calibrate_file", "load_fragment", "FragmentError", "fragment_text"]
