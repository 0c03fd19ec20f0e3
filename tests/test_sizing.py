"""The blowing system as hardware: high-lift segments, the fan sized across the mission (rated
power, installed mass flown in every segment), the fan's diameter as a design variable within
what fits in the wing.

Hand checks: the lift coefficient W cos(gamma) / (q S) with the blowing system's mass (steady
flight; Anderson, Aircraft Performance and Design, 1999, from memory), the high-lift margin
1.3^2 (approach at 1.3 stall speeds; common practice, no source).
"""
import copy

import numpy as np
import pytest

from mdao.case import CaseError, load_case, parse_case
from mdao.optimum import optimize
from mdao.physics.aircraft import STANDARD_GRAVITY
from mdao.physics.atmosphere import isa
from mdao.system import build_problem

#: An invented case none of the bundled ones resembles: a 4-seat short-field tourer, six fans on
#: a map whose diameter is free, a take-off climb and two cruise segments.
UNSEEN = {
    "title": "unseen: short-field tourer",
    "wing": {"chord": "1.0 m", "blown_span": "5.0 m", "thickness_ratio": 0.16},
    "slot": {"ratio": 0.006, "ratio_bounds": [0.004, 0.010], "min_height": "3 mm"},
    "duct": {"model": "lumped", "jet_loss_factor": 1.3, "freestream_assist": 0.8, "fans": 6,
             "fan_diameter": "110 mm", "fan_diameter_bounds": ["80 mm", "140 mm"]},
    "fan": {"model": "map", "motor_efficiency": 0.92, "min_pressure_rise": "150 Pa",
            "max_pressure_rise": "15 kPa", "pressure_coefficients": [3.0, 0.5, -6.0],
            "peak_efficiency": 0.78, "peak_flow_coefficient": 0.36, "efficiency_falloff": 1.5,
            "flow_coefficient_range": [0.18, 0.55], "max_speed": "40000 rpm"},
    "airfoil": {"drag_clean": 0.0105, "slot_drag": 0.004, "slot_drag_per_ratio": 2.0,
                "drag_per_momentum": -1.6, "momentum_coefficient_range": [0.005, 0.2],
                "max_lift_clean": 1.55, "lift_per_momentum": 16.0},
    "propulsion": {"chain_efficiency": 0.75},
    "aircraft": {"mass": "1150 kg", "wing_area": "14 m**2", "zero_lift_drag": 0.031,
                 "aspect_ratio": 8.0, "span_efficiency": 0.8, "high_lift_margin": 1.44},
    "mass": {"power_margin": 1.15},
    "segment": [
        {"name": "take-off climb", "kind": "high-lift", "altitude": "0 m", "speed": "30 m/s",
         "duration": "3 min", "climb_rate": "2 m/s"},
        {"name": "cruise", "altitude": "1500 m", "speed": "60 m/s", "duration": "1.5 h"},
        {"name": "sightseeing", "altitude": "600 m", "speed": "40 m/s", "duration": "40 min"},
    ],
}


@pytest.fixture(scope="module")
def unseen():
    case = parse_case(copy.deepcopy(UNSEEN))
    return case, optimize(case)


def test_high_lift_requirement_at_the_optimum(unseen):
    """max_lift_clean + lift_per_momentum C_mu = margin C_L to 1e-6 where it binds."""
    case, out = unseen
    assert out.converged, out.message
    seg = out.segments[0]
    assert seg["kind"] == "high-lift" and "high-lift requirement" in seg["active_constraints"]
    reached = 1.55 + 16.0 * seg["momentum_coefficient"]
    assert reached == pytest.approx(seg["max_lift_coefficient"], rel=1e-12)
    assert reached == pytest.approx(1.44 * seg["lift_coefficient"], rel=1e-6)
    assert seg["break_even_fan_efficiency"] is None
    assert all(s["energy_margin_W"] >= -1e-6 * s["air_power_W"] for s in out.segments)


def test_rating_is_the_margin_times_the_largest_need(unseen):
    case, out = unseen
    shaft = np.array([s["fan_shaft_power_W"] for s in out.segments])
    data = out.to_json()
    assert data["sized"] is True
    assert data["fan_rated_shaft_power_W"] == pytest.approx(1.15 * shaft.max(), rel=1e-6)
    assert data["sizing_segment"] == out.segments[int(np.argmax(shaft))]["name"]


