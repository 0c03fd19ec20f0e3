r"""Net power of a mission segment at the source, segment energy, and break-even fan efficiency.

The drag that blowing saves is power saved at the main propulsor's source,
:math:`\Delta D\, V / \eta_{chain}` (propulsive, drive and motor efficiency in
:math:`\eta_{chain}`); the fan draws :math:`P_{shaft} / \eta_{motor}`. The net saving is their
difference, and the segment energy is the net power times the segment's duration.

Lumped model, closed forms (derived in docs/theory.md). With :math:`x = \sqrt{C_\mu}`,
:math:`B = -\beta`, the slot-penalty coefficient :math:`s = \Delta C_{D,slot}` and the
jet-head and ram-recovery coefficients :math:`a_j`, :math:`a_r` of
:func:`mdao.physics.duct.lumped_coefficients`, the non-dimensional net saving
(power over :math:`\rho V^3 S/2`, times :math:`\eta_{chain}`) is

.. math::
    n(x) = -s + B x^2 - (a_j x^3 - a_r x)/\eta_{eff}, \qquad
    \eta_{eff} = \eta_{fan}\eta_{motor}/\eta_{chain}.

:math:`n'(x) = 0` gives :math:`3a_j x^2 - 2B\eta_{eff} x - a_r = 0`, whose positive root is the
optimum (:func:`lumped_optimum`). The break-even efficiency is the least :math:`\eta_{eff}` for
which :math:`\max_x n = 0`: :math:`\eta_{eff} = \min_x r(x)`,
:math:`r = (a_j x^3 - a_r x)/(B x^2 - s)` over the points where both are positive;
:math:`r'(x) = 0` is the quadratic in :math:`y = x^2`
:math:`a_j B y^2 + (a_r B - 3 a_j s) y + a_r s = 0` (:func:`break_even_lumped`).
"""
import numpy as np

from mdao.physics.numeric import asarray


def segment_power(drag_saving, speed, fan_shaft_power, chain_efficiency, motor_efficiency,
                  blowing=True, derivatives=False):
    r"""Power saved at the source by the drag saving, fan electrical power and the net, [W].

    .. math::
        P_{prop} = \frac{\Delta D\, V}{\eta_{chain}},\qquad
        P_{fan} = \frac{P_{shaft}}{\eta_{motor}}\ (\text{0 when not blowing}),\qquad
        P_{net} = P_{prop} - P_{fan}

    Parameters
    ----------
    drag_saving : array_like
        Clean-wing drag minus blown-wing drag :math:`\Delta D`, [N], any real (negative: a
        penalty).
    speed : array_like
        Flight speed, [m/s], > 0.
    fan_shaft_power : array_like
        Fan shaft power, all fans, [W], >= 0.
    chain_efficiency : array_like
        Thrust power delivered per unit of source power of the main propulsion chain, [-],
        in (0, 1].
    motor_efficiency : array_like
        Fan motor and drive efficiency, [-], in (0, 1].
    blowing : array_like of bool
        Whether the fan runs in the segment, [-], True or False; where it does not, no fan
        power is drawn.
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    propulsion_power_saving, fan_electric_power, net_power_saving : ndarray
        [W]; ``net_power_saving = propulsion_power_saving - fan_electric_power`` (positive: blowing
        pays).
    partials : dict
        Only with ``derivatives``: ``{(output, input): ndarray}``.

    References
    ----------
    .. [1] docs/theory.md, section "Net power" (this project's segment power balance).

    Examples
    --------
    By hand: 10 * 40 / 0.8 = 500 W saved, 100 / 0.9 = 111.1111 W drawn, net 388.8889 W.

    >>> p, f, net = segment_power(10.0, 40.0, 100.0, 0.8, 0.9)
    >>> float(p), round(float(f), 4), round(float(net), 4)
    (500.0, 111.1111, 388.8889)
    """
    dd = asarray(drag_saving)
    v = asarray(speed)
    ps = asarray(fan_shaft_power)
    ec = asarray(chain_efficiency)
    em = asarray(motor_efficiency)
    if not derivatives:
        prop = dd * v
        if prop.ndim and ec.ndim == 0 and prop.dtype == np.result_type(prop, ec):
            prop /= ec                          # in place: no temporary
        else:
            prop = prop / ec
        fan = ps / em
        on = np.asarray(blowing)
        if not (on.shape in ((), np.shape(fan)) and on.all()):
            fan = on.astype(float) * fan        # no fan power where it does not run
        return prop, fan, prop - fan
    on = asarray(blowing)
    prop = dd * v / ec
    fan = on * ps / em
    net = prop - fan
    z = 0 * net
    d = {
        ("propulsion_power_saving", "drag_saving"): v / ec + z,
        ("propulsion_power_saving", "speed"): dd / ec + z,
        ("propulsion_power_saving", "chain_efficiency"): -prop / ec + z,
        ("fan_electric_power", "fan_shaft_power"): on / em + z,
        ("fan_electric_power", "motor_efficiency"): -fan / em + z,
    }
    for k in ("drag_saving", "speed", "chain_efficiency"):
        d["net_power_saving", k] = d["propulsion_power_saving", k]
    for k in ("fan_shaft_power", "motor_efficiency"):
        d["net_power_saving", k] = -d["fan_electric_power", k]
    return prop, fan, net, d


