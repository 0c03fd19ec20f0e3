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

from mdao.physics.bounds import snap
from mdao.physics.numeric import asarray

#: Distance below 0 taken as round-off in a momentum coefficient, [-]: an optimizer or
#: integrator that drives C_mu to its bound of 0 lands at -2e-17 or so; 1e-12 is far above that
#: and far below any C_mu that blows (1e-4 and up).
MOMENTUM_ROUND_OFF = 1e-12


def non_negative_momentum(momentum_coefficient):
    """The momentum coefficient checked >= 0; values less than :data:`MOMENTUM_ROUND_OFF` below
    0 (round-off at the bound) are 0.

    Raises
    ------
    ValueError
        If any value is further below 0 (NaN passes: it propagates to the outputs).

    Examples
    --------
    >>> non_negative_momentum(np.array([-2e-17, 0.03])).tolist()
    [0.0, 0.03]
    """
    c = momentum_coefficient
    if np.any(np.real(c) < 0):
        c = snap(c, lower=0.0, tolerance=MOMENTUM_ROUND_OFF)
        bad = np.real(c) < 0
        if np.any(bad):
            raise ValueError(f"momentum_coefficient must be >= 0, got "
                             f"{float(np.real(c)[bad].ravel()[0])!r}")
    return c


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
    return 0.5 * asarray(density) * asarray(speed) ** 2


def jet_dynamic_head(momentum_coefficient, slot_ratio, dynamic_pressure, derivatives=False):
    r"""The incompressible jet's dynamic head, [Pa], from the momentum coefficient.

    .. math::
        \frac{\rho V_j^2}{2} = q \frac{C_\mu}{2 r_s}
        \quad\text{since}\quad V_j = V \sqrt{C_\mu / (2 r_s)}

    Linear in :math:`C_\mu`, so its derivative is finite at :math:`C_\mu = 0`, where that of
    :math:`V_j` is not: the required pressure rise is carried on this head rather than on the
    jet velocity.

    Parameters
    ----------
    momentum_coefficient : array_like
        :math:`C_\mu`, [-], >= 0.
    slot_ratio : array_like
        :math:`r_s` = slot height / chord, [-], > 0.
    dynamic_pressure : array_like
        Freestream :math:`q`, [Pa].
    derivatives : bool
        Also return the partials, keyed by the argument names.

    Returns
    -------
    head : ndarray
        [Pa].
    partials : dict
        Only with ``derivatives``.

    References
    ----------
    .. [1] docs/theory.md, section "Jet kinematics" (the momentum coefficient's definition).

    Examples
    --------
    By hand: 980 * 0.03 / (2 * 0.01) = 1470 Pa, the head of a 49 m/s jet at sea level.

    >>> round(float(jet_dynamic_head(0.03, 0.01, 980.0)), 9)
    1470.0
    """
    c = np.asarray(momentum_coefficient)
    r = np.asarray(slot_ratio)
    q = np.asarray(dynamic_pressure)
    per_ratio = 0.5 / r
    head = q * c * per_ratio
    if not derivatives:
        return head
    return head, {"momentum_coefficient": q * per_ratio, "slot_ratio": -head / r,
                  "dynamic_pressure": c * per_ratio}


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
    c = asarray(momentum_coefficient)
    r = asarray(slot_ratio)
    if np.any(r <= 0):
        raise ValueError(f"slot_ratio must be > 0, got {np.min(r)!r}")
    c = non_negative_momentum(c)
    ratio = c / (2.0 * r)
    return np.sqrt(ratio, out=ratio) if isinstance(ratio, np.ndarray) else np.sqrt(ratio)


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
    c = asarray(momentum_coefficient)
    r = asarray(slot_ratio)
    v = asarray(speed)
    rho = asarray(density)
    ch = asarray(chord)
    b = asarray(blown_span)
    a = asarray(speed_of_sound)
    ratio = jet_velocity_ratio(c, r)
    q = rho * v
    q *= v
    q *= 0.5                                # = 0.5 rho v v exactly (a power of two)
    h = r * ch
    area = h * b
    if derivatives:
        vj = v * ratio
    else:                                   # the ratio is not kept: the jet velocity in its place
        vj = ratio
        if (isinstance(vj, np.ndarray) and v.shape in ((), vj.shape)
                and vj.dtype == np.result_type(vj, v)):   # (a complex speed: a new array)
            vj *= v
        else:
            vj = v * vj
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


class CompressibleJet(NamedTuple):
    """Jet quantities of the compressible jet at each operating point (SI)."""

    state: JetState  #: as for the incompressible jet; volume flow at the fan's inlet density
    jet_head: np.ndarray  #: total-to-static pressure difference of the jet at the slot [Pa]
    jet_temperature: np.ndarray  #: static temperature of the jet at the slot [K]


