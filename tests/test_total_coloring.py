"""Total-derivative coloring from the declared partials, and partials limited to what a problem
differentiates: the gradient stays exact and its number of linear solves does not grow with the
mission."""
import copy
import os

import numpy as np
import pytest

from mdao import om
from mdao.case import load_case, parse_case
from mdao.optimum import optimize
from mdao.system import BlownWingGroup, build_problem
from mdao.total_coloring import color_totals, total_sparsity

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

CASES = ("survey-drone", "coastal-patrol", "levee-inspector", "island-shuttle")


def _uncolored(prob):
    """The driver's total Jacobian with one solve per design variable (no coloring)."""
    return prob.compute_totals(return_format="array", coloring_info=False, driver_scaling=True)


def _survey_with(cases_dir, count):
    """The survey drone's wing flown over ``count`` segments at spread speeds and heights."""
    raw = tomllib.loads((cases_dir / "survey-drone.toml").read_text())
    raw = copy.deepcopy(raw)
    raw["segment"] = [{"name": f"s{i}", "altitude": f"{50 + 40 * (i % 7)} m",
                       "speed": f"{15 + (i % 5) * 2.5} m/s", "duration": "10 min"}
                      for i in range(count)]
    raw.pop("uncertainty", None)
    return parse_case(raw)


@pytest.mark.parametrize("name", CASES)
def test_colored_gradient_equals_the_uncolored_one(cases_dir, name):
    prob = build_problem(load_case(cases_dir / f"{name}.toml"))
    coloring = prob.driver._coloring_info.coloring
    assert coloring is not None
    ndv = coloring._shape[1]
    assert coloring.total_solves() < ndv          # fewer solves than design variables
    prob.run_model()
    colored = prob.driver._compute_totals(return_format="array")
    plain = _uncolored(prob)
    scale = np.abs(plain).max()
    assert scale > 0
    np.testing.assert_allclose(colored, plain, rtol=0, atol=1e-12 * scale)


@pytest.mark.parametrize("name", CASES)
def test_pattern_covers_every_nonzero_and_no_more_than_needed(cases_dir, name):
    """Every nonzero of the total Jacobian lies in the pattern (else the coloring would mix
    entries); the pattern is the structure, not a dense stand-in."""
    prob = build_problem(load_case(cases_dir / f"{name}.toml"))
    prob.run_model()
    pattern, _, _ = total_sparsity(prob)
    dense = pattern.toarray()
    jac = _uncolored(prob)
    assert dense.shape == jac.shape
    assert not np.any((jac != 0) & ~dense)
    assert dense.sum() < dense.size      # sparse: segments do not see each other


def test_solves_do_not_grow_with_the_segments(cases_dir):
    """3, 12 and 48 segments: the same few solves (one per color), and the colored gradient
    still equals the uncolored one."""
    solves = []
    for count in (3, 12, 48):
        prob = build_problem(_survey_with(cases_dir, count))
        solves.append(prob.driver._coloring_info.coloring.total_solves())
        if count == 48:
            prob.run_model()
            colored = prob.driver._compute_totals(return_format="array")
            plain = _uncolored(prob)
            assert colored.shape[1] == 1 + 2 * 48     # slot ratio, and two per segment
            np.testing.assert_allclose(colored, plain, rtol=0,
                                       atol=1e-12 * np.abs(plain).max())
    assert solves[0] == solves[1] == solves[2] <= 4


def test_optimize_writes_nothing_in_the_working_folder(cases_dir, tmp_path, monkeypatch):
    """The coloring lives in memory: no coloring file or output folder appears, whatever
    OpenMDAO's working folder."""
    work = tmp_path / "work"
    work.mkdir()
    monkeypatch.chdir(work)
    monkeypatch.delenv("OPENMDAO_WORKDIR", raising=False)
    out = optimize(load_case(cases_dir / "survey-drone.toml"))
    assert out.converged
    assert list(work.iterdir()) == []
    assert not os.listdir(work)


def test_uncolored_problem_matches_the_colored_optimum(cases_dir):
    case = load_case(cases_dir / "coastal-patrol.toml")
    colored = optimize(case)
    plain = optimize(case, problem=build_problem(case, coloring=False))
    assert colored.converged and plain.converged
    assert colored.mission_energy_saving_J == pytest.approx(plain.mission_energy_saving_J,
                                                            rel=1e-6)


def test_partials_limited_to_the_problem_keep_its_totals(cases_dir):
    """The optimization problem declares partials of its responses against its design
    variables only; its totals equal those of the chain with every partial declared."""
    case = load_case(cases_dir / "coastal-patrol.toml")
    limited = build_problem(case)
    chain = limited.model.wing.chain
    wrts = {wrt for _, wrt in chain._chain_pairs}
    assert wrts <= {"slot_ratio", "momentum_coefficient", "fan_pressure_rise"}
    full = build_problem(case, driver=False)
    for prob in (limited, full):
        prob.run_model()
    of = ["energy_margin", "jet_mach", "mission_energy_saving", "required_pressure_rise"]
    wrt = ["slot_ratio", "momentum_coefficient", "fan_pressure_rise"]
    a = limited.compute_totals(of=of, wrt=wrt, coloring_info=False)
    b = full.compute_totals(of=of, wrt=wrt)
    assert len(full.model.wing.chain._chain_pairs) > 2 * len(chain._chain_pairs)
    driver = limited.driver     # its responses and design variables carry segment indices
    resp = {m["source"].split(".")[-1]: m for m in driver._responses.values()}
    for (of_name, wrt_name), want in b.items():
        rows = resp[of_name]["indices"] if of_name in resp else None
        cols = driver._designvars[wrt_name]["indices"]
        want = want[rows.flat() if rows is not None else slice(None)]
        want = want[:, cols.flat() if cols is not None else slice(None)]
        np.testing.assert_allclose(a[of_name, wrt_name], want, rtol=1e-12,
                                   atol=1e-12 * max(1.0, np.abs(want).max()))


