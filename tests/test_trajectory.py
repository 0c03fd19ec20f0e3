"""The blown wing inside a Dymos trajectory (docs/examples/trajectory.py).

Checks: the climb-cruise converges on a small Radau grid with the momentum coefficient as a
control; the trajectory meets its boundary conditions and path constraints; the battery energy
the collocation reports agrees with an independent quadrature of the battery power; the power
accounting across the boundary closes (``P_clean - P_blown = net_power_saving`` per node); the
whole problem's total derivatives at the start point match central finite differences in every
(of, wrt) pair; the example's own aircraft component has exact partials.
"""
import numpy as np
import pytest
from examples import load_example
from partials_check import assert_partials
from totals_check import assert_totals, central_totals, worst_relative

pytest.importorskip("dymos")

tr = load_example("trajectory")


@pytest.fixture(scope="module")
def blown():
    return tr.solve(blown=True)[1]


@pytest.fixture(scope="module")
def clean():
    return tr.solve(blown=False)[1]


def test_converges_and_flies_the_mission(blown):
    assert blown["converged"], f"SLSQP did not converge in {blown['iterations']} iterations"
    rng, alt = np.array(blown["range_m"]), np.array(blown["altitude_m"])
    assert rng[0] == pytest.approx(0.0, abs=1e-9)
    assert rng[-1] == pytest.approx(tr.MISSION["range"], rel=1e-9)
    assert alt[0] == pytest.approx(tr.MISSION["initial_altitude"], rel=1e-9)
    assert alt[-1] == pytest.approx(tr.MISSION["final_altitude"], rel=1e-9)
    assert np.all(np.diff(rng) >= 0.0)           # the aircraft flies forward
    lo, hi = tr.SPEED_BOUNDS
    speed = np.array(blown["speed_m_s"])
    assert np.all((speed >= lo - 1e-9) & (speed <= hi + 1e-9))
    assert max(blown["lift_coefficient"]) <= tr.MAX_LIFT_COEFFICIENT + 1e-9
    assert 0.0 < blown["energy_used_J"] < tr.MISSION["initial_energy"]


def test_path_constraints_hold_and_blowing_is_used(blown):
    cmu = np.array(blown["momentum_coefficient"])
    lo, hi = tr.MOMENTUM_COEFFICIENT_RANGE
    assert np.all((cmu >= lo - 1e-9) & (cmu <= hi + 1e-9))
    # the optimizer blows above the calibration's floor: blowing is chosen, not forced
    assert cmu.max() > 2.0 * lo, f"momentum coefficient stayed at its floor ({cmu.max():.4g})"
    # the first law: the span returns no more net thrust power than its fans put into the air
    assert min(blown["energy_margin_W"]) >= -1e-6
    assert max(blown["jet_mach"]) <= tr.MAX_JET_MACH + 1e-9


def test_energy_matches_quadrature_of_the_power(blown):
    """The battery-energy state against the trapezoid rule over the timeseries nodes, and the
    range state against the integral of ``V cos(gamma)``: independent of the collocation's
    quadrature, agreeing to the discretization's accuracy."""
    t = np.array(blown["time_s"])
    power = np.array(blown["battery_power_W"])
    assert np.trapezoid(power, t) == pytest.approx(blown["energy_used_J"], rel=2e-3)
    ground_speed = np.array(blown["speed_m_s"]) * np.cos(blown["flight_path_angle_rad"])
    assert np.trapezoid(ground_speed, t) == pytest.approx(tr.MISSION["range"], rel=2e-3)


def test_power_accounting_across_the_boundary(blown):
    """At every node, the clean span's battery power minus the blown span's equals the group's
    ``net_power_saving`` (the group and the host agree on the chain efficiency)."""
    eta = tr.AIRCRAFT["chain_efficiency"][0]
    speed = np.array(blown["speed_m_s"])
    saving = ((np.array(blown["clean_section_drag_N"]) - np.array(blown["section_drag_N"]))
              * speed / eta - np.array(blown["fan_electric_power_W"]))
    np.testing.assert_allclose(saving, blown["net_power_saving_W"], rtol=1e-10, atol=1e-9)


def test_blowing_saves_energy_against_the_clean_span(blown, clean):
    """The same flight with the span clean (its clean section drag, no fan) converges and
    needs more battery energy than the blown optimum."""
    assert clean["converged"]
    assert np.array(clean["range_m"])[-1] == pytest.approx(tr.MISSION["range"], rel=1e-9)
    assert blown["energy_used_J"] < clean["energy_used_J"]


def test_totals_at_the_start_point_every_pair():
    """The whole problem (objective, collocation defects, boundary and path constraints) with
    respect to every design variable (states, controls incl. the momentum coefficient, the
    duration), against central finite differences, every (of, wrt) pair."""
    prob = tr.build(blown=True)
    prob.run_model()
    data = central_totals(prob, step=1e-5)
    assert_totals(data, atol=1e-6, rtol=1e-5)
    worst = worst_relative(data)
    print(f"worst relative totals error at the start point: {worst:.2e}")
    assert worst < 1e-6
    wrt = {k[1] for k in data}
    assert any("momentum_coefficient" in name for name in wrt)
    assert any("t_duration" in name for name in wrt)


def test_flight_component_partials():
    n = 4
    rng = np.random.default_rng(7)
    assert_partials(tr.FlightComp(num_nodes=n), {
        "mass": 150.0, "density": rng.uniform(1.0, 1.2, n), "speed": rng.uniform(20, 40, n),
        "flight_path_angle": rng.uniform(-0.05, 0.15, n), "section_drag": rng.uniform(-5, 15, n),
        "fan_electric_power": rng.uniform(0, 300, n), "wing_area": 4.0, "aspect_ratio": 11.0,
        "oswald_efficiency": 0.8, "zero_lift_drag": 0.025, "chain_efficiency": 0.75})
