"""Darcy friction factor for duct flow, smooth across all flow regimes."""
import numpy as np

from mdao.physics.numeric import asarray

__all__ = ["churchill"]


def churchill(reynolds, relative_roughness, derivatives=False):
    r"""Darcy friction factor from Churchill's single formula for all flow regimes.

    .. math::
        f = 8\left[\left(\frac{8}{Re}\right)^{12} + (A + B)^{-3/2}\right]^{1/12},\quad
        A = \left[2.457 \ln\frac{1}{(7/Re)^{0.9} + 0.27\,\varepsilon}\right]^{16},\quad
        B = \left(\frac{37530}{Re}\right)^{16}

    Parameters
    ----------
    reynolds : array_like
        Reynolds number on the hydraulic diameter, [-], > 0.
    relative_roughness : array_like
        Wall roughness over hydraulic diameter, [-], >= 0.
    derivatives : bool
        Also return the partial derivatives, for the components' analytic partials.

    Returns
    -------
    f : ndarray
        Darcy friction factor, [-].
    df_dre, df_deps : ndarray
        Its partial derivatives (only when ``derivatives`` is true).

    Notes
    -----
    Smooth across laminar, transitional and turbulent flow, which is why the optimizer uses it
    rather than a switch between correlations. Tends to 64/Re in laminar flow; within about 2 %
    of Colebrook-White for Re 1e4 to 1e8 (see tests/test_friction.py).

    References
    ----------
    .. [1] Churchill, S. W. "Friction-factor equation spans all fluid-flow regimes."
       Chemical Engineering 84, no. 24 (1977): 91-92.

    Examples
    --------
    Smooth pipe at Re 1e5: 0.017875 (Colebrook-White gives 0.017990):

    >>> round(float(churchill(1e5, 0.0)), 6)
    0.017875
    """
    re = asarray(reynolds)
    eps = asarray(relative_roughness)
    if np.any(~(re > 0.0)):
        raise ValueError(f"reynolds must be > 0; got {float(re[~(re > 0.0)].ravel()[0])!r}")
    if np.any(~(eps >= 0.0)):
        raise ValueError("relative_roughness must be >= 0; got "
                         f"{float(eps[~(eps >= 0.0)].ravel()[0])!r}")
    laminar = (8.0 / re) ** 12
    x = (7.0 / re) ** 0.9 + 0.27 * eps
    k = -2.457 * np.log(x)
    a = k ** 16
    b = (37530.0 / re) ** 16
    c = a + b
    s = laminar + c ** -1.5
    f = 8.0 * s ** (1.0 / 12.0)
    if not derivatives:
        return f
    df_ds = f / (12.0 * s)
    dc_dx = 16.0 * k ** 15 * (-2.457) / x           # dA/dx
    dx_dre = -0.9 * (7.0 / re) ** 0.9 / re
    ds_dc = -1.5 * c ** -2.5
    ds_dre = -12.0 * laminar / re + ds_dc * (dc_dx * dx_dre - 16.0 * b / re)
    ds_deps = ds_dc * dc_dx * 0.27
    return f, df_ds * ds_dre, df_ds * ds_deps
