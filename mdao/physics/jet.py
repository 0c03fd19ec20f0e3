r"""Jet kinematics: from the momentum coefficient to the jet's velocity, flows and Mach number.

With slot height :math:`h = r_s c`, slot area :math:`A_j = h b`, planform :math:`S = c b` and
:math:`\dot m = \rho A_j V_j`, the momentum coefficient
:math:`C_\mu = \dot m V_j / (q S)` gives

.. math::
    \frac{V_j}{V} = \sqrt{\frac{C_\mu}{2 r_s}}, \qquad Q = A_j V_j, \qquad \dot m = \rho Q.

The jet is taken at the freestream density (incompressible jet; the jet Mach number is reported so
that a limit can keep that assumption honest).

References
----------
.. [1] Englar, R. J. "Circulation control pneumatic aerodynamics: blown force and moment
   augmentation and modification." AIAA Progress in Astronautics and Aeronautics 192 (2001),
   for the definition of the momentum coefficient used throughout blown-airfoil work
   (from memory).
"""
from typing import NamedTuple

import numpy as np


class JetState(NamedTuple):
    """Jet quantities at each operating point (SI)."""

    dynamic_pressure: np.ndarray  #: freestream dynamic pressure [Pa]
    jet_velocity: np.ndarray  #: jet velocity at the injection slot [m/s]
    mass_flow: np.ndarray  #: jet mass flow, all slots [kg/s]
    volume_flow: np.ndarray  #: jet volume flow, all slots [m^3/s]
    jet_mach: np.ndarray  #: jet Mach number [-]
    slot_height: np.ndarray  #: injection slot height [m]


#: Inputs of :func:`kinematics`, in order; the keys of its derivative dictionary are
#: ``(field, input)`` pairs over these names.
KINEMATICS_INPUTS = ("momentum_coefficient", "slot_ratio", "speed", "density", "chord",
                     "blown_span", "speed_of_sound")


def dynamic_pressure(density, speed):
    r"""Freestream dynamic pressure.

    .. math:: q = \frac{\rho V^2}{2}

    Parameters
    ----------
    density : array_like
        Freestream density, [kg/m^3], > 0.
    speed : array_like
        Freestream (true air) speed, [m/s], >= 0.

    Returns
    -------
    q : ndarray
        Dynamic pressure, [Pa].

    References
    ----------
    .. [1] Anderson, J. D. *Fundamentals of Aerodynamics*, 6th ed., McGraw-Hill, 2017, ch. 1
       (definition of the dynamic pressure; from memory).

    Examples
    --------
    ISA sea-level density at 40 m/s; by hand 1.225 * 40**2 / 2 = 980 Pa:

    >>> round(float(dynamic_pressure(1.225, 40.0)), 9)
    980.0
    """
    return 0.5 * np.asarray(density, float) * np.asarray(speed, float) ** 2


def jet_velocity_ratio(momentum_coefficient, slot_ratio):
    r"""Jet to freestream velocity ratio from the momentum coefficient.

    .. math::
        \frac{V_j}{V} = \sqrt{\frac{C_\mu}{2 r_s}}

    from :math:`C_\mu = \dot m V_j/(q S)` with :math:`\dot m = \rho\, r_s c\, b\, V_j` and
    :math:`S = c b` (jet at the freestream density).

    Parameters
    ----------
    momentum_coefficient : array_like
        Momentum coefficient :math:`C_\mu`, [-], >= 0.
    slot_ratio : array_like
        Injection slot height over chord :math:`r_s`, [-], > 0.

    Returns
    -------
    ratio : ndarray
        Velocity ratio :math:`V_j / V`, [-].

    Raises
    ------
    ValueError
        If any slot ratio is <= 0 or any momentum coefficient is < 0.

    References
    ----------
    .. [1] Englar, R. J. "Circulation control pneumatic aerodynamics: blown force and moment
       augmentation and modification." AIAA Progress in Astronautics and Aeronautics 192 (2001)
       (definition of the momentum coefficient; from memory).
    .. [2] docs/theory.md, section "Jet kinematics" (the one-line derivation of the ratio).

    Examples
    --------
    By hand: sqrt(0.08 / (2 * 0.01)) = sqrt(4) = 2.

    >>> float(jet_velocity_ratio(0.08, 0.01))
    2.0
    """
    c = np.asarray(momentum_coefficient, float)
    r = np.asarray(slot_ratio, float)
    if np.any(r <= 0):
        raise ValueError(f"slot_ratio must be > 0, got {np.min(r)!r}")
    if np.any(c < 0):
        raise ValueError(f"momentum_coefficient must be >= 0, got {np.min(c)!r}")
    return np.sqrt(c / (2.0 * r))


