r"""Fan performance in non-dimensional form: coefficients, fan laws, a quadratic map, power.

Shaft speed ``N`` is in revolutions per second throughout and every flow is *per fan*; the
component multiplies by the number of fans. With diameter ``D`` and density ``rho``:

.. math::
    \phi = \frac{Q}{N D^3}, \quad \psi = \frac{\Delta p}{\rho N^2 D^2}, \quad
    \lambda = \frac{P}{\rho N^3 D^5}, \quad \eta = \frac{\phi\,\psi}{\lambda}

References
----------
.. [1] Dixon, S. L. and Hall, C. A. *Fluid Mechanics and Thermodynamics of Turbomachinery*, 7th ed.
   Butterworth-Heinemann, 2014, ch. 1-2 (dimensional analysis, fan laws, isentropic work).
.. [2] Eck, B. *Fans: Design and Operation of Centrifugal, Axial-Flow and Cross-Flow Fans*.
   Pergamon, 1973 (characteristics and similarity).
.. [3] ISO 5801:2017 *Fans - Performance testing using standardized airways* (compressibility
   of fan work; from memory).
"""
from collections import namedtuple

import numpy as np

from mdao.physics.numeric import asarray

FanMap = namedtuple('FanMap', ['pressure_coefficients', 'peak_efficiency', 'peak_flow_coefficient',
                               'efficiency_falloff', 'flow_coefficient_range'])
FanMap.__doc__ = """A fitted or given fan map (see :func:`characteristic` and :func:`map_efficiency`).

pressure_coefficients : (c0, c1, c2) of psi = c0 + c1 phi + c2 phi^2, [-].
peak_efficiency, peak_flow_coefficient, efficiency_falloff : efficiency parabola, [-].
flow_coefficient_range : (lo, hi) flow coefficients the map is valid over, [-].
"""

Margins = namedtuple('Margins', ['speed_margin', 'stall_margin', 'choke_margin'])
ScaledFan = namedtuple('ScaledFan', ['volume_flow', 'pressure_rise', 'power'])


def flow_coefficient_of(volume_flow, speed, diameter, derivatives=False):
    r"""Flow coefficient :math:`\phi = Q / (N D^3)`.

    Parameters
    ----------
    volume_flow : array_like
        Volume flow through one fan, [m^3/s] (>= 0).
    speed : array_like
        Shaft speed, [rev/s] (> 0).
    diameter : array_like
        Fan (tip) diameter, [m] (> 0).
    derivatives : bool
        Also return a dict of partials keyed 'volume_flow', 'speed', 'diameter'.

    Returns
    -------
    phi : ndarray
        Flow coefficient, [-].

    References
    ----------
    .. [1] Dixon and Hall (2014), sec. 1.5-1.6.

    Examples
    --------
    D = 0.1 m, 20 000 rpm, Q = 0.1 m^3/s: phi = 0.1 / (333.33 * 0.001) = 0.3 (by hand).

    >>> round(float(flow_coefficient_of(0.1, 20000 / 60, 0.1)), 5)
    0.3
    """
    q, n, d = asarray(volume_flow), asarray(speed), asarray(diameter)
    phi = q / (n * d**3)
    if not derivatives:
        return phi
    return phi, {'volume_flow': 1.0 / (n * d**3), 'speed': -phi / n, 'diameter': -3.0 * phi / d}


def pressure_coefficient(pressure_rise, density, speed, diameter, derivatives=False):
    r"""Pressure coefficient :math:`\psi = \Delta p / (\rho N^2 D^2)`.

    Parameters
    ----------
    pressure_rise : array_like
        Fan total-pressure rise, [Pa] (any real value; > 0 when the fan works).
    density : array_like
        Inlet density, [kg/m^3] (> 0).
    speed : array_like
        Shaft speed, [rev/s] (> 0).
    diameter : array_like
        Fan diameter, [m] (> 0).
    derivatives : bool
        Also return a dict of partials keyed 'pressure_rise', 'density', 'speed', 'diameter'.

    Returns
    -------
    psi : ndarray
        Pressure coefficient, [-].

    References
    ----------
    .. [1] Dixon and Hall (2014), sec. 1.5-1.6.

    Examples
    --------
    By hand: 2000 / (1.225 * 333.33**2 * 0.01) = 1.46939.

    >>> round(float(pressure_coefficient(2000.0, 1.225, 20000 / 60, 0.1)), 5)
    1.46939
    """
    dp, rho = asarray(pressure_rise), asarray(density)
    n, d = asarray(speed), asarray(diameter)
    psi = dp / (rho * n**2 * d**2)
    if not derivatives:
        return psi
    return psi, {'pressure_rise': 1.0 / (rho * n**2 * d**2), 'density': -psi / rho,
                 'speed': -2.0 * psi / n, 'diameter': -2.0 * psi / d}


