"""The transition duct as hardware: its wall angles (physics, components, constraint) and its
export for CAD (``blownwing duct``: transition.csv, sections.csv, duct.png).

Independent checks: the exact super-ellipse area in closed form through the Gamma function
(Weisstein, E. W., "Superellipse", MathWorld), the wall angles recomputed from the exported
semi-axes, the section points put back into the curve's equation, the shoelace area of the loops,
central finite differences of the physics and of the components.
"""
import csv
import re
from pathlib import Path

import numpy as np
import pytest
from scipy.special import gamma

from mdao.case import load_case
from mdao.cli import main
from mdao.components.transition import TransitionComp
from mdao.optimum import optimize
from mdao.physics import superellipse, transition
from mdao.studies.duct_export import SECTION_QUADRANT_POINTS, section_loops
from partials_check import assert_partials

CASES = Path(__file__).resolve().parents[1] / "cases"
COASTAL = CASES / "coastal-patrol.toml"


def _variant_text():
    """The coastal-patrol case with a duct whose walls can meet the limit (invented variant):
    forty 100 mm fans, each feeding 150 mm of slot through linear semi-axes."""
    text = COASTAL.read_text()
    for pattern, new in ((r"(?m)^fans = \d+", "fans = 40"),
                         (r'(?m)^fan_diameter = "[^"]*"', 'fan_diameter = "100 mm"'),
                         (r'(?m)^schedule = "[^"]*"', 'schedule = "linear"')):
        text, count = re.subn(pattern, new, text)
        assert count == 1, pattern
    return text


def _steep_text():
    """The coastal-patrol case with the duct it was first bundled with (eight 160 mm fans, each
    feeding 750 mm of slot through a monotone-area transition): side walls at about 61.5 deg."""
    text = COASTAL.read_text()
    for pattern, new in ((r"(?m)^fans = \d+", "fans = 8"),
                         (r'(?m)^fan_diameter = "[^"]*"', 'fan_diameter = "160 mm"'),
                         (r'(?m)^schedule = "[^"]*".*$', 'schedule = "monotone-area"')):
        text, count = re.subn(pattern, new, text)
        assert count == 1, pattern
    return text


@pytest.fixture(scope="module")
def variant_file(module_folder):
    path = module_folder / "variant.toml"
    path.write_text(_variant_text())
    return path


@pytest.fixture(scope="module")
def exported(module_folder, variant_file):
    """``blownwing duct`` on the variant at its optimum: (out dir, transition rows, sections)."""
    out = module_folder / "export"
    assert main(["duct", str(variant_file), "--out", str(out)]) == 0
    return out, _read(out / "transition.csv"), _read(out / "sections.csv")


def _read(path):
    """Header -> column of a CSV with '#' comment lines (blank cells as NaN)."""
    with open(path, newline="") as handle:
        rows = [r for r in csv.reader(handle) if r and not r[0].startswith("#")]
    return {name: np.array([float(r[i]) if r[i] else np.nan for r in rows[1:]])
            for i, name in enumerate(rows[0])}


# --- physics --------------------------------------------------------------------------------------
def test_wall_angles_are_the_semi_axes_slopes():
    """span/thickness_wall_half_angle = atan(diff(semi-axis) / diff(x)) between stations, for
    both schedules; on the coastal-patrol duct (160 mm circle to a 750 x 5.4 mm slot in 0.45 m)
    the side walls diverge steeply while the area contracts (the case the constraint is for)."""
    for schedule in ("monotone-area", "linear"):
        s = transition.stations(0.16, 0.75, 0.0054, 0.45, 10.0, schedule=schedule)
        dx = np.diff(s.position)
        np.testing.assert_allclose(s.span_wall_half_angle,
                                   np.arctan(np.diff(s.semi_axis_y) / dx), rtol=1e-13)
        np.testing.assert_allclose(s.thickness_wall_half_angle,
                                   np.arctan(np.diff(s.semi_axis_z) / dx), rtol=1e-13)
        assert s.area[-1] < s.area[0]                        # a contraction overall ...
        assert np.degrees(s.span_wall_half_angle.max()) > 30.0   # ... with diverging side walls
        assert np.all(s.thickness_wall_half_angle < 0)          # and converging thickness walls


