"""Bad input is refused with a short message naming the file, key or column; never a traceback,
a hang or a silently wrong value (the input side of issue 13; docs/case-files.md, "Limits")."""
import os
from pathlib import Path

import pytest

from mdao.case import CaseError, load_case
from mdao.case.errors import MAX_LINE
from mdao.case.fragment import FragmentError, load_fragment
from mdao.studies.calibration.runs import CalibrationError, read_runs
from mdao.units import UnitError, to_si

ROOT = Path(__file__).resolve().parents[1]
SURVEY = (ROOT / "cases" / "survey-drone.toml").read_text()
COASTAL = (ROOT / "cases" / "coastal-patrol.toml").read_text()
RUNS = (ROOT / "cases" / "data" / "demo_runs.csv").read_text()
#: Longest message of one error (each line is cut at MAX_LINE by CaseError).
SHORT = 600


def _write(tmp_path, text, name="case.toml"):
    path = tmp_path / name
    path.write_text(text)
    return path


def _refused(path, *needles, error=CaseError, bound=SHORT):
    """Load ``path`` expecting ``error``; the message names each needle and stays short."""
    with pytest.raises(error) as info:
        load_case(path) if error is CaseError else read_runs(path)
    message = str(info.value)
    for needle in needles:
        assert needle in message, (needle, message)
    assert len(message) < bound, message
    assert all(c.isprintable() for line in message.split("\n") for c in line), message
    return message


# 1. Files that cannot be read ------------------------------------------------------------------

def test_unreadable_case_files_are_case_errors(tmp_path):
    binary = tmp_path / "binary.toml"
    binary.write_bytes(b'title = "ok"\n\xff\xfe\x00secret')
    message = _refused(binary, "binary.toml", "UTF-8", "byte 13")
    assert "secret" not in message

    deep = _write(tmp_path, "x = " + "[" * 3000 + "]" * 3000 + "\n", "deep.toml")
    _refused(deep, "deep.toml", "nested too deep")

    huge = tmp_path / "huge.toml"
    with open(huge, "wb") as handle:   # a sparse 2 MB file: refused before it is read
        handle.truncate(2_000_000)
    _refused(huge, "huge.toml", "2000000 bytes", "1000000")

    _refused(tmp_path, str(tmp_path), "is a folder")
    loop = tmp_path / "loop.toml"
    os.symlink(loop, loop)
    _refused(loop, "loop.toml", "cannot read the case file")
    _refused(tmp_path / "nul\0.toml", "NUL")
    _refused(tmp_path / ("x" * 5000 + ".toml"), "longer than 4096")
    _refused(tmp_path / "absent.toml", "absent.toml", "No such file")


def test_points_file_is_never_echoed(tmp_path):
    secret = tmp_path / "secret.txt"
    secret.write_text("root:x:0:0:do-not-echo:/root:/bin/bash\n")
    text = COASTAL.replace('model = "map"', 'model = "map"\npoints_file = "secret.txt"', 1)
    for key in ("pressure_coefficients", "peak_efficiency", "peak_flow_coefficient",
                "efficiency_falloff", "flow_coefficient_range"):
        text = "\n".join(line for line in text.split("\n") if not line.startswith(key))
    message = _refused(_write(tmp_path, text), "fan.points_file", "secret.txt")
    assert "do-not-echo" not in message and "0:0" not in message

    secret.write_bytes(b"\x89PNG\r\n\x1a\n\x00\x00do-not-echo")
    message = _refused(_write(tmp_path, text), "fan.points_file", "UTF-8")
    assert "do-not-echo" not in message


# 2. The unit reader ----------------------------------------------------------------------------

@pytest.mark.parametrize("text, needle", [
    ("2**2**2**2**2 m", "one number and then a unit"),
    ("10**10**10 m", "one number and then a unit"),
    ("1 m**2**2**2**2", "one number and then a unit"),
    ("1 m**99", "powers up to"),
    ("1 m" * 10_000, "at most 200 characters"),
    ("m", "give a number and a unit"),
    ("inf m", "give a number and a unit"),
    ("nan m", "give a number and a unit"),
    ("1e999 m", "not finite"),
    ("1e308 km", "not finite in SI"),
    ("1 m\0", "control characters"),
    ("1 m\x1b[31m", "control characters"),
])
def test_pathological_quantities_are_refused(text, needle):
    with pytest.raises(UnitError, match=needle) as info:
        to_si(text, "length")
    assert len(str(info.value)) < 300