def power_coefficient(power, density, speed, diameter):
    r"""Power coefficient :math:`\lambda = P / (\rho N^3 D^5)`.

    Parameters
    ----------
    power : array_like
        Shaft power of one fan, [W] (>= 0).
    density : array_like
        Inlet density, [kg/m^3] (> 0).
    speed : array_like
        Shaft speed, [rev/s] (> 0).
    diameter : array_like
        Fan diameter, [m] (> 0).

    Returns
    -------
    lam : ndarray
        Power coefficient, [-].

    References
    ----------
    .. [1] Dixon and Hall (2014), sec. 1.5-1.6.

    Examples
    --------
    By hand: 250 / (1.225 * 333.33**3 * 1e-5) = 0.55102 (with phi psi / lambda = 0.8).

    >>> round(float(power_coefficient(250.0, 1.225, 20000 / 60, 0.1)), 5)
    0.55102
    """
    p, rho = asarray(power), asarray(density)
    n, d = asarray(speed), asarray(diameter)
    return p / (rho * n**3 * d**5)


def scale(volume_flow, pressure_rise, power, speed_ratio, diameter_ratio, density_ratio=1.0):
    r"""Carry an operating point to another speed, size and density by the fan laws.

    :math:`Q \propto N D^3`, :math:`\Delta p \propto \rho N^2 D^2`, :math:`P \propto \rho N^3 D^5`;
    efficiency is unchanged (geometric and dynamic similarity, Reynolds effects ignored).

    Parameters
    ----------
    volume_flow, pressure_rise, power : array_like
        The known point, [m^3/s] (>= 0), [Pa] (any real value), [W] (>= 0).
    speed_ratio, diameter_ratio, density_ratio : array_like
        New over old speed, diameter and density, [-] (> 0).

    Returns
    -------
    ScaledFan
        Named tuple of the scaled point: volume_flow [m^3/s], pressure_rise [Pa], power [W].

    References
    ----------
    .. [1] Dixon and Hall (2014), sec. 1.6; Eck (1973), ch. 2.

    Examples
    --------
    Half the speed, twice the diameter; by hand Q x 0.5 x 8, dp x 0.25 x 4, P x 0.125 x 32:

    >>> tuple(round(float(v), 6) for v in scale(0.1, 2000.0, 250.0, 0.5, 2.0))
    (0.4, 2000.0, 1000.0)
    """
    q, dp, p = (asarray(v) for v in (volume_flow, pressure_rise, power))
    rn, rd, rr = (asarray(v) for v in (speed_ratio, diameter_ratio, density_ratio))
    return ScaledFan(q * rn * rd**3, dp * rr * rn**2 * rd**2, p * rr * rn**3 * rd**5)


def characteristic(flow_coefficient, coefficients):
    r"""Quadratic fan characteristic :math:`\psi = c_0 + c_1 \phi + c_2 \phi^2`.

    Parameters
    ----------
    flow_coefficient : array_like
        Flow coefficient, [-] (>= 0, inside the map's flow-coefficient range).
    coefficients : sequence of 3 array_like
        (c0, c1, c2), [-]; a stable fan has c2 < 0 and operates where dpsi/dphi < 0.

    Returns
    -------
    psi : ndarray
        Pressure coefficient, [-].

    References
    ----------
    .. [1] Eck (1973), ch. 2 (parabolic characteristic near the design point).

    Examples
    --------
    By hand: 0.6 + 0.5 * 0.2 - 1.5 * 0.04 = 0.64.

    >>> round(float(characteristic(0.2, (0.6, 0.5, -1.5))), 12)
    0.64
    """
    c0, c1, c2 = (asarray(c) for c in coefficients)
    phi = asarray(flow_coefficient)
    return c0 + phi * (c1 + c2 * phi)


