"""The aircraft around the wing (a case's optional ``[aircraft]`` table): a hand calculation of
one segment from the definitions, the partials exactly (complex step), the main thrust floor
declared and applied, cases without the table unchanged, and bad input refused."""
import copy
import math
from pathlib import Path

import numpy as np
import pytest

from mdao import constraints
from mdao.case import CaseError, parse_case
from mdao.optimum.solve import optimize
from mdao.physics import aircraft, chain
from mdao.report.console import summary
from mdao.system import build_problem, chain_options, chain_parameters


def _raw(path):
    try:
        import tomllib
    except ModuleNotFoundError:  # Python 3.10
        import tomli as tomllib
    return tomllib.loads(Path(path).read_text())


@pytest.fixture
def drone_raw(cases_dir):
    return _raw(cases_dir / "survey-drone.toml")


def _without_aircraft(raw):
    raw = copy.deepcopy(raw)
    raw.pop("aircraft")
    for seg in raw["segment"]:
        seg.pop("climb_rate", None)
    return raw


def test_one_segment_by_hand(drone_raw, cases_dir):
    """The survey drone's climb at sea level, from the definitions: ISA sea-level density
    p0 / (R T0) (U.S. Standard Atmosphere 1976), g = 9.80665 m/s^2 (CGPM 1901), parabolic
    polar (Raymer, from memory). Numbers written out here, not read from the code."""
    case = parse_case(drone_raw, base=cases_dir)
    cmu = np.array([0.03, 0.03, 0.03])
    out = chain.evaluate(chain_parameters(case, momentum_coefficient=cmu), chain_options(case),
                         blowing=case.blowing)
    # climb: 25 kg, S = 1.6 m^2, C_D0 = 0.032, AR = 9.5, e = 0.8, V = 19 m/s, w = 0.5 m/s, 4 min
    rho = 101325.0 / (287.05287 * 288.15)            # p0 / (R T0) = 1.2250 kg/m^3
    q = 0.5 * rho * 19.0 ** 2                        # 221.11 Pa
    weight = 25.0 * 9.80665                          # 245.16625 N
    sin_g = 0.5 / 19.0
    cos_g = math.sqrt(1.0 - sin_g ** 2)
    cl = weight * cos_g / (q * 1.6)
    drag = q * 1.6 * (0.032 + cl ** 2 / (math.pi * 9.5 * 0.8))
    t0 = drag + weight * sin_g
    assert cl == pytest.approx(0.69275, abs=1e-5)    # written-out check of the arithmetic
    assert out["lift_coefficient"][0] == pytest.approx(cl, rel=1e-12)
    assert out["aircraft_clean_drag"][0] == pytest.approx(drag, rel=1e-12)
    assert out["main_thrust_clean"][0] == pytest.approx(t0, rel=1e-12)
    saving = out["drag_saving"][0]
    assert saving > 0
    assert out["main_thrust"][0] == pytest.approx(t0 - saving, rel=1e-12)
    energy = t0 * 19.0 * 240.0 / 0.78                # chain efficiency 0.78
    assert out["clean_source_energy"][0] == pytest.approx(energy, rel=1e-12)
    # the saving's power is the drag saving's at the same chain efficiency
    assert out["propulsion_power_saving"][0] == pytest.approx(saving * 19.0 / 0.78, rel=1e-12)


def test_partials_exact_by_complex_step():
    """Every partial of flight_condition against a complex step (h = 1e-30), climb and
    descent."""
    args = dict(aircraft_mass=1400.0, wing_area=16.0, zero_lift_drag=0.028, aspect_ratio=9.0,
                span_efficiency=0.78, climb_rate=np.array([4.0, -3.0]),
                dynamic_pressure=np.array([1100.0, 1680.0]), speed=np.array([45.0, 55.0]))
    _, d = aircraft.flight_condition(**args, derivatives=True)
    h = 1e-30

    def complex_flight(z):
        weight = z["aircraft_mass"] * aircraft.STANDARD_GRAVITY
        sin_g = z["climb_rate"] / z["speed"]
        qs = z["dynamic_pressure"] * z["wing_area"]
        cl = weight * np.sqrt(1 - sin_g ** 2) / qs
        drag = qs * (z["zero_lift_drag"]
                     + cl ** 2 / (np.pi * z["aspect_ratio"] * z["span_efficiency"]))
        return {"lift_coefficient": cl, "aircraft_clean_drag": drag,
                "main_thrust_clean": drag + weight * sin_g}

    checked = 0
    for arg in aircraft.FLIGHT_INPUTS:
        z = {k: np.asarray(v, complex) for k, v in args.items()}
        z[arg] = z[arg] + 1j * h
        for name, value in complex_flight(z).items():
            exact = value.imag / h
            np.testing.assert_allclose(d.get((name, arg), 0.0) + 0 * exact, exact, rtol=1e-12,
                                       atol=1e-12, err_msg=f"d {name} / d {arg}")
            checked += (name, arg) in d
    assert checked == 21


