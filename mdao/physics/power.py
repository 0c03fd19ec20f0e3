r"""Net power of a mission segment at the source, segment energy, and break-even fan efficiency.

The drag that blowing saves is power saved at the main propulsor's source,
:math:`\Delta D\, V / \eta_{chain}` (propulsive, drive and motor efficiency in
:math:`\eta_{chain}`); the fan draws :math:`P_{shaft} / \eta_{motor}`. The net saving is their
difference, and the segment energy is the net power times the segment's duration.

Lumped model, closed forms (derived here from DESIGN.md section 2). With
:math:`x = \sqrt{C_\mu}`, :math:`B = -\beta`, :math:`K_3 = \Delta C_{D,slot}` and the
coefficients of :func:`mdao.physics.duct.lumped_coefficients`, the non-dimensional net saving
(power over :math:`\rho V^3 S/2`, times :math:`\eta_{chain}`) is

.. math::
    s(x) = -K_3 + B x^2 - (K_1 x^3 - K_2 x)/\eta_{eff}, \qquad
    \eta_{eff} = \eta_{fan}\eta_{motor}/\eta_{chain}.

:math:`s'(x) = 0` gives :math:`3K_1 x^2 - 2B\eta_{eff} x - K_2 = 0`, whose positive root is the
optimum (:func:`lumped_optimum`). The break-even efficiency is the least :math:`\eta_{eff}` for
which :math:`\max_x s = 0`: :math:`\eta_{eff} = \min_x r(x)`,
:math:`r = (K_1 x^3 - K_2 x)/(B x^2 - K_3)` over the points where both are positive;
:math:`r'(x) = 0` is the quadratic in :math:`y = x^2`
:math:`K_1 B y^2 + (K_2 B - 3 K_1 K_3) y + K_2 K_3 = 0` (:func:`break_even_lumped`).
"""
import numpy as np


def segment_power(drag_saving, speed, shaft_power, chain_efficiency, motor_efficiency,
                  blowing=True, derivatives=False):
    r"""Power saved at the source by the drag saving, fan electrical power and the net, [W].

    Parameters
    ----------
    drag_saving : array_like
        Clean-wing drag minus blown-wing drag, [N] (negative: a penalty).
    speed : array_like
        Flight speed, [m/s].
    shaft_power : array_like
        Fan shaft power, all fans, [W].
    chain_efficiency : array_like
        Thrust power delivered per unit of source power of the main propulsion chain, (0, 1].
    motor_efficiency : array_like
        Fan motor and drive efficiency, (0, 1].
    blowing : array_like of bool
        Whether the fan runs in the segment; where it does not, no fan power is drawn.
    derivatives : bool
        Also return the partial derivatives.

    Returns
    -------
    propulsion_saving, fan_electric, net : ndarray
        [W]; ``net = propulsion_saving - fan_electric`` (positive: blowing pays).
    partials : dict
        Only with ``derivatives``: ``{(output, input): ndarray}``.

    Examples
    --------
    >>> p, f, net = segment_power(10.0, 40.0, 100.0, 0.8, 0.9)
    >>> float(p), round(float(f), 4), round(float(net), 4)
    (500.0, 111.1111, 388.8889)
    """
    dd = np.asarray(drag_saving, float)
    v = np.asarray(speed, float)
    ps = np.asarray(shaft_power, float)
    ec = np.asarray(chain_efficiency, float)
    em = np.asarray(motor_efficiency, float)
    on = np.asarray(blowing, float)
    prop = dd * v / ec
    fan = on * ps / em
    net = prop - fan
    if not derivatives:
        return prop, fan, net
    z = 0 * net
    d = {
        ("propulsion_saving", "drag_saving"): v / ec + z,
        ("propulsion_saving", "speed"): dd / ec + z,
        ("propulsion_saving", "chain_efficiency"): -prop / ec + z,
        ("fan_electric", "shaft_power"): on / em + z,
        ("fan_electric", "motor_efficiency"): -fan / em + z,
    }
    for k in ("drag_saving", "speed", "chain_efficiency"):
        d["net", k] = d["propulsion_saving", k]
    for k in ("shaft_power", "motor_efficiency"):
        d["net", k] = -d["fan_electric", k]
    return prop, fan, net, d


