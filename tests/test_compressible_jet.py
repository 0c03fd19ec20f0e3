"""The compressible jet (``fan.compressible = true``): its head from the isentropic pressure ratio
at the slot, its temperature after the fan, checked against an independent library and the
isentropic series, and through the chain.

Reference library: fluids (Bell, C., fluids: fluid dynamics component of Chemical Engineering
Design Library, https://github.com/CalebBell/fluids), ``fluids.compressible``:
``isentropic_T_rise_compression`` and ``P_stagnation``; the series p0 - p = q (1 + M^2/4 +
(2 - gamma) M^4/24 + ...) from NACA Report 1135 (1953) (from memory).
"""
import copy
from pathlib import Path

import fluids.compressible as fc
import numpy as np
import pytest

from mdao.physics import chain, jet
from mdao.physics.atmosphere import CP, GAMMA, GAS_CONSTANT, isa


@pytest.mark.parametrize("cmu, eta", [(0.02, 0.7), (0.08, 0.55), (0.15, 1.0)])
def test_against_fluids_and_the_energy_equation(cmu, eta):
    atm = isa(1500.0)
    r, v, c, b = 0.006, 55.0, 0.5, 2.0
    j = jet.compressible_kinematics(cmu, r, v, atm.density, atm.pressure, atm.temperature, c, b,
                                    eta)
    p, t = float(atm.pressure), float(atm.temperature)
    p0 = p + float(j.jet_head)
    t0 = fc.isentropic_T_rise_compression(t, p, p0, GAMMA, eta)   # air after the fan
    tj = float(j.jet_temperature)
    vj = float(j.state.jet_velocity)
    # the jet's total pressure is isentropic between its static and total temperatures
    assert fc.P_stagnation(p, tj, t0, GAMMA) == pytest.approx(p0, rel=1e-12)
    # energy: V_j^2 / 2 = c_p (T_0j - T_j)
    assert 0.5 * vj ** 2 == pytest.approx(CP * (t0 - tj), rel=1e-10)
    # momentum: m V_j = C_mu q S, with m = rho_j A_j V_j at the freestream static pressure
    q = 0.5 * float(atm.density) * v ** 2
    rho_j = p / (GAS_CONSTANT * tj)
    mdot = float(j.state.mass_flow)
    assert mdot * vj == pytest.approx(cmu * q * c * b, rel=1e-12)
    assert mdot == pytest.approx(rho_j * r * c * b * vj, rel=1e-12)
    assert float(j.state.jet_mach) == pytest.approx(vj / np.sqrt(GAMMA * GAS_CONSTANT * tj),
                                                    rel=1e-12)


@pytest.mark.parametrize("mach", [0.2, 0.35, 0.5])
def test_head_over_dynamic_pressure_follows_the_isentropic_series(mach):
    p = 101325.0
    rho_v2 = GAMMA * p * mach ** 2
    q, r = 980.0, 0.01
    j = jet.compressible_kinematics(rho_v2 * r / q, r, 40.0, 1.225, p, 288.15, 0.5, 2.0, 1.0)
    ratio = float(j.jet_head) / (0.5 * rho_v2)
    series = 1 + mach ** 2 / 4 + (2 - GAMMA) * mach ** 4 / 24
    assert ratio == pytest.approx(series, abs=2e-4 * mach ** 6 / 0.5 ** 6 + 1e-7)
    assert ratio > 1.0


@pytest.mark.parametrize("fan_model", ["constant", "map"])
def test_fused_partials_with_the_compressible_jet(fan_model):
    from mdao.components.chain import ChainComp
    from partials_check import assert_partials
    from partials_check import chain_inputs
    n = 4
    inputs = chain_inputs(9, speed=(40.0, 90.0), momentum=(0.03, 0.12), rise=(2000.0, 9000.0),
                          altitude=(0.0, 6000.0), slot_ratio=0.006, chord=0.5, blown_span=2.0,
                          drop=("fan_rated_efficiency",))
    if fan_model == "constant":
        inputs["fan_rated_efficiency"] = 0.68
    else:
        inputs.update(fan_diameter=0.09, pressure_coefficients=[0.7, 0.4, -1.6],
                      peak_efficiency=0.74, peak_flow_coefficient=0.6, efficiency_falloff=0.9)
    comp = ChainComp(num_nodes=n, examples=True, fan_model=fan_model, compressible=True,
                     compressible_jet=True)
    prob = assert_partials(comp, inputs)
    assert np.all(prob.get_val("jet_head") > 0.5 * prob.get_val("density")
                  * prob.get_val("jet_velocity") ** 2 * 0.99)


def test_case_compressible_sets_the_jet_and_the_fan(cases_dir):
    """``fan.compressible = true``: the chain takes the compressible jet; at jet Mach 0.35 the
    required pressure rise is larger than the incompressible one by about K_j q_j M^2/4."""
    import tomllib
    from mdao.case import parse_case
    from mdao.system import BlownWingGroup, chain_options, chain_parameters
    raw = tomllib.loads((cases_dir / "survey-drone.toml").read_text())
    raw["fan"]["compressible"] = True
    case = parse_case(copy.deepcopy(raw), base=cases_dir)
    opts = chain_options(case)
    assert opts.compressible_jet and opts.compressible
    params = chain_parameters(case)
    # C_mu for jet Mach 0.35 in each segment: rho V_j^2 = gamma p M^2 = C_mu q / r_s
    atm = isa(params["altitude"])
    q, p = 0.5 * atm.density * params["speed"] ** 2, atm.pressure
    cmu = GAMMA * p * 0.35 ** 2 * case.slot["ratio"] / q
    inc = chain.evaluate(dict(params, momentum_coefficient=cmu),
                         chain.ChainOptions(**{**opts.__dict__, "compressible_jet": False}))
    com = chain.evaluate(dict(params, momentum_coefficient=cmu), opts)
    np.testing.assert_allclose(com["jet_mach"], 0.35, rtol=1e-12)
    kj = case.duct["jet_loss_factor"]
    extra = com["required_pressure_rise"] - inc["required_pressure_rise"]
    np.testing.assert_allclose(extra, kj * 0.5 * GAMMA * p * 0.35 ** 2 * (0.35 ** 2 / 4), rtol=0.02)
    import openmdao.api as om
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("w", BlownWingGroup(fused=False, compressible_jet=True))
    with pytest.raises(ValueError, match="fused chain"):
        prob.setup()
