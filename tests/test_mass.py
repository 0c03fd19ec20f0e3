"""Tests of the blowing-system mass (mdao.physics.mass, mdao.components.mass).

Outside references: mpmath (complete elliptic integral of the second kind for the perimeter of an
ellipse, and its quadrature for the wetted area of an elliptic duct); the lateral area of a
frustum of a right circular cone, pi (r1 + r2) s (any geometry handbook, e.g. the CRC Standard
Mathematical Tables).
"""
import dataclasses
from pathlib import Path

import mpmath
import numpy as np
import openmdao.api as om
import pytest

from mdao.case import load_case
from mdao.components.mass import (BlowingSystemMassComp, add_blowing_system_mass, mass_values,
                                  set_mass_values)
from mdao.parameters import MASS_PARAMETERS
from mdao.physics import mass
from mdao.system import BlownWingGroup, group_options, set_case_values
from partials_check import assert_partials
from totals_check import assert_totals, central_totals, worst_relative

ROOT = Path(__file__).resolve().parents[1]


def test_rotating_mass_and_partials():
    p, sf, sm = 1500.0, 2000.0, 4000.0
    m, d = mass.rotating_mass(p, sf, sm, derivatives=True)
    assert m == pytest.approx(1500.0 / 2000.0 + 1500.0 / 4000.0, rel=1e-15)
    h = 1e-3
    for name, args in (("rated_shaft_power", (p + h, sf, sm, p - h, sf, sm)),
                       ("fan_specific_power", (p, sf + h, sm, p, sf - h, sm)),
                       ("motor_specific_power", (p, sf, sm + h, p, sf, sm - h))):
        fd = (mass.rotating_mass(*args[:3]) - mass.rotating_mass(*args[3:])) / (2 * h)
        assert d[name] == pytest.approx(fd, rel=1e-7)


def test_frustum_wetted_area():
    """Round conical duct, radius 0.05 -> 0.08 m over 0.4 m, 3 fans. The perimeter is linear in x,
    so the trapezoid rule is exact for the integral of P dx = pi (r1 + r2) L; the true lateral
    area pi (r1 + r2) s with the slant s = L / cos(theta) is larger by 1/cos(theta) (frustum
    formula, CRC tables): the documented projection error, 0.28 % at this 4.3 deg half-angle."""
    r1, r2, length, fans = 0.05, 0.08, 0.4, 3
    x = np.linspace(0.0, length, 9)
    perim = 2 * np.pi * (r1 + (r2 - r1) * x / length)
    area = mass.transition_wetted_area(x, perim, fans=fans)
    assert area == pytest.approx(fans * np.pi * (r1 + r2) * length, rel=1e-14)
    slant = np.hypot(length, r2 - r1)
    lateral = fans * np.pi * (r1 + r2) * slant
    assert 1 - area / lateral == pytest.approx(1 - length / slant, rel=1e-12)
    assert 1 - area / lateral < 3e-3


def test_elliptic_duct_against_mpmath():
    """Elliptic duct whose semi-axes run linearly from (0.06, 0.06) to (0.15, 0.01) m over 0.5 m.
    Reference: mpmath quadrature of the exact perimeter 4 a E(1 - b^2/a^2). The 33-station
    trapezoid rule agrees to 2e-4 (its O(h^2) error); worst seen 3.3e-5."""
    length = 0.5

    def axes(t):
        return 0.06 + 0.09 * t, 0.06 - 0.05 * t

    def perimeter_mp(xx):
        a, b = axes(xx / length)
        a, b = max(a, b), min(a, b)
        return 4 * a * mpmath.ellipe(1 - (b / a) ** 2)

    exact = float(mpmath.quad(perimeter_mp, [0, length]))
    x = np.linspace(0.0, length, 33)
    perim = np.array([float(perimeter_mp(xx)) for xx in x])
    area = mass.transition_wetted_area(x, perim)
    assert abs(area / exact - 1) < 2e-4


def test_wetted_area_derivatives_and_broadcasting():
    rng = np.random.default_rng(4)
    x = np.sort(rng.uniform(0, 0.5, (2, 6)), axis=-1)
    p = rng.uniform(0.2, 0.6, (2, 6))
    area, d_x, d_p = mass.transition_wetted_area(x, p, fans=2, derivatives=True)
    assert area.shape == (2,)
    h = 1e-7
    for k in range(6):
        e = np.zeros(6)
        e[k] = h
        fd_x = (mass.transition_wetted_area(x + e, p, 2) - mass.transition_wetted_area(x - e, p, 2)) / (2 * h)
        fd_p = (mass.transition_wetted_area(x, p + e, 2) - mass.transition_wetted_area(x, p - e, 2)) / (2 * h)
        np.testing.assert_allclose(d_x[:, k], fd_x, rtol=1e-7, atol=1e-10)
        np.testing.assert_allclose(d_p[:, k], fd_p, rtol=1e-7, atol=1e-10)


