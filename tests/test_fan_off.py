"""A node whose fan does not run (option ``blowing``) has no jet, whatever momentum coefficient
the host gives it: the slotted section's drag, no lift increment, no air power, and no
derivative with respect to that momentum coefficient.

Before, only the fan's electric power was switched off: a fan-off node given C_mu = 0.02 still
got the jet's drag saving and lift, free thrust that broke the first law.
"""
import numpy as np
import pytest
from partials_check import assert_partials, chain_inputs, group_problem

from mdao.components.airfoil import AirfoilComp
from mdao.components.chain import ChainComp
from mdao.components.common import UnsetInputError
from mdao.components.duct import DuctLossComp
from mdao.components.fan import FanComp
from mdao.components.jet import JetComp

FLAGS = [True, False, True, False]
OFF = ~np.array(FLAGS)
OUTPUTS = ("section_drag", "clean_section_drag", "drag_saving", "lift_increment", "jet_velocity",
           "volume_flow", "jet_mach", "air_power", "fan_shaft_power", "fan_electric_power",
           "propulsion_power_saving", "net_power_saving", "energy_margin",
           "required_pressure_rise")


def _run(fused, inputs, blowing=FLAGS):
    return group_problem(inputs, fused=fused, blowing=blowing)


@pytest.mark.parametrize("fused", [True, False])
def test_fan_off_nodes_have_no_jet_whatever_the_momentum_coefficient(fused):
    inputs = chain_inputs(31, momentum=(0.02, 0.06))
    given = _run(fused, inputs)
    zeroed = _run(fused, dict(inputs, momentum_coefficient=np.where(
        OFF, 0.0, inputs["momentum_coefficient"])))
    for name in OUTPUTS:
        np.testing.assert_array_equal(given.get_val(name), zeroed.get_val(name), err_msg=name)
    # by hand at a fan-off node: the slotted section's drag, nothing from a jet
    w = inputs
    q = given.get_val("dynamic_pressure")[OFF]
    area = w["chord"] * w["blown_span"]
    slotted = w["drag_clean"] + w["slot_drag"] + w["slot_drag_per_ratio"] * w["slot_ratio"]
    np.testing.assert_allclose(given.get_val("section_drag")[OFF], q * area * slotted,
                               rtol=1e-13)
    for name in ("lift_increment", "jet_velocity", "air_power", "fan_electric_power"):
        assert np.all(given.get_val(name)[OFF] == 0.0), name
    speed = w["speed"][OFF]
    np.testing.assert_allclose(
        given.get_val("net_power_saving")[OFF],
        -(q * area * (slotted - w["drag_clean"])) * speed / w["chain_efficiency"], rtol=1e-13)
    assert np.all(given.get_val("net_power_saving")[OFF] < 0)    # the slot costs, no jet pays
    # the fan-on nodes are those of an all-on group
    on = _run(fused, inputs, blowing=None)
    for name in OUTPUTS:
        np.testing.assert_allclose(given.get_val(name)[~OFF], on.get_val(name)[~OFF],
                                   rtol=1e-14, err_msg=name)


def test_partials_at_fan_off_nodes():
    inputs = chain_inputs(32, momentum=(0.02, 0.06))
    prob = assert_partials(ChainComp(num_nodes=4, blowing=FLAGS), inputs)
    for of in ("section_drag", "jet_velocity", "net_power_saving", "required_pressure_rise"):
        d = prob.compute_totals(of=[of], wrt=["momentum_coefficient"],
                                return_format="array")
        assert np.all(d[OFF][:, OFF] == 0.0), of
        assert np.all(np.diag(d)[~OFF] != 0.0), of


@pytest.mark.parametrize("comp, names", [
    (JetComp, ("momentum_coefficient", "speed", "density", "speed_of_sound", "slot_ratio",
               "chord", "blown_span")),
    (DuctLossComp, ("momentum_coefficient", "freestream_assist", "jet_loss_factor",
                    "slot_ratio")),
    (AirfoilComp, ("momentum_coefficient", "chord", "blown_span", "drag_clean", "slot_drag",
                   "slot_drag_per_ratio", "drag_per_momentum", "drag_per_momentum_per_ratio",
                   "drag_quadratic", "lift_per_momentum", "slot_ratio")),
])
def test_per_discipline_partials_at_fan_off_nodes(comp, names):
    inputs = dict(chain_inputs(33, momentum=(0.02, 0.06)), density=np.full(4, 1.1),
                  speed_of_sound=np.full(4, 335.0), dynamic_pressure=np.full(4, 600.0))
    assert_partials(comp(num_nodes=4, blowing=FLAGS),
                    {k: v for k, v in inputs.items() if k in names + ("dynamic_pressure",)})


def test_fan_component_partials_at_fan_off_nodes():
    inputs = {"fan_pressure_rise": np.array([800.0, 900.0, 1200.0, 700.0]),
              "volume_flow": np.array([0.05, 0.04, 0.06, 0.03]), "fan_rated_efficiency": 0.7}
    prob = assert_partials(FanComp(num_nodes=4, blowing=FLAGS), inputs)
    assert np.all(prob.get_val("air_power")[OFF] == 0.0)


@pytest.mark.parametrize("fused", [True, False])
@pytest.mark.parametrize("name", ["momentum_coefficient", "fan_pressure_rise"])
def test_unset_jet_inputs_are_refused_only_where_the_fan_runs(fused, name):
    inputs = chain_inputs(34)
    value = inputs[name].copy()
    value[OFF] = np.nan
    prob = _run(fused, dict(inputs, **{name: value}))        # not used there: runs
    for out in OUTPUTS:
        assert np.all(np.isfinite(prob.get_val(out))), out
    value[0] = np.nan
    with pytest.raises(UnsetInputError, match=name):
        _run(fused, dict(inputs, **{name: value}))


def test_fan_pressure_rise_has_no_partial_where_the_fan_is_off():
    prob = assert_partials(ChainComp(num_nodes=4, blowing=FLAGS), chain_inputs(35))
    for of in ("air_power", "fan_shaft_power", "net_power_saving"):
        d = prob.compute_totals(of=[of], wrt=["fan_pressure_rise"], return_format="array")
        assert np.all(d[OFF][:, OFF] == 0.0), of
        assert np.all(np.diag(d)[~OFF] != 0.0), of


@pytest.mark.parametrize("fused", [True, False])
def test_a_stopped_map_fan_has_no_operating_point(fused):
    """With a fan map, a fan-off node reports the fan stopped (speed, coefficients, tip Mach
    number and efficiency 0), in both groups, whatever pressure rise it is given."""
    prob = group_problem({"fan_pressure_rise": [900.0, 900.0, 1100.0, 1500.0],
                          "momentum_coefficient": [0.03, 0.05, 0.04, 0.02]},
                         fused=fused, blowing=FLAGS, fan_model="map", examples=True)
    for name in ("fan_speed", "flow_coefficient", "pressure_coefficient", "tip_mach",
                 "fan_efficiency", "fan_shaft_power", "air_power"):
        value = prob.get_val(name)
        assert np.all(value[OFF] == 0.0), name
        assert np.all(np.isfinite(value)) and np.all(value[~OFF] != 0.0), name
