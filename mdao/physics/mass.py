r"""Mass of the blowing system: fans, their motors and the internal ducts.

A first-order weight estimate of the kind used in conceptual design, built from three terms:

.. math::
    m = k_{inst}\left[P_{rated}\left(\frac{1}{p_{fan}} + \frac{1}{p_{motor}}\right)
        + \sigma_{duct} A_{wet}\right]

- *Fans and motors* from the rated shaft power :math:`P_{rated}` of all fans and a specific power
  (power per unit mass) for the fan (rotor, stator, housing) and for the motor with its
  controller: :func:`rotating_mass`.
- *Ducts* from their wetted area :math:`A_{wet}` and an areal density :math:`\sigma_{duct}` of
  the wall laminate: :func:`transition_wetted_area` integrates the perimeter of the geometric
  duct's stations along its length (trapezoid rule); :func:`lumped_wetted_area` estimates it from
  the blown planform when only the lumped duct is known.
- An *installation factor* :math:`k_{inst} \ge 1` for mounts, wiring, fasteners and sealing.

The rated shaft power is a design quantity of its own (the aircraft optimizer picks it);
:func:`power_headroom` gives the margin constraint ``rated - margin * shaft >= 0`` that keeps every
segment's shaft power, with a power margin, within the rating.

Typical values (all *from memory*, to be replaced by the designer's own component data):

================================  ==================  ============================================
quantity                          typical             note
================================  ==================  ============================================
electric motor specific power     3-7 kW/kg           small brushless outrunners, continuous
                                                      rating, with a share of the controller
ducted-fan unit (no motor)        1.5-4 kW/kg         rotor, stator vanes and shroud of small fans
duct wall areal density           0.6-2 kg/m**2       thin glass or carbon laminate, with resin
                                                      and local stiffeners
installation factor               1.1-1.4             mounts, wiring, sealing (common practice,
                                                      no source)
power margin                      1.1-1.5             rating over the largest segment's need
                                                      (common practice, no source)
================================  ==================  ============================================

The lumped duct's wetted area over the blown planform, about 1.5, is this project's estimate: an
internal channel from the suction slot near the trailing edge to the injection slot near the
leading edge, top and bottom walls, some 0.7 chord long (common practice, no source).

References
----------
.. [1] Raymer, D. P. *Aircraft Design: A Conceptual Approach*, 6th ed., AIAA (2018), chapter 15:
   weight build-up from component weights and installation factors (from memory).
.. [2] Gudmundsson, S. *General Aviation Aircraft Design*, 2nd ed., Butterworth-Heinemann (2022),
   chapter on weight analysis (from memory).
"""
import numpy as np

from mdao.physics.numeric import asarray

__all__ = ["rotating_mass", "transition_wetted_area", "lumped_wetted_area",
           "blowing_system_mass", "power_headroom"]


def _positive(name, value, allow_zero=False):
    value = asarray(value)
    bad = ~(value >= 0.0) if allow_zero else ~(value > 0.0)
    if np.any(bad):
        allowed = ">= 0" if allow_zero else "> 0"
        raise ValueError(f"{name} must be {allowed}; got {float(value[bad].ravel()[0])!r}")
    return value


def rotating_mass(rated_shaft_power, fan_specific_power, motor_specific_power,
                  derivatives=False):
    r"""Mass of the fans and their motors from the rated shaft power, [kg].

    .. math::
        m_{rot} = P_{rated}\left(\frac{1}{p_{fan}} + \frac{1}{p_{motor}}\right)

    Parameters
    ----------
    rated_shaft_power : array_like
        Rated shaft power of all fans together, [W], >= 0.
    fan_specific_power : array_like
        Shaft power per unit fan mass (rotor, stator, housing), [W/kg], > 0; typically
        1500-4000 (from memory).
    motor_specific_power : array_like
        Shaft power per unit motor-and-controller mass, [W/kg], > 0; typically 3000-7000 (from
        memory).
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    mass : ndarray
        Fan and motor mass, [kg].
    partials : dict
        Only with ``derivatives``: ``{name: d mass / d input}`` for ``"rated_shaft_power"``,
        ``"fan_specific_power"``, ``"motor_specific_power"``.

    Raises
    ------
    ValueError
        For a negative power or a specific power that is not positive.

    References
    ----------
    .. [1] Raymer, D. P. *Aircraft Design: A Conceptual Approach*, 6th ed., AIAA (2018),
       chapter 15 (component weight from a specific power; from memory).

    Examples
    --------
    By hand: 1000 (1/2500 + 1/5000) = 0.4 + 0.2 = 0.6 kg.

    >>> round(float(rotating_mass(1000.0, 2500.0, 5000.0)), 12)
    0.6
    """
    p = _positive("rated_shaft_power", rated_shaft_power, allow_zero=True)
    sf = _positive("fan_specific_power", fan_specific_power)
    sm = _positive("motor_specific_power", motor_specific_power)
    mass = p * (1.0 / sf + 1.0 / sm)
    if not derivatives:
        return mass
    z = 0.0 * mass
    return mass, {"rated_shaft_power": 1.0 / sf + 1.0 / sm + z,
                  "fan_specific_power": -p / sf ** 2 + z,
                  "motor_specific_power": -p / sm ** 2 + z}


