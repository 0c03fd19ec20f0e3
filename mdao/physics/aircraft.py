"""The aircraft around the blown wing: its lift coefficient, clean drag and main-propulsor thrust.

A parabolic drag polar C_D = C_D0 + C_L^2 / (pi AR e) for the whole aircraft with the clean,
unslotted wing (Raymer, D. P. *Aircraft Design: A Conceptual Approach*, AIAA, ch. 12, drag polar
and Oswald span efficiency; Anderson, J. D. *Aircraft Performance and Design*, McGraw-Hill 1999,
ch. 2 and 5; both from memory), in steady straight flight on a path angle gamma with
sin(gamma) = climb rate / V (the same sources, steady climb). The blown section is taken at the
aircraft's lift coefficient: a first-order assumption (docs/theory.md, "The aircraft around the
wing").

Plain NumPy; values and partial derivatives.
"""
from collections import namedtuple

import numpy as np

from mdao.physics.numeric import asarray

#: Standard acceleration of gravity [m/s^2] (CGPM 1901; ISO 80000-3).
STANDARD_GRAVITY = 9.80665

#: Arguments of :func:`flight_condition`, in order (the partials' keys).
FLIGHT_INPUTS = ("aircraft_mass", "wing_area", "zero_lift_drag", "aspect_ratio",
                 "span_efficiency", "climb_rate", "dynamic_pressure", "speed")

FlightCondition = namedtuple("FlightCondition",
                             ("lift_coefficient", "aircraft_clean_drag", "main_thrust_clean"))


