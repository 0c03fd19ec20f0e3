"""Blown-airfoil drag model (mdao.physics.airfoil) and AirfoilComp.

The model is the calibrated reduced-order form of docs/theory.md, section "Airfoil"; the checks
are values worked by hand from that formula, shapes, derivatives and component partials.
"""
import numpy as np
import openmdao.api as om
import pytest

from mdao.physics import airfoil
from mdao.components.airfoil import AirfoilComp
from partials_check import assert_partials

RNG_SEED = 7321

ARGS = ('momentum_coefficient', 'slot_ratio', 'drag_clean', 'slot_drag', 'slot_drag_per_ratio',
        'drag_per_momentum', 'drag_per_momentum_per_ratio', 'drag_quadratic')


def test_values_by_hand():
    # C_D = 0.012 + (0.02 + 0.5*0.015) + (-1.3 + 8*0.015)*0.04 + 2*0.04^2
    #     = 0.012 + 0.0275 - 0.0472 + 0.0032 = -0.0045
    cd = airfoil.drag_coefficient(0.04, 0.015, 0.012, 0.02, 0.5, -1.3, 8.0, 2.0)
    assert cd == pytest.approx(-0.0045, abs=1e-15)
    assert airfoil.slot_drag_at(0.015, 0.02, 0.5) == pytest.approx(0.0275, abs=1e-16)
    assert airfoil.drag_per_momentum_at(0.015, -1.3, 8.0) == pytest.approx(-1.18, abs=1e-15)
    assert airfoil.lift_increment(0.04, 6.0) == pytest.approx(0.24, abs=1e-16)
    # jet off: clean drag plus the slotted-shape penalty, which can exceed the clean drag
    assert airfoil.drag_coefficient(0.0, 0.01, 0.012, 0.02, 0.0, -1.2, 0.0) == pytest.approx(0.032)
    # break-even blowing, linear model: C_mu = (penalty) / (-beta) gives the clean drag back
    cmu = 0.02 / 1.2
    assert airfoil.drag_coefficient(cmu, 0.01, 0.012, 0.02, 0.0, -1.2, 0.0) == pytest.approx(
        0.012, abs=1e-15)


def test_broadcast_shapes():
    cmu = np.linspace(0, 0.05, 4)[:, None]        # (4, 1)
    rs = np.array([0.005, 0.01, 0.02])           # (3,)
    cd, d = airfoil.drag_coefficient(cmu, rs, 0.012, 0.02, 0.3, -1.2, 5.0, 1.0, derivatives=True)
    assert cd.shape == (4, 3)
    assert set(d) == set(ARGS)
    assert all(v.shape == (4, 3) for v in d.values())
    # each entry equals the scalar evaluation
    assert cd[2, 1] == airfoil.drag_coefficient(cmu[2, 0], rs[1], 0.012, 0.02, 0.3, -1.2, 5.0, 1.0)


def test_derivatives_vs_central_fd():
    rng = np.random.default_rng(RNG_SEED)
    args = dict(momentum_coefficient=rng.uniform(0, 0.08, 6), slot_ratio=rng.uniform(0.003, 0.03, 6),
                drag_clean=rng.uniform(0.008, 0.02, 6), slot_drag=rng.uniform(0, 0.05, 6),
                slot_drag_per_ratio=rng.uniform(-1, 1, 6), drag_per_momentum=rng.uniform(-2, -0.5, 6),
                drag_per_momentum_per_ratio=rng.uniform(-10, 10, 6),
                drag_quadratic=rng.uniform(0, 3, 6))
    _, d = airfoil.drag_coefficient(**args, derivatives=True)
    for name in ARGS:
        h = 1e-6 * np.maximum(np.abs(args[name]), 1e-3)
        up, dn = dict(args), dict(args)
        up[name], dn[name] = args[name] + h, args[name] - h
        fd = (airfoil.drag_coefficient(**up) - airfoil.drag_coefficient(**dn)) / (2 * h)
        assert np.allclose(d[name], fd, rtol=1e-7, atol=1e-10), name


def _random_inputs(rng, n):
    return {'momentum_coefficient': rng.uniform(0.0, 0.08, n),
            'dynamic_pressure': rng.uniform(200, 3000, n),
            'slot_ratio': rng.uniform(0.003, 0.03), 'chord': rng.uniform(0.3, 1.5),
            'blown_span': rng.uniform(0.5, 5.0), 'drag_clean': rng.uniform(0.008, 0.02),
            'slot_drag': rng.uniform(0.0, 0.05), 'slot_drag_per_ratio': rng.uniform(0, 1),
            'drag_per_momentum': rng.uniform(-2, -0.5), 'drag_per_momentum_per_ratio': rng.uniform(-10, 10),
            'drag_quadratic': rng.uniform(0, 3), 'lift_per_momentum': rng.uniform(0, 8)}


def test_component_partials():
    assert_partials(AirfoilComp(num_nodes=5), _random_inputs(np.random.default_rng(RNG_SEED), 5))


def test_component_values():
    vals = _random_inputs(np.random.default_rng(RNG_SEED + 1), 5)
    prob = om.Problem(reports=False)
    prob.model.add_subsystem('c', AirfoilComp(num_nodes=5), promotes=['*'])
    prob.setup()
    for k, v in vals.items():
        prob.set_val(k, v)
    prob.run_model()
    cd = airfoil.drag_coefficient(*(vals[k] for k in ARGS))
    area_q = vals['dynamic_pressure'] * vals['chord'] * vals['blown_span']
    assert np.allclose(prob.get_val('drag_coefficient'), cd, rtol=1e-15)
    assert np.allclose(prob.get_val('section_drag'), area_q * cd, rtol=1e-14)
    assert np.allclose(prob.get_val('clean_section_drag'), area_q * vals['drag_clean'], rtol=1e-14)
    assert np.allclose(prob.get_val('drag_saving'), area_q * (vals['drag_clean'] - cd), rtol=1e-12,
                       atol=1e-12)
    assert np.allclose(prob.get_val('lift_increment'),
                       vals['lift_per_momentum'] * vals['momentum_coefficient'], rtol=1e-15)


def test_component_start_values_set_up_alone():
    """Unconnected, the component runs on the declared start values (mdao.parameters): q 1000
    Pa on 0.5 m x 1 m, C_D = 0.012 + 0 (no slot penalty by default) - 1.2*0.03 = -0.024 ->
    drag -12 N, clean 6 N, saving 18 N (worked by hand)."""
    prob = om.Problem(reports=False)
    prob.model.add_subsystem('c', AirfoilComp(), promotes=['*'])
    prob.setup()
    prob.run_model()
    assert prob.get_val('section_drag')[0] == pytest.approx(-12.0, abs=1e-12)
    assert prob.get_val('clean_section_drag')[0] == pytest.approx(6.0, abs=1e-12)
    assert prob.get_val('drag_saving')[0] == pytest.approx(18.0, abs=1e-12)
