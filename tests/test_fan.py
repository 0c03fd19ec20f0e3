"""Fan physics (mdao.physics.fan) and FanComp: reference values, fits, derivatives, partials."""
import numpy as np
import openmdao.api as om
import pytest
from scipy.optimize import brentq

import fluids.compressible
import mpmath

from mdao.physics import fan
from mdao.components.fan import FanComp
from partials_check import assert_partials

RNG_SEED = 20240611


def central_fd(func, args, name, rel=1e-6):
    """Central difference of func(**args) with respect to args[name] (elementwise)."""
    x = np.asarray(args[name], float)
    h = rel * np.maximum(np.abs(x), 1e-3)
    up, dn = dict(args), dict(args)
    up[name], dn[name] = x + h, x - h
    return (func(**up) - func(**dn)) / (2 * h)


def assert_derivatives(func, args, keys=None, rtol=1e-6):
    value, derivs = func(**args, derivatives=True)
    assert np.allclose(value, func(**args), rtol=0, atol=0, equal_nan=True)
    for name in keys or derivs:
        fd = central_fd(func, args, name)
        scale = np.max(np.abs(fd))
        assert np.max(np.abs(derivs[name] - fd)) <= rtol * scale + 1e-12, name


# --- Fan coefficients (Dixon & Hall 2014): worked numbers --------------------------------------

def test_worked_numbers():
    """Definitions of Dixon & Hall (2014), worked by hand: D 0.1 m, 20 000 rpm, Q 0.1 m3/s,
    dp 2000 Pa, rho 1.225, eta 0.8 -> phi 0.30000, psi 1.46939, lambda 0.55102, P 250 W."""
    n, d, q, dp, rho, eta = 20000 / 60, 0.1, 0.1, 2000.0, 1.225, 0.8
    phi = fan.flow_coefficient_of(q, n, d)
    psi = fan.pressure_coefficient(dp, rho, n, d)
    power = fan.shaft_power(q, dp, eta)
    lam = fan.power_coefficient(power, rho, n, d)
    assert abs(phi - 0.30000) < 5e-6
    assert abs(psi - 1.46939) < 5e-6
    assert abs(lam - 0.55102) < 5e-6
    assert abs(power - 250.0) < 5e-10
    assert phi * psi / lam == pytest.approx(eta, rel=1e-14)


def test_fan_curve_meets_system():
    """Fan curve dp = 1000 - 2e4 Q^2 against system 3e4 Q^2 meets at
    Q = sqrt(1000 / 5e4) = 0.141421 m3/s, dp = 600 Pa (by hand). Route: the dimensional curve is
    written as a characteristic psi(phi) at a chosen (rho, D, N0); the operating flow is where
    speed() for the system's pressure rise equals N0."""
    p0, b, c, k_sys = 1000.0, 0.0, -2e4, 3e4
    rho, d, n0 = 1.2, 0.1, 120.0
    # dp = rho N^2 D^2 (c0 + c1 phi + c2 phi^2)  <=>  p0 + b Q + c Q^2 at N = N0
    coef = (p0 / (rho * n0**2 * d**2), b * d / (rho * n0), c * d**4 / rho)
    q = brentq(lambda q: fan.shaft_speed(q, k_sys * q**2, rho, d, coef) - n0, 1e-4, 0.2, xtol=1e-14)
    dp = k_sys * q**2
    assert abs(q - 0.141421) < 5e-7
    assert abs(dp - 600.0) < 1e-6
    phi = fan.flow_coefficient_of(q, n0, d)
    assert fan.characteristic(phi, coef) * rho * n0**2 * d**2 == pytest.approx(dp, rel=1e-12)


# --- Compression power (isentropic work, Dixon & Hall 2014) ------------------------------------

@pytest.mark.parametrize("dp, ratio", [(200.0, 0.999296), (1000.0, 0.996495),
                                       (5000.0, 0.982857), (20000.0, 0.936527)])