def flight_condition(aircraft_mass, wing_area, zero_lift_drag, aspect_ratio, span_efficiency,
                     climb_rate, dynamic_pressure, speed, derivatives=False):
    """Lift coefficient, clean drag and main-propulsor thrust of the aircraft without blowing.

    With W = m g, sin(gamma) = w / V, cos(gamma) = sqrt(1 - sin(gamma)^2):

        C_L = W cos(gamma) / (q S)
        D = q S (C_D0 + C_L^2 / (pi AR e))
        T0 = D + W sin(gamma)

    Parameters
    ----------
    aircraft_mass : array_like
        Aircraft mass m without the blowing system [kg], > 0.
    wing_area : array_like
        Reference wing area S [m^2], > 0.
    zero_lift_drag : array_like
        Zero-lift drag coefficient C_D0 of the whole aircraft (clean, unslotted wing), > 0.
    aspect_ratio : array_like
        Wing aspect ratio AR, > 0.
    span_efficiency : array_like
        Oswald span efficiency e, in (0, 1].
    climb_rate : array_like
        Rate of climb w [m/s] (negative: descent), |w| < V.
    dynamic_pressure : array_like
        Freestream dynamic pressure q [Pa], > 0.
    speed : array_like
        True airspeed V [m/s], > 0.
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    FlightCondition
        ``lift_coefficient`` C_L [-], ``aircraft_clean_drag`` D [N] and ``main_thrust_clean``
        T0 [N] (the main propulsor's thrust without blowing), broadcast.
    partials : dict
        Only with ``derivatives``: ``{(output, argument): ndarray}`` for the argument names of
        :data:`FLIGHT_INPUTS`.

    References
    ----------
    Raymer, D. P. Aircraft Design: A Conceptual Approach, AIAA (drag polar, Oswald efficiency;
    from memory). Anderson, J. D. Aircraft Performance and Design, McGraw-Hill (1999), steady
    level flight and climb (from memory).

    Examples
    --------
    Level flight, W = 98.0665 N, q S = 98.0665 N: C_L = 1, D = 98.0665 (0.03 + 1/(8 pi)):

    >>> fc = flight_condition(10.0, 1.0, 0.03, 10.0, 0.8, 0.0, 98.0665, 20.0)
    >>> round(float(fc.lift_coefficient), 12), round(float(fc.main_thrust_clean), 9)
    (1.0, 6.843937057)
    """
    m, s, cd0, ar, e, w, q, v = np.broadcast_arrays(
        *(asarray(x) for x in (aircraft_mass, wing_area, zero_lift_drag, aspect_ratio,
                                          span_efficiency, climb_rate, dynamic_pressure, speed)))
    weight = m * STANDARD_GRAVITY
    sin_g = w / v
    cos2 = 1.0 - sin_g ** 2
    cos_g = np.sqrt(cos2)
    qs = q * s
    cl = weight * cos_g / qs
    k = 1.0 / (np.pi * ar * e)
    induced = k * weight ** 2 * cos2 / qs          # q S k C_L^2
    drag = qs * cd0 + induced
    thrust = drag + weight * sin_g
    value = FlightCondition(cl, drag, thrust)
    if not derivatives:
        return value
    g = STANDARD_GRAVITY
    # d(cos^2)/dw = -2 w / V^2, d(cos^2)/dV = 2 w^2 / V^3
    dcos2_dw, dcos2_dv = -2.0 * w / v ** 2, 2.0 * w ** 2 / v ** 3
    d = {
        ("lift_coefficient", "aircraft_mass"): g * cos_g / qs,
        ("lift_coefficient", "wing_area"): -cl / s,
        ("lift_coefficient", "dynamic_pressure"): -cl / q,
        ("lift_coefficient", "climb_rate"): weight / qs * dcos2_dw / (2.0 * cos_g),
        ("lift_coefficient", "speed"): weight / qs * dcos2_dv / (2.0 * cos_g),
        ("aircraft_clean_drag", "aircraft_mass"): 2.0 * induced / m,
        ("aircraft_clean_drag", "wing_area"): q * cd0 - induced / s,
        ("aircraft_clean_drag", "zero_lift_drag"): qs,
        ("aircraft_clean_drag", "aspect_ratio"): -induced / ar,
        ("aircraft_clean_drag", "span_efficiency"): -induced / e,
        ("aircraft_clean_drag", "climb_rate"): k * weight ** 2 / qs * dcos2_dw,
        ("aircraft_clean_drag", "dynamic_pressure"): s * cd0 - induced / q,
        ("aircraft_clean_drag", "speed"): k * weight ** 2 / qs * dcos2_dv,
    }
    for arg in FLIGHT_INPUTS:
        dd = d.get(("aircraft_clean_drag", arg))
        if dd is not None:
            d["main_thrust_clean", arg] = dd
    d["main_thrust_clean", "aircraft_mass"] = d["main_thrust_clean", "aircraft_mass"] + g * sin_g
    d["main_thrust_clean", "climb_rate"] = d["main_thrust_clean", "climb_rate"] + weight / v
    d["main_thrust_clean", "speed"] = d["main_thrust_clean", "speed"] - weight * w / v ** 2
    return value, d


def main_thrust(main_thrust_clean, drag_saving):
    """Main-propulsor thrust with the blown section, T = T0 - (D_clean,section - D_section) [N].

    Parameters
    ----------
    main_thrust_clean : array_like
        T0 [N], from :func:`flight_condition`.
    drag_saving : array_like
        The blown section's drag saving [N] (:mod:`mdao.physics.airfoil`).

    Returns
    -------
    ndarray
        T [N]; its partials are 1 and -1.

    Examples
    --------
    >>> float(main_thrust(6.5, 1.25))
    5.25
    """
    return asarray(main_thrust_clean) - asarray(drag_saving)


def clean_source_power(main_thrust_clean, speed, chain_efficiency, derivatives=False):
    """Source power of the clean aircraft's main propulsion, P0 = T0 V / eta_chain [W].

    Parameters
    ----------
    main_thrust_clean : array_like
        T0 [N].
    speed : array_like
        True airspeed V [m/s].
    chain_efficiency : array_like
        Thrust power per source power of the main propulsion chain, in (0, 1].
    derivatives : bool
        Also return ``{argument: partial}``.

    Returns
    -------
    ndarray
        P0 [W] (the same power-at-source accounting as docs/theory.md, "Net power").

    Examples
    --------
    >>> float(clean_source_power(10.0, 20.0, 0.8))
    250.0
    """
    t0, v, eta = (asarray(x) for x in (main_thrust_clean, speed, chain_efficiency))
    p0 = t0 * v / eta
    if not derivatives:
        return p0
    return p0, {"main_thrust_clean": v / eta, "speed": t0 / eta, "chain_efficiency": -p0 / eta}