def shaft_speed(volume_flow, pressure_rise, density, diameter, coefficients, derivatives=False):
    r"""Shaft speed at which the quadratic characteristic passes through (Q, dp).

    Multiplying :math:`\psi(\phi)` by :math:`N^2` with :math:`k = Q/D^3`,
    :math:`g = \Delta p/(\rho D^2)` gives :math:`c_0 N^2 + c_1 k N + c_2 k^2 - g = 0`, whose larger
    root is taken, written without cancellation:
    :math:`N = (-b + \sqrt{\Delta})/(2 c_0)` when :math:`b = c_1 k < 0`, else
    :math:`N = -2c/(b + \sqrt{\Delta})`, with :math:`c = c_2 k^2 - g`,
    :math:`\Delta = b^2 - 4 c_0 c`.

    Parameters
    ----------
    volume_flow : array_like
        Volume flow through one fan, [m^3/s] (>= 0).
    pressure_rise : array_like
        Required pressure rise, [Pa] (any real value; NaN speed where no positive root).
    density : array_like
        Inlet density, [kg/m^3] (> 0).
    diameter : array_like
        Fan diameter, [m] (> 0).
    coefficients : sequence of 3 array_like
        (c0, c1, c2) of :func:`characteristic`, [-]; c0 must be > 0.
    derivatives : bool
        Also return a dict of partials keyed 'volume_flow', 'pressure_rise', 'density',
        'diameter', 'c0', 'c1', 'c2' (implicit differentiation: dN/dx = -dF/dx / sqrt(Delta)).

    Returns
    -------
    N : ndarray
        Shaft speed, [rev/s]. NaN where no positive root exists (Delta < 0, or the larger root
        is <= 0, e.g. a pressure rise the fan cannot reach at any speed, or dp <= 0 with no
        positive root); the derivatives are NaN there too.

    Raises
    ------
    ValueError
        If any c0 <= 0 (the characteristic must have a positive shut-off head).

    References
    ----------
    .. [1] Eck (1973), ch. 2; Dixon and Hall (2014), sec. 1.6.
    .. [2] Press, W. H. et al. *Numerical Recipes*, 3rd ed., Cambridge, 2007, sec. 5.6
       (quadratic roots without cancellation).

    Examples
    --------
    With k = 100 and g = 20000 the quadratic is N^2 + 100 N - 20000 = (N - 100)(N + 200):

    >>> round(float(shaft_speed(0.1, 200.0, 1.0, 0.1, (1.0, 1.0, 0.0))), 9)
    100.0
    """
    c0, c1, c2 = (asarray(c) for c in coefficients)
    if np.any(~(c0 > 0)):
        raise ValueError(f"coefficients: c0 = {c0} must be > 0 (positive shut-off pressure "
                         "coefficient)")
    q, dp = asarray(volume_flow), asarray(pressure_rise)
    rho, d = asarray(density), asarray(diameter)
    k = q / d**3
    g = dp / (rho * d**2)
    b = c1 * k
    c = c2 * k**2 - g
    disc = b**2 - 4.0 * c0 * c
    with np.errstate(invalid='ignore', divide='ignore'):
        # branches on the real parts (a complex step rides along)
        s = np.sqrt(np.where(np.real(disc) >= 0, disc, np.nan))
        n = np.where(np.real(b) < 0, (s - b) / (2.0 * c0), -2.0 * c / (b + s))
        n = np.where(np.real(n) > 0, n, np.nan)
        if not derivatives:
            return n
        dn_dk = -(c1 * n + 2.0 * c2 * k) / s
        dn_dg = 1.0 / s
        d_out = {
            'volume_flow': dn_dk / d**3,
            'pressure_rise': dn_dg / (rho * d**2),
            'density': -dn_dg * g / rho,
            'diameter': -3.0 * dn_dk * k / d - 2.0 * dn_dg * g / d,
            'c0': -n**2 / s,
            'c1': -n * k / s,
            'c2': -k**2 / s,
        }
    shape = n.shape
    return n, {key: np.broadcast_to(val, shape).copy() for key, val in d_out.items()}