@pytest.mark.parametrize("call, match", [
    (lambda: mass.rotating_mass(-1.0, 2500.0, 5000.0), "rated_shaft_power must be >= 0"),
    (lambda: mass.rotating_mass(1.0, 0.0, 5000.0), "fan_specific_power must be > 0"),
    (lambda: mass.transition_wetted_area([0, 0.2, 0.1], [1, 1, 1]), "position must increase"),
    (lambda: mass.transition_wetted_area([0, 0.2], [1, 1, 1]), "same number"),
    (lambda: mass.transition_wetted_area([0, 0.2], [1, 1], fans=0), "fans must be an integer"),
    (lambda: mass.lumped_wetted_area(0.5, -1.0, 1.5), "blown_span must be > 0"),
    (lambda: mass.blowing_system_mass(1.0, 1.0, 1.0, 0.9), "installation_factor must be >= 1"),
    (lambda: mass.power_headroom(1.0, 1.0, 0.5), "power_margin must be >= 1"),
])
def test_bad_input(call, match):
    with pytest.raises(ValueError, match=match):
        call()


def test_component_alone_with_defaults():
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("c", BlowingSystemMassComp(examples=True), promotes=["*"])
    prob.setup()
    prob.run_model()
    # 500 W (1/2500 + 1/5000) + 1.2 kg/m2 * 1.5 * 0.5 m * 1 m, times 1.2
    assert prob.get_val("blowing_system_mass")[0] == pytest.approx(1.2 * (0.3 + 0.9), rel=1e-14)
    assert prob.get_val("power_headroom")[0] == pytest.approx(500.0)


def test_partials_lumped():
    rng = np.random.default_rng(11)
    assert_partials(BlowingSystemMassComp(num_nodes=5, blowing=[True, False, True, True, True]),
                    {"fan_shaft_power": rng.uniform(100, 800, 5),
                     "rated_shaft_power": rng.uniform(800, 2000),
                     "fan_specific_power": rng.uniform(1500, 4000),
                     "motor_specific_power": rng.uniform(3000, 7000),
                     "duct_areal_density": rng.uniform(0.6, 2.0),
                     "installation_factor": rng.uniform(1.1, 1.4),
                     "power_margin": rng.uniform(1.1, 1.5),
                     "extra_wetted_area": rng.uniform(0.1, 0.5),
                     "chord": rng.uniform(0.3, 1.0), "blown_span": rng.uniform(1, 6),
                     "duct_wetted_ratio": rng.uniform(1.0, 2.0)})


def test_partials_geometric():
    rng = np.random.default_rng(12)
    assert_partials(BlowingSystemMassComp(num_nodes=5, duct_model="geometric", fans=4, stations=7),
                    {"fan_shaft_power": rng.uniform(100, 800, 5),
                     "rated_shaft_power": rng.uniform(800, 2000),
                     "station_position": np.sort(rng.uniform(0, 0.5, 7)),
                     "station_perimeter": rng.uniform(0.2, 0.6, 7),
                     "extra_wetted_area": rng.uniform(0.1, 0.5)})


def test_headroom_ignores_nodes_without_blowing():
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("c", BlowingSystemMassComp(num_nodes=3, blowing=[True, False, True],
                                                        examples=True), promotes=["*"])
    prob.setup()
    prob.set_val("fan_shaft_power", [100.0, 5000.0, 300.0])
    prob.set_val("rated_shaft_power", 400.0)
    prob.run_model()
    np.testing.assert_allclose(prob.get_val("power_headroom"), [275.0, 400.0, 25.0], rtol=1e-14)


MASS_TABLE = """
[mass]
fan_specific_power = "1.8 kW/kg"
motor_specific_power = "4000 W/kg"
duct_areal_density = "900 g/m**2"
installation_factor = 1.3
power_margin = 1.4
duct_wetted_ratio = 2.0
"""


def _mass_beside_group(case, rated=800.0):
    """The case's BlownWingGroup with the mass component beside it, the case's values set, run."""
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("wing", BlownWingGroup(**group_options(case)), promotes=["*"])
    add_blowing_system_mass(prob.model, case)
    prob.setup()
    set_case_values(prob, case)
    set_mass_values(prob, case)
    prob.set_val("rated_shaft_power", rated, units="W")
    prob.run_model()
    return prob


