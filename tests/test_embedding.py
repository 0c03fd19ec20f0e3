"""The blown wing inside an aircraft-level model (docs/examples/electric_aircraft.py).

Checks: total derivatives across the boundary between the aircraft model and BlownWingGroup
(central finite differences; worst relative error seen 2.4e-10 at the start point, 2.7e-10 at the
optimum), the example runs and converges, its mass and energy accounting close against the
clean-wing model (an independent path through the aircraft model), and the optimizer's answers
are consistent (a constrained variant is no lighter; the clean optimum is a minimum).
"""

import numpy as np
import pytest
from examples import load_example
from totals_check import assert_totals, central_totals, worst_relative


ea = load_example("electric_aircraft")


@pytest.fixture(scope="module")
def results():
    return ea.main(verbose=False)


@pytest.mark.parametrize("blown", [True, False])
def test_totals_across_the_boundary(blown):
    """Every objective/constraint wrt every design variable, through BlownWingGroup's promoted
    names (speed, duration, density, drag, fan power, shaft power, slot ratio, C_mu, ...)."""
    prob = ea.build_aircraft(blown)
    prob.run_model()
    data = central_totals(prob, step=1e-5)
    assert_totals(data, atol=1e-6, rtol=1e-7)
    worst = worst_relative(data)
    print(f"blown={blown}: worst relative totals error {worst:.2e}")
    assert worst < 1e-8
    if blown:
        wrt = {k[1] for k in data}
        assert {"slot_ratio", "momentum_coefficient", "fan_pressure_rise", "speed",
                "rated_shaft_power", "takeoff_mass"} <= wrt


def test_totals_at_the_blown_optimum():
    prob = ea.build_aircraft(True)
    assert prob.run_driver().success
    data = central_totals(prob, step=1e-5)
    assert worst_relative(data) < 1e-8


def test_example_runs_as_a_script(results):
    for key in ("blown", "blown_no_net_thrust", "clean"):
        r = results[key]
        assert r["converged"], key
        assert abs(r["mass_closure_kg"]) < 1e-6
        assert max(r["lift_coefficient"]) <= ea.MAX_LIFT_COEFFICIENT * (1 + 1e-6)
    b = results["blown"]
    np.testing.assert_allclose(b["fan_pressure_rise_Pa"], b["required_pressure_rise_Pa"],
                               rtol=1e-6)
    assert results["takeoff_mass_change_kg"] == pytest.approx(
        b["takeoff_mass_kg"] - results["clean"]["takeoff_mass_kg"], rel=1e-14)


def test_mass_buildup_closes(results):
    for key in ("blown", "blown_no_net_thrust"):
        r = results[key]
        parts = (ea.AIRCRAFT["empty_mass"][0] + ea.AIRCRAFT["payload_mass"][0]
                 + r["battery_mass_kg"] + r["blowing_system_mass_kg"])
        assert r["takeoff_mass_kg"] == pytest.approx(parts, abs=1e-6)
        assert r["blowing_system_mass_kg"] == pytest.approx(
            ea.MASS["installation_factor"][0] * (r["fan_motor_mass_kg"] + r["duct_mass_kg"]),
            rel=1e-12)
        # the rating covers the largest shaft power with the margin, and is not oversized
        assert r["rated_shaft_power_W"] == pytest.approx(
            ea.MASS["power_margin"][0] * max(r["fan_electric_power_W"]) * ea.WING["motor_efficiency"][0],
            rel=1e-6)


def test_energy_accounting_closes_against_the_clean_model(results):
    """At the blown optimum (same mass and speeds), the clean-wing aircraft model needs the blown
    aircraft's source energy plus the group's mission energy saving, segment by segment."""
    b = results["blown"]
    clean = ea.build_aircraft(False)
    clean.set_val("takeoff_mass", b["takeoff_mass_kg"], units="kg")
    clean.set_val("speed", b["speed_m_s"], units="m/s")
    clean.run_model()
    p_clean = clean.get_val("source_power", units="W")
    np.testing.assert_allclose(p_clean - b["net_power_saving_W"], b["source_power_W"], rtol=1e-10)
    e_clean = clean.get_val("mission_source_energy", units="J")[0]
    assert e_clean - b["mission_energy_saving_J"] == pytest.approx(b["mission_source_energy_J"],
                                                                   rel=1e-10)
    usable = ea.AIRCRAFT["usable_fraction"][0]
    assert b["battery_energy_J"] == pytest.approx(b["mission_source_energy_J"] / usable, rel=1e-12)


def test_constrained_variant_is_no_lighter(results):
    """Holding the blown span at zero net thrust removes options: the optimum cannot be lighter."""
    held = results["blown_no_net_thrust"]
    assert held["takeoff_mass_kg"] >= results["blown"]["takeoff_mass_kg"] - 1e-6
    assert min(held["section_drag_N"]) >= -1e-6


def test_clean_optimum_is_a_minimum(results):
    """Move the clean aircraft's cruise speed by +-2 % and close the mass loop by fixed-point
    iteration (an independent solve of the same model): the take-off mass grows both ways."""
    c = results["clean"]
    prob = ea.build_aircraft(False)

    def closed_mass(speeds):
        prob.set_val("speed", speeds, units="m/s")
        m = c["takeoff_mass_kg"]
        for _ in range(200):
            prob.set_val("takeoff_mass", m, units="kg")
            prob.run_model()
            new = m - prob.get_val("mass_closure", units="kg")[0]
            if abs(new - m) < 1e-10:
                break
            m = new
        return m

    base = closed_mass(c["speed_m_s"])
    assert base == pytest.approx(c["takeoff_mass_kg"], rel=1e-8)
    for factor in (0.98, 1.02):
        speeds = np.array(c["speed_m_s"])
        speeds[1] *= factor
        assert closed_mass(speeds) > base


def test_blown_optimum_keeps_the_energy_balance(results):
    """The example constrains energy_margin >= 0: at both blown optima no segment returns more
    net thrust power than its fans put into the air (within the optimizer's tolerance)."""
    for key in ("blown", "blown_no_net_thrust"):
        assert min(results[key]["energy_margin_W"]) >= -1e-6


def test_host_model_colors_its_totals():
    """The coloring from declared partials works on a host model too (the cargo drone: mass
    closure, mission and the blown wing): fewer solves, the same gradient and optimum."""
    from mdao.total_coloring import color_totals
    prob = ea.build_aircraft(True, True)
    prob.final_setup()
    coloring = color_totals(prob)
    assert coloring is not None and coloring.total_solves() < coloring._shape[1]
    prob.run_model()
    colored = prob.driver._compute_totals(return_format="array")
    plain = prob.compute_totals(return_format="array", coloring_info=False, driver_scaling=True)
    np.testing.assert_allclose(colored, plain, rtol=0, atol=1e-12 * np.abs(plain).max())
    result = prob.run_driver()
    reference = ea.build_aircraft(True, True)
    assert result.success and reference.run_driver().success
    assert prob.get_val("takeoff_mass")[0] == pytest.approx(
        reference.get_val("takeoff_mass")[0], rel=1e-8)