def map_efficiency(flow_coefficient, peak_efficiency, peak_flow_coefficient, efficiency_falloff,
               derivatives=False):
    r"""Fan efficiency as a parabola about its peak.

    .. math::
        \eta = \eta_{pk}\left[1 - f\left(\frac{\phi}{\phi_{pk}} - 1\right)^2\right]

    Parameters
    ----------
    flow_coefficient : array_like
        Flow coefficient, [-] (>= 0, inside the map's flow-coefficient range).
    peak_efficiency : array_like
        Best efficiency, [-] (0, 1].
    peak_flow_coefficient : array_like
        Flow coefficient at best efficiency, [-] (> 0).
    efficiency_falloff : array_like
        Relative loss of efficiency at phi = 0 (or 2 phi_pk), [-] (>= 0).
    derivatives : bool
        Also return a dict of partials keyed by the argument names.

    Returns
    -------
    eta : ndarray
        Efficiency, [-]; meaningful only inside the map's flow range (it can fall to zero or
        below far off design, which the flow-range margins keep the optimizer away from).

    References
    ----------
    .. [1] Eck (1973), ch. 2 (efficiency hill about the design flow; the parabola is common
       practice, no source).
    .. [2] docs/theory.md, section "Fan" (the efficiency parabola of this project's map).

    Examples
    --------
    At half the peak flow: 0.8 (1 - 0.8 * 0.25) = 0.64 (by hand).

    >>> round(float(map_efficiency(0.15, 0.8, 0.3, 0.8)), 12)
    0.64
    """
    phi, pk = asarray(flow_coefficient), asarray(peak_efficiency)
    ppk, f = asarray(peak_flow_coefficient), asarray(efficiency_falloff)
    u = phi / ppk - 1.0
    eta = pk * (1.0 - f * u**2)
    if not derivatives:
        return eta
    d_out = {'flow_coefficient': -2.0 * pk * f * u / ppk,
             'peak_efficiency': 1.0 - f * u**2,
             'peak_flow_coefficient': 2.0 * pk * f * u * phi / ppk**2,
             'efficiency_falloff': -pk * u**2}
    return eta, {key: np.broadcast_to(val, eta.shape).copy() for key, val in d_out.items()}


def shaft_power(volume_flow, pressure_rise, efficiency, derivatives=False):
    r"""Incompressible fan shaft power :math:`P = Q \Delta p / \eta` for :math:`\Delta p > 0`.

    Parameters
    ----------
    volume_flow : array_like
        Volume flow, [m^3/s] (>= 0).
    pressure_rise : array_like
        Total-pressure rise, [Pa] (any real value; <= 0 gives zero power).
    efficiency : array_like
        Fan efficiency, [-] (in (0, 1]).
    derivatives : bool
        Also return a dict of partials keyed 'volume_flow', 'pressure_rise', 'efficiency'.

    Returns
    -------
    P : ndarray
        Shaft power, [W]. Zero where dp <= 0: the jet is ram-driven and the fan would windmill;
        that regime is never priced as negative power over an efficiency (the duct model flags
        it). The derivatives are zero there too.

    References
    ----------
    .. [1] Dixon and Hall (2014), sec. 2.6 (fan total-to-total efficiency).

    Examples
    --------
    By hand: 0.1 * 2000 / 0.8 = 250 W.

    >>> round(float(shaft_power(0.1, 2000.0, 0.8)), 9)
    250.0
    """
    q, dp, eta = (asarray(v) for v in (volume_flow, pressure_rise, efficiency))
    if not derivatives:
        # fmax(dp, 0) (0 for a NaN rise too) zeroes the windmilling points without a branch;
        # a non-finite flow or efficiency there would leave 0 * inf = NaN: zero it as before.
        p = q * np.fmax(dp, 0.0)
        if eta.ndim or eta != 1.0:          # P / 1 is P (the air power)
            p = p / eta
        if not np.isfinite(p).all():
            p = np.where(np.real(dp) > 0, p, 0.0)
        return p
    on = np.real(dp) > 0
    p = np.where(on, q * dp / eta, 0.0)
    d_out = {'volume_flow': np.where(on, dp / eta, 0.0),
             'pressure_rise': np.where(on, q / eta, 0.0),
             'efficiency': np.where(on, -p / eta, 0.0)}
    return p, {key: np.broadcast_to(val, p.shape).copy() for key, val in d_out.items()}


