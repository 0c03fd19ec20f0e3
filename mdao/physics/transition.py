"""Supply duct from the fan's circle to the injection slot, through super-ellipse sections.

Stations run from the fan face (t = 0, a circle of the fan's diameter) to the slot (t = 1, a
super-ellipse of the slot's exponent whose area is exactly the slot's ``width * height``).
Two schedules of the sections along the duct:

- ``"monotone-area"``: area by a smoothstep between inlet and outlet (monotone, zero slope at both
  ends), log aspect ratio and exponent linear; the semi-axes are solved from them.
- ``"linear"``: semi-axes interpolated linearly. Kept to show the trap: for a wide thin slot the
  area swells by tens of percent mid-duct, an unintended diffuser.
"""
from collections import namedtuple

import numpy as np

from mdao.physics import superellipse
from mdao.physics.numeric import arctan2, asarray

__all__ = ["TransitionStations", "SCHEDULES", "INPUTS", "FIELDS", "BETWEEN", "stations",
           "equivalent_cone_half_angle", "friction_integral"]

TransitionStations = namedtuple(
    "TransitionStations",
    "position area perimeter hydraulic_diameter semi_axis_y semi_axis_z exponent half_angle "
    "span_wall_half_angle thickness_wall_half_angle")
TransitionStations.__doc__ = (
    "Duct stations: position [m], area [m**2], perimeter [m], hydraulic_diameter [m], "
    "semi_axis_y [m], semi_axis_z [m], exponent [-] (all count long); half_angle [rad] (the "
    "equivalent cone's), span_wall_half_angle and thickness_wall_half_angle [rad] (the walls' "
    "own), count-1 long, between stations, positive where they diverge.")

SCHEDULES = ("monotone-area", "linear")
INPUTS = ("fan_diameter", "slot_width", "slot_height", "length", "slot_exponent")
FIELDS = ("position", "area", "perimeter", "hydraulic_diameter", "semi_axis_y", "semi_axis_z",
          "exponent", "half_angle", "span_wall_half_angle", "thickness_wall_half_angle")
#: Fields between stations (count - 1 long); the others are at the stations.
BETWEEN = ("half_angle", "span_wall_half_angle", "thickness_wall_half_angle")


def _positive(name, value):
    value = asarray(value)
    if np.any(~(value > 0.0)):
        raise ValueError(f"{name} must be > 0; got {float(value[~(value > 0.0)].ravel()[0])!r}")
    return value


def _slope_angle(position, height, d_position=None, d_height=None):
    """atan(diff(height) / diff(x)) between stations, and its differential."""
    dh, dx = np.diff(height, axis=-1), np.diff(position, axis=-1)
    angle = arctan2(dh, dx)
    if d_height is None:
        return angle
    ddh, ddx = np.diff(d_height, axis=-1), np.diff(d_position, axis=-1)
    return angle, (dx * ddh - dh * ddx) / (dx * dx + dh * dh)


def _half_angle(position, area, d_position=None, d_area=None):
    """atan(diff(sqrt(A/pi)) / diff(x)) between stations, and its differential."""
    radius = np.sqrt(area / np.pi)
    if d_area is None:
        return _slope_angle(position, radius)
    return _slope_angle(position, radius, d_position, d_area / (2.0 * np.sqrt(np.pi * area)))


