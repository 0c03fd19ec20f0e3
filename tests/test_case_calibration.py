"""A case that points at a calibration: its constants fill the case and it optimizes."""
import numpy as np
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


def _fan_points_case(tmp_path, cases_dir, header, rows):
    """The coastal case with its fan map replaced by a points file."""
    text = (cases_dir / "coastal-patrol.toml").read_text()
    for key in ("pressure_coefficients", "peak_efficiency", "peak_flow_coefficient",
                "efficiency_falloff", "flow_coefficient_range"):
        text = "\n".join(line for line in text.splitlines() if not line.startswith(key))
    text = text.replace('model = "map"', 'model = "map"\npoints_file = "fan.csv"')
    (tmp_path / "fan.csv").write_text(header + "\n" + "\n".join(rows) + "\n")
    (tmp_path / "case.toml").write_text(text)
    return tmp_path / "case.toml"


def test_fan_map_fitted_from_points_file(tmp_path, cases_dir):
    """Noise-free points of a known map (units in the header) give back its coefficients."""
    import numpy as np
    c, peak, phi_pk, fall = (3.0, 0.5, -6.0), 0.78, 0.36, 1.5
    d = load_case(cases_dir / "coastal-patrol.toml").duct["fan_diameter"]   # the case's fan
    phi = np.linspace(0.2, 0.5, 7)
    speed = np.linspace(200.0, 400.0, 7)  # rev/s
    flow = phi * speed * d ** 3
    rise = (c[0] + c[1] * phi + c[2] * phi ** 2) * 1.225 * speed ** 2 * d ** 2
    eta = peak * (1 - fall * (phi / phi_pk - 1) ** 2)
    rows = [f"{q * 1000:.12g},{p / 1000:.12g},{n * 60:.12g},{e:.12g}"
            for q, p, n, e in zip(flow, rise, speed, eta)]
    case = load_case(_fan_points_case(tmp_path, cases_dir,
                                      "volume_flow [l/s],pressure_rise [kPa],speed [rpm],efficiency",
                                      rows))
    np.testing.assert_allclose(case.fan["pressure_coefficients"], c, rtol=1e-8)
    assert case.fan["peak_efficiency"] == pytest.approx(peak, rel=1e-8)
    assert case.fan["peak_flow_coefficient"] == pytest.approx(phi_pk, rel=1e-8)
    assert case.fan["efficiency_falloff"] == pytest.approx(fall, rel=1e-8)
    assert case.fan["flow_coefficient_range"] == pytest.approx((0.2, 0.5))


def test_fan_points_file_wrong_unit_names_the_file_and_column(tmp_path, cases_dir):
    path = _fan_points_case(tmp_path, cases_dir,
                            "volume_flow [m^3/s],pressure_rise [m],speed [rpm],efficiency",
                            ["0.1,1000,20000,0.7"] * 5)
    with pytest.raises(CaseError, match=r"fan.points_file 'fan.csv': column 'pressure_rise'"):
        load_case(path)


def _calibrated_case(tmp_path, cases_dir, segment, extra=""):
    calibrate_file(cases_dir / "data" / "demo_runs.csv", tmp_path / "calib", plots=False)
    text = CASE.replace('altitude = "500 m"\nspeed = "25 m/s"', segment) + extra
    (tmp_path / "case.toml").write_text(text)
    return tmp_path / "case.toml"


def test_segment_outside_the_calibrated_range_is_refused(tmp_path, cases_dir):
    """90 m/s at 6 km on the 0.4 m chord: chord Reynolds number about 1.5e6 (ISA, ICAO Doc
    7488: rho 0.6601 kg/m3, mu 1.5949e-5 Pa s) against the calibration's runs: refused, naming
    the segment, the quantity, the value and the range."""
    path = _calibrated_case(tmp_path, cases_dir, 'altitude = "6 km"\nspeed = "90 m/s"')
    with pytest.raises(CaseError, match=r"segment 'cruise': (Reynolds number on the chord "
                                        r"1\.49e\+06|speed 90 m/s) is outside \["):
        load_case(path)