def kinematics(momentum_coefficient, slot_ratio, speed, density, chord, blown_span,
               speed_of_sound, derivatives=False):
    r"""Jet state for a momentum coefficient, vectorized over operating points.

    .. math::
        q = \tfrac12\rho V^2,\quad V_j = V\sqrt{\frac{C_\mu}{2 r_s}},\quad h = r_s c,\quad
        Q = h\, b\, V_j,\quad \dot m = \rho Q,\quad M_j = \frac{V_j}{a}

    Parameters
    ----------
    momentum_coefficient : array_like
        :math:`C_\mu = \dot m V_j/(q S)`, [-], >= 0.
    slot_ratio : array_like
        Injection slot height over chord :math:`r_s`, [-], > 0.
    speed : array_like
        Freestream speed, [m/s], > 0.
    density : array_like
        Freestream density, [kg/m^3], > 0.
    chord, blown_span : array_like
        Chord and blown span, [m], > 0.
    speed_of_sound : array_like
        Freestream speed of sound, [m/s], > 0.
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    state : JetState
        dynamic_pressure [Pa], jet_velocity [m/s], mass_flow [kg/s], volume_flow [m^3/s]
        (all slots), jet_mach [-] and slot_height [m], each of the inputs' broadcast shape.
    partials : dict
        Only with ``derivatives``: ``{(field, input): ndarray}`` for every field of
        :class:`JetState` and every name in :data:`KINEMATICS_INPUTS` it depends on. At
        :math:`C_\mu = 0` (jet off) the derivative in :math:`C_\mu`, infinite there, is set to 0.

    References
    ----------
    .. [1] Englar, R. J. "Circulation control pneumatic aerodynamics: blown force and moment
       augmentation and modification." AIAA Progress in Astronautics and Aeronautics 192 (2001)
       (definition of the momentum coefficient; from memory).
    .. [2] docs/theory.md, section "Jet kinematics".

    Examples
    --------
    By hand: V_j = 40 * sqrt(0.08 / 0.02) = 80 m/s, h = 0.01 * 0.5 = 0.005 m,
    Q = 0.005 * 2 * 80 = 0.8 m^3/s:

    >>> s = kinematics(0.08, 0.01, 40.0, 1.225, 0.5, 2.0, 340.0)
    >>> float(s.jet_velocity), round(float(s.volume_flow), 6), float(s.slot_height)
    (80.0, 0.8, 0.005)
    """
    c = np.asarray(momentum_coefficient, float)
    r = np.asarray(slot_ratio, float)
    v = np.asarray(speed, float)
    rho = np.asarray(density, float)
    ch = np.asarray(chord, float)
    b = np.asarray(blown_span, float)
    a = np.asarray(speed_of_sound, float)
    ratio = jet_velocity_ratio(c, r)
    q = 0.5 * rho * v * v
    vj = v * ratio
    h = r * ch
    area = h * b
    vol = area * vj
    mdot = rho * vol
    mach = vj / a
    state = JetState(q, vj, mdot, vol, mach, h)
    if not derivatives:
        return state

    with np.errstate(divide="ignore", invalid="ignore"):
        dvj_dc = np.where(c > 0, 0.5 * vj / np.where(c > 0, c, 1.0), 0.0)
    dvj_dr = -0.5 * vj / r
    dvj_dv = ratio
    d = {
        ("dynamic_pressure", "density"): 0.5 * v * v + 0 * q,
        ("dynamic_pressure", "speed"): rho * v + 0 * q,
        ("jet_velocity", "momentum_coefficient"): dvj_dc,
        ("jet_velocity", "slot_ratio"): dvj_dr,
        ("jet_velocity", "speed"): dvj_dv + 0 * vj,
        ("slot_height", "slot_ratio"): ch + 0 * h,
        ("slot_height", "chord"): r + 0 * h,
    }
    # volume flow Q = r c b Vj
    d["volume_flow", "momentum_coefficient"] = area * dvj_dc
    d["volume_flow", "slot_ratio"] = ch * b * vj + area * dvj_dr
    d["volume_flow", "speed"] = area * dvj_dv
    d["volume_flow", "chord"] = r * b * vj
    d["volume_flow", "blown_span"] = h * vj
    for k in ("momentum_coefficient", "slot_ratio", "speed", "chord", "blown_span"):
        d["mass_flow", k] = rho * d["volume_flow", k]
    d["mass_flow", "density"] = vol + 0 * mdot
    for k in ("momentum_coefficient", "slot_ratio", "speed"):
        d["jet_mach", k] = d["jet_velocity", k] / a
    d["jet_mach", "speed_of_sound"] = -mach / a
    return state, d
