"""One wiring of the chain: :func:`mdao.physics.chain.evaluate`, the fused group (``ChainComp``,
a thin adapter over it) and the per-discipline group (one component per discipline, wired
independently) agree for every duct and fan model, compressible or not, with the fan pressure
rise given or following the requirement: the same values, the same total derivatives, and the
fused component's partials agree with finite differences."""
import itertools

import numpy as np
import openmdao.api as om
import pytest

from mdao import parameters as registry
from mdao.components.chain import ChainComp
from mdao.physics import chain
from mdao.system import BlownWingGroup
from partials_check import assert_partials

N = 5
FANS = 2
STATIONS = 9
BLOWING = [True, True, False, True, True]
#: (duct, fan, compressible, follow requirement, aircraft): every model combination without the
#: aircraft around the wing, and two with it.
COMBOS = [c + (False,) for c in itertools.product(("lumped", "geometric"), ("constant", "map"),
                                                  (False, True), (False, True))]
COMBOS += [("lumped", "constant", False, False, True), ("geometric", "map", True, True, True)]
IDS = [f"{d}-{f}-{'compressible' if c else 'incompressible'}-{'follow' if r else 'given'}"
       + ("-aircraft" if a else "") for d, f, c, r, a in COMBOS]

#: Ranges of the random points: inside the allowed ranges of mdao.parameters, around a small
#: blown wing (values of this test, not of any source). The fan pressure rise the jet needs
#: stays positive (freestream assist below the jet head), so the map fan always has a speed.
RANGES = {"altitude": (0.0, 9000.0), "speed": (25.0, 70.0), "duration": (100.0, 4000.0),
          "momentum_coefficient": (0.02, 0.15), "fan_pressure_rise": (300.0, 3000.0),
          "slot_ratio": (0.008, 0.016), "chord": (0.35, 0.6), "blown_span": (1.5, 2.5),
          "suction_ratio": (0.015, 0.03), "jet_loss_factor": (1.2, 1.8),
          "freestream_assist": (0.2, 0.6), "fan_diameter": (0.06, 0.1),
          "transition_length": (0.2, 0.4), "slot_exponent": (4.0, 10.0),
          "roughness": (1e-6, 2e-5), "bend_loss": (0.1, 0.5), "suction_inlet_loss": (0.3, 0.7),
          "extra_loss": (0.0, 0.2), "fan_rated_efficiency": (0.5, 0.8),
          "motor_efficiency": (0.8, 0.95), "peak_efficiency": (0.65, 0.85),
          "peak_flow_coefficient": (0.4, 0.55), "efficiency_falloff": (0.2, 0.4),
          "drag_clean": (0.008, 0.015), "slot_drag": (0.0, 0.02),
          "slot_drag_per_ratio": (0.0, 0.5), "drag_per_momentum": (-2.0, -0.8),
          "drag_per_momentum_per_ratio": (-5.0, 5.0), "drag_quadratic": (0.0, 1.0),
          "lift_per_momentum": (0.0, 5.0), "chain_efficiency": (0.7, 0.9),
          "thrust_power_ceiling": (0.6, 1.0), "aircraft_mass": (15.0, 40.0),
          "wing_area": (1.2, 2.0), "zero_lift_drag": (0.025, 0.035), "aspect_ratio": (8.0, 14.0),
          "span_efficiency": (0.7, 0.9), "climb_rate": (-2.0, 3.0)}


def _schedule(duct_model, compressible):
    """Both transition schedules are covered: the linear one with the compressible fan."""
    return "linear" if duct_model == "geometric" and compressible else "monotone-area"


#: Parameters of features only the fused chain wires (the fan's fit in the wing, the high-lift
#: requirement): the per-discipline group has no such inputs, and their outputs are checked
#: against finite differences and by hand elsewhere (tests/test_sizing.py).
FUSED_ONLY = tuple(p.name for p in registry.CHAIN_PARAMETERS if p.fused_only)