def test_compression_power_ratio(dp, ratio):
    """Isentropic compression work (Dixon & Hall 2014): isentropic / (Q dp) at p 101325 Pa,
    T 288.15 K, gamma 1.4, cp 1004.69, to the printed digits; cross-checked with
    fluids.compressible.isentropic_work_compression (J/mol, converted with the molar mass that
    makes R = cp (gamma-1)/gamma)."""
    p, t, gamma, cp = 101325.0, 288.15, 1.4, 1004.69
    r_gas = cp * (gamma - 1) / gamma
    rho = p / (r_gas * t)
    q = 0.05
    power = fan.shaft_power_isentropic(rho * q, dp, p, t, 1.0, gamma=gamma, cp=cp)
    assert abs(power / (q * dp) - ratio) <= 5e-7
    molar_mass = 8.31446261815324 / r_gas   # kg/mol
    w_mol = fluids.compressible.isentropic_work_compression(T1=t, k=gamma, P1=p, P2=p + dp, eta=1.0)
    assert power == pytest.approx(rho * q * w_mol / molar_mass, rel=1e-9)


def test_compression_power_small_x_limit():
    """Small-x limit 1 - x/(2 gamma); the next term is (1-k)(2-k) x^2 / 6
    (binomial series). Reference value by mpmath at 40 digits."""
    p, t, gamma, cp = 101325.0, 288.15, 1.4, 1004.685
    k = (gamma - 1) / gamma
    rho = p / (cp * k * t)
    for dp in (1e-3, 1e-1, 10.0):
        x = dp / p
        ratio = fan.shaft_power_isentropic(rho, dp, p, t, 1.0, gamma=gamma, cp=cp) / dp
        assert abs(ratio - (1 - x / (2 * gamma))) <= 0.21 * x**2 + 1e-15
        second = 1 - x / (2 * gamma) + (1 - k) * (2 - k) * x**2 / 6
        assert abs(ratio - second) <= 0.14 * x**3 + 1e-15   # third term 0.138 x^3
        mpmath.mp.dps = 40
        xm = mpmath.mpf(dp) / mpmath.mpf(p)
        km = (mpmath.mpf(gamma) - 1) / mpmath.mpf(gamma)
        exact = float(((1 + xm)**km - 1) / (km * xm))
        assert ratio == pytest.approx(exact, rel=1e-14)


def test_power_zero_when_ram_driven():
    """dp <= 0: no power and no negative power over an efficiency (docs/theory.md, "Duct loss")."""
    dp = np.array([-500.0, 0.0, 500.0])
    p = fan.shaft_power(0.1, dp, 0.7)
    assert p[0] == 0.0 and p[1] == 0.0 and p[2] == pytest.approx(0.1 * 500 / 0.7)
    pc = fan.shaft_power_isentropic(0.12, dp, 101325.0, 288.15, 0.7)
    assert pc[0] == 0.0 and pc[1] == 0.0 and pc[2] > 0
    _, d = fan.shaft_power_isentropic(0.12, dp, 101325.0, 288.15, 0.7, derivatives=True)
    assert all(np.all(v[:2] == 0) for v in d.values())


# --- fan laws --------------------------------------------------------------------------------

def test_fan_laws_round_trip_and_similarity():
    """Fan laws (Dixon and Hall 2014, sec. 1.6): scaling there and back returns the point; the
    coefficients phi, psi, lambda are unchanged by scaling."""
    rng = np.random.default_rng(RNG_SEED)
    q, dp, p = rng.uniform(0.01, 0.2, 6), rng.uniform(200, 3000, 6), rng.uniform(10, 500, 6)
    rn, rd, rr = rng.uniform(0.5, 2, 6), rng.uniform(0.5, 2, 6), rng.uniform(0.3, 1.2, 6)
    s = fan.scale(q, dp, p, rn, rd, rr)
    back = fan.scale(*s, 1 / rn, 1 / rd, 1 / rr)
    for a, b in zip(back, (q, dp, p)):
        assert np.allclose(a, b, rtol=1e-13, atol=0)
    n, d, rho = 300.0, 0.08, 1.225
    assert np.allclose(fan.flow_coefficient_of(s.volume_flow, n * rn, d * rd),
                       fan.flow_coefficient_of(q, n, d), rtol=1e-13)
    assert np.allclose(fan.pressure_coefficient(s.pressure_rise, rho * rr, n * rn, d * rd),
                       fan.pressure_coefficient(dp, rho, n, d), rtol=1e-13)
    assert np.allclose(fan.power_coefficient(s.power, rho * rr, n * rn, d * rd),
                       fan.power_coefficient(p, rho, n, d), rtol=1e-13)


