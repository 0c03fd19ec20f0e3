"""The fused chain declares only the outputs a host reads (option ``outputs``): the same values
for those, none of the others, and their partials."""
import numpy as np
import openmdao.api as om
import pytest
from partials_check import assert_partials, chain_inputs, group_problem

from mdao.components.chain import ChainComp
from mdao.system import BlownWingGroup


def _run(**options):
    inputs = {} if options.get("examples") else {
        name: value for name, value in chain_inputs(21, aircraft=options.get("aircraft",
                                                                           False)).items()
        if name != "fan_pressure_rise" or not options.get("follow_requirement")}
    return group_problem(inputs, **options)


def _outputs(prob):
    return {m["prom_name"] for _, m in prob.model.list_outputs(out_stream=None, prom_name=True)}


@pytest.mark.parametrize("options", [dict(), dict(aircraft=True), dict(follow_requirement=True)])
def test_declared_outputs_only_and_the_same_values(options):
    full = _run(**options)
    chosen = ("net_power_saving", "jet_mach", "mission_energy_saving")
    few = _run(outputs=chosen, **options)
    assert _outputs(few) - {"_auto_ivc.v%d" % i for i in range(100)} <= set(chosen)
    assert set(chosen) <= _outputs(few)
    for name in chosen:
        np.testing.assert_array_equal(few.get_val(name), full.get_val(name), err_msg=name)
    assert len(_outputs(full)) > len(_outputs(few)) + 20


def test_geometric_stations_and_sums_only_when_asked():
    prob = _run(duct_model="geometric", stations=5, examples=True, outputs=("energy_saving",))
    names = _outputs(prob)
    assert "energy_saving" in names
    assert not names & {"station_area", "mission_energy_saving", "jet_velocity"}


def test_partials_with_declared_outputs():
    assert_partials(ChainComp(num_nodes=4, aircraft=True,
                              outputs=("main_thrust", "mission_clean_energy", "energy_margin")),
                    chain_inputs(22, aircraft=True))


def test_unknown_output_and_per_discipline_group_refused():
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("w", BlownWingGroup(num_nodes=2, outputs=("drag",)))
    with pytest.raises(ValueError, match=r"outputs: \['drag'\] are not outputs of this chain; "
                                         r"allowed: \[.*'section_drag'"):
        prob.setup()
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("w", BlownWingGroup(num_nodes=2, fused=False,
                                                 outputs=("energy_saving",)))
    with pytest.raises(ValueError, match="fused chain"):
        prob.setup()