def stations(fan_diameter, slot_width, slot_height, length, slot_exponent,
             schedule="monotone-area", count=33, derivatives=False):
    r"""Sections of the transition duct at ``count`` equally spaced stations.

    Inlet: circle of diameter :math:`D` (:math:`n = 2`). Outlet: super-ellipse of exponent
    :math:`n_1`, aspect :math:`w/h`, area exactly :math:`A_1 = w h`. With :math:`t \in [0, 1]`:
    :math:`n(t) = 2 + (n_1 - 2) t`, and for ``"monotone-area"``

    .. math::
        A(t) = A_0 + (A_1 - A_0)(3t^2 - 2t^3),\qquad \ln \mathrm{AR}(t) = t \ln(w/h),

    the semi-axes solved by :func:`mdao.physics.superellipse.semi_axes`; for ``"linear"`` the
    semi-axes run linearly from inlet to outlet. Hydraulic diameter :math:`4A/P`; equivalent cone
    half-angle between stations :math:`\arctan(\Delta\sqrt{A/\pi}/\Delta x)` (positive when
    diffusing). The walls' own half-angles between stations, spanwise (the side walls, at
    :math:`y = \pm a`) and thickness-wise (at :math:`z = \pm b`),

    .. math::
        \theta_y = \arctan\frac{\Delta a}{\Delta x},\qquad
        \theta_z = \arctan\frac{\Delta b}{\Delta x},

    positive where the wall diverges: a round-to-slot transition can contract overall (small
    equivalent cone angle) while its side walls diverge steeply (docs/theory.md, "Wall
    divergence").

    Parameters
    ----------
    fan_diameter : float or array_like
        Fan (inlet) diameter, [m], > 0.
    slot_width, slot_height : float or array_like
        Slot width (along the span) and height, [m], > 0.
    length : float or array_like
        Duct length, [m], > 0.
    slot_exponent : float or array_like
        Super-ellipse exponent of the outlet, [-], >= 2.
    schedule : {"monotone-area", "linear"}
        How the sections vary along the duct.
    count : int
        Number of stations, [-], integer >= 3 (the station axis is last).
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    stations : TransitionStations
        position [m], area [m**2], perimeter [m], hydraulic_diameter [m], semi_axis_y [m],
        semi_axis_z [m], exponent [-], each of shape ``(..., count)``; half_angle [rad] (the
        equivalent cone's, positive where the duct diffuses), span_wall_half_angle and
        thickness_wall_half_angle [rad] (positive where the wall diverges), each of shape
        ``(..., count - 1)`` (the fields of :data:`BETWEEN`).
    derivs : dict
        ``{(field, input): ndarray}`` for field in ``FIELDS`` and input in ``INPUTS``, each the
        field's shape (only when ``derivatives`` is true).

    References
    ----------
    .. [1] Weisstein, E. W., "Superellipse", MathWorld (Lame curve area and perimeter, computed
       by :mod:`mdao.physics.superellipse`).
    .. [2] Equivalent cone angle of a non-circular diffuser: Blevins, R. D., *Applied Fluid
       Dynamics Handbook*, Van Nostrand Reinhold, 1984, ch. 6 (from memory).

    Examples
    --------
    The outlet area is exactly w h = 0.25 * 0.005 and the inlet pi 0.08**2 / 4 (by hand):

    >>> s = stations(0.08, 0.25, 0.005, 0.3, 8.0, count=5)
    >>> round(float(s.area[-1]), 12), round(float(s.area[0]), 12)
    (0.00125, 0.005026548246)

    With linear semi-axes the side wall runs straight from the fan's radius 0.04 to the slot's
    semi-width 0.25 / (2 sqrt(G(8))): atan((0.126368... - 0.04) / 0.3) = 16.0608 deg (by hand,
    G(8) = Gamma(1.125)**2 / Gamma(1.25) = 0.978461...):

    >>> s = stations(0.08, 0.25, 0.005, 0.3, 8.0, schedule="linear", count=5)
    >>> [round(float(np.degrees(v)), 4) for v in s.span_wall_half_angle]
    [16.0608, 16.0608, 16.0608, 16.0608]
    """
    if schedule not in SCHEDULES:
        raise ValueError(f"schedule must be one of {SCHEDULES}; got {schedule!r}")
    if not isinstance(count, (int, np.integer)) or count < 3:
        raise ValueError(f"count must be an integer >= 3; got {count!r}")
    d, w, h, length = (_positive(k, v)[..., None] for k, v in
                       zip(INPUTS[:4], (fan_diameter, slot_width, slot_height, length)))
    n1 = asarray(slot_exponent)[..., None]
    if np.any(~(n1 >= 2.0)):
        raise ValueError(f"slot_exponent must be >= 2; got {float(n1[~(n1 >= 2.0)].ravel()[0])!r}")

    t = np.linspace(0.0, 1.0, count)
    shape = np.broadcast_shapes(d.shape, w.shape, h.shape, length.shape, n1.shape, t.shape)
    position = np.broadcast_to(t * length, shape)
    n = np.broadcast_to(2.0 + (n1 - 2.0) * t, shape)
    area0, area1, aspect1 = 0.25 * np.pi * d * d, w * h, w / h
    zero = np.zeros(shape)
    # differentials of the schedule's primary quantities, per input: (dA, da, db, dn) are filled
    # below; dn and d position are simple.
    d_n = {k: zero for k in INPUTS}
    d_n["slot_exponent"] = np.broadcast_to(t, shape) + zero
    d_pos = {k: zero for k in INPUTS}
    d_pos["length"] = np.broadcast_to(t, shape) + zero

    if schedule == "monotone-area":
        smooth = t * t * (3.0 - 2.0 * t)
        area = np.broadcast_to(area0 + (area1 - area0) * smooth, shape)
        aspect = np.broadcast_to(aspect1 ** t, shape)
        a, b, da, db = superellipse.semi_axes(area, aspect, n, derivatives=True)
        d_area = {"fan_diameter": 0.5 * np.pi * d * (1.0 - smooth) + zero,
                  "slot_width": h * smooth + zero, "slot_height": w * smooth + zero,
                  "length": zero, "slot_exponent": zero}
        d_aspect = {k: zero for k in INPUTS}
        d_aspect["slot_width"] = t * aspect / w
        d_aspect["slot_height"] = -t * aspect / h
        d_a = {k: da["area"] * d_area[k] + da["aspect"] * d_aspect[k] + da["n"] * d_n[k]
               for k in INPUTS}
        d_b = {k: db["area"] * d_area[k] + db["aspect"] * d_aspect[k] + db["n"] * d_n[k]
               for k in INPUTS}
    else:
        # outlet semi-axes of area w h and aspect w / h: a1 = w / (2 sqrt G(n1)) and
        # b1 = h / (2 sqrt G(n1)), each solved as the semi-axis of a "round" super-ellipse of
        # area w**2 (h**2) so that a1 holds no round-off of h, nor b1 of w
        a1, _, da1, _ = superellipse.semi_axes(w * w, 1.0, n1, derivatives=True)
        _, b1, _, db1 = superellipse.semi_axes(h * h, 1.0, n1, derivatives=True)
        a = np.broadcast_to(0.5 * d * (1.0 - t) + a1 * t, shape)
        b = np.broadcast_to(0.5 * d * (1.0 - t) + b1 * t, shape)
        area, area_a, area_b, area_n = superellipse.enclosed_area(a, b, n, derivatives=True)
        d_a, d_b = {}, {}
        for k in INPUTS:
            d_a1 = d_b1 = 0.0
            if k == "slot_width":
                d_a1 = da1["area"] * 2.0 * w
            elif k == "slot_height":
                d_b1 = db1["area"] * 2.0 * h
            elif k == "slot_exponent":
                d_a1, d_b1 = da1["n"], db1["n"]
            d_inlet = 0.5 * (1.0 - t) if k == "fan_diameter" else 0.0
            d_a[k] = d_inlet + d_a1 * t + zero
            d_b[k] = d_inlet + d_b1 * t + zero
        d_area = {k: area_a * d_a[k] + area_b * d_b[k] + area_n * d_n[k] for k in INPUTS}

    result = superellipse.perimeter(a, b, n, derivatives=derivatives)
    perimeter = result[0] if derivatives else result
    hydraulic = 4.0 * area / perimeter
    if not derivatives:
        return TransitionStations(position, area, perimeter, hydraulic, a, b, n,
                                  _half_angle(position, area), _slope_angle(position, a),
                                  _slope_angle(position, b))

    _, p_a, p_b, p_n = result
    derivs = {}
    for k in INPUTS:
        d_perimeter = p_a * d_a[k] + p_b * d_b[k] + p_n * d_n[k]
        angle, d_angle = _half_angle(position, area, d_pos[k], d_area[k])
        span, d_span = _slope_angle(position, a, d_pos[k], d_a[k])
        thickness, d_thickness = _slope_angle(position, b, d_pos[k], d_b[k])
        derivs["position", k] = d_pos[k]
        derivs["area", k] = d_area[k]
        derivs["perimeter", k] = d_perimeter
        derivs["hydraulic_diameter", k] = 4.0 * (d_area[k] - area * d_perimeter / perimeter) / perimeter
        derivs["semi_axis_y", k] = d_a[k] + zero
        derivs["semi_axis_z", k] = d_b[k] + zero
        derivs["exponent", k] = d_n[k] + zero
        derivs["half_angle", k] = d_angle
        derivs["span_wall_half_angle", k] = d_span
        derivs["thickness_wall_half_angle", k] = d_thickness
    return (TransitionStations(position, area, perimeter, hydraulic, a, b, n, angle, span,
                               thickness), derivs)