#: Inputs of :func:`compressible_kinematics`, in order (the keys of its partials).
COMPRESSIBLE_INPUTS = ("momentum_coefficient", "slot_ratio", "speed", "density", "pressure",
                       "temperature", "chord", "blown_span", "heating_efficiency")


def compressible_kinematics(momentum_coefficient, slot_ratio, speed, density, pressure,
                            temperature, chord, blown_span, heating_efficiency, gamma=1.4,
                            gas_constant=287.05287, derivatives=False):
    r"""Jet state of a compressible jet that leaves the slot at the freestream static pressure.

    The momentum coefficient fixes the jet's momentum flux :math:`J = C_\mu q S`; over the slot
    area :math:`A_j = r_s c b` it is :math:`\rho_j V_j^2 = \gamma p M_j^2 = C_\mu q / r_s`, so
    the jet Mach number follows from :math:`C_\mu` alone. The jet's total pressure is the
    isentropic one [1]_, and the air reaches it from the freestream static state through the
    fan with efficiency :math:`\eta_T` (its losses heat the jet):

    .. math::
        M_j^2 = \frac{C_\mu q}{r_s \gamma p},\quad
        \theta = 1 + \tfrac{\gamma - 1}{2} M_j^2,\quad
        H_j = p_{0j} - p = p\,(\theta^{\gamma/(\gamma-1)} - 1),

        T_{0j} = T\left(1 + \frac{\theta - 1}{\eta_T}\right),\quad T_j = T_{0j}/\theta,\quad
        V_j = M_j \sqrt{\gamma R T_j},\quad \dot m = J / V_j,\quad Q = \dot m / \rho .

    (:math:`(p_{0j}/p)^{(\gamma-1)/\gamma} = \theta` exactly, hence the simple :math:`T_{0j}`.)
    With :math:`\eta_T = 1` the jet leaves at the freestream temperature and density and
    :math:`V_j` is the incompressible one; the head then exceeds
    :math:`\tfrac12\rho V_j^2` by the factor :math:`1 + M_j^2/4 + \dots`.

    Parameters
    ----------
    momentum_coefficient : array_like
        :math:`C_\mu`, [-], >= 0.
    slot_ratio : array_like
        :math:`r_s`, [-], > 0.
    speed : array_like
        Freestream speed :math:`V`, [m/s], > 0.
    density, pressure, temperature : array_like
        Freestream static density [kg/m^3], pressure [Pa] and temperature [K].
    chord, blown_span : array_like
        [m], > 0.
    heating_efficiency : array_like
        :math:`\eta_T`, the fan efficiency that sets the jet's total temperature, [-], in
        (0, 1].
    gamma, gas_constant : float
        Ratio of specific heats [-] and specific gas constant [J/(kg K)] of air.
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    jet : CompressibleJet
        ``state`` (:class:`JetState`: the volume flow is the fan's, at the freestream density),
        ``jet_head`` [Pa] and ``jet_temperature`` [K].
    partials : dict
        Only with ``derivatives``: ``{(field, input): ndarray}`` for the fields of
        :class:`JetState`, ``jet_head`` and ``jet_temperature``, over
        :data:`COMPRESSIBLE_INPUTS`. At :math:`C_\mu = 0` the infinite derivatives in
        :math:`C_\mu` are set to 0, as in :func:`kinematics`.

    Notes
    -----
    Stated approximations: the jet's total temperature takes the fan's heating to the jet's own
    total pressure (the duct's losses also end as heat: at a loss of half the jet head that is
    a further (1/eta - 1)/2 of the rise, about 0.2 K at jet Mach 0.3, i.e. 0.03 % of the jet
    velocity); the map fan uses its peak efficiency there (the chain).

    References
    ----------
    .. [1] NACA Report 1135, *Equations, Tables, and Charts for Compressible Flow*, Ames Research
       Staff, 1953, eq. 44-45 (isentropic total-to-static pressure and temperature ratios;
       from memory).
    .. [2] docs/theory.md, section "Jet kinematics" (the compressible jet).

    Examples
    --------
    Jet Mach 0.5 at ISA sea level (p = 101325 Pa): C_mu q / r_s = 1.4 p 0.25; H_j = p
    (1.05^3.5 - 1) = 18868 Pa against 0.7 p 0.25 = 17732 Pa incompressible (6.4 % more):

    >>> q, r = 0.5 * 1.225 * 40.0 ** 2, 0.01
    >>> c = 1.4 * 101325.0 * 0.25 * r / q
    >>> jet = compressible_kinematics(c, r, 40.0, 1.225, 101325.0, 288.15, 0.5, 2.0, 1.0)
    >>> round(float(jet.state.jet_mach), 12), round(float(jet.jet_head), 3)
    (0.5, 18867.996)
    """
    c, r, v, rho, p, t, ch, b, eta = np.broadcast_arrays(*(
        asarray(x) for x in (momentum_coefficient, slot_ratio, speed, density, pressure,
                             temperature, chord, blown_span, heating_efficiency)))
    if np.any(r <= 0):
        raise ValueError(f"slot_ratio must be > 0, got {np.min(r)!r}")
    c = non_negative_momentum(c)
    g = 0.5 * (gamma - 1.0)
    e = gamma / (gamma - 1.0)
    q = 0.5 * rho * v * v
    flux = c * q / r                                 # rho_j V_j^2 [Pa]
    m2 = flux / (gamma * p)
    mach = np.sqrt(m2)
    theta = 1.0 + g * m2
    head = p * np.expm1(e * np.log1p(g * m2))
    t0 = t * (1.0 + (theta - 1.0) / eta)
    tj = t0 / theta
    vj = np.sqrt(flux * gas_constant * tj / p)
    h = r * ch
    momentum = c * q * ch * b                        # J = C_mu q S [N]
    on = np.real(vj) > 0
    with np.errstate(divide="ignore", invalid="ignore"):
        mdot = np.where(on, momentum / vj, 0.0)
    vol = mdot / rho
    state = JetState(q, vj, mdot, vol, mach, h)
    jet = CompressibleJet(state, head, tj)
    if not derivatives:
        return jet

    names = COMPRESSIBLE_INPUTS
    zero = np.zeros_like(q)

    def grad(**parts):
        return {k: parts.get(k, zero) for k in names}

    def combine(*terms):
        out = {k: zero for k in names}
        for coef, gr in terms:
            for k in names:
                out[k] = out[k] + coef * gr[k]
        return out

    d_c, d_r, d_v, d_rho = grad(momentum_coefficient=1.0 + zero), grad(slot_ratio=1.0 + zero), \
        grad(speed=1.0 + zero), grad(density=1.0 + zero)
    d_p, d_t, d_ch, d_b = grad(pressure=1.0 + zero), grad(temperature=1.0 + zero), \
        grad(chord=1.0 + zero), grad(blown_span=1.0 + zero)
    d_eta = grad(heating_efficiency=1.0 + zero)
    d_q = combine((rho * v, d_v), (0.5 * v * v, d_rho))
    d_flux = combine((q / r, d_c), (c / r, d_q), (-flux / r, d_r))
    d_m2 = combine((1.0 / (gamma * p), d_flux), (-m2 / p, d_p))
    with np.errstate(divide="ignore", invalid="ignore"):
        d_mach = combine((np.where(on, 0.5 / mach, 0.0), d_m2))
    d_theta = combine((g, d_m2))
    d_head = combine((np.expm1(e * np.log1p(g * m2)), d_p), (p * e * theta ** (e - 1.0), d_theta))
    d_t0 = combine((1.0 + (theta - 1.0) / eta, d_t), (t / eta, d_theta),
                   (-t * (theta - 1.0) / eta ** 2, d_eta))
    d_tj = combine((1.0 / theta, d_t0), (-tj / theta, d_theta))
    with np.errstate(divide="ignore", invalid="ignore"):
        d_vj = combine((np.where(on, 0.5 * vj / flux, 0.0), d_flux),
                       (0.5 * vj / tj, d_tj), (-0.5 * vj / p, d_p))
        d_mom = combine((q * ch * b, d_c), (c * ch * b, d_q), (c * q * b, d_ch), (c * q * ch, d_b))
        d_mdot = combine((np.where(on, 1.0 / vj, 0.0), d_mom), (np.where(on, -mdot / vj, 0.0), d_vj))
    d_vol = combine((1.0 / rho, d_mdot), (-vol / rho, d_rho))
    d_h = combine((ch, d_r), (r, d_ch))
    # at C_mu = 0 the derivatives in C_mu are infinite (square roots): set to 0
    for gr in (d_mach, d_vj, d_mdot, d_vol):
        gr["momentum_coefficient"] = np.where(on, gr["momentum_coefficient"], 0.0)
    fields = {"dynamic_pressure": d_q, "jet_velocity": d_vj, "mass_flow": d_mdot,
              "volume_flow": d_vol, "jet_mach": d_mach, "slot_height": d_h, "jet_head": d_head,
              "jet_temperature": d_tj}
    partials = {(f, k): gr[k] for f, gr in fields.items() for k in names
                if np.any(gr[k] != 0)}
    return jet, partials
