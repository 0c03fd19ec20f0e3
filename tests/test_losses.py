"""Minor losses against handbook values (Crane TP-410, 2009; Rennels & Hudson, Pipe Flow, 2012)
and fluids.fittings.

Not checked, because the sources differ: SMACNA, HVAC Systems Duct Design (1990), Table 14-12A
gives 0.04-0.05 for a gradual contraction of 15-40 deg and area ratios 2 to 10, where Crane's
formula, which the module follows, gives 0.05-0.25 (the conservative side).
"""
import numpy as np
import pytest
from fluids.fittings import contraction_conical, diffuser_conical, entrance_sharp, exit_normal
from fluids.fittings import bend_rounded as fluids_bend_rounded

from mdao.physics.friction import churchill
from mdao.physics.losses import (EXIT, SHARP_INLET, bend_rounded, gradual_contraction,
                                 gradual_expansion, sudden_expansion)

ANGLES_DEG = [10.0, 30.0, 44.9, 45.1, 60.0]   # fluids switches formula at 45 deg with '<'


def test_inlet_and_exit_against_fluids():
    """Sharp-edged inlet, Crane TP-410 (2009): fluids.fittings.entrance_sharp(method='Crane')
    (Rennels & Hudson's 0.57 is the other published value; the module follows Crane). Free exit,
    Rennels & Hudson, Pipe Flow (2012): fluids.fittings.exit_normal()."""
    assert SHARP_INLET == pytest.approx(entrance_sharp(method="Crane"), rel=1e-15)
    assert EXIT == pytest.approx(exit_normal(), rel=1e-15)


def test_contraction_reference():
    """Crane TP-410 (2009) gradual contraction 0.8 sin(theta/2)(1 - A2/A1): 0.0523 at 10 deg,
    A2/A1 = 0.25."""
    assert round(float(gradual_contraction(np.radians(10.0), 0.25)), 4) == 0.0523


def test_borda_carnot_reference():
    """Borda-Carnot (Rennels & Hudson, Pipe Flow, 2012): (1 - 0.25)^2 = 0.5625 at A1/A2 = 0.25."""
    assert sudden_expansion(0.25) == 0.5625


@pytest.mark.parametrize("angle", ANGLES_DEG)
@pytest.mark.parametrize("diameter_ratio", [0.3, 0.5, 0.9])
def test_contraction_against_fluids(angle, diameter_ratio):
    """fluids.fittings.contraction_conical(Di1, Di2, angle=deg, method='Crane'), K on the downstream
    velocity: agreement to 1e-14 relative."""
    ref = contraction_conical(Di1=1.0, Di2=diameter_ratio, angle=angle, method="Crane")
    assert gradual_contraction(np.radians(angle), diameter_ratio ** 2) == pytest.approx(ref, rel=1e-14)


@pytest.mark.parametrize("angle", ANGLES_DEG)
@pytest.mark.parametrize("diameter_ratio", [0.3, 0.5, 0.9])
def test_expansion_against_fluids(angle, diameter_ratio):
    """fluids.fittings.diffuser_conical(Di1, Di2, angle=deg, method='Crane'), K on the upstream
    velocity: agreement to 1e-14 relative."""
    ref = diffuser_conical(Di1=diameter_ratio, Di2=1.0, angle=angle, method="Crane")
    assert gradual_expansion(np.radians(angle), diameter_ratio ** 2) == pytest.approx(ref, rel=1e-14)


def test_expansion_tends_to_borda_carnot():
    """Above 45 deg Crane's gradual expansion is the sudden (Borda-Carnot) one."""
    r = np.array([0.1, 0.25, 0.8])
    np.testing.assert_allclose(gradual_expansion(np.radians(90.0), r), sudden_expansion(r), rtol=1e-15)


@pytest.mark.parametrize("ratio, expected", [(1.0, 0.3133), (1.5, 0.2253), (2.0, 0.2037), (4.0, 0.2258)])
def test_bend_reference(ratio, expected):
    """90 deg smooth bend, Rennels & Hudson, Pipe Flow (2012), fd 0.017990 at Re 1e5."""
    assert round(float(bend_rounded(ratio, 0.017990)), 4) == expected


@pytest.mark.parametrize("angle", [30.0, 90.0, 180.0])
@pytest.mark.parametrize("ratio", [0.5, 1.0, 3.0])
def test_bend_against_fluids(angle, ratio):
    """fluids.fittings.bend_rounded (default Rennels method) with the same friction factor: 1e-14."""
    ref = fluids_bend_rounded(Di=0.1, angle=angle, fd=0.021, bend_diameters=ratio)
    assert bend_rounded(ratio, 0.021, np.radians(angle)) == pytest.approx(ref, rel=1e-14)


def test_bend_friction_from_reynolds():
    """Without a friction factor, Churchill's smooth-wall value at the Reynolds number is used.
    fluids computes it by exact Colebrook (Clamond) instead: measured 0.44 % apart at Re 1e5
    (Churchill is 0.64 % below Colebrook there), asserted within 0.5 %."""
    k = bend_rounded(1.5, None, reynolds=1e5)
    assert k == pytest.approx(bend_rounded(1.5, churchill(1e5, 0.0)), rel=1e-15)
    assert k == pytest.approx(fluids_bend_rounded(Di=0.1, angle=90.0, bend_diameters=1.5, Re=1e5),
                              rel=5e-3)


def _check_derivatives(func, angle, ratio):
    _, d_angle, d_ratio = func(angle, ratio, derivatives=True)
    h = 1e-7
    fd_angle = (func(angle + h, ratio) - func(angle - h, ratio)) / (2 * h)
    fd_ratio = (func(angle, ratio + h) - func(angle, ratio - h)) / (2 * h)
    np.testing.assert_allclose(d_angle, fd_angle, rtol=1e-6, atol=1e-12)
    np.testing.assert_allclose(d_ratio, fd_ratio, rtol=1e-6, atol=1e-12)


def test_derivatives_central_fd():
    angle = np.radians(np.array([5.0, 20.0, 44.0, 46.0, 90.0, 170.0]))
    ratio = np.array([0.1, 0.3, 0.5, 0.7, 0.9, 0.2])
    _check_derivatives(gradual_contraction, angle, ratio)
    _check_derivatives(gradual_expansion, angle, ratio)
    _, d_ratio = sudden_expansion(ratio, derivatives=True)
    h = 1e-7
    np.testing.assert_allclose(d_ratio, (sudden_expansion(ratio + h) - sudden_expansion(ratio - h)) / (2 * h),
                               rtol=1e-7)


@pytest.mark.parametrize("call, name", [
    (lambda: gradual_contraction(0.0, 0.5), "total_angle"),
    (lambda: gradual_contraction(4.0, 0.5), "total_angle"),
    (lambda: gradual_contraction(0.3, 1.5), "area_ratio"),
    (lambda: gradual_expansion(0.3, 0.0), "area_ratio"),
    (lambda: sudden_expansion(np.nan), "area_ratio"),
    (lambda: bend_rounded(0.3, 0.02), "radius_ratio"),
    (lambda: bend_rounded(1.0, 0.02, angle=-1.0), "angle"),
    (lambda: bend_rounded(1.0, -0.02), "darcy"),
])
def test_bad_input(call, name):
    with pytest.raises(ValueError, match=rf"^{name} must be"):
        call()
