r"""Area, perimeter and sizing of the super-ellipse (Lame curve) :math:`|y/a|^n + |z/b|^n = 1`.

``a`` is the semi-axis along y (the slot's width direction), ``b`` along z (its height), and the
exponent ``n >= 2`` runs from the ellipse (n = 2) towards the rectangle (large n).
"""
import numpy as np
from scipy.special import digamma, gammaln, loggamma

from mdao.physics.numeric import asarray

__all__ = ["area", "perimeter", "semi_axes"]

_LN2 = np.log(2.0)


def _check(name, value, low, strict=True):
    value = asarray(value)
    bad = ~(value > low) if strict else ~(value >= low)
    if np.any(bad):
        relation = ">" if strict else ">="
        raise ValueError(f"{name} must be {relation} {low:g}; got {float(value[bad].ravel()[0])!r}")
    return value


def _shape_factor(n, derivatives=False):
    """G(n) = Gamma(1+1/n)**2 / Gamma(1+2/n), the area over 4ab, and dlnG/dn."""
    # gammaln takes no complex argument: under a complex step, loggamma (the same on the
    # positive real axis, and analytic there)
    lngamma = loggamma if np.iscomplexobj(n) else gammaln
    g = np.exp(2.0 * lngamma(1.0 + 1.0 / n) - lngamma(1.0 + 2.0 / n))
    if not derivatives:
        return g
    return g, 2.0 / n**2 * (digamma(1.0 + 2.0 / n) - digamma(1.0 + 1.0 / n))


def enclosed_area(a, b, n, derivatives=False):
    r"""Area enclosed by the super-ellipse, exactly.

    .. math:: A = 4ab\,\frac{\Gamma(1 + 1/n)^2}{\Gamma(1 + 2/n)}

    Parameters
    ----------
    a, b : array_like
        Semi-axes along y and z, [m], > 0.
    n : array_like
        Exponent, [-], >= 2.
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    A : ndarray
        Area, [m**2].
    dA_da, dA_db, dA_dn : ndarray
        Partial derivatives (only when ``derivatives`` is true); dA_dn through the digamma
        function.

    References
    ----------
    .. [1] Lame, G. *Examen des differentes methodes employees pour resoudre les problemes de
       geometrie*, Paris, 1818; area by the Beta function, e.g. Weisstein, E. W., "Superellipse",
       MathWorld.

    Examples
    --------
    A 20:1 slot with n = 10; 80 Gamma(1.1)**2 / Gamma(1.2) = 78.85855795620065:

    >>> round(float(enclosed_area(20.0, 1.0, 10.0)), 12)
    78.858557956201
    """
    a, b = _check("a", a, 0.0), _check("b", b, 0.0)
    n = _check("n", n, 2.0, strict=False)
    g = _shape_factor(n, derivatives)
    if not derivatives:
        return 4.0 * a * b * g
    g, dlng = g
    result = 4.0 * a * b * g
    return result, 4.0 * b * g, 4.0 * a * g, result * dlng


# Composite Gauss-Legendre rule on s in [0, 1] (t = tau * s): panels graded geometrically
# (ratio 2) towards both ends, where the integrand has its features: near s = 0 the slope of the
# wide side turns over within t ~ (b/a)^(1/(n-1)); near s = 1 the curve approaches its corner
# for large n, and the branch points of (1 - t^n) sit at a distance ~ 0.7/n from t = tau.
_LEVELS, _NODES_PER_PANEL = 24, 12


def _composite_rule():
    fine = 0.5 * 0.5 ** np.arange(_LEVELS + 1)                     # 0.5, 0.25, ... towards 0
    edges = np.unique(np.concatenate([[0.0], fine, 1.0 - fine, [1.0]]))
    x, w = np.polynomial.legendre.leggauss(_NODES_PER_PANEL)
    lo, hi = edges[:-1, None], edges[1:, None]
    nodes = (0.5 * (hi - lo) * x + 0.5 * (hi + lo)).ravel()
    weights = (0.5 * (hi - lo) * w).ravel()
    return nodes, weights


_S, _W = _composite_rule()