@pytest.mark.parametrize("option, name", [("partials_of", "no_such_output"),
                                          ("partials_wrt", "no_such_input")])
def test_unknown_partials_scope_is_refused(option, name):
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("wing", BlownWingGroup(num_nodes=2, fused=True,
                                                    **{option: (name,)}), promotes=["*"])
    with pytest.raises(ValueError) as err:
        prob.setup()
        prob.final_setup()
    text = str(err.value)
    assert option in text and name in text and "allowed" in text


def test_greedy_coloring_by_hand():
    """Columns 0-4 of a 5 x 6 pattern share rows pairwise: 0-1, 1-2, 2-3, 3-4 and 0-2; column 5
    is empty (no solve). Neighbours, counting the column itself: 2 has four, 0, 1 and 3 three,
    4 two. Largest first, ties in column order (Coleman and More 1983): 2 gets color 0; 0
    meets 2, color 1; 1 meets 0 and 2, color 2; 3 meets 2, color 1; 4 meets 3, color 0."""
    from scipy import sparse
    from mdao.total_coloring import _greedy_groups
    rows = [[1, 1, 0, 0, 0, 0], [0, 1, 1, 0, 0, 0], [0, 0, 1, 1, 0, 0], [0, 0, 0, 1, 1, 0],
            [1, 0, 1, 0, 0, 0]]
    groups = _greedy_groups(sparse.csr_matrix(np.array(rows, bool)))
    assert groups == [[2, 4], [0, 3], [1]]
    pattern = np.array(rows, bool)
    for group in groups:        # no two columns of a group share a row
        assert pattern[:, group].sum(axis=1).max() <= 1


def test_implicit_models_are_refused():
    from openmdao.components.balance_comp import BalanceComp
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("balance", BalanceComp("x", lhs_name="a", rhs_val=1.0),
                             promotes=["*"])
    prob.model.add_design_var("a")
    prob.model.add_objective("x")
    prob.driver = om.ScipyOptimizeDriver(optimizer="SLSQP")
    prob.setup()
    prob.final_setup()
    with pytest.raises(NotImplementedError, match="explicit components only"):
        color_totals(prob)


def test_totals_check_compares_every_pair():
    """The project's totals check finds a wrong derivative in any pair, not only the first
    (OpenMDAO 3.45.1's assert_check_totals stops after the first pair)."""
    from totals_check import assert_totals

    class Wrong(om.ExplicitComponent):
        def setup(self):
            self.add_input("x", 1.0)
            self.add_output("y", 0.0)
            self.add_output("z", 0.0)
            self.declare_partials("y", "x", val=2.0)
            self.declare_partials("z", "x", val=30.0)      # the true value is 3

        def compute(self, inputs, outputs):
            outputs["y"] = 2.0 * inputs["x"]
            outputs["z"] = 3.0 * inputs["x"]

    prob = om.Problem(reports=False)
    prob.model.add_subsystem("c", Wrong(), promotes=["*"])
    prob.model.add_design_var("x")
    prob.model.add_objective("y")
    prob.model.add_constraint("z", upper=10.0)
    prob.setup()
    prob.run_model()
    data = prob.check_totals(out_stream=None, method="fd")
    with pytest.raises(AssertionError, match=r"\(z, x\)"):
        assert_totals(data, atol=1e-6, rtol=1e-6)


def test_a_dymos_host_is_colored_through_its_src_indices():
    """In a Dymos phase the ODE's inputs take some entries of their sources (src_indices): the
    pattern follows them, covers every nonzero of the true total Jacobian, and the colored
    gradient equals the uncolored one. (Before, the pattern's product failed on the differing
    sizes: "matmul: dimension mismatch".)"""
    pytest.importorskip("dymos")
    from examples import load_example
    tr = load_example("trajectory")
    prob = tr.build(blown=True)
    prob.run_model()
    plain = _uncolored(prob)
    pattern, _, _ = total_sparsity(prob)
    dense = pattern.toarray()
    assert dense.shape == plain.shape
    assert not np.any((plain != 0) & ~dense)
    assert dense.sum() < 0.2 * dense.size
    coloring = color_totals(prob)
    assert coloring is not None and coloring.total_solves() < plain.shape[1] // 3
    colored = prob.driver._compute_totals(return_format="array")
    np.testing.assert_allclose(colored, plain, rtol=0, atol=1e-12 * np.abs(plain).max())
