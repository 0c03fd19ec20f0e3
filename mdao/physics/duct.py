r"""Internal duct: the fan pressure rise that the jet requires, at two levels of fidelity.

The fan must raise the total pressure of the ingested air from what it still has at the fan face
to what the jet needs at the injection slot. Written against the two dynamic pressures,

.. math::
    \Delta p_{req} = K_j \frac{\rho V_j^2}{2} - K_\infty q ,

where :math:`K_j = 1 + \sum_i K_i (A_j/A_i)^2` is the jet's own dynamic head (the exit loss, 1)
plus every loss :math:`K_i`, each referred to its local velocity (area :math:`A_i`) and carried to
the jet's, and :math:`K_\infty` is the help of the flow around the airfoil (suction slot in a
region of high static pressure, injection slot in a region of low pressure).

*Lumped*: the user gives :math:`K_j` and :math:`K_\infty`. *Geometric*: :math:`K_j` is built by
:func:`geometric_jet_loss_factor` from the suction inlet, the bend ahead of the fan, the fan-to-slot
transition (contraction or diffusion, Crane TP-410) and its wall friction (Churchill 1977), plus a
calibration adder.

When :math:`\Delta p_{req} \le 0` the jet is ram-driven: the freestream alone would drive it and
a fan would windmill. :func:`ram_driven` flags that regime; it is reported, never priced as a
negative fan power divided by an efficiency.

References
----------
.. [1] Idelchik, I. E. *Handbook of Hydraulic Resistance*, 3rd ed., Begell House, 1996 (loss
   coefficients referred to a local velocity and carried between sections by the area ratio).
.. [2] Crane Co. *Flow of Fluids Through Valves, Fittings and Pipe*, Technical Paper 410, 2009.
.. [3] Churchill, S. W. "Friction-factor equation spans all fluid-flow regimes." Chemical
   Engineering 84, no. 24 (1977): 91-92.
"""
import numpy as np

from mdao.physics import friction, losses, transition
from mdao.physics.numeric import abs as cs_abs, asarray, scalar


def required_pressure_rise(jet_loss_factor, freestream_assist, density, jet_velocity,
                           dynamic_pressure, derivatives=False):
    r"""Fan total-pressure rise the jet requires, [Pa].

    .. math::
        \Delta p_{req} = K_j \frac{\rho V_j^2}{2} - K_\infty q

    Parameters
    ----------
    jet_loss_factor : array_like
        :math:`K_j`: the jet's dynamic head plus every duct loss, on the jet velocity, [-],
        >= 1 (a little above 1 for a well-made duct).
    freestream_assist : array_like
        :math:`K_\infty`: the help of the flow around the section, [-], >= 0, of order 1.
    density : array_like
        Air density in the duct (freestream), [kg/m^3], > 0.
    jet_velocity : array_like
        Jet velocity at the injection slot, [m/s], >= 0.
    dynamic_pressure : array_like
        Freestream dynamic pressure, [Pa], >= 0.
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    dp : ndarray
        Required pressure rise, [Pa]; <= 0 means ram-driven (see :func:`ram_driven`).
    partials : dict
        Only with ``derivatives``: keyed by the argument names.

    References
    ----------
    .. [1] Idelchik, I. E. *Handbook of Hydraulic Resistance*, 3rd ed., Begell House, 1996
       (loss coefficients referred to a local velocity, carried between sections by the squared
       area ratio).
    .. [2] docs/theory.md, section "Duct loss" (this project's lumped form of the duct).

    Examples
    --------
    By hand: 1.3 * 1.225 * 80**2 / 2 - 1.0 * 980 = 5096 - 980 = 4116 Pa.

    >>> float(required_pressure_rise(1.3, 1.0, 1.225, 80.0, 980.0))
    4116.0
    """
    kj = asarray(jet_loss_factor)
    ki = asarray(freestream_assist)
    rho = asarray(density)
    vj = asarray(jet_velocity)
    q = asarray(dynamic_pressure)
    head = rho * vj
    head *= vj
    head *= 0.5                             # = 0.5 rho vj vj exactly (a power of two)
    if not derivatives:
        dp = head
        if kj.ndim == 0:
            dp *= kj
        else:
            dp = kj * dp
        ram = ki * q
        if isinstance(dp, np.ndarray) and np.shape(ram) in ((), dp.shape):
            dp -= ram
        else:
            dp = dp - ram
        return dp
    dp = kj * head - ki * q
    zero = 0 * dp
    return dp, {
        "jet_loss_factor": head + zero,
        "freestream_assist": -q + zero,
        "density": 0.5 * kj * vj * vj + zero,
        "jet_velocity": kj * rho * vj + zero,
        "dynamic_pressure": -ki + zero,
    }