def _values(duct_model, fan_model, follow, seed=20240, aircraft=False):
    """Random inputs of every parameter the models use (names from mdao.parameters)."""
    rng = np.random.default_rng(seed)
    values = {}
    for p in registry.chain_parameters(duct_model, fan_model, aircraft=aircraft):
        if p.name in FUSED_ONLY:
            continue
        if p.name == "pressure_coefficients":
            values[p.name] = np.array([0.6, 0.5, -1.5]) * rng.uniform(0.9, 1.1, 3)
            continue
        lo, hi = RANGES[p.name]
        assert p.low <= lo and hi <= p.high, p.name
        values[p.name] = rng.uniform(lo, hi, N if p.per_segment else None)
    values["momentum_coefficient"] = rng.uniform(*RANGES["momentum_coefficient"], N)
    if not follow:
        values["fan_pressure_rise"] = rng.uniform(*RANGES["fan_pressure_rise"], N)
    return values


def _options(duct_model, fan_model, compressible, follow, aircraft=False):
    return dict(num_nodes=N, duct_model=duct_model, fan_model=fan_model, fans=FANS,
                stations=STATIONS, schedule=_schedule(duct_model, compressible),
                compressible=compressible, blowing=BLOWING, follow_requirement=follow,
                aircraft=aircraft)


def _problem(fused, combo, values):
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("wing", BlownWingGroup(fused=fused, **_options(*combo)),
                             promotes=["*"])
    prob.setup()
    for name, value in values.items():
        prob.set_val(name, value)
    prob.run_model()
    return prob


def _outputs(prob):
    return {meta["prom_name"]: prob.get_val(meta["prom_name"])
            for _, meta in prob.model.list_outputs(out_stream=None, prom_name=True)}


def _close(actual, desired, what, rtol=1e-9, scale=0.0):
    """Elementwise relative agreement; entries that are zero (or nearly) in one of them
    compare against rtol times ``scale`` (default 1e-3 of the larger array's largest entry)."""
    actual, desired = np.asarray(actual, float), np.asarray(desired, float)
    assert actual.shape == desired.shape, f"{what}: shape {actual.shape} vs {desired.shape}"
    scale = max(scale, 1e-3 * np.nanmax(np.abs(desired), initial=0.0),
                1e-3 * np.nanmax(np.abs(actual), initial=0.0))
    np.testing.assert_allclose(actual, desired, rtol=rtol, atol=rtol * scale, err_msg=what)


@pytest.fixture(scope="module", params=COMBOS, ids=IDS)
def pair(request):
    """(combo, values, per-discipline problem, fused problem), run. The segment without
    blowing has no jet (C_mu = 0), as the cases' start points have: there the map fan has no
    speed when it follows the (negative) requirement, and the power must not care."""
    combo = request.param
    values = _values(combo[0], combo[1], combo[3], aircraft=combo[4])
    values["momentum_coefficient"][~np.array(BLOWING)] = 0.0
    return combo, values, _problem(False, combo, values), _problem(True, combo, values)


def test_fused_has_every_output_with_the_same_values(pair):
    combo, values, group, fused = pair
    assert isinstance(fused.model.wing.chain, ChainComp)
    ref, out = _outputs(group), _outputs(fused)
    missing = set(ref) - set(out)
    assert not missing, f"fused group lacks {sorted(missing)}"
    if combo[3]:
        assert "fan_pressure_rise" not in out
    for name, value in ref.items():
        _close(out[name], value, name)
    # the random point is a working point of every model where the fan runs
    blow = np.array(BLOWING)
    assert np.all(ref["required_pressure_rise"][blow] > 0)
    assert np.all(ref["fan_shaft_power"][blow] > 0)
    assert np.all(ref["fan_shaft_power"][~blow] == 0)
    if combo[1] == "map":
        assert np.all(np.isfinite(ref["fan_speed"][blow]))
    assert np.all(np.isfinite(out["net_power_saving"]))


def test_fused_inputs_follow_the_declarations(pair):
    combo, _, group, fused = pair
    ins = {meta["prom_name"]: meta["units"]
           for _, meta in fused.model.list_inputs(out_stream=None, prom_name=True, units=True)}
    declared = {p.name: p.unit for p in registry.chain_parameters(combo[0], combo[1],
                                                                  aircraft=combo[4])}
    extra = {"momentum_coefficient": None}
    if not combo[3]:
        extra["fan_pressure_rise"] = "Pa"
    assert ins == {**declared, **extra}
    assert ref_inputs(group) == set(ins) - set(FUSED_ONLY)