@pytest.mark.parametrize("schedule", ["monotone-area", "linear"])
def test_wall_angle_derivatives_by_central_differences(schedule):
    """The physics' partials of the wall angles (and of the semi-axes and exponent they come
    from) against central differences, on a thin wide slot (aspect 140) and a diffusing duct."""
    cases = (dict(fan_diameter=0.16, slot_width=0.75, slot_height=0.0054, length=0.45,
                  slot_exponent=10.0),
             dict(fan_diameter=0.03, slot_width=0.2, slot_height=0.01, length=0.3,
                  slot_exponent=3.3))
    fields = ("semi_axis_y", "semi_axis_z", "exponent", "span_wall_half_angle",
              "thickness_wall_half_angle")
    for base in cases:
        _, d = transition.stations(**base, schedule=schedule, count=11, derivatives=True)
        for k in transition.INPUTS:
            h = 1e-6 * base[k]
            plus = transition.stations(**{**base, k: base[k] + h}, schedule=schedule, count=11)
            minus = transition.stations(**{**base, k: base[k] - h}, schedule=schedule, count=11)
            for f in fields:
                fd = (getattr(plus, f) - getattr(minus, f)) / (2 * h)
                scale = max(np.abs(fd).max(), np.abs(d[f, k]).max())
                noise = 4 * np.finfo(float).eps * np.abs(getattr(plus, f)).max() / h
                assert np.abs(fd - d[f, k]).max() <= 1e-6 * scale + noise, (f, k)


@pytest.mark.parametrize("schedule", ["monotone-area", "linear"])
def test_component_wall_angle_partials(schedule):
    """TransitionComp's analytic partials of the wall angles (every output, every input)
    against finite differences, dense pattern included (tests/partials_check.py)."""
    rng = np.random.default_rng(5)
    inputs = {"slot_ratio": rng.uniform(0.004, 0.012), "chord": rng.uniform(0.5, 1.0),
              "blown_span": rng.uniform(2.0, 6.0), "fan_diameter": rng.uniform(0.08, 0.16),
              "transition_length": rng.uniform(0.3, 0.6), "slot_exponent": rng.uniform(4.0, 12.0)}
    prob = assert_partials(TransitionComp(fans=8, stations=9, schedule=schedule), inputs)
    s = transition.stations(inputs["fan_diameter"], inputs["blown_span"] / 8,
                            inputs["slot_ratio"] * inputs["chord"], inputs["transition_length"],
                            inputs["slot_exponent"], schedule=schedule, count=9)
    np.testing.assert_allclose(prob.get_val("span_wall_half_angle"), s.span_wall_half_angle,
                               rtol=1e-14)
    np.testing.assert_allclose(prob.get_val("thickness_wall_half_angle"),
                               s.thickness_wall_half_angle, rtol=1e-14)


# --- the constraint -------------------------------------------------------------------------------
def test_no_wall_angle_above_its_limit_at_the_coastal_patrol_optimum(module_folder):
    """The bundled geometric case: its optimum keeps every wall within duct.max_wall_half_angle
    (and the result says how steep the walls are)."""
    case = load_case(COASTAL)
    out = optimize(case)
    assert out.converged, (out.message, out.wall_half_angles_deg)
    limit = np.degrees(case.duct["max_wall_half_angle"])
    assert max(out.wall_half_angles_deg.values()) <= limit * (1 + 1e-6)


def test_variant_optimum_within_the_wall_limit(module_folder, variant_file):
    """A geometric case whose walls can meet the limit converges, within it, and reports the
    steepest walls at the top level of results.json."""
    case = load_case(variant_file)
    out = optimize(case)
    assert out.converged, out.message
    limit = np.degrees(case.duct["max_wall_half_angle"])
    angles = out.to_json()["wall_half_angles_deg"]
    assert set(angles) == {"span", "thickness"}
    assert 0 < angles["span"] <= limit * (1 + 1e-6) and angles["thickness"] < 0
    assert angles["span"] == pytest.approx(np.degrees(out.values["span_wall_half_angle"].max()))


