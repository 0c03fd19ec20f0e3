"""The edges a host model meets (issue: drops into real clients): the atmosphere down to the
standard's lower limit, round-off past a natural bound taken as the bound, out-of-range inputs
raised as OpenMDAO's AnalysisError, a NumPy integer ``num_nodes``, a ``blowing`` option that
broadcasts, and ``fan_speed`` in rev/s connecting to rpm and rad/s inputs."""
import importlib

import numpy as np
import openmdao.api as om
import pytest

from mdao.components.common import InputRangeError, blowing_flags
from mdao.physics import jet
from mdao.physics.atmosphere import ALTITUDE_RANGE, ALTITUDE_ROUND_OFF, EARTH_RADIUS, isa
from mdao.system import BlownWingGroup

COMPONENTS = [("aircraft", "AircraftComp"), ("airfoil", "AirfoilComp"),
              ("atmosphere", "AtmosphereComp"), ("chain", "ChainComp"),
              ("duct", "DuctLossComp"), ("fan", "FanComp"), ("jet", "JetComp"),
              ("mass", "BlowingSystemMassComp"), ("power", "SegmentPowerComp"),
              ("transition", "TransitionComp")]


def _group(fused, **options):
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("wing", BlownWingGroup(fused=fused, examples=True, **options), promotes=["*"])
    prob.setup()
    return prob


def _outputs(prob):
    return {meta["prom_name"]: np.array(meta["val"])
            for _, meta in prob.model.list_outputs(prom_name=True, out_stream=None)}


# --- the atmosphere below sea level -----------------------------------------------------------

def test_range_reaches_the_standards_lower_limit():
    """ISO 2533:1975 tabulates from -2000 m; its Addendum 2 (1997) extends the tables to
    -5000 m, as does the U.S. Standard Atmosphere 1976 (from memory)."""
    assert ALTITUDE_RANGE == (-5000.0, 20000.0)


# U.S. Standard Atmosphere 1976 (NOAA-S/T 76-1562), geometric-altitude table, printed to five
# significant figures (from memory): z [m], T [K], p [Pa], rho [kg/m3].
BELOW_SEA_LEVEL = [(-5000.0, 320.676, 1.7776e5, 1.9311), (-2000.0, 301.154, 1.2778e5, 1.4782)]


@pytest.mark.parametrize("z, t, p, rho", BELOW_SEA_LEVEL)
def test_below_sea_level_against_the_1976_table(z, t, p, rho):
    """Within half a unit of the table's last printed digit (T to 0.0005 K; p, rho to 5e-5
    relative at most)."""
    s = isa(z)
    assert abs(float(s.temperature) - t) <= 5e-4
    assert abs(float(s.pressure) - p) <= 0.5 * 10.0 ** (np.floor(np.log10(p)) - 4)
    assert abs(float(s.density) - rho) <= 0.5e-4


def test_lapse_rate_holds_below_sea_level_in_geopotential_altitude():
    """ISO 2533 / ICAO: T = 288.15 - 0.0065 H down to H = -5000 m geopotential, i.e. 320.65 K
    there (the tables' first row); geometric z = r H / (r - H) = -4996.07 m."""
    h = -5000.0
    z = EARTH_RADIUS * h / (EARTH_RADIUS - h)
    assert z == pytest.approx(-4996.07, abs=0.01)
    assert float(isa(z).temperature) == pytest.approx(320.65, abs=1e-9)


def test_component_below_sea_level_matches_the_physics():
    prob = om.Problem(reports=False)
    comp = importlib.import_module("mdao.components.atmosphere").AtmosphereComp(num_nodes=3)
    prob.model.add_subsystem("atm", comp, promotes=["*"])
    prob.setup()
    z = np.array([-5000.0, -420.0, 0.0])         # -420 m: a field by the Dead Sea
    prob.set_val("altitude", z)
    prob.run_model()
    np.testing.assert_array_equal(prob.get_val("density"), isa(z).density)
    assert np.all(np.diff(prob.get_val("density")) < 0)


# --- round-off at a natural bound --------------------------------------------------------------

@pytest.mark.parametrize("bound, past", [(ALTITUDE_RANGE[0], -1e-11), (ALTITUDE_RANGE[1], 1e-11),
                                         (ALTITUDE_RANGE[0], -0.9 * ALTITUDE_ROUND_OFF)])