def ref_inputs(prob):
    """Promoted inputs that no output feeds: the model's own inputs (their source is one of
    OpenMDAO's automatic independent variables)."""
    sources = prob.model._conn_global_abs_in2out
    return {m["prom_name"] for path, m in prob.model.list_inputs(out_stream=None, prom_name=True)
            if sources[path].startswith("_auto_ivc.")}


OF = ("net_power_saving", "mission_energy_saving", "energy_saving", "required_pressure_rise",
      "fan_shaft_power", "jet_mach", "slot_height", "section_drag", "drag_saving",
      "jet_loss_factor", "fan_speed", "flow_coefficient", "tip_mach", "fan_efficiency",
      "diffusion_half_angle", "span_wall_half_angle", "thickness_wall_half_angle",
      "station_area", "lift_coefficient", "main_thrust",
      "main_thrust_clean", "clean_source_energy", "mission_clean_energy")
WRT = ("slot_ratio", "momentum_coefficient", "fan_pressure_rise", "altitude", "speed",
       "duration", "chord", "blown_span", "freestream_assist", "drag_clean", "drag_per_momentum",
       "motor_efficiency", "chain_efficiency", "jet_loss_factor", "fan_rated_efficiency",
       "fan_diameter", "transition_length", "slot_exponent", "suction_ratio", "roughness",
       "bend_loss", "extra_loss", "pressure_coefficients", "peak_efficiency",
       "efficiency_falloff", "aircraft_mass", "wing_area", "zero_lift_drag", "aspect_ratio",
       "span_efficiency", "climb_rate")


def test_same_total_derivatives(pair):
    combo, _, group, fused = pair
    outs, ins = _outputs(group), ref_inputs(group)
    of = [k for k in OF if k in outs]
    wrt = [k for k in WRT if k in ins]
    assert "net_power_saving" in of and "slot_ratio" in wrt
    ref = group.compute_totals(of=of, wrt=wrt)
    tot = fused.compute_totals(of=of, wrt=wrt)
    assert set(ref) == set(tot)
    for of_ in ("net_power_saving", "mission_energy_saving", "required_pressure_rise"):
        for wrt_ in wrt:
            assert np.all(np.isfinite(tot[of_, wrt_])), (of_, wrt_)
    for (of_, wrt_), value in ref.items():       # every pair, not only the first
        # a pair that is zero analytically (e.g. the map's flow coefficient against altitude
        # when the fan follows the requirement) holds round-off: compare it against the
        # derivative's natural size, |output| / |input|
        natural = (np.nanmax(np.abs(group.get_val(of_)))
                   / max(np.abs(group.get_val(wrt_)).max(), 1e-300))
        # rows of an undefined value (the map fan's speed where the jet is off and the fan
        # follows a negative requirement) have undefined derivatives: compared elsewhere
        rows = np.isfinite(group.get_val(of_))
        _close(tot[of_, wrt_][rows], value[rows], f"d {of_} / d {wrt_}", scale=1e-3 * natural)
    for key in (("net_power_saving", "slot_ratio"), ("net_power_saving", "momentum_coefficient"),
                ("mission_energy_saving", "slot_ratio"), ("required_pressure_rise", "altitude")):
        assert np.any(ref[key] != 0), key
    # and no dependence that is not there: the fan's shaft power is not the motor's business
    for totals in (ref, tot):
        assert not np.any(totals["fan_shaft_power", "motor_efficiency"])
    if combo[4]:
        for key in (("main_thrust", "momentum_coefficient"), ("main_thrust", "aircraft_mass"),
                    ("mission_clean_energy", "climb_rate"), ("lift_coefficient", "altitude"),
                    ("mission_clean_energy", "span_efficiency")):
            assert np.any(ref[key] != 0), key
        # the clean aircraft does not see the blowing
        assert not np.any(tot["mission_clean_energy", "momentum_coefficient"])