def energy_margin(air_power, section_drag, speed, thrust_power_ceiling, derivatives=False):
    r"""Margin of the section's energy balance (first law), [W]: :math:`c P_{air} + D V`.

    .. math::
        m = c\,P_{air} + D\,V \ge 0

    In steady flight, in the frame of the undisturbed air, the fan's air power :math:`P_{air}`
    and the work :math:`D V` the section's drag does on the air are all that the air receives;
    what it is left with, kinetic energy of the wake and jet and heat from dissipation, is never
    negative. So a section cannot return more net thrust power (:math:`-D V` when the drag is
    negative) than its fans put into the air. ``thrust_power_ceiling`` :math:`c \in (0, 1]`
    lets a designer demand a margin (only a share :math:`c` of the air power may come back as
    thrust power).

    Parameters
    ----------
    air_power : array_like
        Power the fans put into the air, :math:`Q\,\Delta p` (or the isentropic work rate),
        [W], >= 0.
    section_drag : array_like
        Drag of the blown span, [N] (negative: net thrust).
    speed : array_like
        Flight speed, [m/s], > 0.
    thrust_power_ceiling : array_like
        :math:`c`, [-], in (0, 1].
    derivatives : bool
        Also return the partial derivatives keyed by argument name.

    Returns
    -------
    margin : ndarray
        :math:`c P_{air} + D V`, [W]; negative breaks the energy balance.

    References
    ----------
    .. [1] Drela, M. "Power balance in aerodynamic flows." AIAA Journal 47(7) (2009)
       1761-1771 (the power balance of a body with propulsion: shaft power equals the wake's
       kinetic energy flux plus viscous dissipation, both non-negative) (from memory).
    .. [2] docs/theory.md, section "What keeps the answer physical".

    Examples
    --------
    A section making 2 N of net thrust at 40 m/s returns 80 W of thrust power; with 100 W in
    the air the margin is 20 W:

    >>> float(energy_margin(100.0, -2.0, 40.0, 1.0))
    20.0
    """
    pa = asarray(air_power)
    dr = asarray(section_drag)
    v = asarray(speed)
    c = asarray(thrust_power_ceiling)
    if not derivatives:                     # a ceiling of 1 multiplies nothing
        air = pa if c.ndim == 0 and c == 1.0 else c * pa
        margin = dr * v
        if (margin.ndim and np.shape(air) in ((), margin.shape)
                and margin.dtype == np.result_type(margin, air)):
            margin += air                       # in place: no temporary
            return margin
        return air + margin
    margin = c * pa + dr * v
    z = 0.0 * margin
    return margin, {"air_power": c + z, "section_drag": v + z, "speed": dr + z,
                    "thrust_power_ceiling": pa + z}


def energy_within_balance(energy_saving, energy_margin, duration, chain_efficiency):
    r"""Energy saved in a segment with the net thrust power credited no higher than the energy
    balance allows, [J].

    .. math::
        E_b = E - t\,\max(0, -m)/\eta_{chain}

    Where the margin :math:`m` (:func:`energy_margin`) is negative, the drag model credits the
    section with :math:`-m` more net thrust power than its fans can put into the air; that
    excess, taken back at the source (through the chain efficiency, as the saving was credited),
    leaves the saving the first law allows at most. Where the balance holds, :math:`E_b = E`.
    For a design held fixed while its inputs vary (a Monte Carlo sample, a tornado's end), where
    the optimization's constraint no longer holds it.

    Parameters
    ----------
    energy_saving : array_like
        Energy saved in the segment (:func:`segment_energy`), [J].
    energy_margin : array_like
        The segment's energy margin, [W].
    duration : array_like
        Segment duration, [s], >= 0.
    chain_efficiency : array_like
        Source-to-thrust-power efficiency of the main propulsion, [-], in (0, 1].

    Returns
    -------
    ndarray
        [J]; at most ``energy_saving``.

    Examples
    --------
    A segment of 100 s crediting 20 W of thrust power past the balance, chain efficiency 0.8:
    25 W at the source, 2500 J less:

    >>> float(energy_within_balance(10000.0, -20.0, 100.0, 0.8))
    7500.0
    """
    excess = np.maximum(-asarray(energy_margin), 0.0)
    return asarray(energy_saving) - asarray(duration) * excess / asarray(chain_efficiency)