def equivalent_cone_half_angle(area_in, area_out, length):
    r"""Half-angle of the cone with the same length and end areas.

    .. math:: \theta_e = \arctan\frac{\sqrt{A_2/\pi} - \sqrt{A_1/\pi}}{L}

    Parameters
    ----------
    area_in, area_out : array_like
        Inlet and outlet areas, [m**2], > 0.
    length : array_like
        Axial length, [m], > 0.

    Returns
    -------
    theta : ndarray
        Equivalent cone half-angle, [rad]; positive for a diffuser, negative for a nozzle.

    Notes
    -----
    Steady attached flow needs a total angle :math:`2\theta_e` of at most about 5-7 deg (Mehta &
    Bradshaw 1979, from memory).

    References
    ----------
    .. [1] Mehta, R. D. and Bradshaw, P. "Design rules for small low speed wind tunnels."
       Aeronautical Journal 83 (1979): 443-449 (from memory).

    Examples
    --------
    A true cone of radii 1 -> 2 over length 10: atan(0.1) = 0.099668652491 (by hand).

    >>> round(float(equivalent_cone_half_angle(np.pi, 4.0 * np.pi, 10.0)), 12)
    0.099668652491
    """
    area_in, area_out = _positive("area_in", area_in), _positive("area_out", area_out)
    length = _positive("length", length)
    return np.arctan((np.sqrt(area_out / np.pi) - np.sqrt(area_in / np.pi)) / length)