def shaft_power_isentropic(mass_flow, pressure_rise, inlet_pressure, inlet_temperature, efficiency,
                           gamma=1.4, cp=1004.685, derivatives=False):
    r"""Compressible fan shaft power from the isentropic work of compression.

    .. math::
        P = \dot m\, c_p T_{t1} \left[(1 + x)^{(\gamma-1)/\gamma} - 1\right] / \eta,
        \quad x = \Delta p / p_{t1}

    evaluated as ``expm1(k log1p(x))`` so that it stays exact for small x, where
    ``P / (Q dp)`` tends to ``1 - x/(2 gamma)``.

    Parameters
    ----------
    mass_flow : array_like
        Mass flow, [kg/s] (>= 0).
    pressure_rise : array_like
        Total-pressure rise, [Pa] (any real value; <= 0 gives zero power).
    inlet_pressure : array_like
        Inlet total pressure, [Pa] (> 0).
    inlet_temperature : array_like
        Inlet total temperature, [K] (> 0).
    efficiency : array_like
        Isentropic (total-to-total) efficiency, [-] (in (0, 1]).
    gamma : float
        Ratio of specific heats, [-] (> 1; 1.4 for air).
    cp : float
        Specific heat at constant pressure, [J/(kg K)] (> 0; 1004.685 for air).
    derivatives : bool
        Also return a dict of partials keyed 'mass_flow', 'pressure_rise', 'inlet_pressure',
        'inlet_temperature', 'efficiency'.

    Returns
    -------
    P : ndarray
        Shaft power, [W]; zero (with zero derivatives) where dp <= 0, as in :func:`shaft_power`.

    References
    ----------
    .. [1] Dixon and Hall (2014), sec. 2.6-2.7 (isentropic compression work).
    .. [2] ISO 5801:2017 (the fan compressibility coefficient is the ratio of this work to
       Q dp; from memory).

    Examples
    --------
    A pressure ratio 2**3.5 makes (1 + x)**(0.4/1.4) = 2, so P = 1 * 1004.685 * 300 (by hand):

    >>> round(float(shaft_power_isentropic(1.0, 101325.0 * (2**3.5 - 1), 101325.0, 300.0, 1.0)), 6)
    301405.5
    """
    m, dp, p = (asarray(v) for v in (mass_flow, pressure_rise, inlet_pressure))
    t, eta = asarray(inlet_temperature), asarray(efficiency)
    k = (gamma - 1.0) / gamma
    on = np.real(dp) > 0
    x = np.where(on, dp / p, 0.0)
    head = np.expm1(k * np.log1p(x))          # (1 + x)^k - 1
    power = np.where(on, m * cp * t * head / eta, 0.0)
    if not derivatives:
        return power
    dhead_dx = k * np.exp((k - 1.0) * np.log1p(x))
    dp_dx = m * cp * t * dhead_dx / eta
    d_out = {'mass_flow': np.where(on, cp * t * head / eta, 0.0),
             'pressure_rise': np.where(on, dp_dx / p, 0.0),
             'inlet_pressure': np.where(on, -dp_dx * x / p, 0.0),
             'inlet_temperature': np.where(on, m * cp * head / eta, 0.0),
             'efficiency': np.where(on, -power / eta, 0.0)}
    return power, {key: np.broadcast_to(val, power.shape).copy() for key, val in d_out.items()}


def tip_mach(speed, diameter, speed_of_sound, derivatives=False):
    r"""Blade-tip Mach number :math:`M_t = \pi N D / a`.

    Parameters
    ----------
    speed : array_like
        Shaft speed, [rev/s] (>= 0).
    diameter : array_like
        Fan diameter, [m] (> 0).
    speed_of_sound : array_like
        Inlet speed of sound, [m/s] (> 0).
    derivatives : bool
        Also return a dict of partials keyed 'speed', 'diameter', 'speed_of_sound'.

    Returns
    -------
    mach : ndarray
        Tip Mach number, [-].

    References
    ----------
    .. [1] Dixon and Hall (2014), sec. 1.6.

    Examples
    --------
    20 000 rpm, 0.1 m, ISA sea-level speed of sound: pi * 333.33 * 0.1 / 340.294 (by hand).

    >>> round(float(tip_mach(20000 / 60, 0.1, 340.294)), 6)
    0.307733
    """
    n, d, a = (asarray(v) for v in (speed, diameter, speed_of_sound))
    mach = np.pi * n * d / a
    if not derivatives:
        return mach
    return mach, {'speed': np.pi * d / a + 0 * mach, 'diameter': np.pi * n / a + 0 * mach,
                  'speed_of_sound': -mach / a}