def test_case_mass_table_reaches_the_component(tmp_path):
    """A [mass] table in the case file, in its own units, reaches the component: the installed
    mass and the headroom are those of the formula with the table's values (converted to SI), not
    with the defaults, which the same case without the table gets."""
    text = (ROOT / "cases" / "survey-drone.toml").read_text()
    assert "[mass]" not in text
    path = tmp_path / "with-mass.toml"
    path.write_text(text + MASS_TABLE)
    sized = load_case(path)
    with pytest.raises(ValueError, match="sizes the fan in the group"):
        add_blowing_system_mass(om.Group(), sized)
    # the component beside a group that does not size the fan (as a host that sizes it)
    case = dataclasses.replace(sized, mass_given=False)
    assert mass_values(case) == pytest.approx({
        "fan_specific_power": 1800.0, "motor_specific_power": 4000.0, "duct_areal_density": 0.9,
        "installation_factor": 1.3, "power_margin": 1.4, "duct_wetted_ratio": 2.0}, rel=1e-15)
    prob = _mass_beside_group(case)
    planform = case.value("wing.chord") * case.value("wing.blown_span")
    expected = 1.3 * (800.0 * (1 / 1800.0 + 1 / 4000.0) + 0.9 * 2.0 * planform)
    assert prob.get_val("blowing_system_mass")[0] == pytest.approx(expected, rel=1e-13)
    shaft = prob.get_val("fan_shaft_power", units="W")
    blow = np.array(case.blowing)
    np.testing.assert_allclose(prob.get_val("power_headroom", units="W")[blow],
                               800.0 - 1.4 * shaft[blow], rtol=1e-13)

    plain = _mass_beside_group(load_case(ROOT / "cases" / "survey-drone.toml"))
    d = {p.name: p.default for p in MASS_PARAMETERS}
    default = d["installation_factor"] * (
        800.0 * (1 / d["fan_specific_power"] + 1 / d["motor_specific_power"])
        + d["duct_areal_density"] * d["duct_wetted_ratio"] * planform)
    assert plain.get_val("blowing_system_mass")[0] == pytest.approx(default, rel=1e-13)
    assert abs(prob.get_val("blowing_system_mass")[0] / default - 1) > 0.1


def test_beside_geometric_group_totals():
    """The component beside a geometric BlownWingGroup (coastal-patrol case): the wetted
    area is the fans times the trapezoid of the group's station perimeters, and the total derivatives of the
    system mass across the boundary (slot ratio, chord, fan diameter, transition length, rated
    power) match central finite differences; worst relative error seen 5.7e-10."""
    case = load_case(ROOT / "cases" / "coastal-patrol.toml")
    prob = om.Problem(reports=False)
    model = prob.model
    model.add_subsystem("wing", BlownWingGroup(**group_options(case)), promotes=["*"])
    add_blowing_system_mass(model, case)
    for name in ("slot_ratio", "chord", "fan_diameter", "transition_length", "rated_shaft_power"):
        model.add_design_var(name)
    model.add_objective("blowing_system_mass")
    model.add_constraint("power_headroom", lower=0.0, indices=[0, 1, 2])
    prob.setup()
    set_case_values(prob, case)
    set_mass_values(prob, case)
    prob.set_val("rated_shaft_power", 3000.0, units="W")
    prob.run_model()
    x = prob.get_val("station_position")
    p = prob.get_val("station_perimeter")
    assert prob.get_val("duct_wetted_area")[0] == pytest.approx(
        case.duct["fans"] * np.sum(0.5 * (p[1:] + p[:-1]) * np.diff(x)), rel=1e-13)
    data = central_totals(prob, step=1e-6)
    assert_totals(data, atol=1e-8, rtol=1e-7)
    assert worst_relative(data) < 1e-8


def test_rating_and_planform_left_unset_are_refused():
    """Beside a host's group the rating (a design variable) and the planform must be given:
    the component alone refuses them by name instead of flying 500 W on a 0.5 m x 1 m span."""
    from mdao.components.common import UnsetInputError
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("c", BlowingSystemMassComp(num_nodes=2), promotes=["*"])
    prob.setup()
    with pytest.raises(UnsetInputError) as err:
        prob.run_model()
    for name in ("rated_shaft_power [W]", "chord [m]", "blown_span [m]"):
        assert f"  {name}" in str(err.value)
    prob.set_val("rated_shaft_power", 500.0)
    prob.set_val("chord", 0.5)
    prob.set_val("blown_span", 1.0)
    prob.run_model()
    assert prob.get_val("blowing_system_mass")[0] == pytest.approx(1.2 * (0.3 + 0.9), rel=1e-14)
