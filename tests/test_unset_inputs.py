"""No silent defaults for a host: every input the host must give (the flight condition, the
calibration constants, the design inputs, the host's air) starts unset, and the first
evaluation refuses what was left unset, by name, with its unit and case key.

Before this check a host that named its flight condition differently flew at 0 m and 40 m/s, a
forgotten calibration constant took an example value, and an unconnected duration was 3600 s
per node, all without a word.
"""
import numpy as np
import openmdao.api as om
import pytest
from openmdao.core.analysis_error import AnalysisError

from mdao import parameters
from mdao.components.common import HOST_AIR, HOST_GIVES, HOST_INPUTS, UnsetInputError
from mdao.system import BlownWingGroup

N = 3


def _group_problem(fused, host=None, **options):
    prob = om.Problem(reports=False)
    if host is not None:
        prob.model.add_subsystem("host", host, promotes=["*"])
    prob.model.add_subsystem("wing", BlownWingGroup(num_nodes=N, fused=fused, **options))
    prob.setup()
    prob.final_setup()
    return prob


def _host_inputs(prob):
    """The group's promoted inputs that the host must give."""
    wing = prob.model.wing
    meta = wing.get_io_metadata(iotypes="input", metadata_keys=["units"])
    internal = set(HOST_AIR) if wing.options["atmosphere"] == "isa" else set()
    return sorted({m["prom_name"] for m in meta.values()} & HOST_GIVES - internal)


def _example(name):
    if name in parameters.BY_NAME:
        p = parameters.BY_NAME[name]
        return np.asarray(p.start_value, float) * (np.ones(N) if p.per_segment else 1.0)
    if name in HOST_AIR:
        return HOST_AIR[name][1] * np.ones(N)
    return HOST_INPUTS[name][0] * np.ones(N)


def _give_all_but(prob, left_out=()):
    for name in _host_inputs(prob):
        if name not in left_out:
            prob.set_val(f"wing.{name}", _example(name))


@pytest.mark.parametrize("fused", [True, False])
def test_nothing_given_is_refused_by_name(fused):
    prob = _group_problem(fused)
    with pytest.raises(UnsetInputError) as err:
        prob.run_model()
    assert not isinstance(err.value, AnalysisError)     # a set-up mistake: no driver backs off
    text = str(err.value)
    assert "were never given" in text and "examples=True" in text
    if fused:       # one component: every unset input at once
        for name in _host_inputs(prob):
            assert f"  {name} [" in text, name


@pytest.mark.parametrize("fused", [True, False])
@pytest.mark.parametrize("left_out, unit, key", [
    ("altitude", "[m]", "segment.altitude"),
    ("speed", "[m/s]", "segment.speed"),
    ("duration", "[s]", "segment.duration"),
    ("freestream_assist", "[dimensionless]", "duct.freestream_assist"),
    ("slot_drag", "[dimensionless]", "airfoil.slot_drag"),
    ("chain_efficiency", "[dimensionless]", "propulsion.chain_efficiency"),
    ("momentum_coefficient", "[dimensionless]", None),
])
def test_one_input_left_unset_is_named(fused, left_out, unit, key):
    prob = _group_problem(fused)
    _give_all_but(prob, (left_out,))
    with pytest.raises(UnsetInputError) as err:
        prob.run_model()
    text = str(err.value)
    assert "1 input(s)" in text
    assert f"  {left_out} {unit}" in text
    if key is not None:
        assert f"case key {key}" in text
    prob.set_val(f"wing.{left_out}", _example(left_out))
    prob.run_model()                                    # now given: it runs
    assert np.all(np.isfinite(prob.get_val("wing.net_power_saving")))


def test_host_flight_condition_under_other_names_is_not_flown_silently():
    """The host's flight condition, named differently and not connected, leaves the group's
    altitude and speed unset: refused, where before it flew at 0 m and 40 m/s."""
    host = om.IndepVarComp()
    host.add_output("h", 1500.0 * np.ones(N), units="m")
    host.add_output("v_true", 55.0 * np.ones(N), units="m/s")
    prob = _group_problem(True, host=host)
    _give_all_but(prob, ("altitude", "speed"))
    with pytest.raises(UnsetInputError) as err:
        prob.run_model()
    assert "  altitude [m]" in str(err.value) and "  speed [m/s]" in str(err.value)


@pytest.mark.parametrize("fused", [True, False])
def test_the_hosts_air_left_unset_is_named(fused):
    prob = _group_problem(fused, atmosphere="host")
    _give_all_but(prob, ("density",))
    with pytest.raises(UnsetInputError, match=r"density \[kg/m\*\*3\]: the air's density"):
        prob.run_model()


@pytest.mark.parametrize("fused", [True, False])
def test_examples_option_runs_at_the_documented_examples(fused):
    given = _group_problem(fused)
    _give_all_but(given)
    given.run_model()
    examples = _group_problem(fused, examples=True)
    examples.run_model()
    np.testing.assert_array_equal(examples.get_val("wing.net_power_saving"),
                                  given.get_val("wing.net_power_saving"))


def test_inputs_with_a_physical_default_still_start_at_it():
    """Not every input is the host's to give: a parameter with a default from the trade
    (duct roughness, thrust power ceiling) starts at it, and the group runs without it."""
    prob = _group_problem(True, duct_model="geometric")
    for name in ("roughness", "thrust_power_ceiling"):
        assert not parameters.BY_NAME[name].host_gives
        np.testing.assert_array_equal(prob.get_val(f"wing.{name}"),
                                      parameters.BY_NAME[name].default)
    _give_all_but(prob)
    prob.run_model()
    assert np.all(np.isfinite(prob.get_val("wing.net_power_saving")))


def test_the_interface_table_says_which_inputs_the_host_gives():
    """docs/embedding.md's column "must the host give it?" says **required** exactly for the
    parameters the group starts unset."""
    from pathlib import Path
    text = (Path(__file__).resolve().parents[1] / "docs" / "embedding.md").read_text()
    said = {}
    for line in text.splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if len(cells) == 6 and cells[0].strip("`") in parameters.BY_NAME:
            said[cells[0].strip("`")] = cells[3].startswith("**required**")
    assert set(said) == {p.name for p in parameters.PARAMETERS}
    wrong = {name: req for name, req in said.items()
             if req != parameters.BY_NAME[name].host_gives}
    assert not wrong, f"the table's required column disagrees with the group: {wrong}"
    for name in HOST_INPUTS:
        assert f"| `{name}` |" in text and "**required**" in text.split(f"| `{name}` |")[1]