def test_altitude_round_off_past_a_bound_is_the_bound(bound, past):
    """Values and derivatives at the bound, exactly."""
    z = bound + past
    assert z != bound
    state, d = isa(np.array([z, 1000.0]), derivatives=True)
    at, d_at = isa(np.array([bound, 1000.0]), derivatives=True)
    for got, want in zip(state + d, at + d_at):
        np.testing.assert_array_equal(got, want)


@pytest.mark.parametrize("z", [ALTITUDE_RANGE[0] - 1e-6, ALTITUDE_RANGE[1] + 1e-6,
                               ALTITUDE_RANGE[0] - 10 * ALTITUDE_ROUND_OFF])
def test_altitude_beyond_round_off_is_refused(z):
    with pytest.raises(ValueError, match=r"altitude must be within -5000 to 20000 m"):
        isa(np.array([1000.0, z]))


def test_descent_to_a_sea_level_field():
    """The issue's value: -2.27e-13 m is inside the range now, sea level to round-off."""
    assert float(isa(-2.27e-13).pressure) == pytest.approx(101325.0, rel=1e-15)


def test_momentum_coefficient_round_off_is_zero():
    """-2e-17 (SLSQP at the bound C_mu >= 0) is taken as 0 in both jets, values and
    derivatives."""
    args = (0.01, 40.0, 1.225, 0.5, 2.0, 340.0)
    got = jet.kinematics(np.array([-2e-17, 0.03]), *args, derivatives=True)
    want = jet.kinematics(np.array([0.0, 0.03]), *args, derivatives=True)
    for a, b in zip(got[0], want[0]):
        np.testing.assert_array_equal(a, b)
    for key in want[1]:
        np.testing.assert_array_equal(got[1][key], want[1][key], err_msg=str(key))
    cargs = (0.01, 40.0, 1.225, 101325.0, 288.15, 0.5, 2.0, 0.8)
    got = jet.compressible_kinematics(np.array([-2e-17, 0.03]), *cargs)
    want = jet.compressible_kinematics(np.array([0.0, 0.03]), *cargs)
    for a, b in zip(got.state + (got.jet_head, got.jet_temperature),
                    want.state + (want.jet_head, want.jet_temperature)):
        np.testing.assert_array_equal(a, b)
    assert jet.MOMENTUM_ROUND_OFF == 1e-12


@pytest.mark.parametrize("c", [-1e-9, -2e-12, -0.01])
def test_momentum_coefficient_beyond_round_off_is_refused(c):
    with pytest.raises(ValueError, match=r"momentum_coefficient must be >= 0"):
        jet.kinematics(np.array([0.03, c]), 0.01, 40.0, 1.225, 0.5, 2.0, 340.0)
    with pytest.raises(ValueError, match=r"momentum_coefficient must be >= 0"):
        jet.compressible_kinematics(c, 0.01, 40.0, 1.225, 101325.0, 288.15, 0.5, 2.0, 0.8)


@pytest.mark.parametrize("fused", [True, False])
def test_group_at_round_off_below_zero_momentum(fused):
    """The whole group at C_mu = -2e-17 and altitude -2.27e-13 m gives what it gives at 0, 0:
    the jet takes C_mu as 0; the airfoil's drag, linear in C_mu, moves by its slope times
    2e-17 (1.2e-14 N measured; 2.1e-9 J of energy over the 3600 s default), within 1e-12 of
    each output's largest magnitude (round-off on that scale)."""
    prob = _group(fused, num_nodes=2)
    prob.set_val("momentum_coefficient", [0.0, 0.03])
    prob.set_val("altitude", [0.0, 300.0])
    prob.run_model()
    want = _outputs(prob)
    prob.set_val("momentum_coefficient", [-2e-17, 0.03])
    prob.set_val("altitude", [-2.27e-13, 300.0])
    prob.run_model()
    got = _outputs(prob)
    for name, value in want.items():
        scale = max(float(np.max(np.abs(value))), 1.0)
        np.testing.assert_allclose(got[name], value, rtol=1e-14, atol=1e-12 * scale,
                                   err_msg=name)


# --- errors inside compute: AnalysisError -------------------------------------------------------