def perimeter(a, b, n, derivatives=False):
    r"""Perimeter of the super-ellipse by quadrature (there is no closed form).

    The quarter curve is split at its diagonal point :math:`y/a = z/b = \tau = 2^{-1/n}`; each
    piece is integrated as a graph, in :math:`t = y/a` and :math:`t = z/b` respectively:

    .. math::
        P = 4\int_0^{\tau}\left[\sqrt{a^2 + b^2 u^2} + \sqrt{b^2 + a^2 u^2}\right] dt,\quad
        u = t^{n-1}(1 - t^n)^{1/n - 1}

    with a composite Gauss-Legendre rule graded towards both ends (the nodes sit on a trailing
    axis, so any broadcast shape of ``a, b, n`` is evaluated at once). The derivative in ``n``
    follows Leibniz' rule; the integrand at the upper limit is :math:`2\sqrt{a^2 + b^2}`
    since :math:`u(\tau) = 1`.

    Parameters
    ----------
    a, b : array_like
        Semi-axes along y and z, [m], > 0.
    n : array_like
        Exponent, [-], >= 2.
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    P : ndarray
        Perimeter, [m].
    dP_da, dP_db, dP_dn : ndarray
        Partial derivatives (only when ``derivatives`` is true).

    Notes
    -----
    Converges to better than 1e-12 relative against 30-digit mpmath for aspect ratios up to
    200:1 either way and n from 2 to 100 (see tests/test_superellipse.py). The usual
    :math:`\cos^{2/n}` parametrisation is avoided: its derivative is singular at the axes.

    References
    ----------
    .. [1] Weisstein, E. W., "Superellipse", MathWorld (curve and the arc-length integral).
    .. [2] Davis, P. J. and Rabinowitz, P. *Methods of Numerical Integration*, 2nd ed., Academic
       Press, 1984 (composite Gauss-Legendre rules on graded meshes).

    Examples
    --------
    The 20:1 ellipse (n = 2): 4 a E(e) = 80.38851238291923 by 30-digit mpmath (complete elliptic
    integral of the second kind):

    >>> round(float(perimeter(20.0, 1.0, 2.0)), 12)
    80.388512382919
    """
    a, b = _check("a", a, 0.0), _check("b", b, 0.0)
    n = _check("n", n, 2.0, strict=False)
    a, b, n = (x[..., None] for x in np.broadcast_arrays(a, b, n))
    tau = np.exp(-_LN2 / n)
    t = tau * _S
    ln_t = np.log(t)
    tn = np.exp(n * ln_t)
    ln_rest = np.log1p(-tn)
    u = np.exp((n - 1.0) * ln_t + (1.0 / n - 1.0) * ln_rest)
    r1 = np.sqrt(a * a + (b * u) ** 2)
    r2 = np.sqrt(b * b + (a * u) ** 2)
    weights = tau * _W
    quarter = np.sum((r1 + r2) * weights, axis=-1)
    if not derivatives:
        return 4.0 * quarter
    da = np.sum((a / r1 + a * u * u / r2) * weights, axis=-1)
    db = np.sum((b * u * u / r1 + b / r2) * weights, axis=-1)
    dlnu_dn = ln_t - ln_rest / n**2 - (1.0 / n - 1.0) * tn * ln_t / (1.0 - tn)
    df_du = u * (b * b / r1 + a * a / r2)
    dtau_dn = tau[..., 0] * _LN2 / n[..., 0] ** 2
    end = 2.0 * np.sqrt(a[..., 0] ** 2 + b[..., 0] ** 2)
    dn = np.sum(df_du * u * dlnu_dn * weights, axis=-1) + end * dtau_dn
    return 4.0 * quarter, 4.0 * da, 4.0 * db, 4.0 * dn


def semi_axes(area, aspect, n, derivatives=False):
    r"""Semi-axes of the super-ellipse of given area, aspect ratio and exponent.

    .. math::
        b = \sqrt{\frac{A}{4\,\mathrm{AR}\,G(n)}},\quad a = \mathrm{AR}\; b,\quad
        G(n) = \frac{\Gamma(1 + 1/n)^2}{\Gamma(1 + 2/n)}

    Parameters
    ----------
    area : array_like
        Enclosed area, [m**2], > 0.
    aspect : array_like
        Aspect ratio a/b, [-], > 0.
    n : array_like
        Exponent, [-], >= 2.
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    a, b : ndarray
        Semi-axes along y and z, [m].
    da, db : dict of ndarray
        Partials of ``a`` and ``b`` keyed ``'area'``, ``'aspect'``, ``'n'`` (only when
        ``derivatives`` is true).

    References
    ----------
    .. [1] Weisstein, E. W., "Superellipse", MathWorld (the exact area through the Gamma
       function, which this function inverts for a prescribed aspect ratio).

    Examples
    --------
    The exact area of the unit super-ellipse with n = 10 gives back a = b = 1:

    >>> a, b = semi_axes(3.942927897810032, 1.0, 10.0)
    >>> round(float(a), 12), round(float(b), 12)
    (1.0, 1.0)
    """
    area = _check("area", area, 0.0)
    aspect = _check("aspect", aspect, 0.0)
    n = _check("n", n, 2.0, strict=False)
    g = _shape_factor(n, derivatives)
    if derivatives:
        g, dlng = g
    b = np.sqrt(area / (4.0 * aspect * g))
    a = aspect * b
    if not derivatives:
        return a, b
    da = {"area": 0.5 * a / area, "aspect": 0.5 * a / aspect, "n": -0.5 * a * dlng}
    db = {"area": 0.5 * b / area, "aspect": -0.5 * b / aspect, "n": -0.5 * b * dlng}
    return a, b, da, db