def test_ordinary_quantities_still_read():
    assert to_si("5 m**2", "area") == 5.0
    assert to_si("1.2 kg/m**3", "density") == pytest.approx(1.2)
    assert to_si("1.5 kg/m^2", "areal_density") == 1.5
    assert to_si("58 km/h", "speed") == pytest.approx(58 / 3.6)
    assert to_si("420 mm", "length") == pytest.approx(0.42)
    assert to_si(".5e1 m", "length") == 5.0
    assert to_si("5 %", "dimensionless") == pytest.approx(0.05)


def test_bad_quantity_in_a_case_names_the_key(tmp_path):
    path = _write(tmp_path, SURVEY.replace('chord = "0.42 m"', 'chord = "10**10**10 m"'))
    _refused(path, "wing.chord", "10**10**10 m")
    path = _write(tmp_path, SURVEY.replace('chord = "0.42 m"', 'chord = "m"'))
    _refused(path, "wing.chord", "give a number and a unit")


# 3. Physical bounds and cross-field checks -----------------------------------------------------

@pytest.mark.parametrize("old, new, needles", [
    ('chord = "0.42 m"', 'chord = "1000 km"', ("wing.chord", "(0, 100]")),
    ('duration = "2.2 h"', 'duration = "1e300 s"', ("segment[1].duration", "1e+06")),
    ('min_height = "2 mm"', 'min_height = "2 mm"\n\n[fan]\nmax_pressure_rise = "inf kPa"',
     ("fan.max_pressure_rise",)),
    ('blown_span = "3.2 m"', 'blown_span = "inf m"', ("wing.blown_span", "finite")),
    ('blown_span = "3.2 m"', 'blown_span = inf', ("wing.blown_span",)),
    ('title = "Forestry', 'title = 42\nx_title = "Forestry', ("title must be a string",)),
    ('name = "survey"', 'name = "sur.vey"', ("segment[1].name", "without dots")),
    ('name = "survey"', 'name = "sur\\u001b[2Jvey"', ("segment[1].name", "\\x1b")),
    ('samples = 4000', 'samples = 10000000', ("review.samples", "200000")),
    ('sd = 0.15 }', 'sd = 0.15 }\n"segment.survey.speed" = { distribution = "normal", sd = 5 }',
     ('uncertainty."segment.survey.speed".sd = 5', "with its unit")),
    ('sd = 0.15 }', 'sd = 0.15 }\n"segment.survey.speed" = { distribution = "uniform", '
                    'low = "-inf m/s", high = "1 m/s" }', ('segment.survey.speed', "low")),
])
def test_out_of_bounds_values_are_refused(tmp_path, old, new, needles):
    assert old in SURVEY
    text = SURVEY.replace(old, new, 1)
    if "[fan]\nmax_pressure_rise" in new:   # one [fan] table: move the key into it
        text = SURVEY.replace('min_pressure_rise = "80 Pa"',
                              'min_pressure_rise = "80 Pa"\nmax_pressure_rise = "inf kPa"')
    if "x_title" in new:
        text = text.replace('x_title = "Forestry', '# "Forestry')
    _refused(_write(tmp_path, text), *needles)


def test_map_and_fan_cross_checks(tmp_path):
    peak = COASTAL.replace("peak_flow_coefficient = 0.36", "peak_flow_coefficient = 0.9")
    _refused(_write(tmp_path, peak), "fan.peak_flow_coefficient = 0.9", "flow_coefficient_range")
    nan = COASTAL.replace("[3.0, 0.5, -6.0]", "[3.0, nan, -6.0]")
    _refused(_write(tmp_path, nan), "fan.pressure_coefficients", "finite")
    crowded = COASTAL.replace("fans = 40", "fans = 1000")
    _refused(_write(tmp_path, crowded), "duct.fans = 1000", "blown_span")


def test_too_many_segments(tmp_path):
    segment = '\n[[segment]]\nname = "s{}"\naltitude = "0 m"\nspeed = "20 m/s"\nduration = "1 min"\n'
    head = SURVEY.split("[[segment]]")[0]
    tail = "\n[optimize]" + SURVEY.split("[optimize]")[1]
    text = head + "".join(segment.format(i) for i in range(201)) + tail
    _refused(_write(tmp_path, text), "201 [[segment]] tables", "at most 200")


# 4. Every independent error at once ------------------------------------------------------------

def test_a_case_reports_all_its_errors(tmp_path):
    text = (SURVEY.replace('chord = "0.42 m"', 'chord = "0.42"')
            .replace("efficiency = 0.70", "efficiency = 1.7")
            .replace('speed = "24 m/s"', 'speed = "24 furlongs"')
            .replace('name = "survey"', 'name = "a.b"'))
    message = _refused(_write(tmp_path, text), "4 errors in case.toml:", "wing.chord",
                       "fan.efficiency", "segment[2].speed", "segment[1].name", bound=4 * SHORT)
    assert len(message.split("\n")) == 5