def test_wall_limit_binds_and_moves_the_slot(module_folder):
    """On the bundled case with the limit set at 60 deg (a test value, between the side walls'
    61.5 deg at the unconstrained optimum's slot ratio and 58.9 deg at the largest allowed),
    the optimizer widens the slot until the side walls meet the limit: the constraint binds."""
    path = COASTAL.parent / "coastal-patrol.toml"
    steep = load_case(path).replace({"duct.fans": 8, "duct.fan_diameter": 0.16,
                                     "duct.schedule": "monotone-area"})
    case = steep.replace({"duct.max_wall_half_angle": np.radians(60.0)})
    out = optimize(case)
    assert out.converged, out.message
    assert "span wall divergence limit" in out.wing_active_constraints
    assert out.wall_half_angles_deg["span"] == pytest.approx(60.0, abs=1e-3)
    assert out.slot_ratio > 0.0062


# --- the export -----------------------------------------------------------------------------------
def test_area_column_is_the_exact_superellipse_area(exported):
    """Each row's area is that of its own semi-axes and exponent: mdao.physics.superellipse and
    the closed form 4 a b Gamma(1 + 1/n)^2 / Gamma(1 + 2/n) (Weisstein, "Superellipse",
    MathWorld), to the 12 digits written."""
    _, t, _ = exported
    a, b, n = t["semi_axis_span [m]"], t["semi_axis_thickness [m]"], t["exponent [-]"]
    closed = 4 * a * b * gamma(1 + 1 / n) ** 2 / gamma(1 + 2 / n)
    np.testing.assert_allclose(t["area [m^2]"], closed, rtol=1e-10)
    np.testing.assert_allclose(t["area [m^2]"], superellipse.enclosed_area(a, b, n), rtol=1e-10)
    np.testing.assert_allclose(t["hydraulic_diameter [m]"],
                               4 * t["area [m^2]"] / t["perimeter [m]"], rtol=1e-10)
    assert t["exponent [-]"][0] == 2.0 and t["x [m]"][0] == 0.0


def test_wall_angle_columns_are_the_slopes_of_the_csv(exported):
    """The angle columns equal atan of the semi-axes' slopes recomputed from the CSV's own
    columns, on the row that ends each segment; blank on the first row."""
    _, t, _ = exported
    x = t["x [m]"]
    for column, semi in (("span_wall_half_angle [deg]", "semi_axis_span [m]"),
                         ("thickness_wall_half_angle [deg]", "semi_axis_thickness [m]")):
        assert np.isnan(t[column][0])
        slope = np.degrees(np.arctan(np.diff(t[semi]) / np.diff(x)))
        np.testing.assert_allclose(t[column][1:], slope, rtol=1e-8, atol=1e-9)


def test_section_loops_lie_on_their_superellipse(exported):
    """Every point of sections.csv satisfies |y/a|^n + |z/b|^n = 1 with its station's a, b and n
    from transition.csv (to 1e-9), each loop is closed and 4 x 48 + 1 points long, and its
    shoelace area is within 5e-4 of the exact area (an inscribed polygon: below it)."""
    _, t, s = exported
    station = s["station"].astype(int)
    stations = len(t["x [m]"])
    assert np.array_equal(np.unique(station), np.arange(stations))
    for i in range(stations):
        y, z = s["y [m]"][station == i], s["z [m]"][station == i]
        assert np.all(s["x [m]"][station == i] == t["x [m]"][i])
        assert len(y) == 4 * SECTION_QUADRANT_POINTS + 1
        assert (y[0], z[0]) == (y[-1], z[-1])
        a, b, n = (t[k][i] for k in ("semi_axis_span [m]", "semi_axis_thickness [m]",
                                     "exponent [-]"))
        np.testing.assert_allclose(np.abs(y / a) ** n + np.abs(z / b) ** n, 1.0, rtol=0,
                                   atol=1e-9)
        shoelace = 0.5 * np.sum(y[:-1] * z[1:] - y[1:] * z[:-1])
        assert shoelace > 0                                   # counter-clockwise
        assert 0 < 1 - shoelace / t["area [m^2]"][i] < 5e-4