def segment_energy(net_power, duration):
    r"""Energy saved in a segment, [J].

    .. math:: E = P_{net}\, t

    Parameters
    ----------
    net_power : array_like
        Net power saving of the segment (:func:`segment_power`), [W], any real.
    duration : array_like
        Segment duration, [s], >= 0.

    Returns
    -------
    ndarray
        Energy saved, [J] (negative: blowing costs energy).

    References
    ----------
    .. [1] docs/theory.md, section "Net power" (this project's segment power balance); the mission total is the sum over segments.

    Examples
    --------
    By hand: 250 W for one hour is 900 kJ.

    >>> float(segment_energy(250.0, 3600.0))
    900000.0
    """
    return asarray(net_power) * asarray(duration)


def lumped_optimum(jet_head, ram_recovery, drag_per_momentum, efficiency_ratio):
    r"""Momentum coefficient that maximizes the lumped net saving (interior optimum).

    .. math::
        3 a_j x^2 - 2 B \eta_{eff} x - a_r = 0,\qquad
        x = \frac{2 B\eta_{eff} + \sqrt{4 B^2\eta_{eff}^2 + 12 a_j a_r}}{6 a_j},\qquad
        C_\mu = x^2,\quad B = -\beta

    the positive root of :math:`n'(x) = 0` for the net saving of :func:`lumped_net_saving`
    (the same in every segment, since it does not depend on the dynamic pressure).

    Parameters
    ----------
    jet_head, ram_recovery : array_like
        Jet-head and ram-recovery coefficients :math:`a_j` (> 0) and :math:`a_r` (>= 0)
        (:func:`mdao.physics.duct.lumped_coefficients`), [-].
    drag_per_momentum : array_like
        :math:`\beta`, [-], any real (< 0 when blowing saves drag).
    efficiency_ratio : array_like
        :math:`\eta_{eff} = \eta_{fan}\eta_{motor}/\eta_{chain}`, [-], > 0.

    Returns
    -------
    cmu : ndarray
        Optimal momentum coefficient :math:`C_\mu`, [-]; bounds of the calibrated range, jet
        Mach number or pressure rise are not applied here.

    References
    ----------
    .. [1] docs/theory.md, section "Net power" (lumped closed forms, derived there from
       :math:`Q = A_j V_j` and the lumped duct form
       :math:`\Delta p = K_j \rho V_j^2/2 - K_\infty q`).

    Examples
    --------
    A bounded scalar maximization of :func:`lumped_net_saving` in :math:`\sqrt{C_\mu}`
    (``scipy.optimize.minimize_scalar``, x tolerance 1e-12) finds 0.1276742 as well:

    >>> round(float(lumped_optimum(2.5, 0.1, -1.5, 0.8)), 8)
    0.12767423
    """
    k1 = asarray(jet_head)
    k2 = asarray(ram_recovery)
    b = -asarray(drag_per_momentum)
    e = asarray(efficiency_ratio)
    x = (2 * b * e + np.sqrt(4 * b * b * e * e + 12 * k1 * k2)) / (6 * k1)
    return x * x


def lumped_net_saving(cmu, jet_head, ram_recovery, slot_drag, drag_per_momentum, efficiency_ratio):
    r"""Non-dimensional net saving of the lumped model.

    .. math::
        n = -s - \beta C_\mu - \frac{a_j C_\mu^{3/2} - a_r C_\mu^{1/2}}{\eta_{eff}}

    (power over :math:`\rho V^3 S / 2`, times :math:`\eta_{chain}`).

    Parameters
    ----------
    cmu : array_like
        Momentum coefficient :math:`C_\mu`, [-], >= 0.
    jet_head, ram_recovery : array_like
        :math:`a_j` (> 0) and :math:`a_r` (>= 0) of
        :func:`mdao.physics.duct.lumped_coefficients`, [-].
    slot_drag : array_like
        Slotted-shape drag penalty :math:`s = \Delta C_{D,slot}`, [-], any real (usually >= 0).
    drag_per_momentum : array_like
        :math:`\beta`, [-], any real (< 0 when blowing saves drag).
    efficiency_ratio : array_like
        :math:`\eta_{eff} = \eta_{fan}\eta_{motor}/\eta_{chain}`, [-], > 0.

    Returns
    -------
    ndarray
        Net saving :math:`n`, [-] (positive: blowing pays).

    References
    ----------
    .. [1] docs/theory.md, section "Net power" (lumped closed forms, derived there from
       :math:`Q = A_j V_j` and the lumped duct form
       :math:`\Delta p = K_j \rho V_j^2/2 - K_\infty q`).

    Examples
    --------
    By hand at :math:`C_\mu = 0.04`: -0.02 + 1.5 * 0.04 - (2.5 * 0.008 - 0.1 * 0.2) / 0.8
    = 0.04 (the fan's ideal power is exactly zero there).

    >>> round(float(lumped_net_saving(0.04, 2.5, 0.1, 0.02, -1.5, 0.8)), 6)
    0.04
    """
    c = asarray(cmu)
    return (-np.asarray(slot_drag) - np.asarray(drag_per_momentum) * c
            - (jet_head * c ** 1.5 - ram_recovery * np.sqrt(c)) / efficiency_ratio)


