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
   calibrated reduced-order model (design notes, "Airfoil drag and thrust").
"""
import numpy as np


def slot_drag_at(slot_ratio, slot_drag, slot_drag_per_ratio):
    r"""Drag penalty of the slotted shape, :math:`\Delta C_{D,slot} = s_0 + s_1 r_s`.

    Parameters
    ----------
    slot_ratio : array_like
        Injection slot height over chord, [-] (calibrated range, typically 0.002-0.03).
    slot_drag : array_like
        Penalty at zero slot ratio (the calibration's intercept), [-].
    slot_drag_per_ratio : array_like
        Change of the penalty per unit slot ratio, [-].

    Returns
    -------
    ndarray
        Drag coefficient increment, [-].

    References
    ----------
    .. [1] Module references [2].

    Examples
    --------
    >>> round(float(slot_drag_at(0.01, 0.02, 0.5)), 12)
    0.025
    """
    return np.asarray(slot_drag, float) + np.asarray(slot_drag_per_ratio, float) * slot_ratio


def drag_per_momentum_at(slot_ratio, drag_per_momentum, drag_per_momentum_per_ratio):
    r"""Drag per momentum coefficient :math:`\beta = \beta_0 + \beta_1 r_s`, i.e. dC_D/dC_mu of the linear term.

    Parameters
    ----------
    slot_ratio : array_like
        Injection slot height over chord, [-].
    drag_per_momentum : array_like
        Drag per momentum coefficient at zero slot ratio, [-] (negative).
    drag_per_momentum_per_ratio : array_like
        Change of the drag per momentum coefficient per unit slot ratio, [-].

    Returns
    -------
    ndarray
        Drag per momentum coefficient, [-].

    References
    ----------
    .. [1] Module references [2].

    Examples
    --------
    >>> round(float(drag_per_momentum_at(0.01, -1.2, 10.0)), 12)
    -1.1
    """
    return (np.asarray(drag_per_momentum, float)
            + np.asarray(drag_per_momentum_per_ratio, float) * slot_ratio)


def drag_coefficient(momentum_coefficient, slot_ratio, drag_clean, slot_drag, slot_drag_per_ratio,
                     drag_per_momentum, drag_per_momentum_per_ratio, drag_quadratic=0.0,
                     derivatives=False):
    r"""Section drag coefficient of the blown airfoil (negative = net thrust).

    .. math::
        C_D = C_{D,clean} + (s_0 + s_1 r_s) + (\beta_0 + \beta_1 r_s) C_\mu + k_2 C_\mu^2

    Parameters
    ----------
    momentum_coefficient : array_like
        Jet momentum coefficient C_mu, [-] (>= 0, inside the calibrated range).
    slot_ratio : array_like
        Injection slot height over chord, [-].
    drag_clean : array_like
        Drag coefficient of the clean (unslotted) section at the same lift, [-].
    slot_drag, slot_drag_per_ratio : array_like
        Slotted-shape penalty intercept and slope in slot ratio, [-].
    drag_per_momentum, drag_per_momentum_per_ratio : array_like
        Drag per momentum coefficient, intercept and slope in slot ratio, [-].
    drag_quadratic : array_like
        Coefficient of C_mu^2, [-] (0 for the linear model).
    derivatives : bool
        Also return a dict of partials keyed by every argument name above.

    Returns
    -------
    cd : ndarray
        Drag coefficient on the blown planform, [-].

    References
    ----------
    .. [1] Module references [1], [2].

    Examples
    --------
    >>> round(float(drag_coefficient(0.03, 0.01, 0.012, 0.02, 0.0, -1.2, 0.0)), 12)
    -0.004
    """
    cmu = np.asarray(momentum_coefficient, float)
    rs = np.asarray(slot_ratio, float)
    s1 = np.asarray(slot_drag_per_ratio, float)
    b1 = np.asarray(drag_per_momentum_per_ratio, float)
    k2 = np.asarray(drag_quadratic, float)
    beta = drag_per_momentum_at(rs, drag_per_momentum, b1)
    cd = (np.asarray(drag_clean, float) + slot_drag_at(rs, slot_drag, s1) + beta * cmu
          + k2 * cmu**2)
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
    r"""Lift coefficient increment from blowing, :math:`\Delta C_L = (dC_L/dC_\mu)\,C_\mu`.

    Parameters
    ----------
    momentum_coefficient : array_like
        Jet momentum coefficient, [-].
    lift_per_momentum : array_like
        Calibrated lift slope against C_mu, [-].

    Returns
    -------
    ndarray
        Lift coefficient increment, [-].

    References
    ----------
    .. [1] Module references [1], [2].

    Examples
    --------
    >>> round(float(lift_increment(0.03, 5.0)), 12)
    0.15
    """
    return np.asarray(lift_per_momentum, float) * np.asarray(momentum_coefficient, float)