def test_the_mass_flies_in_every_segment(unseen):
    """Every segment's lift coefficient is W cos(gamma) / (q S) with W = (m + m_system) g,
    by hand from ISA; and the blowing system's mass is the mass model's at the rating."""
    case, out = unseen
    system = out.to_json()["blowing_system_mass_kg"]
    assert system > 0
    for seg in out.segments:
        rho = float(isa(seg["altitude_m"]).density)
        q = 0.5 * rho * seg["speed_m_s"] ** 2
        rate = case.segments[case.segment_names.index(seg["name"])]["climb_rate"]
        cos_g = np.sqrt(1 - (rate / seg["speed_m_s"]) ** 2)
        by_hand = (1150.0 + system) * STANDARD_GRAVITY * cos_g / (q * 14.0)
        assert seg["lift_coefficient"] == pytest.approx(by_hand, rel=1e-12), seg["name"]
    from mdao.physics import mass
    rated = out.values["rated_shaft_power"]
    rot = mass.rotating_mass(rated, 2500.0, 5000.0)
    assert system > 1.2 * rot      # installation factor 1.2 and the ducts on top


def test_fan_diameter_is_chosen_within_what_fits(unseen):
    case, out = unseen
    d = out.to_json()["fan_diameter_m"]
    assert 0.08 - 1e-12 <= d <= 0.8 * 0.16 * 1.0 + 1e-9
    assert d == pytest.approx(out.values["fan_diameter"])


@pytest.mark.parametrize("change, words", [
    (lambda r: r.pop("aircraft"), "needs the [aircraft] table"),
    (lambda r: r["airfoil"].pop("max_lift_clean"), "needs airfoil.max_lift_clean"),
    (lambda r: r["segment"][0].update(blowing=False), "with blowing = false"),
    (lambda r: r["segment"][0].update(kind="cruise"), "no segment has kind"),
    (lambda r: r["duct"].update(fan_diameter_bounds=["135 mm", "150 mm"], fan_diameter="140 mm"),
     "no fan in them fits in the wing"),
    (lambda r: (r["duct"].pop("fan_diameter_bounds"), r["duct"].update(fan_diameter="140 mm")),
     "does not fit in the wing"),
    (lambda r: r["duct"].update(fan_diameter="150 mm"), "outside duct.fan_diameter_bounds"),
])
def test_bad_hardware_input_names_the_key(change, words):
    raw = copy.deepcopy(UNSEEN)
    if words == "needs the [aircraft] table":
        for seg in raw["segment"]:
            seg.pop("climb_rate", None)
    change(raw)
    with pytest.raises(CaseError, match=words.replace("[", r"\[").replace("]", r"\]")):
        parse_case(raw)


def test_totals_of_the_sized_problem(cases_dir):
    from totals_check import assert_totals, central_totals
    prob = build_problem(load_case(cases_dir / "island-shuttle.toml"))
    prob.run_model()
    data = central_totals(prob, step=1e-6)
    assert_totals(data, atol=1e-6, rtol=2e-5)


@pytest.mark.parametrize("duct_model", ["lumped", "geometric"])
def test_fused_partials_with_sizing_and_high_lift(duct_model):
    from mdao.components.chain import ChainComp
    from partials_check import assert_partials
    from partials_check import chain_inputs
    n = 4
    inputs = chain_inputs(3, aircraft=True, max_lift_clean=1.5, high_lift_margin=1.69,
                          rated_shaft_power=800.0, duct_areal_density=1.3,
                          installation_factor=1.2, power_margin=1.25)
    if duct_model == "lumped":
        inputs.update(duct_wetted_ratio=1.5)
    else:
        del inputs["jet_loss_factor"]
        inputs.update(fan_diameter=0.09, transition_length=0.3, suction_ratio=0.02,
                      bend_loss=0.2, extra_loss=0.1, thickness_ratio=0.14)
    prob = assert_partials(ChainComp(num_nodes=n, examples=True, duct_model=duct_model, aircraft=True,
                                     sized_fan=True, stations=9), inputs)
    assert prob.get_val("blowing_system_mass")[0] > 0


def test_per_discipline_group_refuses_what_it_does_not_wire(cases_dir):
    with pytest.raises(ValueError, match="high-lift segments"):
        build_problem(load_case(cases_dir / "island-shuttle.toml"), fused=False)


def test_unsized_case_reports_the_rating_and_mass_by_hand(cases_dir):
    """Without [mass] the rating is power_margin x the largest shaft power and the mass that
    of the mass model with the default constants, by hand: k (P (1/p_fan + 1/p_motor) +
    sigma r_wet c b) (mdao/physics/mass.py; the defaults of mdao.parameters)."""
    case = load_case(cases_dir / "survey-drone.toml")
    out = optimize(case)
    hw = out.to_json()
    shaft = max(s["fan_shaft_power_W"] for s in out.segments)
    assert hw["sized"] is False
    assert hw["fan_rated_shaft_power_W"] == pytest.approx(1.25 * shaft, rel=1e-12)
    by_hand = 1.2 * (1.25 * shaft * (1 / 2500 + 1 / 5000) + 1.2 * 1.5 * 0.42 * 3.2)
    assert hw["blowing_system_mass_kg"] == pytest.approx(by_hand, rel=1e-12)