def margins(speed, max_speed, flow_coefficient, flow_coefficient_range):
    r"""Margins to the speed limit and to the map's flow range (positive = inside).

    .. math::
        m_N = 1 - \frac{N}{N_{max}},\qquad m_{stall} = \frac{\phi}{\phi_{lo}} - 1,\qquad
        m_{choke} = 1 - \frac{\phi}{\phi_{hi}}

    Parameters
    ----------
    speed : array_like
        Shaft speed, [rev/s] (>= 0).
    max_speed : array_like
        Shaft speed limit, [rev/s] (> 0).
    flow_coefficient : array_like
        Operating flow coefficient, [-] (>= 0).
    flow_coefficient_range : (lo, hi)
        Valid flow-coefficient range of the map, [-], 0 < lo < hi; lo is the stall side.

    Returns
    -------
    Margins
        Named tuple: speed_margin = 1 - N/N_max, stall_margin = phi/phi_lo - 1,
        choke_margin = 1 - phi/phi_hi, all [-].

    References
    ----------
    .. [1] docs/theory.md, section "Optimization" (the fan speed and flow-coefficient range
       constraints); the relative form of the margins is common practice, no source.

    Examples
    --------
    By hand: 1 - 400/500 = 0.2, 0.25/0.2 - 1 = 0.25, 1 - 0.25/0.4 = 0.375.

    >>> tuple(round(float(v), 12) for v in margins(400.0, 500.0, 0.25, (0.2, 0.4)))
    (0.2, 0.25, 0.375)
    """
    n, nmax = asarray(speed), asarray(max_speed)
    phi = asarray(flow_coefficient)
    lo, hi = (asarray(v) for v in flow_coefficient_range)
    return Margins(1.0 - n / nmax, phi / lo - 1.0, 1.0 - phi / hi)


def _positive(name, value):
    arr = np.atleast_1d(asarray(value))
    if not np.all(np.isfinite(arr)) or np.any(arr <= 0):
        raise ValueError(f"{name}: all values must be finite and > 0, got {value!r}")
    return arr


def _quadratic_fit(x, y):
    """Least-squares quadratic y = a0 + a1 x + a2 x^2 (lstsq, SVD-based), with r2 and residual std."""
    vander = np.column_stack([np.ones_like(x), x, x**2])
    coef, *_ = np.linalg.lstsq(vander, y, rcond=None)
    resid = y - vander @ coef
    ss_res, ss_tot = float(resid @ resid), float(np.sum((y - y.mean())**2))
    r2 = 1.0 - ss_res / ss_tot if ss_tot > 0 else (1.0 if ss_res == 0 else float('nan'))
    return coef, r2, float(np.sqrt(ss_res / (x.size - 3)))


