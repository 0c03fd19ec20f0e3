"""Every component sets up alone with its default options and input values, runs, and gives
finite outputs; and the group gives the same figures as the direct NumPy chain."""
import importlib

import numpy as np
import openmdao.api as om
import pytest

COMPONENTS = [("atmosphere", "AtmosphereComp"), ("jet", "JetComp"),
              ("transition", "TransitionComp"), ("duct", "DuctLossComp"), ("fan", "FanComp"),
              ("airfoil", "AirfoilComp"), ("power", "SegmentPowerComp"),
              ("mass", "BlowingSystemMassComp"), ("chain", "ChainComp")]


@pytest.mark.parametrize("module, name", COMPONENTS)
def test_component_alone_with_defaults(module, name):
    cls = getattr(importlib.import_module(f"mdao.components.{module}"), name)
    prob = om.Problem(reports=False)
    # the inputs a host must give start unset in these two: their examples stand in
    given = name in ("ChainComp", "BlowingSystemMassComp")
    prob.model.add_subsystem("c", cls(examples=True) if given else cls(), promotes=["*"])
    prob.setup()
    prob.run_model()
    for _, meta in prob.model.list_outputs(out_stream=None):
        assert np.all(np.isfinite(meta["val"]))
    assert isinstance(cls.cite, str) and cls.cite


@pytest.mark.parametrize("path", ["survey-drone.toml", "coastal-patrol.toml"])
def test_group_matches_direct_chain(path, cases_dir):
    """BlownWingGroup (OpenMDAO) and mdao.physics.chain (plain NumPy) agree to round-off."""
    from mdao.case import load_case
    from mdao.physics import chain
    from mdao.system import build_problem, chain_options, chain_parameters
    case = load_case(cases_dir / path)
    prob = build_problem(case, driver=False)
    prob.run_model()
    cmu = prob.get_val("momentum_coefficient")
    dp = prob.get_val("fan_pressure_rise")
    direct = chain.evaluate(chain_parameters(case, momentum_coefficient=cmu, fan_pressure_rise=dp,
                                             slot_ratio=prob.get_val("slot_ratio")),
                            chain_options(case), blowing=case.blowing)
    for name in ("required_pressure_rise", "jet_velocity", "fan_shaft_power", "section_drag",
                 "net_power_saving", "energy_saving"):
        np.testing.assert_allclose(prob.get_val(name), direct[name], rtol=1e-12, atol=1e-9)


RNG = np.random.default_rng(11)


@pytest.mark.parametrize("compressible", [False, True])
@pytest.mark.parametrize("follow", [False, True])
def test_fused_chain_partials(compressible, follow):
    """ChainComp: every partial assembled by the chain rule against finite differences."""
    from mdao.components.chain import ChainComp
    from partials_check import assert_partials
    n = 5
    inputs = {"altitude": RNG.uniform(0, 9000, n), "speed": RNG.uniform(20, 70, n),
              "duration": RNG.uniform(100, 4000, n),
              "momentum_coefficient": RNG.uniform(0.02, 0.15, n), "slot_ratio": 0.013,
              "chord": 0.45, "blown_span": 2.1, "jet_loss_factor": 1.3, "freestream_assist": 0.8,
              "fan_rated_efficiency": 0.66, "drag_per_momentum": -1.7, "slot_drag": 0.015,
              "slot_drag_per_ratio": 0.4, "drag_per_momentum_per_ratio": 3.0,
              "drag_quadratic": 0.5, "lift_per_momentum": 2.0}
    if not follow:
        inputs["fan_pressure_rise"] = RNG.uniform(200, 3000, n)
    assert_partials(ChainComp(num_nodes=n, examples=True, compressible=compressible, follow_requirement=follow,
                              blowing=[True, True, False, True, True]), inputs)


def test_fused_group_matches_per_discipline_group(cases_dir):
    """The fast path gives the same values and total derivatives as one component per
    discipline."""
    from mdao.case import load_case
    from mdao.system import build_problem
    case = load_case(cases_dir / "survey-drone.toml")
    probs = [build_problem(case, fused=f) for f in (False, True)]
    for p in probs:
        p.run_model()
    for name in ("required_pressure_rise", "fan_shaft_power", "section_drag", "net_power_saving",
                 "mission_energy_saving", "jet_mach", "slot_height"):
        np.testing.assert_allclose(probs[1].get_val(name), probs[0].get_val(name), rtol=1e-13)
    totals = [p.compute_totals() for p in probs]
    for key, value in totals[0].items():
        np.testing.assert_allclose(totals[1][key], value, rtol=1e-10, atol=1e-12)