# --- speed from the characteristic -------------------------------------------------------------

def test_speed_satisfies_characteristic_both_branches():
    """N from speed() puts (phi, psi) of the point on the characteristic, for c1 of both signs
    (the two cancellation-free forms of the root), broadcast over points."""
    rng = np.random.default_rng(RNG_SEED)
    q, dp = rng.uniform(0.0, 0.1, 50), rng.uniform(100, 4000, 50)
    rho, d = rng.uniform(0.4, 1.3, 50), 0.08
    for coef in ((0.6, 0.5, -1.5), (0.9, -0.8, -1.0), (0.5, 0.0, -2.0)):
        n = fan.shaft_speed(q, dp, rho, d, coef)
        assert np.all(n > 0)
        psi = fan.pressure_coefficient(dp, rho, n, d)
        phi = fan.flow_coefficient_of(q, n, d)
        assert np.allclose(fan.characteristic(phi, coef), psi, rtol=1e-12, atol=0)


def test_speed_no_cancellation():
    """Large c1 k against a tiny pressure rise: naive (-b + sqrt(b^2 - 4ac)) / 2a loses the
    digits; the stable form keeps them (reference by mpmath at 50 digits)."""
    coef, q, dp, rho, d = (0.6, 50.0, 0.0), 0.1, 1e-3, 1.2, 0.1
    n = float(fan.shaft_speed(q, dp, rho, d, coef))
    mpmath.mp.dps = 50
    a, b = mpmath.mpf(0.6), mpmath.mpf(50.0) * mpmath.mpf(q) / mpmath.mpf(d)**3
    c = -mpmath.mpf(dp) / (mpmath.mpf(rho) * mpmath.mpf(d)**2)
    exact = float((-b + mpmath.sqrt(b * b - 4 * a * c)) / (2 * a))
    assert n == pytest.approx(exact, rel=1e-14)


def test_speed_no_root_is_nan_and_bad_c0_raises():
    # a characteristic rising with phi (c2 > 0) cannot reach a large negative pressure rise at
    # any speed: the discriminant is negative
    n = fan.shaft_speed(0.05, -1e6, 1.2, 0.08, (0.5, -1.0, 2.0))
    assert np.isnan(n)
    with pytest.raises(ValueError, match="coefficients"):
        fan.shaft_speed(0.05, 1000.0, 1.2, 0.08, (0.0, 0.5, -1.5))


def test_speed_derivatives():
    rng = np.random.default_rng(RNG_SEED)
    for coef in ((0.6, 0.5, -1.5), (0.9, -0.8, -1.0)):
        args = dict(volume_flow=rng.uniform(0.01, 0.1, 7), pressure_rise=rng.uniform(300, 3000, 7),
                    density=rng.uniform(0.5, 1.3, 7), diameter=rng.uniform(0.06, 0.12, 7))
        n, d = fan.shaft_speed(**args, coefficients=coef, derivatives=True)
        for name in args:
            fd = central_fd(lambda **kw: fan.shaft_speed(**kw, coefficients=coef), args, name)
            assert np.allclose(d[name], fd, rtol=1e-6, atol=0), name
        for i, key in enumerate(('c0', 'c1', 'c2')):
            h = 1e-5
            up, dn = list(coef), list(coef)
            up[i] += h
            dn[i] -= h
            fd = (fan.shaft_speed(**args, coefficients=up) - fan.shaft_speed(**args, coefficients=dn)) / (2 * h)
            assert np.allclose(d[key], fd, rtol=1e-6, atol=0), key


# --- efficiency, power, tip Mach ----------------------------------------------------------------

def test_efficiency_values_and_derivatives():
    assert fan.map_efficiency(0.3, 0.8, 0.3, 0.8) == pytest.approx(0.8, rel=1e-15)
    # phi = 0 -> peak (1 - falloff)
    assert fan.map_efficiency(0.0, 0.8, 0.3, 0.5) == pytest.approx(0.4, rel=1e-15)
    rng = np.random.default_rng(RNG_SEED)
    args = dict(flow_coefficient=rng.uniform(0.1, 0.5, 6), peak_efficiency=rng.uniform(0.5, 0.9, 6),
                peak_flow_coefficient=rng.uniform(0.2, 0.4, 6),
                efficiency_falloff=rng.uniform(0.2, 1.5, 6))
    assert_derivatives(fan.map_efficiency, args)


