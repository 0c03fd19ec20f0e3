"""Transition duct: schedules, the linear-semi-axes trap, derivatives, friction integral, component."""
import numpy as np
import openmdao.api as om
import pytest
from partials_check import assert_partials

from mdao.components.transition import TransitionComp
from mdao.physics import superellipse
from mdao.physics.transition import (FIELDS, INPUTS, equivalent_cone_half_angle,
                                     friction_integral, stations)

BASE = dict(fan_diameter=0.08, slot_width=0.5, slot_height=0.005, length=0.3, slot_exponent=8.0)


def test_ends_exact():
    """Inlet is the fan's circle; outlet area is exactly w*h with aspect w/h and the slot's n."""
    for schedule in ("monotone-area", "linear"):
        s = stations(**BASE, schedule=schedule)
        assert s.area[0] == pytest.approx(np.pi * 0.04 ** 2, rel=1e-14)
        assert s.perimeter[0] == pytest.approx(np.pi * 0.08, rel=1e-14)
        assert s.semi_axis_y[0] == pytest.approx(0.04, rel=1e-14)
        assert s.area[-1] == pytest.approx(0.5 * 0.005, rel=1e-14)
        assert s.semi_axis_y[-1] / s.semi_axis_z[-1] == pytest.approx(100.0, rel=1e-13)
        assert s.exponent[-1] == 8.0 and s.exponent[0] == 2.0
        np.testing.assert_allclose(s.position, np.linspace(0, 0.3, 33), rtol=1e-15)
        np.testing.assert_allclose(s.hydraulic_diameter, 4 * s.area / s.perimeter, rtol=1e-15)
        assert s.half_angle.shape == (32,)


def test_sections_consistent():
    """Every station's area and perimeter are those of its own semi-axes and exponent."""
    s = stations(**BASE, count=9)
    np.testing.assert_allclose(superellipse.enclosed_area(s.semi_axis_y, s.semi_axis_z, s.exponent), s.area,
                               rtol=1e-13)
    np.testing.assert_allclose(superellipse.perimeter(s.semi_axis_y, s.semi_axis_z, s.exponent),
                               s.perimeter, rtol=1e-14)


def test_linear_semi_axes_swell():
    """The trap (docs/theory.md, "Transition duct"): a 100:1 slot with the same area as the
    fan's circle.

    Linear semi-axes swell the area mid-duct (measured +203 % at n = 2 to +238 % at n = 20: far
    beyond 'tens of percent'), an unintended diffuser; the monotone-area schedule keeps the area
    monotone (here constant) and never diffuses."""
    w, h = 0.5, 0.005
    d = np.sqrt(4 * w * h / np.pi)
    for n1 in (2.0, 8.0, 20.0):
        lin = stations(d, w, h, 0.3, n1, schedule="linear")
        assert lin.area.max() / lin.area[0] - 1 > 1.5
        assert lin.half_angle.max() > np.radians(5.0)
        mono = stations(d, w, h, 0.3, n1, schedule="monotone-area")
        np.testing.assert_allclose(mono.area, mono.area[0], rtol=1e-13)
        assert np.abs(mono.half_angle).max() < 1e-12


def test_linear_swell_tens_of_percent_at_10_to_1():
    """At a 10:1 slot of equal area the linear swell is tens of percent (measured about +50 %)."""
    w, h = 0.1, 0.01
    d = np.sqrt(4 * w * h / np.pi)
    lin = stations(d, w, h, 0.3, 2.0, schedule="linear")
    assert 0.2 < lin.area.max() / lin.area[0] - 1 < 1.0


@pytest.mark.parametrize("d", [0.04, 0.08, 0.2])
def test_monotone_area_is_monotone(d):
    """Contraction (fan bigger than slot) and diffusion (fan smaller): area monotone either way."""
    s = stations(d, 0.5, 0.005, 0.3, 8.0)
    steps = np.diff(s.area)
    assert np.all(steps <= 0) or np.all(steps >= 0)
    assert np.all(np.sign(s.half_angle) == np.sign(s.area[-1] - s.area[0]))


def test_half_angle_matches_cone():
    """Between stations the half-angle is that of the equivalent cone over each interval."""
    s = stations(0.04, 0.5, 0.005, 0.3, 8.0, count=7)
    expected = equivalent_cone_half_angle(s.area[:-1], s.area[1:], np.diff(s.position))
    np.testing.assert_allclose(s.half_angle, expected, rtol=1e-14)


def test_equivalent_cone():
    """Equivalent cone (docs/theory.md, "Transition duct"): a true cone of radii 1 -> 2 over
    length 10 has half-angle
    atan(0.1)."""
    assert equivalent_cone_half_angle(np.pi, 4 * np.pi, 10.0) == pytest.approx(np.arctan(0.1), rel=1e-15)
    assert equivalent_cone_half_angle(4 * np.pi, np.pi, 10.0) < 0


@pytest.mark.parametrize("schedule", ["monotone-area", "linear"])
def test_station_derivatives(schedule):
    """Every (field, input) partial against central FD, in a diffusing and a contracting duct."""
    for base in (BASE, {**BASE, "fan_diameter": 0.03, "slot_exponent": 3.3}):
        _, d = stations(**base, schedule=schedule, count=9, derivatives=True)
        assert set(d) == {(f, k) for f in FIELDS for k in INPUTS}
        for k in INPUTS:
            h = 1e-6 * base[k]
            plus = stations(**{**base, k: base[k] + h}, schedule=schedule, count=9)
            minus = stations(**{**base, k: base[k] - h}, schedule=schedule, count=9)
            for f in FIELDS:
                fd = (getattr(plus, f) - getattr(minus, f)) / (2 * h)
                scale = max(np.abs(fd).max(), np.abs(d[f, k]).max(), 1e-300)
                # round-off of the central difference itself: a few ulps of the field over h
                # (an analytic zero, e.g. the slot's semi-thickness against its width, shows it)
                noise = 4 * np.finfo(float).eps * np.abs(getattr(plus, f)).max() / h
                assert d[f, k].shape == getattr(plus, f).shape
                assert np.abs(fd - d[f, k]).max() <= 1e-6 * scale + 1e-14 + noise, (f, k)


