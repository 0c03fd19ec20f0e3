"""Minor (form) loss coefficients of duct fittings, each K on the velocity its source states."""
import numpy as np

from mdao.physics.friction import churchill
from mdao.physics.numeric import asarray

__all__ = ["gradual_contraction", "gradual_expansion", "sudden_expansion", "bend_rounded",
           "SHARP_INLET", "EXIT"]

SHARP_INLET = 0.5   #: sharp-edged inlet, K on the duct velocity (Crane TP-410, 2009)
EXIT = 1.0          #: free exit, K on the exit velocity (Rennels & Hudson 2012)

_SWITCH = np.pi / 4   # Crane's two formulas meet at a total angle of 45 deg


def _angle(value):
    value = asarray(value)
    bad = ~((value > 0.0) & (value <= np.pi))
    if np.any(bad):
        raise ValueError(f"total_angle must be in (0, pi] rad; got {float(value[bad].ravel()[0])!r}")
    return value


def _fraction(name, value):
    value = asarray(value)
    bad = ~((value > 0.0) & (value <= 1.0))
    if np.any(bad):
        raise ValueError(f"{name} must be in (0, 1]; got {float(value[bad].ravel()[0])!r}")
    return value


def gradual_contraction(total_angle, area_ratio, derivatives=False):
    r"""Conical (gradual) contraction, K on the downstream (small-section) velocity.

    .. math::
        K = 0.8 \sin\frac{\theta}{2}\left(1 - \frac{A_2}{A_1}\right) \;(\theta \le 45^\circ),
        \qquad K = 0.5 \sqrt{\sin\frac{\theta}{2}}\left(1 - \frac{A_2}{A_1}\right) \;\text{above}

    Parameters
    ----------
    total_angle : array_like
        Total (included) cone angle, [rad], in (0, pi].
    area_ratio : array_like
        Downstream over upstream area A2/A1, [-], in (0, 1].
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    K : ndarray
        Loss coefficient on the downstream velocity, [-].
    dK_dangle, dK_dratio : ndarray
        Partial derivatives (only when ``derivatives`` is true).

    Notes
    -----
    The two formulas differ by 1 % at 45 deg (a small step). For 15-40 deg and area ratios 2 to
    10, SMACNA (1990) Table 14-12A gives 0.04-0.05; Crane gives 0.05-0.25 there, so it is
    the conservative choice.

    References
    ----------
    .. [1] Crane Co. *Flow of Fluids Through Valves, Fittings, and Pipe*, Technical Paper 410, 2009.

    Examples
    --------
    By hand: 0.8 sin(5 deg) (1 - 0.25) = 0.0523.

    >>> round(float(gradual_contraction(np.radians(10.0), 0.25)), 4)
    0.0523
    """
    theta, r = _angle(total_angle), _fraction("area_ratio", area_ratio)
    half_sin = np.sin(0.5 * theta)
    narrow = np.real(theta) <= _SWITCH
    shape = np.where(narrow, 0.8 * half_sin, 0.5 * np.sqrt(half_sin))
    k = shape * (1.0 - r)
    if not derivatives:
        return k
    half_cos = np.cos(0.5 * theta)
    d_shape = np.where(narrow, 0.4 * half_cos, 0.125 * half_cos / np.sqrt(half_sin))
    return k, d_shape * (1.0 - r), -shape + np.zeros_like(k)


def gradual_expansion(total_angle, area_ratio, derivatives=False):
    r"""Conical (gradual) expansion, K on the upstream (small-section) velocity.

    .. math::
        K = 2.6 \sin\frac{\theta}{2}\left(1 - \frac{A_1}{A_2}\right)^2 \;(\theta \le 45^\circ),
        \qquad K = \left(1 - \frac{A_1}{A_2}\right)^2 \;\text{above}

    Parameters
    ----------
    total_angle : array_like
        Total (included) cone angle, [rad], in (0, pi].
    area_ratio : array_like
        Upstream over downstream area A1/A2, [-], in (0, 1].
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    K : ndarray
        Loss coefficient on the upstream velocity, [-].
    dK_dangle, dK_dratio : ndarray
        Partial derivatives (only when ``derivatives`` is true).

    References
    ----------
    .. [1] Crane Co. *Flow of Fluids Through Valves, Fittings, and Pipe*, Technical Paper 410, 2009.

    Examples
    --------
    By hand: 2.6 sin(5 deg) (1 - 0.25)**2 = 0.127465.

    >>> round(float(gradual_expansion(np.radians(10.0), 0.25)), 6)
    0.127465
    """
    theta, r = _angle(total_angle), _fraction("area_ratio", area_ratio)
    half_sin = np.sin(0.5 * theta)
    narrow = np.real(theta) <= _SWITCH
    shape = np.where(narrow, 2.6 * half_sin, 1.0)
    k = shape * (1.0 - r) ** 2
    if not derivatives:
        return k
    d_shape = np.where(narrow, 1.3 * np.cos(0.5 * theta), 0.0)
    return k, d_shape * (1.0 - r) ** 2, -2.0 * shape * (1.0 - r)