@pytest.mark.parametrize("fused", [True, False])
def test_out_of_range_altitude_raises_analysis_error(fused):
    prob = _group(fused, num_nodes=2)
    prob.set_val("altitude", [300.0, 25000.0])
    with pytest.raises(om.AnalysisError, match=r"altitude must be within -5000 to 20000 m") as err:
        prob.run_model()
    assert isinstance(err.value, ValueError)       # what the physics raised, still
    assert isinstance(err.value.__cause__, ValueError)


@pytest.mark.parametrize("fused", [True, False])
def test_negative_momentum_raises_analysis_error(fused):
    prob = _group(fused, num_nodes=2)
    prob.set_val("momentum_coefficient", [0.03, -0.01])
    with pytest.raises(om.AnalysisError, match="momentum_coefficient must be >= 0"):
        prob.run_model()


def test_analysis_error_in_compute_partials():
    """compute_partials too: the values pass (run at a valid point), then the partials are
    asked at a bad one."""
    from mdao.components.atmosphere import AtmosphereComp
    comp = AtmosphereComp(num_nodes=1)
    with pytest.raises(InputRangeError, match="altitude"):
        comp.compute_partials({"altitude": np.array([3e4])}, {})
    with pytest.raises(om.AnalysisError, match="altitude"):
        comp.compute({"altitude": np.array([-6000.0])}, {})


# --- num_nodes as a NumPy integer ---------------------------------------------------------------

@pytest.mark.parametrize("module, name", COMPONENTS)
def test_numpy_integer_num_nodes_on_every_component(module, name):
    cls = getattr(importlib.import_module(f"mdao.components.{module}"), name)
    comp = cls(num_nodes=np.int64(11))
    assert comp.options["num_nodes"] == 11 and type(comp.options["num_nodes"]) is int
    with pytest.raises(TypeError):
        cls(num_nodes=11.0)                 # a float is still refused


@pytest.mark.parametrize("fused", [True, False])
def test_numpy_integer_num_nodes_on_the_group(fused):
    prob = _group(fused, num_nodes=np.int64(11))
    prob.set_val("momentum_coefficient", np.linspace(0.0, 0.05, 11))
    prob.run_model()
    reference = _group(fused, num_nodes=11)
    reference.set_val("momentum_coefficient", np.linspace(0.0, 0.05, 11))
    reference.run_model()
    assert prob.get_val("net_power_saving").shape == (11,)
    np.testing.assert_array_equal(prob.get_val("net_power_saving"),
                                  reference.get_val("net_power_saving"))


# --- blowing broadcasts -------------------------------------------------------------------------

def test_blowing_flags_broadcast():
    np.testing.assert_array_equal(blowing_flags(True, 4), [True] * 4)
    np.testing.assert_array_equal(blowing_flags([False], 4), [False] * 4)
    np.testing.assert_array_equal(blowing_flags(np.bool_(False), 3), [False] * 3)
    np.testing.assert_array_equal(blowing_flags([True, False, True], 3), [True, False, True])
    with pytest.raises(ValueError, match="blowing must be one bool or have num_nodes=4"):
        blowing_flags([True, False], 4)


@pytest.mark.parametrize("fused", [True, False])
@pytest.mark.parametrize("flag", [True, False])
def test_blowing_broadcast_on_40_nodes(fused, flag):
    """blowing=[flag] and blowing=flag give what 40 explicit flags give; the fan is off at
    every node with False."""
    cmu = np.linspace(0.005, 0.05, 40)
    results = []
    for option in ([flag], flag, [flag] * 40):
        prob = _group(fused, num_nodes=40, blowing=option)
        prob.set_val("momentum_coefficient", cmu)
        prob.run_model()
        results.append(_outputs(prob))
    for got in results[:2]:
        for name, value in results[2].items():
            np.testing.assert_array_equal(got[name], value, err_msg=name)
    power = results[2]["fan_electric_power"]
    assert power.shape == (40,)
    assert np.all(power > 0) if flag else np.all(power == 0)


# --- fan_speed in rev/s connects to rpm and rad/s -----------------------------------------------