def test_numpy_chain_equals_the_group(pair):
    combo, values, group, _ = pair
    opts = chain.ChainOptions(**{k: v for k, v in _options(*combo).items()
                                 if k in chain.ChainOptions.__dataclass_fields__})
    out = chain.evaluate(values, opts, blowing=BLOWING)
    ref = _outputs(group)
    shared = [k for k in out if k in ref]
    assert {"net_power_saving", "required_pressure_rise", "fan_shaft_power",
            "energy_saving"} <= set(shared)
    for name in shared:
        _close(np.broadcast_to(out[name], ref[name].shape), ref[name], name)
    # values do not depend on whether derivatives are asked for
    again, partials = chain.evaluate(values, opts, blowing=BLOWING, derivatives=True)
    for name, value in out.items():
        np.testing.assert_array_equal(again[name], value, err_msg=name)
    assert "ram_driven" not in partials
    if "fan_pressure_rise" in values:
        # the rise a node takes is the input where its fan runs, 0 where it does not
        np.testing.assert_array_equal(partials["fan_pressure_rise"]["fan_pressure_rise"],
                                      np.asarray(BLOWING, float))


@pytest.mark.parametrize("combo", COMBOS, ids=IDS)
def test_fused_partials_against_finite_differences(combo):
    values = _values(combo[0], combo[1], combo[3], seed=7, aircraft=combo[4])
    if combo[4]:    # rates of climb away from zero: a relative step on w ~ 0 is all round-off
        values["climb_rate"] = np.array([1.5, -1.2, 2.0, -0.9, 2.5])
    assert_partials(ChainComp(**_options(*combo)), values)


@pytest.mark.parametrize("duct_model, fan_model", [("lumped", "constant"), ("geometric", "map")])
def test_tangents_on_broadcast_samples(duct_model, fan_model):
    """Elementwise tangents on the studies' shapes: samples (S, 1) of a loss constant against
    segments (3,), checked by central differences sample by sample."""
    values = _values(duct_model, fan_model, follow=True, seed=3)
    values = {k: (v[:3] if np.ndim(v) and np.size(v) == N else v) for k, v in values.items()}
    name = "jet_loss_factor" if duct_model == "lumped" else "extra_loss"
    samples = values[name] * np.array([[0.9], [1.0], [1.2], [1.5]])
    values[name] = samples
    opts = chain.ChainOptions(duct_model=duct_model, fan_model=fan_model, fans=FANS,
                              stations=STATIONS)
    out, d = chain.evaluate(values, opts, derivatives=True)
    assert out["net_power_saving"].shape == (4, 3)
    for of in ("net_power_saving", "required_pressure_rise", "energy_saving"):
        h = 1e-6 * np.abs(samples)
        up = chain.evaluate(dict(values, **{name: samples + h}), opts)[of]
        down = chain.evaluate(dict(values, **{name: samples - h}), opts)[of]
        _close(d[of][name], (up - down) / (2 * h), f"d {of} / d {name}", rtol=1e-6)
    for of in ("net_power_saving", "fan_speed"):
        t = d.get(of, {}).get("speed")
        if t is None:
            continue
        h = 1e-6 * values["speed"]
        up = chain.evaluate(dict(values, speed=values["speed"] + h), opts)[of]
        down = chain.evaluate(dict(values, speed=values["speed"] - h), opts)[of]
        _close(t, (up - down) / (2 * h), f"d {of} / d speed", rtol=1e-6)


def test_defaults_come_from_the_declarations():
    """An optional parameter left out takes its declared default (mdao.parameters)."""
    values = _values("geometric", "constant", follow=True)
    opts = chain.ChainOptions(duct_model="geometric", fans=FANS, stations=STATIONS)
    full = chain.evaluate(values, opts)["net_power_saving"]
    for name in ("suction_inlet_loss", "roughness", "bend_loss", "extra_loss", "slot_exponent",
                 "drag_quadratic", "slot_drag", "lift_per_momentum"):
        default = registry.BY_NAME[name].default
        assert isinstance(default, float), name
        short = {k: v for k, v in values.items() if k != name}
        left_out = chain.evaluate(short, opts)
        given = chain.evaluate(dict(short, **{name: default}), opts)
        for key, value in given.items():
            np.testing.assert_array_equal(left_out[key], value, err_msg=f"{name}: {key}")
        if name != "lift_per_momentum":     # it moves the lift only
            assert not np.array_equal(left_out["net_power_saving"], full), name
    assert not hasattr(chain, "DEFAULTS")