def test_extrapolation_runs_marked(tmp_path, cases_dir):
    """With [validity] extrapolate = true the same case runs, and every output says so."""
    from mdao.report.console import summary
    path = _calibrated_case(tmp_path, cases_dir, 'altitude = "6 km"\nspeed = "90 m/s"',
                            "\n[validity]\nextrapolate = true\n")
    case = load_case(path)
    assert case.extrapolation and all("cruise" in text for text in case.extrapolation)
    out = optimize(case)
    data = out.to_json()
    assert data["extrapolated"] is True and data["extrapolation"] == case.extrapolation
    assert "WARNING: extrapolated" in summary(out, case)


def test_case_validity_table_overrides_and_checks(tmp_path, cases_dir):
    """A case's own [validity] speed range is checked without any calibration."""
    text = (cases_dir / "survey-drone.toml").read_text() + \
        '\n[validity]\nspeed_range = ["10 m/s", "20 m/s"]\n'
    (tmp_path / "c.toml").write_text(text)
    with pytest.raises(CaseError, match=r"speed .* m/s is outside \[10, 20\] m/s of "
                                        r"validity\.speed_range"):
        load_case(tmp_path / "c.toml")


def test_lift_coefficient_outside_the_validated_range_is_refused(tmp_path, cases_dir):
    """The survey drone's survey segment (120 m, 16 m/s, level) flies at C_L = W / (q S) =
    25 x 9.80665 / (0.5 x 1.2110 x 16^2 x 1.6) = 0.989 (ISA density at 120 m, ICAO Doc 7488,
    worked by hand); outside a validated [0.3, 0.9] it is refused, naming the segment."""
    from mdao.physics.atmosphere import isa
    q = 0.5 * float(isa(120.0).density) * 16.0 ** 2
    assert 25 * 9.80665 / (q * 1.6) == pytest.approx(0.9886, abs=1e-4)
    from mdao.case.loading import segment_lift
    text = (cases_dir / "survey-drone.toml").read_text()
    case = load_case(cases_dir / "survey-drone.toml")
    worst = int(np.argmax(segment_lift(case)))
    (tmp_path / "c.toml").write_text(text + "\n[validity]\nlift_coefficient_range = [0.3, 0.9]\n")
    with pytest.raises(CaseError, match=rf"segment '{case.segment_names[worst]}': lift "
                                        r"coefficient .* is outside \[0\.3, 0\.9\]"):
        load_case(tmp_path / "c.toml")


def test_segment_lift_coefficient_without_aircraft(tmp_path, cases_dir):
    """Without [aircraft] a segment may give its lift coefficient: reported as given, checked
    against the validated range; together with [aircraft] it is refused."""
    text = (cases_dir / "survey-drone.toml").read_text()
    start, end = text.index("[aircraft]"), text.index("[[segment]]")
    bare = text[:start] + text[end:]
    bare = "\n".join(line for line in bare.splitlines() if not line.startswith("climb_rate"))
    bare = bare.replace('name = "survey"', 'name = "survey"\nlift_coefficient = 0.95')
    (tmp_path / "c.toml").write_text(bare)
    case = load_case(tmp_path / "c.toml")
    out = optimize(case)
    row = out.segments[case.segment_names.index("survey")]
    assert row["lift_coefficient"] == 0.95 and row["main_thrust_N"] is None
    (tmp_path / "v.toml").write_text(bare + "\n[validity]\nlift_coefficient_range = [0.3, 0.9]\n")
    with pytest.raises(CaseError, match="segment 'climb' has no lift coefficient"):
        load_case(tmp_path / "v.toml")
    (tmp_path / "a.toml").write_text(text.replace('name = "survey"',
                                                  'name = "survey"\nlift_coefficient = 0.95'))
    with pytest.raises(CaseError, match="lift_coefficient is given and \\[aircraft\\] too"):
        load_case(tmp_path / "a.toml")