def transition_wetted_area(position, perimeter, fans=1, derivatives=False):
    r"""Wetted area of ``fans`` transition ducts from their station perimeters, [m**2].

    Trapezoid rule along the last axis:

    .. math::
        A_{wet} = N_f \sum_{i=0}^{m-2} \tfrac12 (P_i + P_{i+1})(x_{i+1} - x_i)

    Parameters
    ----------
    position : array_like, shape (..., m)
        Station positions along the duct, [m], increasing, m >= 2.
    perimeter : array_like, shape (..., m)
        Section perimeter at each station, [m], >= 0.
    fans : int
        Number of identical ducts (one per fan), [-], integer >= 1.
    derivatives : bool
        Also return the partial derivatives with respect to every station.

    Returns
    -------
    area : ndarray, shape (...)
        Wetted area of all ducts, [m**2].
    d_position, d_perimeter : ndarray, shape (..., m)
        Only with ``derivatives``: d area / d position_i and d area / d perimeter_i.

    Notes
    -----
    With the project's 33 stations the trapezoid rule's error on a smooth transition is far below
    the uncertainty of the areal density. The perimeters themselves come from
    :func:`mdao.physics.transition.stations`.

    References
    ----------
    .. [1] Composite trapezoid rule, e.g. Press, W. H. et al. *Numerical Recipes*, 3rd ed.,
       Cambridge University Press (2007), section 4.1.

    Examples
    --------
    A straight round duct of 0.1 m diameter and 0.5 m length, two of them; by hand
    2 * pi * 0.1 * 0.5 = 0.1 pi:

    >>> x = np.linspace(0.0, 0.5, 5)
    >>> round(float(transition_wetted_area(x, np.full(5, np.pi * 0.1), fans=2)), 10)
    0.3141592654
    """
    if isinstance(fans, bool) or not isinstance(fans, (int, np.integer)) or fans < 1:
        raise ValueError(f"fans must be an integer >= 1; got {fans!r}")
    x = asarray(position)
    p = _positive("perimeter", perimeter, allow_zero=True)
    if x.shape[-1:] != p.shape[-1:] or x.shape[-1] < 2:
        raise ValueError(f"position and perimeter must have the same number (>= 2) of stations "
                         f"along the last axis; got shapes {x.shape} and {p.shape}")
    dx = np.diff(x, axis=-1)
    if np.any(~(dx > 0.0)):
        raise ValueError("position must increase strictly along the duct; got steps "
                         f"down to {float(dx.min())!r} m")
    x, p = np.broadcast_arrays(x, p)
    mean = 0.5 * (p[..., 1:] + p[..., :-1])
    area = fans * np.sum(mean * dx, axis=-1)
    if not derivatives:
        return area
    d_p = np.zeros(p.shape)
    d_p[..., 1:] += 0.5 * dx
    d_p[..., :-1] += 0.5 * dx
    d_x = np.zeros(x.shape)
    d_x[..., 1:] += mean
    d_x[..., :-1] -= mean
    return area, fans * d_x, fans * d_p


def lumped_wetted_area(chord, blown_span, wetted_ratio, derivatives=False):
    r"""Wetted area of the internal ducting estimated from the blown planform, [m**2].

    .. math::
        A_{wet} = r_{wet}\, c\, b

    Parameters
    ----------
    chord : array_like
        Chord of the blown section, [m], > 0.
    blown_span : array_like
        Blown span, [m], > 0.
    wetted_ratio : array_like
        Duct wetted area over the blown planform, [-], >= 0; about 1.5 for a channel from a
        trailing-edge suction slot to a leading-edge injection slot (this project's estimate,
        common practice, no source).
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    area : ndarray
        Wetted area, [m**2].
    partials : dict
        Only with ``derivatives``: ``{"chord", "blown_span", "wetted_ratio"}``.

    References
    ----------
    .. [1] Raymer, D. P. *Aircraft Design: A Conceptual Approach*, 6th ed., AIAA (2018),
       chapter 15 (duct and skin weights from wetted area times an areal
       density; from memory). The ratio of about 1.5 is this project's estimate (common
       practice, no source).

    Examples
    --------
    By hand: 1.5 * 0.42 * 3.2 = 2.016 m**2.

    >>> round(float(lumped_wetted_area(0.42, 3.2, 1.5)), 12)
    2.016
    """
    c = _positive("chord", chord)
    b = _positive("blown_span", blown_span)
    r = _positive("wetted_ratio", wetted_ratio, allow_zero=True)
    area = r * c * b
    if not derivatives:
        return area
    z = 0.0 * area
    return area, {"chord": r * b + z, "blown_span": r * c + z, "wetted_ratio": c * b + z}


