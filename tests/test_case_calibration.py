"""A case that points at a calibration: its constants fill the case and it optimizes."""
import pytest

from mdao.case import CaseError, load_case
from mdao.optimum import optimize
from mdao.studies.calibration import calibrate_file

CASE = """title = "calibrated section on a demo wing"
[calibration]
file = "calib/calibration.toml"
[wing]
chord = "0.4 m"
blown_span = "2.5 m"
[slot]
ratio = 0.01
ratio_bounds = [0.002, 0.03]
[duct]
model = "lumped"
[fan]
efficiency = 0.7
motor_efficiency = 0.9
[propulsion]
chain_efficiency = 0.8
[[segment]]
name = "cruise"
altitude = "500 m"
speed = "25 m/s"
duration = "1 h"
"""


def test_case_filled_from_calibration_and_optimized(tmp_path, cases_dir):
    result = calibrate_file(cases_dir / "data" / "demo_runs.csv", tmp_path / "calib", plots=False)
    (tmp_path / "case.toml").write_text(CASE)
    case = load_case(tmp_path / "case.toml")
    for key, entry in result["constants"].items():
        assert case.value(key) == pytest.approx(entry["value"], rel=1e-12)
    lo, hi = result["validity"]["slot_ratio"]
    assert case.slot["ratio_bounds"] == pytest.approx((lo, hi))  # clipped to the calibration
    assert case.airfoil["momentum_coefficient_range"][0] > 0
    assert case.calibration["covariance"]["parameters"]
    out = optimize(case)
    assert out.converged, out.message
    assert lo - 1e-12 <= out.slot_ratio <= hi + 1e-12


def test_constant_in_both_case_and_calibration_is_an_error(tmp_path, cases_dir):
    calibrate_file(cases_dir / "data" / "demo_runs.csv", tmp_path / "calib", plots=False)
    (tmp_path / "case.toml").write_text(CASE.replace('model = "lumped"',
                                                     'model = "lumped"\njet_loss_factor = 1.3'))
    with pytest.raises(CaseError, match="duct.jet_loss_factor"):
        load_case(tmp_path / "case.toml")