def test_power_and_coefficient_derivatives():
    rng = np.random.default_rng(RNG_SEED)
    assert_derivatives(fan.shaft_power, dict(volume_flow=rng.uniform(0.01, 0.2, 5),
                                             pressure_rise=rng.uniform(100, 5000, 5),
                                             efficiency=rng.uniform(0.4, 0.9, 5)))
    assert_derivatives(fan.shaft_power_isentropic,
                       dict(mass_flow=rng.uniform(0.01, 0.2, 5),
                            pressure_rise=rng.uniform(100, 30000, 5),
                            inlet_pressure=rng.uniform(5e4, 1.1e5, 5),
                            inlet_temperature=rng.uniform(216, 300, 5),
                            efficiency=rng.uniform(0.4, 0.9, 5)))
    assert_derivatives(fan.flow_coefficient_of, dict(volume_flow=rng.uniform(0.01, 0.2, 5),
                                                  speed=rng.uniform(100, 600, 5),
                                                  diameter=rng.uniform(0.05, 0.15, 5)))
    assert_derivatives(fan.pressure_coefficient, dict(pressure_rise=rng.uniform(100, 5000, 5),
                                                      density=rng.uniform(0.4, 1.3, 5),
                                                      speed=rng.uniform(100, 600, 5),
                                                      diameter=rng.uniform(0.05, 0.15, 5)))
    assert_derivatives(fan.tip_mach, dict(speed=rng.uniform(100, 600, 5),
                                          diameter=rng.uniform(0.05, 0.15, 5),
                                          speed_of_sound=rng.uniform(295, 341, 5)))


def test_tip_mach_and_margins():
    """Tip speed pi N D (Dixon and Hall 2014, sec. 1.6) over a at sea level (REFERENCES ISA)."""
    assert fan.tip_mach(500.0, 0.1, 340.294) == pytest.approx(np.pi * 50 / 340.294, rel=1e-15)
    m = fan.margins(np.array([400.0, 550.0]), 500.0, np.array([0.15, 0.3]), (0.2, 0.4))
    assert np.allclose(m.speed_margin, [0.2, -0.1])
    assert np.allclose(m.stall_margin, [-0.25, 0.5])
    assert np.allclose(m.choke_margin, [0.625, 0.25])


# --- fitting measured points -------------------------------------------------------------------

def _synthetic_points(coef, peak, phi_pk, falloff, phi, n, rho=1.2, d=0.09):
    q = phi * n * d**3
    dp = fan.characteristic(phi, coef) * rho * n**2 * d**2
    eta = fan.map_efficiency(phi, peak, phi_pk, falloff)
    return q, dp, eta, rho, d


def test_fit_exact_from_noise_free_points():
    coef, peak, phi_pk, falloff = (0.62, 0.45, -1.7), 0.78, 0.28, 0.9
    phi = np.linspace(0.15, 0.4, 9)
    n = np.repeat([250.0, 400.0, 520.0], 3)          # mixed speeds collapse on one map
    q, dp, eta, rho, d = _synthetic_points(coef, peak, phi_pk, falloff, phi, n)
    fm, stats = fan.fit_points(q, dp, n, rho, d, efficiency=eta)
    assert np.allclose(fm.pressure_coefficients, coef, rtol=1e-9, atol=1e-11)
    assert fm.peak_efficiency == pytest.approx(peak, rel=1e-10)
    assert fm.peak_flow_coefficient == pytest.approx(phi_pk, rel=1e-10)
    assert fm.efficiency_falloff == pytest.approx(falloff, rel=1e-9)
    assert fm.flow_coefficient_range == pytest.approx((0.15, 0.4), rel=1e-12)
    assert stats['pressure_r2'] == pytest.approx(1.0, abs=1e-12)
    assert stats['efficiency_r2'] == pytest.approx(1.0, abs=1e-12)
    assert stats['pressure_residual_std'] < 1e-10 and stats['points'] == 9
    # the same from electrical power through a motor of efficiency 0.9
    p_el = q * dp / (eta * 0.9)
    fm2, _ = fan.fit_points(q, dp, n, rho, d, electrical_power=p_el, motor_efficiency=0.9)
    assert fm2.peak_efficiency == pytest.approx(peak, rel=1e-10)
    assert fm2.efficiency_falloff == pytest.approx(falloff, rel=1e-9)


