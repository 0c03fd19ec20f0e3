"""The command line in-process (mdao.cli.main): bundled cases, bad input (exit 2), no convergence
(exit 3). Through the installed console script and ``python -m mdao``: tests/test_commands.py."""
import json
from pathlib import Path

import pytest

from mdao.cli import main

CASES = Path(__file__).resolve().parent.parent / "cases"
GOOD = (CASES / "survey-drone.toml").read_text()


@pytest.mark.parametrize("name", ["survey-drone.toml", "coastal-patrol.toml",
                                  "levee-inspector.toml"])
def test_optimize_bundled_case(name, tmp_path, capsys):
    assert main(["optimize", str(CASES / name), "--out", str(tmp_path / "o")]) == 0
    text = capsys.readouterr().out
    assert "mission energy saved" in text and "Preliminary design estimates" in text
    data = json.loads((tmp_path / "o" / "results.json").read_text())
    for key in ("converged", "message", "iterations", "model_evaluations", "slot_ratio",
                "mission_energy_saving_J", "segments"):
        assert key in data
    assert data["converged"] is True
    seg = data["segments"][0]
    for key in ("name", "blowing", "momentum_coefficient", "fan_pressure_rise_Pa",
                "required_pressure_rise_Pa", "jet_velocity_m_s", "volume_flow_m3_s",
                "fan_speed_rpm", "fan_efficiency", "fan_shaft_power_W", "section_drag_N", "clean_section_drag_N",
                "net_power_saving_W", "energy_saving_J", "break_even_fan_efficiency",
                "active_constraints"):
        assert key in seg
    total = sum(s["energy_saving_J"] for s in data["segments"])
    assert total == pytest.approx(data["mission_energy_saving_J"], rel=1e-12)
    assert not list(tmp_path.glob("o/.*tmp"))
    if name == "levee-inspector.toml":   # lift tables: the constants at each segment's lift
        assert all(set(s["constants_at_lift"]) == {"duct.jet_loss_factor", "airfoil.drag_clean",
                                                   "airfoil.drag_per_momentum"}
                   for s in data["segments"])


def test_calibrate_in_lift_bands(tmp_path, capsys):
    """``--lift-bands``: 3 on the three-angle demo writes tables; 0 is refused (exit 2)."""
    runs = str(CASES / "data" / "demo_runs_lift.csv")
    assert main(["calibrate", runs, "--out", str(tmp_path / "c"), "--no-plots",
                 "--lift-bands", "3"]) == 0
    assert "Lift tables (3 lift bands" in capsys.readouterr().out
    text = (tmp_path / "c" / "calibration.toml").read_text()
    assert "drag_per_momentum = { lift_coefficient = [" in text
    assert main(["calibrate", runs, "--out", str(tmp_path / "d"), "--lift-bands", "0"]) == 2
    assert "lift_bands = 0" in capsys.readouterr().err
    assert not (tmp_path / "d" / "calibration.toml").exists()


def test_evaluate_start_point(capsys):
    """``evaluate`` says it shows the start point, and its blowing system as the start's, not
    as an optimization's."""
    assert main(["evaluate", str(CASES / "survey-drone.toml")]) == 0
    out = capsys.readouterr().out
    assert "start point (not optimized)" in out
    assert "estimated at the start point" in out and "optimization" not in out


def test_not_converged_exits_3(tmp_path, capsys):
    bad = tmp_path / "short.toml"
    bad.write_text(GOOD.replace('objective = "mission-energy"',
                                'objective = "mission-energy"\nmax_iterations = 2'))
    assert main(["optimize", str(bad), "--out", str(tmp_path / "o")]) == 3
    captured = capsys.readouterr()
    assert "NOT CONVERGED" in captured.err
    assert "optimum:" not in captured.out
    assert json.loads((tmp_path / "o" / "results.json").read_text())["converged"] is False


def _swap(old, new):
    assert old in GOOD, old
    return GOOD.replace(old, new, 1)