def test_aircraft_component_partials_against_finite_differences():
    """The per-discipline AircraftComp's sparse analytic partials against finite differences."""
    from mdao.components.aircraft import AircraftComp

    rng = np.random.default_rng(11)
    values = {k: rng.uniform(*RANGES[k]) for k in ("aircraft_mass", "wing_area",
                                                   "zero_lift_drag", "aspect_ratio",
                                                   "span_efficiency", "chain_efficiency")}
    values.update({k: rng.uniform(*RANGES[k], N) for k in ("speed", "duration")})
    values["climb_rate"] = np.array([1.5, -1.2, 2.0, -0.9, 2.5])
    values["dynamic_pressure"] = rng.uniform(300.0, 2500.0, N)
    values["drag_saving"] = rng.uniform(-2.0, 5.0, N)
    assert_partials(AircraftComp(num_nodes=N), values)


@pytest.mark.parametrize("name", ["survey-drone", "coastal-patrol", "levee-inspector",
                                  "island-shuttle"])
def test_fused_component_in_strips_equals_one_evaluation(cases_dir, name):
    """Past one strip of nodes (ChainComp evaluates long vectors strip by strip) every output
    and the mission sums equal one evaluation of the whole vector."""
    from mdao.case import load_case
    from mdao.system import chain_options, chain_parameters, group_options, start_point
    case = load_case(cases_dir / f"{name}.toml")
    n = 40001                                    # three strips, the last one short
    segments = len(case.segments)
    pick = np.arange(n) % segments
    params = {}
    for key, value in chain_parameters(case).items():
        value = np.asarray(value, float)
        per_node = registry.BY_NAME[key].per_segment if key in registry.BY_NAME else True
        params[key] = value[pick] if per_node and value.shape == (segments,) else value
    start = start_point(case)
    rng = np.random.default_rng(3)
    params["momentum_coefficient"] = start.momentum_coefficient[pick] * rng.uniform(0.9, 1.1, n)
    params["fan_pressure_rise"] = start.fan_pressure_rise[pick]
    if start.rated_shaft_power is not None:
        params["rated_shaft_power"] = np.asarray(start.rated_shaft_power)
    params["slot_ratio"] = np.asarray(start.slot_ratio)
    opts = dict(group_options(case), num_nodes=n)
    opts["blowing"] = list(np.asarray(case.blowing)[pick])
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("wing", BlownWingGroup(**opts), promotes=["*"])
    prob.setup()
    for key, value in params.items():
        prob.set_val(key, value)
    prob.run_model()
    comp = prob.model.wing.chain
    inputs = {k: np.array(v) for k, v in comp._params(comp._inputs).items()}   # as set above
    np.testing.assert_array_equal(inputs["momentum_coefficient"], params["momentum_coefficient"])
    whole = chain.evaluate(inputs, chain_options(case), blowing=np.asarray(opts["blowing"]))
    assert len(comp._chain_outputs) > 10
    for out in comp._chain_outputs:
        np.testing.assert_allclose(prob.get_val(out).ravel(), np.ravel(whole[out]),
                                   rtol=1e-13, atol=0, err_msg=out)
    assert prob.get_val("mission_energy_saving")[0] == pytest.approx(
        np.sum(whole["energy_saving"]), rel=1e-12)


@pytest.mark.parametrize("fused", [True, False])
def test_required_rise_derivative_is_finite_where_the_jet_stops(fused):
    """At C_mu = 0 the jet velocity's derivative is infinite but the required rise is linear in
    the jet's head q C_mu / (2 r_s): d(dp_req)/dC_mu = K_j q / (2 r_s), by hand."""
    n = 3
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("wing", BlownWingGroup(num_nodes=n, fused=fused, examples=True,
                                                    follow_requirement=True), promotes=["*"])
    prob.setup()
    prob.set_val("momentum_coefficient", [0.0, 0.02, 0.05])
    prob.set_val("altitude", [0.0, 500.0, 1000.0])
    prob.set_val("speed", [20.0, 30.0, 40.0])
    prob.set_val("slot_ratio", 0.012)
    prob.set_val("jet_loss_factor", 1.3)
    prob.run_model()
    total = prob.compute_totals(of=["required_pressure_rise"], wrt=["momentum_coefficient"])
    d = total["required_pressure_rise", "momentum_coefficient"]
    q = prob.get_val("dynamic_pressure")
    np.testing.assert_allclose(np.diag(d), 1.3 * q / (2 * 0.012), rtol=1e-12)