def blowing_system_mass(rotating, wetted_area, duct_areal_density, installation_factor,
                        derivatives=False):
    r"""Installed mass of the blowing system, [kg].

    .. math::
        m = k_{inst}\,(m_{rot} + \sigma_{duct} A_{wet})

    Parameters
    ----------
    rotating : array_like
        Fan and motor mass (:func:`rotating_mass`), [kg], >= 0.
    wetted_area : array_like
        Duct wetted area, [m**2], >= 0.
    duct_areal_density : array_like
        Duct wall mass per unit wetted area, [kg/m**2], >= 0; typically 0.6-2 (from memory).
    installation_factor : array_like
        Installed over bare mass, [-], >= 1; typically 1.1-1.4 (common practice, no source).
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    mass : ndarray
        Installed mass, [kg].
    partials : dict
        Only with ``derivatives``: ``{"rotating", "wetted_area", "duct_areal_density",
        "installation_factor"}``.

    References
    ----------
    .. [1] Raymer, D. P. *Aircraft Design: A Conceptual Approach*, 6th ed., AIAA (2018),
       chapter 15 (weight build-up with installation factors; from memory).
    .. [2] Gudmundsson, S. *General Aviation Aircraft Design*, 2nd ed., Butterworth-Heinemann
       (2022), chapter on weight analysis (from memory).

    Examples
    --------
    By hand: 1.2 (0.6 + 1.2 * 2.0) = 3.6 kg.

    >>> round(float(blowing_system_mass(0.6, 2.0, 1.2, 1.2)), 12)
    3.6
    """
    m = _positive("rotating", rotating, allow_zero=True)
    a = _positive("wetted_area", wetted_area, allow_zero=True)
    s = _positive("duct_areal_density", duct_areal_density, allow_zero=True)
    k = asarray(installation_factor)
    if np.any(~(k >= 1.0)):
        raise ValueError(f"installation_factor must be >= 1; got {float(k[~(k >= 1.0)].ravel()[0])!r}")
    bare = m + s * a
    mass = k * bare
    if not derivatives:
        return mass
    z = 0.0 * mass
    return mass, {"rotating": k + z, "wetted_area": k * s + z, "duct_areal_density": k * a + z,
                  "installation_factor": bare + z}


def power_headroom(rated_shaft_power, fan_shaft_power, power_margin, derivatives=False):
    r"""Rated shaft power left over at an operating point, [W].

    .. math:: h = P_{rated} - k_P\, P_{shaft}

    An optimizer that holds this at or above zero in every segment sizes the fans and motors for
    the most demanding segment with the margin asked for. This exact, per-segment form is used
    rather than a smooth maximum (such as Kreisselmeier-Steinhauser) over the segments, so the
    rating is never overestimated.

    Parameters
    ----------
    rated_shaft_power : array_like
        Rated shaft power of all fans, [W], >= 0.
    fan_shaft_power : array_like
        Shaft power needed at the operating point, [W], >= 0.
    power_margin : array_like
        Required rating over the need, [-], >= 1; typically 1.1-1.5 (common practice, no source).
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    headroom : ndarray
        Headroom, [W]; negative when the rating is too small.
    partials : dict
        Only with ``derivatives``: ``{"rated_shaft_power", "fan_shaft_power", "power_margin"}``.

    References
    ----------
    .. [1] Martins, J. R. R. A. and Ning, A. *Engineering Design Optimization*, Cambridge
       University Press (2021), chapter 5 (inequality constraints one per operating point
       rather than aggregated by a Kreisselmeier-Steinhauser function; from memory).

    Examples
    --------
    By hand: 1000 - 1.25 * 600 = 250 W.

    >>> float(power_headroom(1000.0, 600.0, 1.25))
    250.0
    """
    r = asarray(rated_shaft_power)
    p = asarray(fan_shaft_power)
    k = asarray(power_margin)
    if np.any(~(k >= 1.0)):
        raise ValueError(f"power_margin must be >= 1; got {float(k[~(k >= 1.0)].ravel()[0])!r}")
    headroom = r - k * p
    if not derivatives:
        return headroom
    z = 0.0 * headroom
    return headroom, {"rated_shaft_power": 1.0 + z, "fan_shaft_power": -k + z, "power_margin": -p + z}