def segment_energy(net_power, duration):
    """Energy saved in a segment, net power times duration, [J].

    Examples
    --------
    >>> float(segment_energy(250.0, 3600.0))
    900000.0
    """
    return np.asarray(net_power, float) * np.asarray(duration, float)


def lumped_optimum(k1, k2, thrust_leverage, efficiency_ratio):
    r"""Momentum coefficient that maximizes the lumped net saving (interior optimum).

    Positive root of :math:`3K_1 x^2 - 2B\eta_{eff} x - K_2 = 0`, :math:`C_\mu = x^2`.

    Parameters
    ----------
    k1, k2 : array_like
        Lumped coefficients (:func:`mdao.physics.duct.lumped_coefficients`), [-].
    thrust_leverage : array_like
        :math:`\beta` (negative when blowing saves drag), [-].
    efficiency_ratio : array_like
        :math:`\eta_{eff} = \eta_{fan}\eta_{motor}/\eta_{chain}`, [-].

    Examples
    --------
    >>> round(float(lumped_optimum(2.5, 0.1, -1.5, 0.8)), 8)
    0.12767423
    """
    k1 = np.asarray(k1, float)
    k2 = np.asarray(k2, float)
    b = -np.asarray(thrust_leverage, float)
    e = np.asarray(efficiency_ratio, float)
    x = (2 * b * e + np.sqrt(4 * b * b * e * e + 12 * k1 * k2)) / (6 * k1)
    return x * x


def lumped_net_saving(cmu, k1, k2, slot_penalty, thrust_leverage, efficiency_ratio):
    r"""Non-dimensional lumped net saving :math:`-K_3 - \beta C_\mu - (K_1 C_\mu^{1.5} -
    K_2 C_\mu^{0.5})/\eta_{eff}` (power over :math:`\rho V^3 S / 2`, times
    :math:`\eta_{chain}`).

    Examples
    --------
    >>> round(float(lumped_net_saving(0.04, 2.5, 0.1, 0.02, -1.5, 0.8)), 6)
    0.04
    """
    c = np.asarray(cmu, float)
    return (-np.asarray(slot_penalty) - np.asarray(thrust_leverage) * c
            - (k1 * c ** 1.5 - k2 * np.sqrt(c)) / efficiency_ratio)


def break_even_lumped(k1, k2, slot_penalty, thrust_leverage, cmu_min, cmu_max):
    r"""Least efficiency ratio :math:`\eta_{eff}` at which the best point just breaks even.

    Minimizes :math:`r(C) = (K_1 C^{1.5} - K_2 C^{0.5})/(B C - K_3)` over the momentum
    coefficients in ``[cmu_min, cmu_max]`` where the fan is needed
    (:math:`K_1 C \ge K_2`, i.e. not ram-driven) and the thrust exceeds the slot penalty
    (:math:`B C > K_3`). Candidates: the roots of the stationarity quadratic in range, the
    range's ends and the ram-driven edge :math:`C = K_2/K_1` (where :math:`r = 0`: a point
    that needs no fan work saves power with any fan). Callers that require a minimum fan
    pressure rise fold it into ``cmu_min``. Vectorized; NaN where no point of the range can
    break even.

    Multiply by :math:`\eta_{chain}/\eta_{motor}` to get the break-even fan efficiency.

    Examples
    --------
    >>> round(float(break_even_lumped(2.5, 0.1, 0.02, -1.5, 0.05, 0.5)), 6)
    0.101639
    """
    k1, k2, k3, beta, lo, hi = np.broadcast_arrays(*(np.asarray(v, float) for v in (
        k1, k2, slot_penalty, thrust_leverage, cmu_min, cmu_max)))
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
    return np.where(np.isfinite(best), best, np.nan)