def test_main_thrust_floor_is_declared_and_binds(drone_raw, cases_dir):
    """A floor above the unconstrained optimum's main thrust binds: the optimum converges with
    the main thrust on the floor where it would otherwise fall below it, and saves less."""
    con = constraints.BY_NAME["main thrust floor"]
    assert (con.quantity, con.lower, con.condition) == ("main_thrust",
                                                        "aircraft.min_main_thrust", "aircraft")
    free = optimize(parse_case(drone_raw, base=cases_dir))
    assert free.converged, free.message
    thrust = np.array([s["main_thrust_N"] for s in free.segments])
    assert np.all(thrust > 0)
    floor = float(np.median(thrust))                 # above the lowest segment's thrust
    raw = copy.deepcopy(drone_raw)
    raw["aircraft"]["min_main_thrust"] = f"{floor} N"
    case = parse_case(raw, base=cases_dir)
    assert con in constraints.applicable(case)
    assert "main_thrust" in build_problem(case).model.get_constraints()
    held = optimize(case)
    assert held.converged, held.message
    thrust_held = np.array([s["main_thrust_N"] for s in held.segments])
    assert np.all(thrust_held >= floor * (1 - 1e-6))
    binding = [s["name"] for s in held.segments if "main thrust floor" in s["active_constraints"]]
    assert binding, "the floor should bind somewhere"
    assert held.mission_energy_saving_J < free.mission_energy_saving_J


def test_without_aircraft_nothing_changes(drone_raw, cases_dir):
    """Without [aircraft]: no aircraft outputs, null result keys, no new constraint, and the
    same optimum (the floor does not bind in the bundled case)."""
    with_ac = optimize(parse_case(drone_raw, base=cases_dir))
    case = parse_case(_without_aircraft(drone_raw), base=cases_dir)
    assert not case.has_aircraft
    assert "main thrust floor" not in [c.name for c in constraints.applicable(case)]
    out = chain.evaluate(chain_parameters(case, momentum_coefficient=0.03), chain_options(case))
    assert "main_thrust" not in out and "lift_coefficient" not in out
    bare = optimize(case)
    data = bare.to_json()
    assert data["mission_energy_clean_J"] is None
    assert data["mission_energy_saving_fraction"] is None
    for seg in data["segments"]:
        assert seg["lift_coefficient"] is None and seg["main_thrust_N"] is None
        assert seg["main_thrust_clean_N"] is None
    assert "clean aircraft" not in summary(bare, case)
    assert "main thrust" not in summary(bare, case)
    assert bare.mission_energy_saving_J == pytest.approx(with_ac.mission_energy_saving_J,
                                                         rel=1e-6)
    full = with_ac.to_json()
    assert full["mission_energy_saving_fraction"] == pytest.approx(
        full["mission_energy_saving_J"] / full["mission_energy_clean_J"], rel=1e-12)
    assert "of the clean aircraft" in summary(with_ac, parse_case(drone_raw, base=cases_dir))


def test_bad_aircraft_input_is_refused(drone_raw, cases_dir):
    raw = _without_aircraft(drone_raw)
    raw["segment"][0]["climb_rate"] = "1 m/s"
    with pytest.raises(CaseError, match=r"climb_rate is given, but the case has no \[aircraft\]"):
        parse_case(raw, base=cases_dir)
    raw = copy.deepcopy(drone_raw)
    del raw["aircraft"]["span_efficiency"]
    with pytest.raises(CaseError, match=r"aircraft\.span_efficiency is missing"):
        parse_case(raw, base=cases_dir)
    raw = _without_aircraft(drone_raw)
    raw["aircraft"] = {"min_main_thrust": "5 N"}
    with pytest.raises(CaseError, match=r"aircraft\.mass is missing"):
        parse_case(raw, base=cases_dir)
    raw = copy.deepcopy(drone_raw)
    raw["segment"][0]["climb_rate"] = "20 m/s"       # faster than the 19 m/s flight speed
    with pytest.raises(CaseError, match=r"climb_rate = 20 m/s"):
        parse_case(raw, base=cases_dir)
    raw = copy.deepcopy(drone_raw)
    raw["aircraft"]["span_efficiency"] = 1.2
    with pytest.raises(CaseError, match=r"aircraft\.span_efficiency = 1\.2 is out of range"):
        parse_case(raw, base=cases_dir)
    raw = copy.deepcopy(drone_raw)
    raw["aircraft"]["mass"] = "25 m"
    with pytest.raises(CaseError, match=r"aircraft\.mass"):
        parse_case(raw, base=cases_dir)


def test_console_says_when_no_aircraft_was_modelled(cases_dir):
    """Without [aircraft] the console says the saving was not checked against the aircraft;
    with it, the saving's share of the clean mission energy is printed instead."""
    from mdao.case import load_case
    from mdao.optimum import optimize
    from mdao.report.console import summary
    with_aircraft = load_case(cases_dir / "survey-drone.toml")
    text = summary(optimize(with_aircraft), with_aircraft)
    assert "% of the clean aircraft's" in text and "no [aircraft] table" not in text
    raw = (cases_dir / "survey-drone.toml").read_text()
    start = raw.index("[aircraft]")
    end = raw.index("[[segment]]")
    bare = raw[:start] + raw[end:]
    bare = "\n".join(line for line in bare.splitlines() if not line.startswith("climb_rate"))
    from mdao.case import parse_case
    try:
        import tomllib
    except ModuleNotFoundError:  # Python 3.10
        import tomli as tomllib
    case = parse_case(tomllib.loads(bare), base=cases_dir)
    assert not case.has_aircraft
    assert "no [aircraft] table" in summary(optimize(case), case)