def required_pressure_rise_from_head(jet_loss_factor, freestream_assist, jet_head,
                                     dynamic_pressure, derivatives=False):
    r"""Fan total-pressure rise for a jet of given total-to-static head, [Pa].

    .. math::
        \Delta p_{req} = K_j H_j - K_\infty q

    The compressible form of :func:`required_pressure_rise`: the jet's head :math:`H_j = p_{0j}
    - p` from the isentropic relation (:func:`mdao.physics.jet.compressible_kinematics`) in
    place of :math:`\tfrac12\rho V_j^2`; the loss factor is carried on the head unchanged
    (losses in jet heads).

    Parameters
    ----------
    jet_loss_factor, freestream_assist : array_like
        :math:`K_j` and :math:`K_\infty`, [-].
    jet_head : array_like
        :math:`H_j`, [Pa], >= 0.
    dynamic_pressure : array_like
        Freestream dynamic pressure, [Pa].
    derivatives : bool
        Also return the partial derivatives, keyed by the argument names.

    Returns
    -------
    dp : ndarray
        Required pressure rise, [Pa].
    partials : dict
        Only with ``derivatives``.

    References
    ----------
    .. [1] docs/theory.md, sections "Duct loss" and "Jet kinematics" (the compressible jet).

    Examples
    --------
    By hand: 1.3 * 5200 - 1.0 * 980 = 5780 Pa.

    >>> float(required_pressure_rise_from_head(1.3, 1.0, 5200.0, 980.0))
    5780.0
    """
    kj = asarray(jet_loss_factor)
    ki = asarray(freestream_assist)
    head = asarray(jet_head)
    q = asarray(dynamic_pressure)
    dp = kj * head - ki * q
    if not derivatives:
        return dp
    zero = 0 * dp
    return dp, {"jet_loss_factor": head + zero, "freestream_assist": -q + zero,
                "jet_head": kj + zero, "dynamic_pressure": -ki + zero}


def ram_driven(required_rise):
    r"""True where the jet needs no fan: the freestream alone would drive it.

    .. math:: \Delta p_{req} \le 0

    There the fan would windmill; the regime is flagged, never priced as a negative fan power
    divided by an efficiency.

    Parameters
    ----------
    required_rise : array_like
        Required fan pressure rise from :func:`required_pressure_rise`, [Pa], any real value.

    Returns
    -------
    ndarray of bool
        True where ram-driven, [-].

    References
    ----------
    .. [1] docs/theory.md, section "Duct loss" (the ram-driven regime).

    Examples
    --------
    >>> ram_driven([-5.0, 0.0, 12.0]).tolist()
    [True, True, False]
    """
    return asarray(required_rise) <= 0.0


def lumped_coefficients(jet_loss_factor, freestream_assist, slot_ratio):
    r"""Jet-head and ram-recovery coefficients of the lumped model's ideal fan power.

    With power over :math:`\rho V^3 S/2`, the ideal (air) fan power
    :math:`Q\,\Delta p_{req}` is :math:`a_j C_\mu^{3/2} - a_r C_\mu^{1/2}` with

    .. math::
        a_j = \frac{K_j}{2\sqrt{2 r_s}},\qquad a_r = K_\infty\sqrt{\frac{r_s}{2}}

    (from :math:`Q = A_j V_j` and :func:`required_pressure_rise`).

    Parameters
    ----------
    jet_loss_factor : array_like
        :math:`K_j`, [-], >= 1.
    freestream_assist : array_like
        :math:`K_\infty`, [-], >= 0.
    slot_ratio : array_like
        Injection slot height over chord :math:`r_s`, [-], > 0.

    Returns
    -------
    jet_head, ram_recovery : ndarray
        :math:`a_j`, :math:`a_r`, [-].

    References
    ----------
    .. [1] docs/theory.md, section "Net power" (lumped closed forms; derivation of
       :math:`Q\,\Delta p/(\rho V^3 S/2) = a_j C_\mu^{1.5} - a_r C_\mu^{0.5}`).

    Examples
    --------
    By hand: 1 / (2 sqrt(0.04)) = 2.5 and sqrt(0.01) = 0.1.

    >>> jet_head, ram_recovery = lumped_coefficients(1.0, 1.0, 0.02)
    >>> float(jet_head), float(ram_recovery)
    (2.5, 0.1)
    """
    kj = asarray(jet_loss_factor)
    ki = asarray(freestream_assist)
    r = asarray(slot_ratio)
    return kj / (2.0 * np.sqrt(2.0 * r)), ki * np.sqrt(0.5 * r)


