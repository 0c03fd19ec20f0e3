"""A host's inputs are held to the ranges a case file is held to (mdao.parameters): a value
outside is an ``om.AnalysisError`` naming it, its value, node and range, which a solver's line
search can back off from; a finite-difference step at a closed end is not refused; a lift
table extrapolated past a constant's range is refused.

Before, a speed of -1 m/s, a chord of -1 m, a chain efficiency of 1.5 or a lift coefficient
of 50 read from a table of 0.2 to 1.4 (a drag coefficient of -0.24) ran without a word.
"""
import numpy as np
import openmdao.api as om
import pytest
from openmdao.core.analysis_error import AnalysisError
from partials_check import group_problem

from mdao.physics.lift_table import LiftTable
from mdao.system import BlownWingGroup


def _problem(fused=True, **options):
    return group_problem(num_nodes=3, examples=True, fused=fused, **options)


@pytest.mark.parametrize("fused", [True, False])
@pytest.mark.parametrize("name, value, match", [
    ("speed", [30.0, -1.0, 20.0], r"speed = -1 at node 1 is outside its allowed range \(0, 400\]"),
    ("chord", -1.0, r"chord = -1 is outside its allowed range \(0, 100\]"),
    ("chain_efficiency", 1.5, r"chain_efficiency = 1.5 is outside its allowed range \(0, 1\]"),
    ("duration", [-5.0, 60.0, 60.0], r"duration = -5 at node 0 .* \(0, 1e\+06\]"),
    ("slot_ratio", 0.5, r"slot_ratio = 0.5 is outside its allowed range \(0, 0.2\]"),
])
def test_out_of_range_input_is_an_analysis_error_naming_it(fused, name, value, match):
    prob = _problem(fused)
    prob.set_val(name, value)
    with pytest.raises(AnalysisError, match=match):
        prob.run_model()


def test_a_finite_difference_step_past_a_closed_end_is_not_refused():
    prob = _problem()
    prob.set_val("thrust_power_ceiling", 1.0 + 1e-6)      # the end is 1, closed
    prob.run_model()
    prob.set_val("thrust_power_ceiling", 1.001)
    with pytest.raises(AnalysisError, match="thrust_power_ceiling"):
        prob.run_model()


def test_lift_table_extrapolated_out_of_the_constants_range_is_refused():
    table = LiftTable((0.2, 0.8, 1.4), (0.006, 0.012, 0.020))
    prob = _problem(lift_tables=(("drag_clean", table),))
    prob.set_val("lift_coefficient", [0.5, 1.5, 0.9])     # a little past the end: linear
    prob.run_model()
    assert prob.get_val("drag_coefficient")[1] > prob.get_val("drag_coefficient")[2]
    prob.set_val("lift_coefficient", [0.5, -50.0, 0.9])   # the clean drag would be < 0
    with pytest.raises(AnalysisError, match=r"drag_clean: its lift table read at lift "
                                            r"coefficient -50 .* outside the allowed \(0, 1\]"):
        prob.run_model()


def test_a_line_search_backs_off_an_out_of_range_newton_step():
    """A host's Newton solver whose first step takes the speed below zero: with the
    AnalysisError a line search that retries on it converges; the residual is the host's."""
    prob = om.Problem(reports=False)
    model = prob.model
    model.add_subsystem("w", BlownWingGroup(num_nodes=1, examples=True),
                        promotes_inputs=["speed"], promotes_outputs=["section_drag"])
    # find the speed at which the blown span's drag is 8 N: drag grows with speed
    bal = model.add_subsystem("balance", om.BalanceComp(), promotes=["*"])
    bal.add_balance("speed", units="m/s", val=200.0, lhs_name="section_drag", rhs_val=8.0,
                    eq_units="N")
    model.nonlinear_solver = om.NewtonSolver(solve_subsystems=False, maxiter=40, iprint=-1,
                                             atol=1e-10, rtol=1e-12)
    model.linear_solver = om.DirectSolver()
    model.nonlinear_solver.linesearch = om.ArmijoGoldsteinLS(retry_on_analysis_error=True,
                                                             iprint=-1, maxiter=20)
    prob.setup()
    prob.set_val("w.momentum_coefficient", 0.0)
    prob.run_model()
    assert prob.get_val("section_drag")[0] == pytest.approx(8.0, rel=1e-8)
    assert 0.0 < prob.get_val("speed")[0] < 200.0


@pytest.mark.parametrize("fused", [True, False])
def test_a_running_map_fan_off_its_map_is_refused(fused):
    """Far from its peak the map's efficiency parabola crosses zero, where the shaft power
    would change sign (a fan giving power back): an AnalysisError naming the node, the
    efficiency and the flow coefficient; the same point at a fan-off node is not refused."""
    prob = _problem(fused, fan_model="map")
    prob.set_val("peak_flow_coefficient", 0.15)      # the example points run near 0.5-0.7
    with pytest.raises(AnalysisError, match=r"fan map: efficiency -[0-9.]+ at node 0, flow "
                                            r"coefficient [0-9.]+ \(the map's peak at 0.15\)"):
        prob.run_model()
    off = group_problem(num_nodes=3, examples=True, fused=fused, fan_model="map",
                        blowing=False)
    off.set_val("peak_flow_coefficient", 0.15)
    off.run_model()
    assert np.all(off.get_val("fan_shaft_power") == 0.0)