def sudden_expansion(area_ratio, derivatives=False):
    r"""Sudden expansion (Borda-Carnot), K on the upstream velocity.

    .. math:: K = \left(1 - \frac{A_1}{A_2}\right)^2

    Parameters
    ----------
    area_ratio : array_like
        Upstream over downstream area A1/A2, [-], in (0, 1].
    derivatives : bool
        Also return dK/d(area_ratio).

    Returns
    -------
    K : ndarray
        Loss coefficient on the upstream velocity, [-].
    dK_dratio : ndarray
        Its derivative (only when ``derivatives`` is true).

    References
    ----------
    .. [1] Rennels, D. C. and Hudson, H. M. *Pipe Flow: A Practical and Comprehensive Guide*,
       Wiley, 2012 (Borda-Carnot loss).

    Examples
    --------
    By hand: (1 - 0.25)**2 = 0.5625.

    >>> float(sudden_expansion(0.25))
    0.5625
    """
    r = _fraction("area_ratio", area_ratio)
    k = (1.0 - r) ** 2
    if not derivatives:
        return k
    return k, -2.0 * (1.0 - r)


def bend_rounded(radius_ratio, darcy, angle=np.pi / 2, reynolds=1e5):
    r"""Smooth rounded bend, K on the duct velocity (Rennels & Hudson).

    .. math::
        K = f\alpha\frac{r}{D} + (0.10 + 2.4 f)\sin\frac{\alpha}{2}
        + \frac{6.6 f\left(\sqrt{\sin(\alpha/2)} + \sin(\alpha/2)\right)}{(r/D)^{4\alpha/\pi}}

    Parameters
    ----------
    radius_ratio : array_like
        Bend centre-line radius over duct (hydraulic) diameter r/D, [-], >= 0.5.
    darcy : array_like or None
        Darcy friction factor of the duct, [-], > 0; if None, the smooth-wall value at
        ``reynolds`` from :func:`mdao.physics.friction.churchill`.
    angle : array_like
        Bend angle, [rad], in (0, pi].
    reynolds : array_like
        Reynolds number on the duct diameter, [-], > 0; used only when ``darcy`` is None.

    Returns
    -------
    K : ndarray
        Loss coefficient, [-], including the wall friction of the bend's length.

    References
    ----------
    .. [1] Rennels, D. C. and Hudson, H. M. *Pipe Flow: A Practical and Comprehensive Guide*,
       Wiley, 2012, sec. 15.1 (developed from smooth-pipe data, r/D >= 0.5, 0-180 deg).

    Examples
    --------
    Rennels & Hudson's 90 deg bend at r/D = 1 with f = 0.017990 (Re 1e5, smooth): K = 0.3133.

    >>> round(float(bend_rounded(1.0, 0.017990)), 4)
    0.3133
    """
    ratio = asarray(radius_ratio)
    if np.any(~(ratio >= 0.5)):
        raise ValueError(f"radius_ratio must be >= 0.5; got {float(ratio[~(ratio >= 0.5)].ravel()[0])!r}")
    alpha = asarray(angle)
    bad = ~((alpha > 0.0) & (alpha <= np.pi))
    if np.any(bad):
        raise ValueError(f"angle must be in (0, pi] rad; got {float(alpha[bad].ravel()[0])!r}")
    if darcy is None:
        darcy = churchill(reynolds, 0.0)
    fd = asarray(darcy)
    if np.any(~(fd > 0.0)):
        raise ValueError(f"darcy must be > 0; got {float(fd[~(fd > 0.0)].ravel()[0])!r}")
    s = np.sin(0.5 * alpha)
    return (fd * alpha * ratio + (0.10 + 2.4 * fd) * s
            + 6.6 * fd * (np.sqrt(s) + s) / ratio ** (4.0 * alpha / np.pi))