def fit_points(volume_flow, pressure_rise, speed, density, diameter, efficiency=None,
               electrical_power=None, motor_efficiency=1.0):
    r"""Fit a :class:`FanMap` to measured points by linear least squares.

    Each point gives phi = Q/(N D^3) and psi = dp/(rho N^2 D^2); psi(phi) and eta(phi) are fitted
    as quadratics (``numpy.linalg.lstsq``, no normal equations),

    .. math::
        \min_{c}\sum_i\left(\psi_i - c_0 - c_1\phi_i - c_2\phi_i^2\right)^2,\qquad
        \min_{e}\sum_i\left(\eta_i - e_0 - e_1\phi_i - e_2\phi_i^2\right)^2 .

    The efficiency quadratic is converted to the peak form of :func:`map_efficiency`:
    :math:`\phi_{pk} = -e_1/(2 e_2)`, :math:`\eta_{pk} = e_0 - e_1^2/(4 e_2)`,
    :math:`f = -e_2\phi_{pk}^2/\eta_{pk}`.

    Parameters
    ----------
    volume_flow : array_like
        Measured flow through one fan, [m^3/s] (> 0), at least 4 points.
    pressure_rise : array_like
        Measured pressure rise, [Pa] (> 0).
    speed : array_like
        Shaft speed, [rev/s] (> 0).
    density : array_like
        Inlet density, [kg/m^3] (> 0), scalar or per point.
    diameter : array_like
        Fan diameter, [m] (> 0), scalar or per point.
    efficiency : array_like, optional
        Measured fan efficiency, [-] in (0, 1].
    electrical_power : array_like, optional
        Measured electrical input power, [W] (> 0); then eta = Q dp / (P_el * motor_efficiency).
        Give exactly one of ``efficiency`` and ``electrical_power``.
    motor_efficiency : float
        Motor (and drive) efficiency, [-] in (0, 1], used with ``electrical_power``.

    Returns
    -------
    fan_map : FanMap
        The fitted map, all coefficients [-]; flow_coefficient_range is the measured (min, max)
        phi.
    stats : dict
        'pressure_r2', 'pressure_residual_std', 'efficiency_r2', 'efficiency_residual_std'
        (residual std with n - 3 degrees of freedom), all [-], and 'points' (count).

    Raises
    ------
    ValueError
        Fewer than 4 points, mismatched lengths, non-positive values, both or neither of
        efficiency / electrical_power, an efficiency parabola that opens upward, or a peak
        efficiency outside (0, 1] or peak flow coefficient <= 0.

    References
    ----------
    .. [1] Golub, G. H. and Van Loan, C. F. *Matrix Computations*, 4th ed., Johns Hopkins, 2013,
       ch. 5 (least squares by orthogonal factorisation).

    Examples
    --------
    Four points generated exactly on psi = 0.6 + 0.5 phi - 1.5 phi^2; the fit recovers it:

    >>> phi = [0.2, 0.25, 0.3, 0.35]
    >>> fm, st = fit_points([p * 300 * 1e-3 for p in phi],
    ...                     [1.225 * 300**2 * 0.01 * (0.6 + 0.5 * p - 1.5 * p * p) for p in phi],
    ...                     300.0, 1.225, 0.1, efficiency=[0.7, 0.74, 0.75, 0.74])
    >>> [round(float(c), 9) for c in fm.pressure_coefficients]
    [0.6, 0.5, -1.5]
    """
    if (efficiency is None) == (electrical_power is None):
        raise ValueError("efficiency, electrical_power: give exactly one of the two, got "
                         f"efficiency={efficiency!r}, electrical_power={electrical_power!r}")
    q = _positive('volume_flow', volume_flow)
    if q.ndim != 1 or q.size < 4:
        raise ValueError(f"volume_flow: need at least 4 measured points in a 1-D array, got {q.size}")
    arrays = {'volume_flow': q}
    for name, value in (('pressure_rise', pressure_rise), ('speed', speed), ('density', density),
                        ('diameter', diameter)):
        arrays[name] = _positive(name, value)
    if efficiency is not None:
        arrays['efficiency'] = _positive('efficiency', efficiency)
        if np.any(arrays['efficiency'] > 1):
            raise ValueError(f"efficiency: measured values must be in (0, 1], got {efficiency!r}")
    else:
        arrays['electrical_power'] = _positive('electrical_power', electrical_power)
        eta_m = _positive('motor_efficiency', motor_efficiency)
        if np.any(eta_m > 1):
            raise ValueError(f"motor_efficiency: must be in (0, 1], got {motor_efficiency!r}")
    for name, arr in arrays.items():
        if arr.size not in (1, q.size):
            raise ValueError(f"{name}: has {arr.size} values, expected 1 or {q.size} (one per point)")
    a = {name: np.broadcast_to(arr, q.shape) for name, arr in arrays.items()}
    phi = flow_coefficient_of(a['volume_flow'], a['speed'], a['diameter'])
    psi = pressure_coefficient(a['pressure_rise'], a['density'], a['speed'], a['diameter'])
    if efficiency is not None:
        eta = a['efficiency']
    else:
        eta = a['volume_flow'] * a['pressure_rise'] / (a['electrical_power'] * eta_m)
    c_psi, r2_psi, std_psi = _quadratic_fit(phi, psi)
    c_eta, r2_eta, std_eta = _quadratic_fit(phi, eta)
    e0, e1, e2 = (float(v) for v in c_eta)
    if not e2 < 0:
        raise ValueError(f"efficiency: the fitted efficiency parabola opens upward or is flat "
                         f"(phi^2 coefficient {e2:.4g} must be < 0); measure on both sides of the peak")
    phi_pk = -e1 / (2.0 * e2)
    eta_pk = e0 - e1**2 / (4.0 * e2)
    if not (0 < eta_pk <= 1) or not phi_pk > 0:
        raise ValueError(f"efficiency: fitted peak efficiency {eta_pk:.4g} at flow coefficient "
                         f"{phi_pk:.4g}; need peak in (0, 1] at a flow coefficient > 0")
    fan_map = FanMap(tuple(float(c) for c in c_psi), float(eta_pk), float(phi_pk),
                     float(-e2 * phi_pk**2 / eta_pk), (float(phi.min()), float(phi.max())))
    stats = {'pressure_r2': r2_psi, 'pressure_residual_std': std_psi, 'efficiency_r2': r2_eta,
             'efficiency_residual_std': std_eta, 'points': int(q.size)}
    return fan_map, stats