#: Reynolds number below which the duct is taken as stagnant (jet off).
RE_FLOOR = 1.0

#: Inputs of :func:`geometric_jet_loss_factor` whose partials are returned.
GEOMETRIC_INPUTS = ("slot_ratio", "suction_ratio", "suction_inlet_loss", "bend_loss", "extra_loss",
                    "roughness", "volume_flow", "density", "viscosity",
                    "position", "area", "perimeter")


def _transition_form_loss(area, position, derivatives):
    """Form loss of the fan-to-slot transition on the jet velocity, with its partials.

    A contraction (slot area below the fan's) uses Crane's gradual contraction on the downstream
    (jet) velocity; a diffuser uses Crane's gradual enlargement on the upstream (fan-face)
    velocity, carried to the jet's by the squared area ratio. The total angle is that of the
    equivalent cone over the whole length.
    """
    a0, a1, length = area[0], area[-1], position[-1]
    dr = (np.sqrt(a1 / np.pi) - np.sqrt(a0 / np.pi))
    angle = 2.0 * np.arctan(cs_abs(dr) / length)
    # d(angle)/d(a0, a1, length)
    g = 2.0 / (1.0 + (dr / length) ** 2) / length
    sgn = np.sign(np.real(dr))
    dang_da1 = g * sgn * 0.5 / np.sqrt(np.pi * a1)
    dang_da0 = -g * sgn * 0.5 / np.sqrt(np.pi * a0)
    dang_dl = -2.0 * cs_abs(dr) / (length ** 2 + dr ** 2)
    if np.real(a1) <= np.real(a0):
        k, dk_dang, dk_dratio = losses.gradual_contraction(angle, a1 / a0, derivatives=True)
        dk_da1 = dk_dang * dang_da1 + dk_dratio / a0
        dk_da0 = dk_dang * dang_da0 - dk_dratio * a1 / a0 ** 2
        dk_dl = dk_dang * dang_dl
    else:
        ke, dk_dang, dk_dratio = losses.gradual_expansion(angle, a0 / a1, derivatives=True)
        carry = (a1 / a0) ** 2
        k = ke * carry
        dk_da1 = carry * (dk_dang * dang_da1 - dk_dratio * a0 / a1 ** 2) + ke * 2 * a1 / a0 ** 2
        dk_da0 = carry * (dk_dang * dang_da0 + dk_dratio / a1) - ke * 2 * a1 ** 2 / a0 ** 3
        dk_dl = carry * dk_dang * dang_dl
    if not derivatives:
        return k
    return k, dk_da0, dk_da1, dk_dl


def coefficient_losses(slot_ratio, suction_ratio, suction_inlet_loss, bend_loss, area):
    r"""Suction-inlet and bend losses carried to the jet velocity, [-].

    .. math::
        K_{in}' = K_{in}\left(\frac{r_s}{r_{suc}}\right)^2,\qquad
        K_{bend}' = K_{bend}\left(\frac{A_j}{A_{fan}}\right)^2

    The suction-slot inlet loss is referred to the suction-slot velocity (area ratio
    ``slot_ratio / suction_ratio`` to the injection slot, equal spans); the bend loss to the
    fan-face velocity (``area[0]`` against the slot's ``area[-1]``, per fan).

    Parameters
    ----------
    slot_ratio : float or array_like
        Injection slot height over chord :math:`r_s`, [-], > 0.
    suction_ratio : float or array_like
        Suction slot height over chord :math:`r_{suc}`, [-], > 0.
    suction_inlet_loss : float or array_like
        Inlet loss of the suction slot on its own velocity, [-], >= 0 (0.5 for a sharp
        inlet, Crane TP-410).
    bend_loss : float or array_like
        Loss of the bend ahead of the fan on the fan-face velocity, [-], >= 0.
    area : array_like, shape (m,)
        Transition station areas from the fan face (first) to the slot (last), [m^2], > 0.

    Returns
    -------
    k_in, k_bend : ndarray
        The two losses on the jet velocity, [-].

    References
    ----------
    .. [1] Idelchik, I. E. *Handbook of Hydraulic Resistance*, 3rd ed., Begell House, 1996
       (loss coefficients referred to a local velocity, carried between sections by the squared
       area ratio).
    .. [2] docs/theory.md, section "Duct loss" (the geometric level's terms).

    Examples
    --------
    By hand: 0.5 (0.01/0.02)**2 = 0.125 and 0.3 (0.0025/0.005)**2 = 0.075.

    >>> k_in, k_bend = coefficient_losses(0.01, 0.02, 0.5, 0.3, [0.005, 0.0025])
    >>> float(k_in), float(k_bend)
    (0.125, 0.075)
    """
    area = asarray(area)
    k_in = asarray(suction_inlet_loss) * (slot_ratio / np.asarray(suction_ratio)) ** 2
    k_bend = asarray(bend_loss) * (area[-1] / area[0]) ** 2
    return k_in, k_bend