def test_fit_approximate_from_noisy_points():
    """1 % noise on pressure and 0.005 on efficiency, 40 points: the fit lands near the truth
    and its residual std estimates the noise."""
    rng = np.random.default_rng(RNG_SEED)
    coef, peak, phi_pk, falloff = (0.62, 0.45, -1.7), 0.78, 0.28, 0.9
    phi = rng.uniform(0.15, 0.42, 40)
    n = rng.uniform(250, 520, 40)
    q, dp, eta, rho, d = _synthetic_points(coef, peak, phi_pk, falloff, phi, n)
    dp_noisy = dp * (1 + 0.01 * rng.standard_normal(40))
    eta_noisy = eta + 0.005 * rng.standard_normal(40)
    fm, stats = fan.fit_points(q, dp_noisy, n, rho, d, efficiency=eta_noisy)
    psi_true = fan.characteristic(np.linspace(0.15, 0.42, 20), coef)
    psi_fit = fan.characteristic(np.linspace(0.15, 0.42, 20), fm.pressure_coefficients)
    assert np.max(np.abs(psi_fit / psi_true - 1)) < 0.01
    assert abs(fm.peak_efficiency - peak) < 0.005
    assert abs(fm.peak_flow_coefficient - phi_pk) < 0.02
    assert 0.003 < stats['efficiency_residual_std'] < 0.008
    assert stats['pressure_r2'] > 0.8


def test_fit_rejects_bad_input():
    coef = (0.62, 0.45, -1.7)
    phi = np.linspace(0.15, 0.4, 6)
    q, dp, eta, rho, d = _synthetic_points(coef, 0.78, 0.28, 0.9, phi, 400.0)
    with pytest.raises(ValueError, match="volume_flow"):
        fan.fit_points(q[:3], dp[:3], 400.0, rho, d, efficiency=eta[:3])
    with pytest.raises(ValueError, match="pressure_rise"):
        fan.fit_points(q, -dp, 400.0, rho, d, efficiency=eta)
    with pytest.raises(ValueError, match="speed"):
        fan.fit_points(q, dp, 0.0, rho, d, efficiency=eta)
    with pytest.raises(ValueError, match="efficiency, electrical_power"):
        fan.fit_points(q, dp, 400.0, rho, d)
    with pytest.raises(ValueError, match="efficiency, electrical_power"):
        fan.fit_points(q, dp, 400.0, rho, d, efficiency=eta, electrical_power=q * dp / eta)
    with pytest.raises(ValueError, match="density"):
        fan.fit_points(q, dp, 400.0, [1.2, 1.2], d, efficiency=eta)
    with pytest.raises(ValueError, match="opens upward"):
        fan.fit_points(q, dp, 400.0, rho, d, efficiency=0.5 + (phi - 0.28)**2)
    with pytest.raises(ValueError, match="peak"):
        fan.fit_points(q, dp, 400.0, rho, d, efficiency=np.minimum(1.0, 1.3 - 3 * (phi - 0.28)**2))


# --- component ---------------------------------------------------------------------------------

def _inputs(rng, n, model, compressible):
    vals = {'fan_pressure_rise': rng.uniform(400, 3000, n), 'volume_flow': rng.uniform(0.02, 0.1, n),
            'density': rng.uniform(0.5, 1.3, n), 'pressure': rng.uniform(5e4, 1.05e5, n),
            'temperature': rng.uniform(216, 300, n), 'speed_of_sound': rng.uniform(295, 341, n)}
    # the component takes each input only in the modes that use it
    if not compressible:
        del vals['pressure'], vals['temperature']
        if model == 'constant':
            del vals['density']
    if model == 'constant':
        del vals['speed_of_sound']
        vals['fan_rated_efficiency'] = rng.uniform(0.5, 0.85)
    else:
        vals.update(fan_diameter=rng.uniform(0.06, 0.1), peak_efficiency=rng.uniform(0.6, 0.85),
                    pressure_coefficients=[0.6, 0.5, -1.5] + rng.uniform(-0.05, 0.05, 3),
                    peak_flow_coefficient=rng.uniform(0.2, 0.35),
                    efficiency_falloff=rng.uniform(0.4, 1.0))
    return vals