def break_even_lumped(jet_head, ram_recovery, slot_drag, drag_per_momentum, cmu_min, cmu_max,
                      argmin=False):
    r"""Least efficiency ratio :math:`\eta_{eff}` at which the best point just breaks even.

    .. math::
        \eta_{eff} = \min_C r(C),\qquad r(C) = \frac{a_j C^{3/2} - a_r C^{1/2}}{B C - s},\qquad
        r'(C) = 0 \iff a_j B C^2 + (a_r B - 3 a_j s) C + a_r s = 0

    over the momentum coefficients in ``[cmu_min, cmu_max]`` where the fan is needed
    (:math:`a_j C \ge a_r`, i.e. not ram-driven) and the thrust exceeds the slot penalty
    (:math:`B C > s`), :math:`B = -\beta`. Candidates: the roots of the stationarity quadratic
    in range, the range's ends and the ram-driven edge :math:`C = a_r/a_j` (where
    :math:`r = 0`: a point that needs no fan work saves power with any fan). Callers that
    require a minimum fan pressure rise fold it into ``cmu_min``. Vectorized.

    Multiply by :math:`\eta_{chain}/\eta_{motor}` to get the break-even fan efficiency.

    Parameters
    ----------
    jet_head, ram_recovery : array_like
        :math:`a_j` (> 0) and :math:`a_r` (>= 0) of
        :func:`mdao.physics.duct.lumped_coefficients`, [-].
    slot_drag : array_like
        Slotted-shape drag penalty :math:`s`, [-], any real (usually >= 0).
    drag_per_momentum : array_like
        :math:`\beta`, [-], any real (< 0 is needed for a break-even point).
    cmu_min, cmu_max : array_like
        Admissible range of :math:`C_\mu`, [-], 0 <= cmu_min <= cmu_max.
    argmin : bool
        Also return the momentum coefficient where the least ratio is reached.

    Returns
    -------
    ndarray
        Break-even efficiency ratio :math:`\eta_{eff}`, [-]; NaN where no point of the range can
        break even.
    cmu : ndarray
        Only with ``argmin``: the momentum coefficient of that point, [-] (NaN with the ratio).

    References
    ----------
    .. [1] docs/theory.md, section "Net power" (lumped closed forms, derived there from
       :math:`Q = A_j V_j` and the lumped duct form
       :math:`\Delta p = K_j \rho V_j^2/2 - K_\infty q`).

    Examples
    --------
    A brute-force minimum of :math:`r(C)` over 2e6 points of [0.05, 0.5] agrees to 1e-15
    (the minimum sits at the range's lower end, C = 0.05):

    >>> round(float(break_even_lumped(2.5, 0.1, 0.02, -1.5, 0.05, 0.5)), 6)
    0.101639
    """
    k1, k2, k3, beta, lo, hi = np.broadcast_arrays(*(asarray(v) for v in (
        jet_head, ram_recovery, slot_drag, drag_per_momentum, cmu_min, cmu_max)))
    b = -beta
    qa = k1 * b
    qb = k2 * b - 3 * k1 * k3
    qc = k2 * k3
    disc = qb * qb - 4 * qa * qc
    sq = np.sqrt(np.where(disc >= 0, disc, np.nan))
    with np.errstate(divide="ignore", invalid="ignore"):
        roots = [(-qb + sq) / (2 * qa), (-qb - sq) / (2 * qa)]
    with np.errstate(divide="ignore", invalid="ignore"):
        ram_edge = k2 / k1
    cands = np.stack(roots + [lo, hi, ram_edge], axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        num = k1[..., None] * cands ** 1.5 - k2[..., None] * np.sqrt(cands)
        num[..., -1] = 0.0  # exactly zero at the ram-driven edge
        den = b[..., None] * cands - k3[..., None]
        ratio = num / den
    ok = ((cands >= lo[..., None]) & (cands <= hi[..., None]) & (num >= 0) & (den > 0)
          & np.isfinite(ratio))
    ratio = np.where(ok, ratio, np.inf)
    best = ratio.min(axis=-1)
    best = np.where(np.isfinite(best), best, np.nan)
    if not argmin:
        return best
    at = np.take_along_axis(cands, np.argmin(ratio, axis=-1)[..., None], -1)[..., 0]
    return best, np.where(np.isfinite(best), at, np.nan)
