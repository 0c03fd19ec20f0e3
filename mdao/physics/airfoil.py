r"""Calibrated reduced-order drag and lift of a recirculating blown airfoil section.

At the segment's lift, the section drag coefficient is

.. math::
    C_D = C_{D,clean} + \Delta C_{D,slot}(r_s) + \beta(r_s)\,C_\mu + k_2 C_\mu^2

with the slotted-shape penalty :math:`\Delta C_{D,slot} = s_0 + s_1 r_s` and the thrust
drag per momentum coefficient :math:`\beta = \beta_0 + \beta_1 r_s` (negative: blowing reduces drag, below -1 when the
section gains more than a free jet of the same momentum would give). The constants come from a
calibration against the user's CFD or wind-tunnel data, valid over the calibrated range of
:math:`C_\mu` and :math:`r_s` only.

References
----------
.. [1] Momentum coefficient C_mu = m_dot V_j / (q S), as used throughout the blown-lift literature,
   e.g. Englar, R. J. "Circulation control pneumatic aerodynamics: blown force and moment
   augmentation and modification." AIAA Progress in Astronautics and Aeronautics 192 (2001)
   (from memory).
.. [2] The linear-in-C_mu drag form with slot-ratio dependent constants is this project's
   calibrated reduced-order model: docs/theory.md, section "Airfoil".
"""
import numpy as np

from mdao.physics.numeric import asarray


def slot_drag_at(slot_ratio, slot_drag, slot_drag_per_ratio):
    r"""Drag penalty of the slotted shape at a slot ratio.

    .. math:: \Delta C_{D,slot} = s_0 + s_1 r_s

    Parameters
    ----------
    slot_ratio : array_like
        Injection slot height over chord :math:`r_s`, [-], > 0 (inside the calibrated range,
        typically 0.002-0.03).
    slot_drag : array_like
        Penalty at zero slot ratio :math:`s_0` (the calibration's intercept), [-], any real
        (usually >= 0).
    slot_drag_per_ratio : array_like
        Change of the penalty per unit slot ratio :math:`s_1`, [-], any real.

    Returns
    -------
    ndarray
        Drag coefficient increment :math:`\Delta C_{D,slot}`, [-].

    References
    ----------
    .. [1] docs/theory.md, section "Airfoil" (this project's calibrated reduced-order drag
       model, linear in the slot ratio and in :math:`C_\mu`).

    Examples
    --------
    By hand: 0.02 + 0.5 * 0.01 = 0.025.

    >>> round(float(slot_drag_at(0.01, 0.02, 0.5)), 12)
    0.025
    """
    return asarray(slot_drag) + asarray(slot_drag_per_ratio) * slot_ratio


def drag_per_momentum_at(slot_ratio, drag_per_momentum, drag_per_momentum_per_ratio):
    r"""Drag per momentum coefficient at a slot ratio (dC_D/dC_mu of the linear term).

    .. math:: \beta = \beta_0 + \beta_1 r_s

    Parameters
    ----------
    slot_ratio : array_like
        Injection slot height over chord :math:`r_s`, [-], > 0 (inside the calibrated range).
    drag_per_momentum : array_like
        Drag per momentum coefficient at zero slot ratio :math:`\beta_0`, [-], any real
        (< 0 when blowing saves drag; calibrated values are often below -1).
    drag_per_momentum_per_ratio : array_like
        Change of the drag per momentum coefficient per unit slot ratio :math:`\beta_1`, [-],
        any real.

    Returns
    -------
    ndarray
        Drag per momentum coefficient :math:`\beta`, [-].

    References
    ----------
    .. [1] docs/theory.md, section "Airfoil" (this project's calibrated reduced-order drag
       model, linear in the slot ratio and in :math:`C_\mu`).

    Examples
    --------
    By hand: -1.2 + 10 * 0.01 = -1.1.

    >>> round(float(drag_per_momentum_at(0.01, -1.2, 10.0)), 12)
    -1.1
    """
    return (asarray(drag_per_momentum)
            + asarray(drag_per_momentum_per_ratio) * slot_ratio)


#: Arguments of :func:`drag_coefficient`, in order (also the keys of its partials).
DRAG_INPUTS = ("momentum_coefficient", "slot_ratio", "drag_clean", "slot_drag",
               "slot_drag_per_ratio", "drag_per_momentum", "drag_per_momentum_per_ratio",
               "drag_quadratic")