def test_broadcast_inputs():
    s = stations(np.array([0.06, 0.08]), 0.5, 0.005, 0.3, 8.0, count=5)
    assert s.area.shape == (2, 5) and s.half_angle.shape == (2, 4)
    np.testing.assert_allclose(s.area[1], stations(**BASE, count=5).area, rtol=1e-15)


def test_friction_integral_uniform_duct():
    """A straight round duct of constant area: K = f L / D exactly (Darcy-Weisbach)."""
    x = np.linspace(0, 2.0, 11)
    a, p = np.full(11, np.pi * 0.05 ** 2), np.full(11, np.pi * 0.1)
    f = np.array([[0.02] * 11, [0.03] * 11])
    k = friction_integral(x, a, p, f, np.pi * 0.05 ** 2)
    np.testing.assert_allclose(k, [0.02 * 2 / 0.1, 0.03 * 2 / 0.1], rtol=1e-14)
    # referred to a velocity twice as high (half the area): a quarter of the coefficient
    np.testing.assert_allclose(friction_integral(x, a, p, f, np.array([0.5, 0.5]) * a[0]), k / 4,
                               rtol=1e-14)


def test_friction_integral_converges_on_the_duct():
    """Trapezoid rule on the transition: 33 stations within 2e-3 of 513 stations."""
    fine, coarse = stations(**BASE, count=513), stations(**BASE, count=33)
    ks = [friction_integral(s.position, s.area, s.perimeter, np.full((1, s.area.size), 0.02),
                            s.area[-1])[0] for s in (fine, coarse)]
    assert ks[1] == pytest.approx(ks[0], rel=2e-3)


def test_friction_integral_derivatives():
    rng = np.random.default_rng(3)
    s = stations(**BASE, count=7)
    args = dict(position=s.position, area=s.area, perimeter=s.perimeter,
                darcy=rng.uniform(0.01, 0.05, (3, 7)), area_ref=rng.uniform(1e-3, 3e-3, 3))
    k, d = friction_integral(**args, derivatives=True)
    assert k.shape == (3,)
    for key in ("position", "area", "perimeter", "darcy"):
        assert d[key].shape == (3, 7)
        for j in range(7):
            x = np.array(args[key], dtype=float)
            h = 1e-6 * max(np.abs(x).max(), 1e-3)
            plus, minus = x.copy(), x.copy()
            plus[..., j] += h
            minus[..., j] -= h
            fd = (friction_integral(**{**args, key: plus}) - friction_integral(**{**args, key: minus})) / (2 * h)
            col = d[key][:, j]
            np.testing.assert_allclose(col, fd, rtol=1e-6, atol=1e-9 * np.abs(col).max(), err_msg=key)
    h = 1e-6 * args["area_ref"]
    fd = (friction_integral(**{**args, "area_ref": args["area_ref"] + h})
          - friction_integral(**{**args, "area_ref": args["area_ref"] - h})) / (2 * h)
    np.testing.assert_allclose(d["area_ref"], fd, rtol=1e-7)


@pytest.mark.parametrize("kwargs, match", [
    (dict(schedule="spline"), "schedule"), (dict(count=2), "count"),
    (dict(slot_exponent=1.5), "slot_exponent"), (dict(fan_diameter=0.0), "fan_diameter"),
    (dict(slot_height=-1e-3), "slot_height"), (dict(length=np.nan), "length"),
])
def test_bad_input(kwargs, match):
    with pytest.raises(ValueError, match=match):
        stations(**{**BASE, **kwargs})


@pytest.mark.parametrize("schedule", ["monotone-area", "linear"])
def test_component_partials(schedule):
    rng = np.random.default_rng(11)
    inputs = {"slot_ratio": rng.uniform(0.005, 0.03), "chord": rng.uniform(0.3, 1.0),
              "blown_span": rng.uniform(0.5, 2.0), "fan_diameter": rng.uniform(0.05, 0.12),
              "transition_length": rng.uniform(0.2, 0.5), "slot_exponent": rng.uniform(2.5, 12.0)}
    comp = TransitionComp(num_nodes=5, fans=3, stations=9, schedule=schedule)
    prob = assert_partials(comp, inputs)
    expected = stations(inputs["fan_diameter"], inputs["blown_span"] / 3,
                        inputs["slot_ratio"] * inputs["chord"], inputs["transition_length"],
                        inputs["slot_exponent"], schedule=schedule, count=9)
    np.testing.assert_allclose(prob.get_val("station_area"), expected.area, rtol=1e-14)
    np.testing.assert_allclose(prob.get_val("diffusion_half_angle"), expected.half_angle, rtol=1e-14)


def test_component_defaults():
    prob = om.Problem(reports=False)
    prob.model.add_subsystem("duct", TransitionComp(), promotes=["*"])
    prob.setup()
    prob.run_model()
    assert prob.get_val("station_area").shape == (33,)
    # one fan (the default) on the default 1 m span: the slot is 1 m x 5 mm
    assert prob.get_val("station_area")[-1] == pytest.approx(1.0 * 0.005, rel=1e-14)
    assert prob.get_val("diffusion_half_angle").shape == (32,)