def test_loop_area_converges_to_the_exact_area():
    """The shoelace area of the loops approaches the exact area at second order in the points
    (an error about 4 times smaller per doubling) from a circle to a 140:1 slot of n = 10."""
    a = np.array([0.08, 0.2, 0.378])
    b = np.array([0.08, 0.03, 0.0027])
    n = np.array([2.0, 4.0, 10.0])
    exact = superellipse.enclosed_area(a, b, n)
    errors = []
    for q in (24, 48, 96, 192):
        y, z = section_loops(a, b, n, q)
        area = 0.5 * np.sum(y[:, :-1] * z[:, 1:] - y[:, 1:] * z[:, :-1], axis=1)
        errors.append(1 - area / exact)
    errors = np.array(errors)
    assert np.all(errors > 0)
    assert np.all(errors[-1] < 5e-5)
    ratio = errors[:-1] / errors[1:]
    assert np.all((ratio > 3.5) & (ratio < 4.5)), ratio


def test_figure_and_no_temporary_files(exported):
    out, _, _ = exported
    assert (out / "duct.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert not list(out.glob(".*tmp"))
    head = (out / "transition.csv").read_text().splitlines()[:2]
    assert "ONE of the 40 identical ducts" in head[1] and "at the optimum" in head[1]


# --- the command line -----------------------------------------------------------------------------
def test_duct_command_bad_input_exits_2(module_folder, tmp_path, capsys):
    """A lumped-duct case (named: duct.model) and a missing file: exit 2, nothing written."""
    assert main(["duct", str(CASES / "survey-drone.toml"), "--out", str(tmp_path / "a")]) == 2
    assert "duct.model" in capsys.readouterr().err
    assert main(["duct", str(tmp_path / "nowhere.toml"), "--out", str(tmp_path / "b")]) == 2
    assert capsys.readouterr().err
    assert not (tmp_path / "a").exists() and not (tmp_path / "b").exists()


def test_duct_command_not_converged_exits_3(module_folder, tmp_path, capsys):
    """Two iterations are not enough: exit 3, said on stderr, no files."""
    text = _variant_text().replace('objective = "mission-energy"',
                                   'objective = "mission-energy"\nmax_iterations = 2')
    path = tmp_path / "short.toml"
    path.write_text(text)
    assert main(["duct", str(path), "--out", str(tmp_path / "o")]) == 3
    assert "NOT CONVERGED" in capsys.readouterr().err
    assert not (tmp_path / "o").exists()


def test_duct_command_start_point(module_folder, tmp_path, capsys):
    """--start never optimizes (exit 0 even where the optimum would fail) and warns when the
    start point's duct breaks a limit (the bundled case's side walls, about 61.5 deg)."""
    steep = tmp_path / "steep.toml"
    steep.write_text(_steep_text())
    assert main(["duct", str(steep), "--out", str(tmp_path / "s"), "--start",
                 "--no-plots"]) == 0
    text = capsys.readouterr().out
    assert "at the start point" in text and "WARNING" in text
    assert sorted(p.name for p in (tmp_path / "s").iterdir()) == ["sections.csv",
                                                                   "transition.csv"]
    t = _read(tmp_path / "s" / "transition.csv")
    assert np.nanmax(t["span_wall_half_angle [deg]"]) == pytest.approx(61.5, abs=0.1)


def test_review_draws_the_duct(module_folder, variant_file, tmp_path):
    """The review's duct entry (as ``run_review`` stores it for a geometric-duct case) gives the
    figure duct.png and the review.md section that shows it. (A whole review of this case takes
    some 12 s; its other parts are tested on their own.)"""
    from mdao.report.review import _duct_md
    from mdao.studies import duct_export
    case = load_case(variant_file)
    out = optimize(case)
    assert out.converged, out.message
    data = {"duct": duct_export.duct_data(case, out), "case": {"title": case.title}}
    figure = duct_export.draw_duct(data["duct"], tmp_path / "duct.png", title=case.title)
    assert figure.exists() and figure.stat().st_size > 0
    md = "\n".join(_duct_md(data, ["duct.png"]))
    assert "## Transition duct" in md and "![transition duct](duct.png)" in md
    assert f"One of the {case.duct['fans']} identical ducts" in md