def drag_coefficient(momentum_coefficient, slot_ratio, drag_clean, slot_drag, slot_drag_per_ratio,
                     drag_per_momentum, drag_per_momentum_per_ratio, drag_quadratic=0.0,
                     derivatives=False):
    r"""Section drag coefficient of the blown airfoil (negative = net thrust).

    .. math::
        C_D = C_{D,clean} + (s_0 + s_1 r_s) + (\beta_0 + \beta_1 r_s) C_\mu + k_2 C_\mu^2

    Parameters
    ----------
    momentum_coefficient : array_like
        Jet momentum coefficient :math:`C_\mu`, [-], >= 0 (inside the calibrated range).
    slot_ratio : array_like
        Injection slot height over chord :math:`r_s`, [-], > 0 (inside the calibrated range).
    drag_clean : array_like
        Drag coefficient of the clean (unslotted) section at the same lift, [-], > 0.
    slot_drag, slot_drag_per_ratio : array_like
        Slotted-shape penalty intercept :math:`s_0` and slope in slot ratio :math:`s_1`, [-],
        any real (see :func:`slot_drag_at`).
    drag_per_momentum, drag_per_momentum_per_ratio : array_like
        Drag per momentum coefficient, intercept :math:`\beta_0` (< 0 when blowing saves drag)
        and slope in slot ratio :math:`\beta_1`, [-], any real.
    drag_quadratic : array_like
        Coefficient :math:`k_2` of :math:`C_\mu^2`, [-], any real (0 for the linear model).
    derivatives : bool
        Also return a dict of partials keyed by every argument name above.

    Returns
    -------
    cd : ndarray
        Drag coefficient on the blown planform, [-].
    partials : dict
        Only with ``derivatives``: ``{argument name: dC_D/d argument}``, each of cd's shape.

    References
    ----------
    .. [1] docs/theory.md, section "Airfoil" (this project's calibrated reduced-order drag
       model, linear in the slot ratio and in :math:`C_\mu`).
    .. [2] Englar, R. J. "Circulation control pneumatic aerodynamics: blown force and moment
       augmentation and modification." AIAA Progress in Astronautics and Aeronautics 192 (2001)
       (definition of the momentum coefficient; from memory).

    Examples
    --------
    By hand: 0.012 + 0.02 - 1.2 * 0.03 = -0.004 (net thrust).

    >>> round(float(drag_coefficient(0.03, 0.01, 0.012, 0.02, 0.0, -1.2, 0.0)), 12)
    -0.004
    """
    cmu = asarray(momentum_coefficient)
    rs = asarray(slot_ratio)
    s1 = asarray(slot_drag_per_ratio)
    b1 = asarray(drag_per_momentum_per_ratio)
    k2 = asarray(drag_quadratic)
    beta = drag_per_momentum_at(rs, drag_per_momentum, b1)
    cd = asarray(drag_clean) + slot_drag_at(rs, slot_drag, s1) + beta * cmu
    if k2.ndim or k2 != 0.0:                # the linear model (k2 = 0) adds nothing
        cd = cd + k2 * cmu**2
    if not derivatives:
        return cd
    d_out = {'momentum_coefficient': beta + 2.0 * k2 * cmu,
             'slot_ratio': s1 + b1 * cmu,
             'drag_clean': 1.0,
             'slot_drag': 1.0,
             'slot_drag_per_ratio': rs,
             'drag_per_momentum': cmu,
             'drag_per_momentum_per_ratio': rs * cmu,
             'drag_quadratic': cmu**2}
    return cd, {key: np.broadcast_to(val, cd.shape).astype(float) for key, val in d_out.items()}


def lift_increment(momentum_coefficient, lift_per_momentum):
    r"""Lift coefficient increment from blowing.

    .. math:: \Delta C_L = \frac{dC_L}{dC_\mu}\,C_\mu

    Parameters
    ----------
    momentum_coefficient : array_like
        Jet momentum coefficient :math:`C_\mu`, [-], >= 0 (inside the calibrated range).
    lift_per_momentum : array_like
        Calibrated lift slope against :math:`C_\mu`, [-], any real (> 0 when blowing adds lift).

    Returns
    -------
    ndarray
        Lift coefficient increment, [-].

    References
    ----------
    .. [1] docs/theory.md, section "Airfoil" (this project's calibrated reduced-order drag
       model, linear in the slot ratio and in :math:`C_\mu`).
    .. [2] Englar, R. J. "Circulation control pneumatic aerodynamics: blown force and moment
       augmentation and modification." AIAA Progress in Astronautics and Aeronautics 192 (2001)
       (definition of the momentum coefficient; from memory).

    Examples
    --------
    By hand: 5 * 0.03 = 0.15.

    >>> round(float(lift_increment(0.03, 5.0)), 12)
    0.15
    """
    return asarray(lift_per_momentum) * asarray(momentum_coefficient)