@pytest.mark.parametrize("fused", [True, False])
def test_fan_speed_connects_to_rpm_and_rad_per_s(fused):
    """OpenMDAO's unit library defines rev = 2 pi rad and rpm = 2 pi rad/min: 1 rev/s is 60 rpm
    and 2 pi rad/s."""
    prob = om.Problem(reports=False)
    model = prob.model
    model.add_subsystem("wing", BlownWingGroup(num_nodes=2, examples=True, duct_model="geometric",
                                               fan_model="map", fused=fused))
    model.add_subsystem("motor", om.ExecComp("y = x", x={"units": "rpm", "shape": 2},
                                             y={"units": "rpm", "shape": 2}))
    model.add_subsystem("shaft", om.ExecComp("w = x", x={"units": "rad/s", "shape": 2},
                                             w={"units": "rad/s", "shape": 2}))
    model.connect("wing.fan_speed", ["motor.x", "shaft.x"])
    prob.setup()
    prob.run_model()
    meta = prob.model.wing._var_allprocs_abs2meta["output"]
    units = {m["units"] for name, m in meta.items() if name.endswith(".fan_speed")}
    assert units == {"rev/s"}
    rev_s = prob.get_val("wing.fan_speed")
    assert np.all(np.isfinite(rev_s)) and np.all(rev_s > 0)
    np.testing.assert_allclose(prob.get_val("motor.y"), 60.0 * rev_s, rtol=1e-14)
    np.testing.assert_allclose(prob.get_val("shaft.w"), 2.0 * np.pi * rev_s, rtol=1e-14)


@pytest.mark.parametrize("aircraft", [False, True])
@pytest.mark.parametrize("fused", [True, False])
def test_without_mission_sums_for_an_ode(fused, aircraft):
    """``mission_sums=False`` (inside an ODE, where the host integrates power over time): no
    ``duration`` input and no energy output, in both groups; every other output is unchanged."""
    from partials_check import chain_inputs
    inputs = chain_inputs(5, aircraft=aircraft)
    probs = {}
    for sums in (True, False):
        prob = om.Problem(reports=False)
        prob.model.add_subsystem("w", BlownWingGroup(num_nodes=4, examples=True, fused=fused, aircraft=aircraft,
                                                     mission_sums=sums), promotes=["*"])
        prob.setup()
        for name, value in inputs.items():
            if sums or name != "duration":
                prob.set_val(name, value)
        prob.run_model()
        probs[sums] = prob
    ins = {s: {m["prom_name"] for _, m in p.model.list_inputs(out_stream=None, prom_name=True)}
           for s, p in probs.items()}
    outs = {s: _outputs(p) for s, p in probs.items()}
    assert ins[True] - ins[False] == {"duration"}
    energies = {"energy_saving", "mission_energy_saving"} | (
        {"clean_source_energy", "mission_clean_energy"} if aircraft else set())
    assert set(outs[True]) - set(outs[False]) == energies
    for name in outs[False]:
        np.testing.assert_array_equal(probs[False].get_val(name), probs[True].get_val(name),
                                      err_msg=name)
    if fused:      # and the fused component's partials, without the sums
        from partials_check import assert_partials
        from mdao.components.chain import ChainComp
        assert_partials(ChainComp(num_nodes=4, examples=True, aircraft=aircraft, mission_sums=False),
                        {k: v for k, v in inputs.items() if k != "duration"})


def _interface_tables():
    """``{name: (unit, shape)}`` of the input and output tables of docs/embedding.md."""
    from pathlib import Path
    text = (Path(__file__).resolve().parents[1] / "docs" / "embedding.md").read_text()
    rows = {}
    for line in text.splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if len(cells) >= 4 and cells[0].startswith("`") and cells[0].endswith("`"):
            rows[cells[0].strip("`")] = (cells[1], cells[2])
    return rows


def _same_unit(a, b):
    """Whether two OpenMDAO unit strings ("-": none) are the same unit (``K`` is ``degK``)."""
    from openmdao.utils.units import unit_conversion
    if "-" in (a, b):
        return a == b
    return unit_conversion(a, b) == (1.0, 0.0)


@pytest.mark.parametrize("options", [
    dict(), dict(duct_model="geometric", fan_model="map", stations=5),
    dict(aircraft=True), dict(aircraft=True, sized_fan=True),
    dict(compressible=True, compressible_jet=True, duct_model="geometric", stations=5)])
