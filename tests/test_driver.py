"""The SLSQP driver that hands SciPy its constraints as vectors: the same optimum, iterations and
outcomes as OpenMDAO's own ScipyOptimizeDriver, on a problem with a known answer and on every
bundled case, with two constraint functions instead of one per scalar."""
import numpy as np
import pytest

from openmdao.core.analysis_error import AnalysisError

from mdao import driver as vector_driver
from mdao import om
from mdao import system
from mdao.case import load_case
from mdao.driver import REFUSED_STATUS, VectorSLSQPDriver
from mdao.optimum.solve import run_driver_quietly

CASES = ("survey-drone", "coastal-patrol", "levee-inspector", "island-shuttle")


def _toy(driver_class, maxiter=100, fail_at=None):
    """min (x0-3)^2 + (x1+4)^2 + (x2-0.5)^2 subject to x0 + x1 = 1, -1 <= x1 <= 0.5 (both
    sides), x2 >= 0.7 (lower only) and x0 <= 10 (upper only, inactive).

    By hand: on the line x0 = 1 - x1 the objective (x1 + 2)^2 + (x1 + 4)^2 is least at x1 = -3,
    below -1, so x1 = -1 and x0 = 2; x2 is pushed from 0.5 up to 0.7. The minimum is
    1 + 9 + 0.04 = 10.04. ``fail_at``: the model raises at that evaluation."""

    class Toy(om.ExplicitComponent):
        def setup(self):
            self.add_input("x", np.zeros(3))
            self.add_output("f")
            self.add_output("line")
            self.add_output("y", np.zeros(3))
            self.declare_partials("f", "x")
            self.declare_partials("line", "x", rows=[0, 0], cols=[0, 1], val=1.0)
            self.declare_partials("y", "x", rows=np.arange(3), cols=np.arange(3), val=1.0)
            self.calls = 0

        def compute(self, inputs, outputs):
            self.calls += 1
            if fail_at is not None and self.calls >= fail_at:
                raise RuntimeError("the model failed on purpose")
            x = inputs["x"]
            outputs["f"] = (x[0] - 3) ** 2 + (x[1] + 4) ** 2 + (x[2] - 0.5) ** 2
            outputs["line"] = x[0] + x[1]
            outputs["y"] = x

        def compute_partials(self, inputs, partials):
            x = inputs["x"]
            partials["f", "x"] = [[2 * (x[0] - 3), 2 * (x[1] + 4), 2 * (x[2] - 0.5)]]

    prob = om.Problem(reports=False)
    prob.model.add_subsystem("toy", Toy(), promotes=["*"])
    prob.model.add_design_var("x", lower=-20.0, upper=20.0)
    prob.model.add_objective("f")
    prob.model.add_constraint("line", equals=1.0)
    prob.model.add_constraint("y", indices=[1], lower=-1.0, upper=0.5, alias="y1")
    prob.model.add_constraint("y", indices=[2], lower=0.7, alias="y2")
    prob.model.add_constraint("y", indices=[0], upper=10.0, alias="y0")
    prob.driver = driver_class(optimizer="SLSQP", maxiter=maxiter, tol=1e-12, disp=False)
    prob.setup()
    prob.set_val("x", [0.0, 0.0, 0.0])
    return prob


def test_the_known_answer_with_equality_two_sided_and_one_sided_constraints():
    prob = _toy(VectorSLSQPDriver)
    result = run_driver_quietly(prob)
    assert result.success
    np.testing.assert_allclose(prob.get_val("x"), [2.0, -1.0, 0.7], atol=1e-9)
    assert prob.get_val("f")[0] == pytest.approx(10.04, abs=1e-9)


def test_the_same_steps_as_openmdaos_driver_on_the_known_answer():
    ours, theirs = _toy(VectorSLSQPDriver), _toy(om.ScipyOptimizeDriver)
    run_driver_quietly(ours)
    run_driver_quietly(theirs)
    a, b = ours.driver._scipy_optimize_result, theirs.driver._scipy_optimize_result
    assert a.nit == b.nit and a.nfev == b.nfev and a.njev == b.njev
    np.testing.assert_allclose(ours.get_val("x"), theirs.get_val("x"), rtol=1e-12, atol=1e-14)
    assert ours.model.toy.calls == theirs.model.toy.calls


def test_scipy_receives_one_function_per_kind_of_constraint(monkeypatch):
    seen = {}

    def spy(*args, **kwargs):
        seen["constraints"] = kwargs["constraints"]
        return minimize(*args, **kwargs)

    minimize = vector_driver.minimize
    monkeypatch.setattr(vector_driver, "minimize", spy)
    prob = _toy(VectorSLSQPDriver)
    run_driver_quietly(prob)
    kinds = [c["type"] for c in seen["constraints"]]
    assert kinds == ["eq", "ineq"]
    x = prob.driver.get_design_var_values()["x"]
    # one equality row; inequality rows: y1 lower and upper, y2 lower, y0 upper
    assert np.shape(seen["constraints"][0]["fun"](x)) == (1,)
    ineq = seen["constraints"][1]["fun"](x)
    np.testing.assert_allclose(ineq, [-1.0 + 1.0, 0.5 - (-1.0), 0.7 - 0.7, 10.0 - 2.0],
                               atol=1e-9)
    assert seen["constraints"][1]["jac"](x).shape == (4, 3)


