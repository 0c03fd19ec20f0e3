"""Jet kinematics, lumped duct, segment power: values by hand and partials."""
import numpy as np
import pytest

from mdao.components.duct import DuctLossComp
from mdao.components.jet import JetComp
from mdao.components.power import SegmentPowerComp
from mdao.physics import duct, jet, power
from partials_check import assert_partials

RNG = np.random.default_rng(7)


def test_momentum_coefficient_round_trip():
    """C_mu = m_dot V_j / (q S) recovered from the kinematics (definition: Englar 2001, from memory;
    docs/theory.md "Jet kinematics")."""
    c = RNG.uniform(0.005, 0.2, 50)
    s = jet.kinematics(c, 0.012, 35.0, 1.1, 0.6, 2.5, 330.0)
    back = s.mass_flow * s.jet_velocity / (s.dynamic_pressure * 0.6 * 2.5)
    np.testing.assert_allclose(back, c, rtol=1e-14)
    np.testing.assert_allclose(s.volume_flow, s.slot_height * 2.5 * s.jet_velocity, rtol=1e-14)


def test_lumped_reduction_matches_dimensional_power():
    """Q dP_req / (rho V^3 S / 2) = K1 C^1.5 - K2 C^0.5 (docs/theory.md, "Net power")."""
    c = RNG.uniform(0.01, 0.2, 40)
    r, kj, ki, rho, v, ch, b = 0.011, 1.27, 0.93, 0.9, 52.0, 0.45, 3.0
    s = jet.kinematics(c, r, v, rho, ch, b, 330.0)
    dp = duct.required_pressure_rise(kj, ki, rho, s.jet_velocity, s.dynamic_pressure)
    k1, k2 = duct.lumped_coefficients(kj, ki, r)
    np.testing.assert_allclose(s.volume_flow * dp / (0.5 * rho * v ** 3 * ch * b),
                               k1 * c ** 1.5 - k2 * c ** 0.5, rtol=1e-12, atol=1e-15)


def test_lumped_optimum_is_stationary_and_break_even_zeroes_net():
    k1, k2, k3, beta, eff = 2.1, 0.01, 0.025, -1.7, 0.6
    c = power.lumped_optimum(k1, k2, beta, eff)
    h = 1e-6
    f = lambda x: power.lumped_net_saving(x, k1, k2, k3, beta, eff)
    assert abs((f(c + h) - f(c - h)) / (2 * h)) < 1e-7
    grid = np.linspace(0.03, 0.4, 200001)
    for lo in (0.03, 0.002):  # the range's end binds; then the stationary point does
        grid = np.linspace(lo, 0.4, 400001)
        be = power.break_even_lumped(k1, k2, k3, beta, lo, 0.4)
        best = power.lumped_net_saving(grid, k1, k2, k3, beta, be).max()
        assert abs(best) < 1e-9
        assert power.lumped_net_saving(grid, k1, k2, k3, beta, 1.01 * be).max() > 0
        assert power.lumped_net_saving(grid, k1, k2, k3, beta, 0.99 * be).max() < 0


def test_ram_driven_flag():
    assert duct.ram_driven(duct.required_pressure_rise(1.2, 1.0, 1.2, 10.0, 600.0))


def test_jet_partials():
    n = 5
    assert_partials(JetComp(num_nodes=n), {
        "momentum_coefficient": RNG.uniform(0.01, 0.2, n), "speed": RNG.uniform(20, 80, n),
        "density": RNG.uniform(0.4, 1.2, n), "speed_of_sound": RNG.uniform(295, 340, n),
        "slot_ratio": 0.013, "chord": 0.47, "blown_span": 2.2})


def test_duct_lumped_partials():
    n = 5
    cmu = RNG.uniform(0.01, 0.1, n)
    cmu[0] = 0.0      # the required rise's derivative stays finite where the jet stops
    assert_partials(DuctLossComp(num_nodes=n), {
        "momentum_coefficient": cmu, "slot_ratio": 0.012,
        "dynamic_pressure": RNG.uniform(200, 3000, n), "jet_loss_factor": 1.25,
        "freestream_assist": 0.9})


def test_segment_power_partials():
    n = 5
    assert_partials(SegmentPowerComp(num_nodes=n, blowing=[True, False, True, True, False]), {
        "drag_saving": RNG.uniform(-5, 20, n), "speed": RNG.uniform(20, 80, n),
        "fan_shaft_power": RNG.uniform(10, 500, n), "duration": RNG.uniform(100, 5000, n),
        "chain_efficiency": 0.72, "motor_efficiency": 0.91})


@pytest.mark.parametrize("comp", [JetComp, DuctLossComp, SegmentPowerComp])
def test_sets_up_alone_with_defaults(comp):
    import openmdao.api as om
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("c", comp())
    prob.setup()
    prob.run_model()


def _stations(schedule="monotone-area", count=9):
    from mdao.physics import transition
    return transition.stations(0.09, 0.6, 0.006, 0.35, 6.0, schedule=schedule, count=count)


def test_geometric_loss_factor_components():
    """K_j = 1 + sum of losses: each term checked by hand (Crane TP-410, Churchill 1977)."""
    from mdao.physics import friction, losses
    st = _stations()
    q_f, rho, mu = np.array([0.05]), np.array([1.1]), np.array([1.75e-5])
    kj = duct.geometric_jet_loss_factor(0.012, 0.03, 0.5, 0.3, 0.04, 2e-6, q_f, rho, mu,
                              st.position, st.area, st.perimeter)
    a0, a1, length = st.area[0], st.area[-1], st.position[-1]
    angle = 2 * np.arctan(abs(np.sqrt(a1 / np.pi) - np.sqrt(a0 / np.pi)) / length)
    k_tr = losses.gradual_contraction(angle, a1 / a0)
    re = 4 * rho[0] * q_f[0] / (st.perimeter * mu[0])
    f = friction.churchill(re, 2e-6 / st.hydraulic_diameter)
    k_f = np.trapezoid(f / st.hydraulic_diameter * (a1 / st.area) ** 2, st.position)
    expected = 1 + 0.5 * (0.012 / 0.03) ** 2 + 0.3 * (a1 / a0) ** 2 + k_tr + k_f + 0.04
    np.testing.assert_allclose(kj, expected, rtol=1e-12)


@pytest.mark.parametrize("schedule", ["monotone-area", "linear"])
def test_duct_geometric_partials(schedule):
    n, m = 5, 9
    st = _stations(schedule, m)
    assert_partials(DuctLossComp(num_nodes=n, duct_model="geometric", fans=3, stations=m), {
        "density": RNG.uniform(0.4, 1.2, n), "momentum_coefficient": RNG.uniform(0.01, 0.1, n),
        "dynamic_pressure": RNG.uniform(200, 3000, n), "freestream_assist": 0.9,
        "volume_flow": RNG.uniform(0.02, 0.3, n), "viscosity": RNG.uniform(1.4e-5, 1.8e-5, n),
        "slot_ratio": 0.012, "suction_ratio": 0.025, "suction_inlet_loss": 0.6,
        "bend_loss": 0.25, "extra_loss": 0.05, "roughness": 3e-6,
        "station_position": st.position, "station_area": st.area,
        "station_perimeter": st.perimeter})