def test_interface_table_lists_every_name_with_its_unit(options):
    """docs/embedding.md's interface table names every input and output of the fused group,
    with the unit OpenMDAO declares."""
    table = _interface_tables()
    prob = _group(True, num_nodes=3, **options)
    variables = (prob.model.list_inputs(out_stream=None, prom_name=True, units=True)
                 + prob.model.list_outputs(out_stream=None, prom_name=True, units=True))
    missing, wrong = [], []
    for _, meta in variables:
        name, unit = meta["prom_name"], meta["units"] or "-"
        if name not in table:
            missing.append(name)
        elif not _same_unit(table[name][0], unit):
            wrong.append((name, table[name][0], unit))
    assert not missing, f"not in docs/embedding.md's interface table: {sorted(set(missing))}"
    assert not wrong, f"units differ from the table: {wrong}"


@pytest.mark.parametrize("options", [dict(), dict(duct_model="geometric", fan_model="map",
                                                  stations=5),
                                     dict(aircraft=True),
                                     dict(compressible=True, duct_model="geometric", stations=5)])
@pytest.mark.parametrize("fused", [True, False])
def test_the_hosts_atmosphere(fused, options):
    """``atmosphere="host"``: the air's state per node is an input (no altitude). Fed the ISA's
    values it gives the ISA group's answers; both groups take the same inputs; a hot day (ISA
    + 15 K at the same pressure) changes the answer."""
    from partials_check import chain_inputs
    inputs = chain_inputs(3, aircraft=options.get("aircraft", False))
    air = isa(inputs["altitude"])
    probs = {}
    for mode in ("isa", "host"):
        prob = _group(fused, num_nodes=4, atmosphere=mode, **options)
        names = {m["prom_name"] for _, m in prob.model.list_inputs(out_stream=None,
                                                                    prom_name=True)}
        for name, value in inputs.items():
            if name in names:
                prob.set_val(name, value)
        if mode == "host":
            assert "altitude" not in names
            taken = {f for f in air._fields if f in names}
            assert {"density", "speed_of_sound"} <= taken
            for field in taken:
                prob.set_val(field, getattr(air, field))
        prob.run_model()
        probs[mode] = (prob, names)
    for name in ("net_power_saving", "required_pressure_rise", "fan_shaft_power",
                 "energy_margin", "jet_mach"):
        np.testing.assert_allclose(probs["host"][0].get_val(name), probs["isa"][0].get_val(name),
                                   rtol=1e-12, err_msg=name)
    other = _group(not fused, num_nodes=4, atmosphere="host", **options)
    other_names = {m["prom_name"] for _, m in other.model.list_inputs(out_stream=None,
                                                                       prom_name=True)}
    host_air_names = {f for f in air._fields}
    assert probs["host"][1] & host_air_names == other_names & host_air_names
    prob = probs["host"][0]
    before = prob.get_val("net_power_saving").copy()
    hot = air.temperature + 15.0
    prob.set_val("density", air.pressure / (287.05287 * hot))
    if "temperature" in probs["host"][1]:
        prob.set_val("temperature", hot)
    prob.run_model()
    after = prob.get_val("net_power_saving")
    assert np.all(np.isfinite(after)) and not np.allclose(after, before)


def test_host_atmosphere_partials():
    from partials_check import assert_partials, chain_inputs
    from mdao.components.chain import ChainComp
    inputs = {k: v for k, v in chain_inputs(4).items() if k != "altitude"}
    air = isa(np.array([100.0, 900.0, 2000.0, 3100.0]))
    inputs.update(density=air.density, speed_of_sound=air.speed_of_sound)
    assert_partials(ChainComp(num_nodes=4, examples=True, atmosphere="host"), inputs)


def test_options_table_lists_every_option_with_its_default():
    """docs/embedding.md's table of options names every option of the group that OpenMDAO's
    own groups do not have, with the default the group declares."""
    import ast
    from pathlib import Path
    text = (Path(__file__).resolve().parents[1] / "docs" / "embedding.md").read_text()
    table = text.split("### The options", 1)[1].split("\n### ", 1)[0]
    said = {}
    for line in table.splitlines():
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        if len(cells) == 3 and cells[0].startswith("`"):
            for name in cells[0].split(","):
                said[name.strip().strip("`")] = cells[1]
    group = BlownWingGroup()
    own = set(group.options) - set(om.Group().options)
    assert set(said) == own, (sorted(own - set(said)), sorted(set(said) - own))
    for name, default in said.items():
        assert ast.literal_eval(default) == group.options[name], name