def test_an_iteration_limit_is_a_failure_as_in_openmdaos_driver():
    ours, theirs = _toy(VectorSLSQPDriver, maxiter=1), _toy(om.ScipyOptimizeDriver, maxiter=1)
    assert not run_driver_quietly(ours).success
    assert not run_driver_quietly(theirs).success
    assert ours.driver._scipy_optimize_result.status == 9
    assert theirs.driver._scipy_optimize_result.status == 9


def test_an_error_in_the_model_reaches_the_caller():
    with pytest.raises(RuntimeError, match="failed on purpose"):
        run_driver_quietly(_toy(VectorSLSQPDriver, fail_at=3))


@pytest.mark.parametrize("name", CASES)
def test_bundled_cases_reach_openmdaos_optimum(name, cases_dir, monkeypatch):
    """Every bundled case: the same optimizer iterations and design to round-off as with
    OpenMDAO's ScipyOptimizeDriver (the constraint rows are the same, in the same order)."""
    case = load_case(cases_dir / f"{name}.toml")
    ours = system.build_problem(case)
    monkeypatch.setattr(system, "VectorSLSQPDriver", om.ScipyOptimizeDriver)
    theirs = system.build_problem(case)
    assert type(theirs.driver) is om.ScipyOptimizeDriver
    assert run_driver_quietly(ours).success == run_driver_quietly(theirs).success
    assert (ours.driver._scipy_optimize_result.nit
            == theirs.driver._scipy_optimize_result.nit)
    a, b = ours.driver.get_design_var_values(), theirs.driver.get_design_var_values()
    for key in a:
        np.testing.assert_allclose(a[key], b[key], rtol=1e-9, atol=1e-12, err_msg=key)


def _refusing(driver_class, power, limit, start=0.0):
    """min (x - 3)^power over -20 <= x <= 20 (and x <= 15 as a constraint) from ``start``, a
    model that refuses every x above ``limit`` with an AnalysisError (as the fan map refuses a
    point off its map)."""

    class Refusing(om.ExplicitComponent):
        def setup(self):
            self.add_input("x", 0.0)
            self.add_output("f")
            self.add_output("g")
            self.declare_partials("f", "x")
            self.declare_partials("g", "x", val=1.0)

        def compute(self, inputs, outputs):
            if inputs["x"][0] > limit:
                raise AnalysisError(f"x = {inputs['x'][0]} is beyond {limit}")
            outputs["f"] = (inputs["x"] - 3.0) ** power
            outputs["g"] = inputs["x"]

        def compute_partials(self, inputs, partials):
            partials["f", "x"] = power * (inputs["x"] - 3.0) ** (power - 1)

    prob = om.Problem(reports=False)
    prob.model.add_subsystem("model", Refusing(), promotes=["*"])
    prob.model.add_design_var("x", lower=-20.0, upper=20.0)
    prob.model.add_objective("f")
    prob.model.add_constraint("g", upper=15.0)
    prob.driver = driver_class(optimizer="SLSQP", tol=1e-10, maxiter=50, disp=False)
    prob.setup()
    prob.set_val("x", start)
    return prob


def test_a_line_search_backs_off_where_the_model_refuses():
    """(x-3)^4 from 0: SLSQP's first step goes to the bound x = 15 of its constraint, which the
    model refuses; the line search takes a shorter step and the run converges to 3. OpenMDAO's
    own driver stops the whole run with the error there."""
    ours = _refusing(VectorSLSQPDriver, 4, 10.0)
    assert run_driver_quietly(ours).success
    assert ours.get_val("x")[0] == pytest.approx(3.0, abs=1e-2)
    assert len(ours.driver.refused) >= 1 and "beyond 10" in ours.driver.refused[0]
    with pytest.raises(AnalysisError, match="beyond 10"):
        run_driver_quietly(_refusing(om.ScipyOptimizeDriver, 4, 10.0))


def test_an_optimum_beyond_the_models_range_is_not_reported_as_converged():
    """(x-3)^2 with every x above 2.5 refused: SLSQP ends pressed against 2.5, held there by
    the model's range and not by a constraint. Not converged, with its own status, and the
    problem left at a point the model evaluated."""
    prob = _refusing(VectorSLSQPDriver, 2, 2.5)
    assert not run_driver_quietly(prob).success
    assert prob.driver._scipy_optimize_result.status == REFUSED_STATUS
    x = prob.get_val("x")[0]
    assert 2.0 < x <= 2.5
    assert prob.get_val("f")[0] == pytest.approx((x - 3.0) ** 2, rel=1e-12)


def test_a_start_point_the_model_refuses_is_an_error_that_says_so():
    with pytest.raises(AnalysisError, match="at the optimizer's start point: .*beyond 2.5"):
        run_driver_quietly(_refusing(VectorSLSQPDriver, 2, 2.5, start=3.0))
