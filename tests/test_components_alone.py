"""Every component sets up alone with its default options and input values, runs, and gives
finite outputs; and the group gives the same figures as the direct NumPy chain."""
import importlib

import numpy as np
import openmdao.api as om
import pytest

COMPONENTS = [("atmosphere", "AtmosphereComp"), ("jet", "JetComp"),
              ("transition", "TransitionComp"), ("duct", "DuctLossComp"), ("fan", "FanComp"),
              ("airfoil", "AirfoilComp"), ("power", "SegmentPowerComp")]


@pytest.mark.parametrize("module, name", COMPONENTS)
def test_component_alone_with_defaults(module, name):
    cls = getattr(importlib.import_module(f"mdao.components.{module}"), name)
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("c", cls(), promotes=["*"])
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
    direct = chain.evaluate(chain_parameters(case, momentum_coefficient=cmu, fan_pressure_rise=dp),
                            chain_options(case), blowing=case.blowing)
    for name in ("required_pressure_rise", "jet_velocity", "shaft_power", "drag",
                 "net_power_saving", "energy_saving"):
        np.testing.assert_allclose(prob.get_val(name), direct[name], rtol=1e-12, atol=1e-9)