def test_many_errors_are_capped(tmp_path):
    text = SURVEY.replace("[wing]", "[wing]\n" + "\n".join(f"junk{i} = 1" for i in range(50)))
    message = _refused(_write(tmp_path, text), "50 errors", "... and 30 more", bound=25 * MAX_LINE)
    assert len(message.split("\n")) == 22


# 5. Run tables and calibration fragments -------------------------------------------------------

def test_bad_run_tables_are_calibration_errors(tmp_path):
    _refused(tmp_path / "absent.csv", "absent.csv", "No such file", error=CalibrationError)
    _refused(tmp_path, "is a folder", error=CalibrationError)
    binary = tmp_path / "binary.csv"
    binary.write_bytes(RUNS.encode()[:200] + b"\xff\xfe secret")
    message = _refused(binary, "binary.csv", "UTF-8", error=CalibrationError)
    assert "secret" not in message
    lines = RUNS.split("\n")
    cells = lines[1].split(",")
    for value, needles in [("9" * 100_000, ("row 1", "column 'speed'", "100000 characters")),
                           ("inf", ("row 1", "column 'speed'", "not a finite number")),
                           ("1e300", ("row 1", "column 'speed'", "out of range"))]:
        bad = "\n".join([lines[0], ",".join([value] + cells[1:])] + lines[2:])
        _refused(_write(tmp_path, bad, "runs.csv"), *needles, error=CalibrationError)
    cells[6] = "1e200"   # one extreme mass flow
    bad = "\n".join([lines[0], ",".join(cells)] + lines[2:])
    _refused(_write(tmp_path, bad, "runs.csv"), "row 1", "column 'mass_flow'",
             error=CalibrationError)


FRAGMENT = """
[duct]
jet_loss_factor = 1.3
freestream_assist = 0.9
[airfoil]
drag_clean = 0.012
momentum_coefficient_range = [0.01, 0.2]
[validity]
slot_ratio_range = [0.005, 0.02]
reynolds_range = [2e5, 2e6]
speed_range = ["10 m/s", "40 m/s"]
[uncertainty]
parameters = ["airfoil.drag_clean", "duct.freestream_assist", "duct.jet_loss_factor"]
stderr = [0.001, 0.05, 0.05]
covariance = [[1e-6, 0, 0], [0, 2.5e-3, 0], [0, 0, 2.5e-3]]
"""


@pytest.mark.parametrize("old, new, needle", [
    ("[duct]\njet_loss_factor = 1.3\nfreestream_assist = 0.9", "duct = 3", "[duct] must be a table"),
    ("[0.01, 0.2]", "[0.01]", "airfoil.momentum_coefficient_range"),
    ("[2e5, 2e6]", "[2e6]", "validity.reynolds_range"),
    ("[1e-6, 0, 0]", "[nan, 0, 0]", "uncertainty.covariance[0][0]"),
    ("drag_clean = 0.012", "drag_clean = inf", "airfoil.drag_clean"),
    ('["10 m/s", "40 m/s"]', '["10 m/s", "inf m/s"]', "validity.speed_range"),
])
def test_bad_fragments_name_the_key(tmp_path, old, new, needle):
    assert load_fragment(_write(tmp_path, FRAGMENT, "calibration.toml"))["constants"]
    path = _write(tmp_path, FRAGMENT.replace(old, new), "calibration.toml")
    with pytest.raises(FragmentError) as info:
        load_fragment(path)
    assert needle in str(info.value) and "calibration.toml" in str(info.value)
    assert len(str(info.value)) < SHORT


def test_run_with_a_slot_ratio_beyond_the_model_is_refused(tmp_path):
    """A vanishing chord (8.4e-301 m, found by the property tests) made the slot ratio 2e297
    and the least-squares matrix non-finite (a traceback from SciPy): refused by row, naming
    the derived slot ratio and the model's limit."""
    from mdao.studies.calibration import CalibrationError, calibrate, read_runs
    lines = (ROOT / "cases" / "data" / "demo_runs.csv").read_text().splitlines()
    cells = lines[1].split(",")
    cells[2] = "8.422239791185802e-301"
    lines[1] = ",".join(cells)
    path = tmp_path / "runs.csv"
    path.write_text("\n".join(lines) + "\n")
    with pytest.raises(CalibrationError, match=r"row 1: the derived slot ratio .* model's 0.2"):
        calibrate(read_runs(path))