def friction_integral(position, area, perimeter, darcy, area_ref, derivatives=False):
    r"""Friction loss coefficient of the duct, referred to the velocity at ``area_ref``.

    .. math::
        K_f = \int_0^L \frac{f}{D_h}\left(\frac{A_{ref}}{A}\right)^2 dx,\qquad D_h = \frac{4A}{P}

    by the trapezoid rule over the stations.

    Parameters
    ----------
    position : array_like, shape (count,)
        Station positions along the duct, [m], increasing (count >= 2).
    area, perimeter : array_like, shape (count,)
        Section areas [m**2] and perimeters [m], > 0.
    darcy : array_like, shape (n, count)
        Darcy friction factor at each station for each operating point, [-], > 0 (about
        0.01-0.1 in practice; 64/Re when laminar).
    area_ref : float or array_like, shape (n,)
        Area whose velocity the coefficient refers to, [m**2], > 0.
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    K : ndarray, shape (n,)
        Friction loss coefficient, [-].
    d : dict
        Partials of K keyed ``'position'``, ``'area'``, ``'perimeter'``, ``'darcy'`` (each
        (n, count): dK_i / dx_ij) and ``'area_ref'`` ((n,)); only when ``derivatives`` is true.

    References
    ----------
    .. [1] Darcy-Weisbach friction loss, e.g. White, F. M. *Fluid Mechanics*, 7th ed.,
       McGraw-Hill, 2011, sec. 6.6, with the hydraulic diameter for non-circular ducts (sec. 6.8).

    Examples
    --------
    A straight duct of constant section: K = f L / D_h = 0.02 * 1 / 1 (by hand).

    >>> x = np.linspace(0.0, 1.0, 3)
    >>> a = np.full(3, np.pi / 4)            # 1 m circular duct, 1 m long
    >>> p = np.full(3, np.pi)
    >>> float(friction_integral(x, a, p, np.full((1, 3), 0.02), np.pi / 4)[0])
    0.02
    """
    position = asarray(position)
    area = _positive("area", area)
    perimeter = _positive("perimeter", perimeter)
    darcy = np.atleast_2d(asarray(darcy))
    area_ref = _positive("area_ref", area_ref)
    ref = np.reshape(area_ref, (-1, 1)) if area_ref.ndim else area_ref
    scale = perimeter / (4.0 * area) * (ref / area) ** 2
    g = darcy * scale
    dx = np.diff(position)
    mean = 0.5 * (g[:, 1:] + g[:, :-1])
    k = np.sum(mean * dx, axis=-1)
    if not derivatives:
        return k
    weights = np.zeros(position.shape, dx.dtype)
    weights[1:] += 0.5 * dx
    weights[:-1] += 0.5 * dx
    d_position = np.zeros(g.shape, mean.dtype)
    d_position[:, 1:] += mean
    d_position[:, :-1] -= mean
    d_g = np.broadcast_to(weights, g.shape)
    return k, {"position": d_position,
               "area": -3.0 * g / area * d_g,
               "perimeter": g / perimeter * d_g,
               "darcy": scale * d_g + np.zeros(g.shape),
               "area_ref": 2.0 * k / area_ref}