@pytest.mark.parametrize("model", ["constant", "map"])
@pytest.mark.parametrize("compressible", [False, True])
@pytest.mark.parametrize("fans", [1, 3])
def test_component_partials(model, compressible, fans):
    rng = np.random.default_rng(RNG_SEED + fans)
    comp = FanComp(num_nodes=5, fan_model=model, compressible=compressible, fans=fans)
    assert_partials(comp, _inputs(rng, 5, model, compressible))


def _run(comp, vals=None):
    prob = om.Problem(reports=False)
    prob.model.add_subsystem('c', comp, promotes=['*'])
    prob.setup()
    for name, value in (vals or {}).items():
        prob.set_val(name, value)
    prob.run_model()
    return prob


@pytest.mark.parametrize("model", ["constant", "map"])
@pytest.mark.parametrize("compressible", [False, True])
def test_component_matches_physics(model, compressible):
    """Outputs agree with the physics functions evaluated per fan and summed over the fans."""
    rng = np.random.default_rng(RNG_SEED)
    fans = 4
    vals = _inputs(rng, 5, model, compressible)
    prob = _run(FanComp(num_nodes=5, fan_model=model, compressible=compressible, fans=fans), vals)
    q, dp, rho = vals['volume_flow'], vals['fan_pressure_rise'], vals.get('density')
    if model == 'constant':
        eta = vals['fan_rated_efficiency'] * np.ones(5)
    else:
        n = fan.shaft_speed(q / fans, dp, rho, vals['fan_diameter'], vals['pressure_coefficients'])
        phi = fan.flow_coefficient_of(q / fans, n, vals['fan_diameter'])
        eta = fan.map_efficiency(phi, vals['peak_efficiency'], vals['peak_flow_coefficient'],
                             vals['efficiency_falloff'])
        assert np.allclose(prob.get_val('fan_speed'), n, rtol=1e-14)
        assert np.allclose(prob.get_val('flow_coefficient'), phi, rtol=1e-14)
        assert np.allclose(prob.get_val('tip_mach'),
                           fan.tip_mach(n, vals['fan_diameter'], vals['speed_of_sound']), rtol=1e-14)
    if compressible:
        per_fan = fan.shaft_power_isentropic(rho * q / fans, dp, vals['pressure'],
                                             vals['temperature'], eta)
    else:
        per_fan = fan.shaft_power(q / fans, dp, eta)
    assert np.allclose(prob.get_val('fan_efficiency'), eta, rtol=1e-14)
    assert np.allclose(prob.get_val('fan_shaft_power'), fans * per_fan, rtol=1e-13)


@pytest.mark.parametrize("model", ["constant", "map"])
@pytest.mark.parametrize("compressible", [False, True])
def test_component_defaults_set_up_alone(model, compressible):
    prob = _run(FanComp(fan_model=model, compressible=compressible))
    assert np.all(np.isfinite(prob.get_val('fan_shaft_power'))) and prob.get_val('fan_shaft_power')[0] > 0
    if model == 'map':
        assert 0.15 < prob.get_val('flow_coefficient')[0] < 0.35


@pytest.mark.parametrize("compressible", [False, True])
def test_component_ram_driven_map(compressible):
    """dp <= 0 (ram-driven jet): zero shaft power with finite (zero) power partials, even where
    the map has no speed (NaN) for a negative pressure rise."""
    prob = _run(FanComp(num_nodes=3, fan_model='map', compressible=compressible),
                {'fan_pressure_rise': [-200.0, 0.0, 800.0]})
    power = prob.get_val('fan_shaft_power')
    assert power[0] == 0.0 and power[1] == 0.0 and power[2] > 0
    assert np.isnan(prob.get_val('fan_speed')[0])
    totals = prob.compute_totals(['fan_shaft_power'], ['fan_pressure_rise', 'volume_flow',
                                                   'pressure_coefficients'])
    for jac in totals.values():
        assert np.all(np.isfinite(jac)) and np.all(jac[:2] == 0)