#: Arguments of :func:`added_mass_thrust`, in order (the partials' keys).
ADDED_MASS_INPUTS = ("aircraft_mass", "added_mass", "wing_area", "aspect_ratio",
                     "span_efficiency", "climb_rate", "dynamic_pressure", "speed")


def added_mass_thrust(aircraft_mass, added_mass, wing_area, aspect_ratio, span_efficiency,
                      climb_rate, dynamic_pressure, speed, derivatives=False):
    r"""Main-propulsor thrust that an added mass costs in steady flight, [N].

    The difference of :func:`flight_condition`'s ``main_thrust_clean`` between the masses
    :math:`m + \Delta m` and :math:`m`, written so that the zero-lift drag cancels exactly:

    .. math::
        \Delta T = \frac{g^2 \cos^2\gamma}{\pi A\!R\, e\, q S}\left[(m + \Delta m)^2 - m^2\right]
                   + \Delta m\, g \sin\gamma

    (induced drag of the extra lift, and the extra weight's component along the path).

    Parameters
    ----------
    aircraft_mass : array_like
        m [kg], > 0.
    added_mass : array_like
        :math:`\Delta m` [kg], >= 0.
    wing_area, aspect_ratio, span_efficiency, climb_rate, dynamic_pressure, speed : array_like
        As for :func:`flight_condition`.
    derivatives : bool
        Also return the partial derivatives (keys :data:`ADDED_MASS_INPUTS`).

    Returns
    -------
    thrust : ndarray
        :math:`\Delta T` [N].
    partials : dict
        Only with ``derivatives``.

    References
    ----------
    As :func:`flight_condition` (parabolic polar, steady climb; from memory).

    Examples
    --------
    Level flight, 1 kg added to 10 kg, q S = 98.0665 N, AR e = 8: by hand
    9.80665^2 (121 - 100) / (8 pi 98.0665) = 0.819408 N, the same as the difference of the
    clean thrusts:

    >>> dt = added_mass_thrust(10.0, 1.0, 1.0, 10.0, 0.8, 0.0, 98.0665, 20.0)
    >>> a = flight_condition(11.0, 1.0, 0.03, 10.0, 0.8, 0.0, 98.0665, 20.0).main_thrust_clean
    >>> b = flight_condition(10.0, 1.0, 0.03, 10.0, 0.8, 0.0, 98.0665, 20.0).main_thrust_clean
    >>> round(float(dt), 6), round(float(a - b), 6)
    (0.819408, 0.819408)
    """
    m, dm, s, ar, e, w, q, v = np.broadcast_arrays(
        *(asarray(x) for x in (aircraft_mass, added_mass, wing_area, aspect_ratio,
                                          span_efficiency, climb_rate, dynamic_pressure, speed)))
    g = STANDARD_GRAVITY
    sin_g = w / v
    cos2 = 1.0 - sin_g ** 2
    base = g * g / (np.pi * ar * e * q * s)       # A / cos^2(gamma)
    extra = (2.0 * m + dm) * dm                    # (m + dm)^2 - m^2
    induced = base * cos2 * extra
    thrust = induced + dm * g * sin_g
    if not derivatives:
        return thrust
    d = {
        "aircraft_mass": base * cos2 * 2.0 * dm,
        "added_mass": base * cos2 * 2.0 * (m + dm) + g * sin_g,
        "wing_area": -induced / s,
        "aspect_ratio": -induced / ar,
        "span_efficiency": -induced / e,
        "dynamic_pressure": -induced / q,
        "climb_rate": base * extra * (-2.0 * w / v ** 2) + dm * g / v,
        "speed": base * extra * (2.0 * w ** 2 / v ** 3) - dm * g * w / v ** 2,
    }
    return thrust, d
