"""Super-ellipse area, perimeter and sizing against exact values, mpmath and finite differences."""
import itertools

import mpmath as mp
import numpy as np
import pytest

from mdao.physics.superellipse import enclosed_area, perimeter, semi_axes


def _perimeter_mpmath(a, b, n, digits=30):
    """Reference perimeter by mpmath (tanh-sinh, 30 digits) on the same graph form, the interval
    cut at the corner parameter tau = 2**(-1/n) and at two points graded towards each end.

    Measured: over the grid of test_perimeter_against_mpmath_grid this agrees to 1.3e-31 with a
    40-digit quadrature cut at 49 points (24 graded towards each end), far inside the 1e-12
    asserted.
    """
    with mp.workdps(digits):
        a, b, n = mp.mpf(a), mp.mpf(b), mp.mpf(n)
        tau = mp.mpf(2) ** (-1 / n)

        def integrand(t):
            u = t ** (n - 1) * (1 - t ** n) ** (1 / n - 1)
            return mp.sqrt(a * a + (b * u) ** 2) + mp.sqrt(b * b + (a * u) ** 2)

        cuts = sorted({mp.mpf(0), tau} | {tau * mp.mpf(2) ** -k for k in range(1, 3)}
                      | {tau * (1 - mp.mpf(2) ** -k) for k in range(1, 3)})
        return float(4 * mp.quad(integrand, cuts))


# Super-ellipse: exact Gamma-function areas (Weisstein, "Superellipse", MathWorld) and
# perimeters by 30-digit mpmath quadrature
AREAS = [(1, 1, 2, np.pi), (1, 1, 4, 3.708149354602744), (1, 1, 10, 3.942927897810032),
         (1, 1, 100, 3.999351546317727), (20, 1, 10, 78.85855795620065)]
PERIMETERS = [(1, 1, 2, 2 * np.pi), (1, 1, 4, 7.017697943564042), (1, 1, 10, 7.577408317257748),
              (20, 1, 10, 82.78158931379282), (20, 1, 2, 80.38851238291923)]


@pytest.mark.parametrize("a, b, n, expected", AREAS)
def test_area_reference(a, b, n, expected):
    """Exact Gamma-function areas; agreement to 2 ulp."""
    assert enclosed_area(a, b, n) == pytest.approx(expected, rel=5e-16)


@pytest.mark.parametrize("a, b, n, expected", PERIMETERS)
def test_perimeter_reference(a, b, n, expected):
    """30-digit mpmath perimeters; measured agreement 2e-16."""
    assert perimeter(a, b, n) == pytest.approx(expected, rel=1e-14)


def test_ellipse_perimeter_is_elliptic_integral():
    """n = 2: P = 4 a E(m), m = 1 - (b/a)^2 (mpmath.ellipe), aspect 1 to 200."""
    for aspect in (1.0, 3.0, 37.0, 200.0):
        expected = float(4 * aspect * mp.ellipe(1 - 1 / mp.mpf(aspect) ** 2))
        assert perimeter(aspect, 1.0, 2.0) == pytest.approx(expected, rel=1e-13)
        assert perimeter(1.0, aspect, 2.0) == pytest.approx(expected, rel=1e-13)


def test_perimeter_against_mpmath_grid():
    """Aspect 1/200 to 200 (both sides of the circle), n 2 to 100 (non-integer n too), vs 30-digit
    mpmath: both ends of each range, the circle, a mid aspect; n at 2, near 2, 4, a mid-range
    non-integer value and 100. (The elliptic-integral test covers n = 2 at more aspects.)

    Measured worst relative error 3.5e-13 (required 1e-12).
    """
    aspects = (1 / 200, 1.0, 7.5, 200.0)
    exponents = (2.0, 2.3, 4.0, 13.7, 100.0)
    pairs = list(itertools.product(aspects, exponents))
    a = np.array([p[0] for p in pairs])
    n = np.array([p[1] for p in pairs])
    got = perimeter(a, 1.0, n)              # one vectorized call
    ref = np.array([_perimeter_mpmath(p[0], 1.0, p[1]) for p in pairs])
    np.testing.assert_allclose(got, ref, rtol=1e-12, atol=0)


def test_perimeter_limits_and_symmetry():
    """Bounds: between the ellipse's and the rectangle's (4(a + b)) perimeters; symmetric in a, b;
    homogeneous of degree 1."""
    n = np.array([2.0, 3.0, 10.0, 100.0])
    p = perimeter(5.0, 1.0, n)
    assert np.all(np.diff(p) > 0) and np.all(p < 24.0)
    assert p[-1] == pytest.approx(24.0, rel=2e-2)
    np.testing.assert_allclose(perimeter(1.0, 5.0, n), p, rtol=1e-14)
    np.testing.assert_allclose(perimeter(2.5, 0.5, n), 0.5 * p, rtol=1e-14)


