"""Wing-level constants given per node (option ``per_node``): a host's per-node propeller,
motor or fan efficiency connects to the group.

Before, ``chain_efficiency`` and ``motor_efficiency`` were one value for the wing, and a host's
per-node efficiency was refused ("shape (3,) incompatible with shape (1,)").
"""
import numpy as np
import openmdao.api as om
import pytest
from partials_check import assert_partials, chain_inputs, group_problem
from totals_check import assert_totals, central_totals

from mdao.components.chain import ChainComp
from mdao.components.common import PER_NODE_ALLOWED
from mdao.system import BlownWingGroup

EFFICIENCIES = ("chain_efficiency", "motor_efficiency", "fan_rated_efficiency")
PER_NODE = {"chain_efficiency": np.array([0.70, 0.76, 0.81, 0.84]),
            "motor_efficiency": np.array([0.93, 0.90, 0.86, 0.80]),
            "fan_rated_efficiency": np.array([0.62, 0.68, 0.71, 0.66])}
OUTPUTS = ("net_power_saving", "fan_electric_power", "propulsion_power_saving",
           "fan_shaft_power", "energy_margin", "energy_saving")


def _run(inputs, per_node=(), num_nodes=4, aircraft=False):
    return group_problem(inputs, num_nodes, per_node=per_node, aircraft=aircraft)


@pytest.mark.parametrize("aircraft", [False, True])
def test_per_node_efficiencies_equal_one_node_at_a_time(aircraft):
    """Each node of a group with per-node efficiencies gives what a one-node group with that
    node's efficiencies as wing constants gives."""
    inputs = chain_inputs(11, aircraft=aircraft)
    prob = _run(dict(inputs, **PER_NODE), EFFICIENCIES, aircraft=aircraft)
    for i in range(4):
        one = {k: (v[i:i + 1] if np.ndim(v) and np.size(v) == 4 and k not in ("pressure_coefficients",)
                   else v) for k, v in inputs.items()}
        one.update({k: v[i] for k, v in PER_NODE.items()})
        single = _run(one, aircraft=aircraft, num_nodes=1)
        for name in OUTPUTS:
            np.testing.assert_allclose(prob.get_val(name)[i], single.get_val(name)[0],
                                       rtol=1e-13, err_msg=f"{name} node {i}")
    # and the efficiencies do change the answer from node to node
    flat = _run(dict(inputs, **{k: v.mean() for k, v in PER_NODE.items()}), aircraft=aircraft)
    assert np.all(np.abs(prob.get_val("fan_electric_power")
                         - flat.get_val("fan_electric_power")) > 1e-6)
    np.testing.assert_allclose(prob.get_val("mission_energy_saving"),
                               prob.get_val("energy_saving").sum(), rtol=1e-13)


@pytest.mark.parametrize("aircraft", [False, True])
def test_per_node_partials(aircraft):
    inputs = dict(chain_inputs(12, aircraft=aircraft), **PER_NODE)
    assert_partials(ChainComp(num_nodes=4, per_node=EFFICIENCIES + ("freestream_assist",),
                              aircraft=aircraft),
                    dict(inputs, freestream_assist=np.array([0.8, 0.9, 1.0, 0.95])))


def test_a_hosts_per_node_propeller_efficiency_connects_with_exact_totals():
    """The friction case: a host computes its propeller efficiency per node and connects it;
    the totals across the boundary match central differences in every pair."""
    n = 4
    inputs = chain_inputs(13)
    prob = om.Problem(reports=False)
    host = prob.model.add_subsystem("host", om.ExecComp(
        "eta = 0.85 - 0.002 * (v - 30.0)**2 / 30.0", eta={"shape": n}, v={"shape": n,
                                                                         "units": "m/s"}))
    prob.model.add_subsystem("wing", BlownWingGroup(num_nodes=n, per_node=("chain_efficiency",)))
    prob.model.connect("host.eta", "wing.chain_efficiency")
    prob.model.connect("host.v", "wing.speed")
    prob.model.add_design_var("host.v", lower=10.0, upper=60.0)
    prob.model.add_design_var("wing.momentum_coefficient", lower=0.005, upper=0.15)
    prob.model.add_objective("wing.mission_energy_saving", scaler=-1.0)
    prob.model.add_constraint("wing.net_power_saving", lower=0.0)
    prob.setup()
    prob.set_val("host.v", inputs.pop("speed"))
    for name, value in inputs.items():
        if name != "chain_efficiency":
            prob.set_val(f"wing.{name}", value)
    prob.run_model()
    np.testing.assert_allclose(prob.get_val("wing.chain_efficiency"), prob.get_val("host.eta"))
    assert_totals(central_totals(prob), atol=1e-6, rtol=1e-6)


def test_per_node_refusals():
    for options, match in [
            (dict(per_node=("chord",)), r"per_node: \['chord'\] may not vary per node; allowed"),
            (dict(per_node=("jet_loss_factor",), duct_model="geometric"),
             r"not inputs with duct_model='geometric'"),
            (dict(per_node=("chain_efficiency",), fused=False), r"fused chain"),
    ]:
        prob = om.Problem(reports=False)
        prob.model.add_subsystem("w", BlownWingGroup(num_nodes=2, **options))
        with pytest.raises(ValueError, match=match):
            prob.setup()
    assert set(EFFICIENCIES) <= set(PER_NODE_ALLOWED)