def geometric_jet_loss_factor(slot_ratio, suction_ratio, suction_inlet_loss, bend_loss, extra_loss,
                    roughness, volume_flow, density, viscosity, position, area, perimeter,
                    derivatives=False):
    r"""Geometric jet loss factor :math:`K_j` at each operating point.

    .. math::
        K_j = 1 + K_{in}\left(\frac{r_s}{r_{suc}}\right)^2
            + K_{bend}\left(\frac{A_j}{A_{fan}}\right)^2 + K_{tr}
            + \int_0^L \frac{f}{D_h}\left(\frac{A_j}{A}\right)^2 dx + K_{extra}

    The 1 is the jet's own dynamic head (exit loss, Rennels & Hudson 2012); the suction-slot
    inlet loss is referred to the suction-slot velocity (area ratio :math:`r_s/r_{suc}` to the
    injection slot, equal spans); the bend loss to the fan-face velocity; the transition form
    loss :math:`K_{tr}` (Crane's gradual contraction or enlargement over the equivalent cone of
    the whole transition) and friction follow :func:`_transition_form_loss` and
    :func:`mdao.physics.transition.friction_integral`, with Churchill's Darcy factor at
    :math:`Re = 4 \rho Q_f / (P \mu)` at each station. All areas here are per fan.

    Parameters
    ----------
    slot_ratio : float
        Injection slot height over chord (one for the wing), [-], > 0 (typically 0.002-0.03).
    suction_ratio : float or array_like
        Suction slot height over chord, [-], > 0 (broadcasts with the nodes).
    suction_inlet_loss, bend_loss, extra_loss : float or array_like
        Loss coefficients on their local velocities; ``extra_loss`` on the jet's, [-], >= 0
        (broadcast with the nodes; ``extra_loss`` is a calibration adder and may be negative
        as long as :math:`K_j` stays >= 1).
    roughness : float
        Wall roughness of the transition, [m], >= 0.
    volume_flow : array_like
        Flow through one fan, (n,), [m^3/s], >= 0 (below Re = 1 the duct is taken as stagnant).
    density, viscosity : array_like
        Air density [kg/m^3] and dynamic viscosity [Pa s], (n,), > 0.
    position : array_like
        Station positions from :func:`mdao.physics.transition.stations`, (m,), [m], >= 0 and
        increasing.
    area, perimeter : array_like
        Station areas [m^2] and perimeters [m], (m,), > 0; the first station is the fan face,
        the last the slot.
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    kj : ndarray
        Jet loss factor, (n,), [-].
    partials : dict
        Only with ``derivatives``: keyed by :data:`GEOMETRIC_INPUTS`; station inputs give
        (n, m) arrays, the others (n,).

    References
    ----------
    .. [1] Idelchik, I. E. *Handbook of Hydraulic Resistance*, 3rd ed., Begell House, 1996
       (loss coefficients referred to a local velocity, carried between sections by the squared
       area ratio).
    .. [2] Rennels, D. C. and Hudson, H. M. *Pipe Flow: A Practical and Comprehensive Guide*,
       Wiley, 2012 (exit loss K = 1 on the exit velocity).
    .. [3] Crane Co. *Flow of Fluids Through Valves, Fittings, and Pipe*, Technical Paper 410,
       2009 (gradual contraction and enlargement).
    .. [4] Churchill, S. W. "Friction-factor equation spans all fluid-flow regimes." Chemical
       Engineering 84, no. 24 (1977): 91-92.
    .. [5] docs/theory.md, section "Duct loss" (this project's assembly of the terms).

    Examples
    --------
    A 80 mm fan feeding a 500 x 5 mm slot over 0.3 m at 0.06 m^3/s, sea-level air. The sum is
    1 + 0.125 (inlet) + 0.07421 (bend) + 0.01579 (Crane contraction) + 0.20622 (friction);
    the friction term agrees to 1e-15 with a trapezoid sum of ``fluids.friction.Churchill_1977``
    over the same stations.

    >>> st = transition.stations(0.08, 0.5, 0.005, 0.3, 8.0)
    >>> kj = geometric_jet_loss_factor(0.01, 0.02, 0.5, 0.3, 0.0, 1e-5, [0.06], [1.225], [1.79e-5],
    ...                      st.position, st.area, st.perimeter)
    >>> round(float(kj[0]), 6)
    1.42122
    """
    q_f = np.atleast_1d(asarray(volume_flow))
    rho = np.atleast_1d(asarray(density))
    mu = np.atleast_1d(asarray(viscosity))
    x = asarray(position)
    area = asarray(area)
    per = asarray(perimeter)
    r_s = scalar(slot_ratio)
    r_suc = asarray(suction_ratio)
    if np.any(r_suc <= 0):
        raise ValueError(f"suction_ratio must be > 0, got {np.min(r_suc)!r}")
    suction_inlet_loss = asarray(suction_inlet_loss)
    bend_loss = asarray(bend_loss)
    a_jet, a_fan = area[-1], area[0]

    k_in, k_bend = coefficient_losses(r_s, r_suc, suction_inlet_loss, bend_loss, area)
    k_tr = _transition_form_loss(area, x, derivatives=True)
    k_tr, dtr_da0, dtr_da1, dtr_dl = k_tr

    dh = 4.0 * area / per
    reynolds = 4.0 * rho[:, None] * q_f[:, None] / (per[None, :] * mu[:, None])
    # No flow (jet off): friction does not matter (it multiplies a zero jet head); hold the
    # Reynolds number at a floor so the correlation stays defined, with zero derivative there.
    stagnant = np.real(reynolds) < RE_FLOOR
    reynolds = np.where(stagnant, RE_FLOOR, reynolds)
    eps = roughness / dh
    f, df_dre, df_deps = friction.churchill(reynolds, eps + 0 * reynolds, derivatives=True)
    df_dre = np.where(stagnant, 0.0, df_dre)
    k_f, dkf = transition.friction_integral(x, area, per, f, a_jet, derivatives=True)

    kj = 1.0 + k_in + k_bend + k_tr + k_f + extra_loss
    if not derivatives:
        return kj

    n, m = reynolds.shape
    ones = np.ones(n)
    # friction: f depends on Re (rho, q_f, mu, perimeter) and eps (roughness, area, perimeter)
    dkf_df = dkf["darcy"]                       # (n, m)
    d_rho = np.sum(dkf_df * df_dre * reynolds / rho[:, None], axis=1)
    d_q = np.sum(dkf_df * df_dre * 4.0 * rho[:, None] / (per[None, :] * mu[:, None]), axis=1)
    d_mu = -np.sum(dkf_df * df_dre * reynolds / mu[:, None], axis=1)
    d_rough = np.sum(dkf_df * df_deps / dh[None, :], axis=1)
    # eps = roughness P / (4 A); Re = 4 rho Q / (P mu)
    d_area = dkf["area"] + dkf_df * df_deps * (-eps / area)[None, :]
    d_per = dkf["perimeter"] + dkf_df * (df_dre * (-reynolds / per[None, :])
                                         + df_deps * (eps / per)[None, :])
    d_pos = dkf["position"].copy()
    d_area[:, -1] += dkf["area_ref"]
    # form losses at the ends of the transition
    d_area[:, 0] += -2.0 * k_bend * ones / a_fan + dtr_da0
    d_area[:, -1] += 2.0 * k_bend * ones / a_jet + dtr_da1
    d_pos[:, -1] += dtr_dl
    partials = {
        "slot_ratio": 2.0 * k_in / r_s * ones,
        "suction_ratio": -2.0 * k_in / r_suc * ones,
        "suction_inlet_loss": (r_s / r_suc) ** 2 * ones,
        "bend_loss": (a_jet / a_fan) ** 2 * ones,
        "extra_loss": ones,
        "roughness": d_rough,
        "volume_flow": d_q,
        "density": d_rho,
        "viscosity": d_mu,
        "position": d_pos,
        "area": d_area,
        "perimeter": d_per,
    }
    return kj, partials