def _central(f, x, h):
    return (f(x + h) - f(x - h)) / (2 * h)


def test_area_derivatives():
    """dA/da, dA/db by central FD; dA/dn against mpmath.diff of the Gamma form (30 digits)."""
    a, b, n = np.array([1.0, 20.0, 0.3]), np.array([1.0, 1.0, 2.0]), np.array([2.0, 10.0, 100.0])
    _, d_a, d_b, d_n = enclosed_area(a, b, n, derivatives=True)
    np.testing.assert_allclose(d_a, _central(lambda x: enclosed_area(x, b, n), a, 1e-6 * a), rtol=1e-8)
    np.testing.assert_allclose(d_b, _central(lambda x: enclosed_area(a, x, n), b, 1e-6 * b), rtol=1e-8)
    with mp.workdps(30):
        ref = [float(mp.diff(lambda m: 4 * ai * bi * mp.gamma(1 + 1 / m) ** 2 / mp.gamma(1 + 2 / m),
                             mp.mpf(ni))) for ai, bi, ni in zip(a, b, n)]
    np.testing.assert_allclose(d_n, ref, rtol=1e-12)


def test_perimeter_derivatives():
    """dP/da, dP/db, dP/dn (Leibniz' rule) against central FD, aspect 1/100 to 200, n 2 to 100;
    and Euler's relation a dP/da + b dP/db = P."""
    a = np.array([1.0, 20.0, 0.01, 3.0, 200.0])
    b = np.array([1.0, 1.0, 1.0, 2.0, 1.0])
    n = np.array([2.01, 10.0, 2.3, 100.0, 6.0])
    p, d_a, d_b, d_n = perimeter(a, b, n, derivatives=True)
    # steps on the size of the curve, 1e-6 (a + b): a step relative to the small semi-axis alone
    # (1e-8 at a = 0.01) lets the perimeter's rounding through, 1.3e-7 with numpy 2.2; with this
    # step the worst seen is 1.2e-9
    h = 1e-6 * (a + b)
    np.testing.assert_allclose(d_a, _central(lambda x: perimeter(x, b, n), a, h), rtol=1e-7)
    np.testing.assert_allclose(d_b, _central(lambda x: perimeter(a, x, n), b, h), rtol=1e-7)
    np.testing.assert_allclose(d_n, _central(lambda x: perimeter(a, b, x), n, 1e-5 * n), rtol=1e-6)
    np.testing.assert_allclose(a * d_a + b * d_b, p, rtol=1e-13)


def test_perimeter_broadcasts():
    p = perimeter(np.array([[1.0], [2.0]]), 1.0, np.array([2.0, 4.0, 8.0]))
    assert p.shape == (2, 3)
    assert p[1, 0] == pytest.approx(perimeter(2.0, 1.0, 2.0), rel=1e-15)


def test_semi_axes_roundtrip_and_derivatives():
    target, aspect, n = np.array([2.5e-3, 1.0, 7.0]), np.array([100.0, 1.0, 0.2]), np.array([8.0, 2.5, 30.0])
    a, b, da, db = semi_axes(target, aspect, n, derivatives=True)
    np.testing.assert_allclose(enclosed_area(a, b, n), target, rtol=1e-14)
    np.testing.assert_allclose(a / b, aspect, rtol=1e-14)
    args = {"area": target, "aspect": aspect, "n": n}
    for key, x in args.items():
        def f(v, key=key):
            return np.array(semi_axes(**{**args, key: v}))
        fd = _central(f, x, 1e-6 * x)
        np.testing.assert_allclose(da[key], fd[0], rtol=1e-7, err_msg=key)
        np.testing.assert_allclose(db[key], fd[1], rtol=1e-7, err_msg=key)


def test_semi_axes_circle():
    a, b = semi_axes(np.pi, 1.0, 2.0)
    assert a == pytest.approx(1.0, rel=1e-15) and b == pytest.approx(1.0, rel=1e-15)


@pytest.mark.parametrize("call, name", [
    (lambda: enclosed_area(-1.0, 1.0, 2.0), "a"),
    (lambda: enclosed_area(1.0, 0.0, 2.0), "b"),
    (lambda: perimeter(1.0, 1.0, 1.5), "n"),
    (lambda: perimeter(1.0, 1.0, np.nan), "n"),
    (lambda: semi_axes(1.0, -2.0, 4.0), "aspect"),
    (lambda: semi_axes(0.0, 2.0, 4.0), "area"),
])
def test_bad_input(call, name):
    with pytest.raises(ValueError, match=rf"^{name} must be"):
        call()