BAD = {
    "wrong dimension": (_swap('chord = "0.42 m"', 'chord = "0.42 s"'), "wing.chord"),
    "no unit": (_swap('chord = "0.42 m"', "chord = 0.42"), "wing.chord"),
    "unknown unit": (_swap('speed = "16 m/s"', 'speed = "16 furlongs/zz"'), "speed"),
    "missing key": (_swap('blown_span = "3.2 m"\n', ""), "wing.blown_span"),
    "unknown key": (_swap('[wing]\n', '[wing]\nsweep = "3 deg"\n'), "wing.sweep"),
    "unknown table": (_swap('[wing]\n', '[tail]\narea = 1\n[wing]\n'), "tail"),
    "negative chord": (_swap('chord = "0.42 m"', 'chord = "-0.42 m"'), "wing.chord"),
    "ratio out of range": (_swap("ratio = 0.010 ", "ratio = 0.5 "), "slot.ratio"),
    "bounds reversed": (_swap("ratio_bounds = [0.004, 0.020]", "ratio_bounds = [0.02, 0.004]"),
                        "slot.ratio_bounds"),
    "ratio outside bounds": (_swap("ratio = 0.010 ", "ratio = 0.030 "), "slot.ratio"),
    "efficiency above one": (_swap("efficiency = 0.70", "efficiency = 1.3"), "fan.efficiency"),
    "bad duct model": (_swap('model = "lumped"', 'model = "cfd"'), "duct.model"),
    "lumped without K_j": (_swap("jet_loss_factor = 1.22 ", "extra_loss = 0.1 "),
                           "duct.jet_loss_factor"),
    "K_j below one": (_swap("jet_loss_factor = 1.22 ", "jet_loss_factor = 0.8 "),
                      "duct.jet_loss_factor"),
    "positive drag per momentum coefficient": (_swap("drag_per_momentum = -1.9 ", "drag_per_momentum = 1.9 "),
                                 "airfoil.drag_per_momentum"),
    "altitude too high": (_swap('altitude = "120 m"', 'altitude = "25 km"'), "altitude"),
    "duration not a time": (_swap('duration = "2.2 h"', 'duration = "2.2 m"'), "duration"),
    "duplicate segment": (_swap('name = "transit"', 'name = "survey"'), "segment.name"),
    "unknown objective segment": (_swap('objective = "mission-energy"',
                                        'objective = "segment:cruise"'), "optimize.objective"),
    "min height unreachable": (_swap('min_height = "2 mm"', 'min_height = "20 mm"'),
                               "slot.min_height"),
    "string for bool": (_swap('name = "climb"', 'name = "climb"\nblowing = "yes"'), "blowing"),
    "bad uncertainty key": (_swap('"fan.efficiency" = {', '"fan.wheel" = {'), "fan.wheel"),
    "bad distribution": (_swap('distribution = "uniform"', 'distribution = "weibull"'),
                         "fan.efficiency"),
    "range pair": (_swap("momentum_coefficient_range = [0.005, 0.15]",
                         "momentum_coefficient_range = [0.005]"),
                   "airfoil.momentum_coefficient_range"),
    "min above max pressure": (_swap('min_pressure_rise = "80 Pa"', 'min_pressure_rise = "80 kPa"'),
                               "fan.min_pressure_rise"),
    "not toml": ("title = \n[wing", "TOML"),
    "no title": (_swap('title = "Forestry survey drone, lumped duct and constant-efficiency fan"',
                       ""), "title"),
    "map without diameter": (_swap('model = "constant"', 'model = "map"'), "fan_diameter"),
}


@pytest.mark.parametrize("label", sorted(BAD))
def test_bad_case_exits_2_naming_the_key(label, tmp_path, capsys):
    text, key = BAD[label]
    path = tmp_path / "bad.toml"
    path.write_text(text)
    assert main(["optimize", str(path), "--out", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err
    assert key in err, err
    assert "Traceback" not in err
    assert not (tmp_path / "o").exists()


def test_missing_case_file_exits_2(tmp_path, capsys):
    assert main(["optimize", str(tmp_path / "nope.toml")]) == 2
    assert "nope.toml" in capsys.readouterr().err


def test_command_line_uses_one_blas_thread_unless_told(monkeypatch):
    """Small linear algebra: one BLAS thread by default, the user's setting kept."""
    import os
    from mdao.cli import BLAS_THREADS, _single_threaded_blas
    for name in BLAS_THREADS:
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setenv("OMP_NUM_THREADS", "4")
    _single_threaded_blas()
    assert os.environ["OPENBLAS_NUM_THREADS"] == "1"
    assert os.environ["MKL_NUM_THREADS"] == "1"
    assert os.environ["OMP_NUM_THREADS"] == "4"
