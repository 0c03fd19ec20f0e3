"""International Standard Atmosphere from 5 km below sea level to 20 km geometric altitude.

Troposphere (constant lapse rate) and the isothermal lower stratosphere of ICAO Doc 7488 /
ISO 2533 / U.S. Standard Atmosphere 1976 (identical in this range), with Sutherland's law for the
dynamic viscosity. Altitudes given are geometric and converted to geopotential internally.

The lower limit is the standard's: ISO 2533:1975 tabulates from -2000 m and its Addendum 2
(1997) extends the tables down to -5000 m, over which the troposphere's lapse rate holds; the
U.S. Standard Atmosphere 1976 also starts at -5000 m (from memory). An altitude within
:data:`ALTITUDE_ROUND_OFF` outside the range (round-off of a host's arithmetic, such as a
descent that ends at -2.27e-13 m below the lowest allowed) is taken as the bound.
"""
from collections import namedtuple

import numpy as np

from mdao.physics.numeric import asarray

from mdao.physics.bounds import snap

__all__ = ["Atmosphere", "isa", "GAMMA", "GAS_CONSTANT", "CP", "ALTITUDE_RANGE",
           "ALTITUDE_ROUND_OFF"]

Atmosphere = namedtuple("Atmosphere", "temperature pressure density speed_of_sound viscosity")
Atmosphere.__doc__ = ("Air state: temperature [K], pressure [Pa], density [kg/m**3], speed of "
                      "sound [m/s], dynamic viscosity [Pa*s] (or their altitude derivatives).")

GAMMA = 1.4                                  #: ratio of specific heats [-]
GAS_CONSTANT = 287.05287                     #: specific gas constant of air [J/(kg*K)]
CP = GAMMA * GAS_CONSTANT / (GAMMA - 1.0)    #: specific heat at constant pressure [J/(kg*K)]
G0 = 9.80665                                 #: standard gravity [m/s**2]
EARTH_RADIUS = 6356766.0                     #: radius for geopotential altitude [m]
T0, P0 = 288.15, 101325.0                    #: sea-level temperature [K] and pressure [Pa]
LAPSE_RATE = 0.0065                          #: troposphere lapse rate [K/m]
H_TROPOPAUSE = 11000.0                       #: tropopause geopotential altitude [m]
SUTHERLAND_C1, SUTHERLAND_S = 1.458e-6, 110.4  #: [kg/(m*s*K**0.5)], [K]
ALTITUDE_RANGE = (-5000.0, 20000.0)          #: valid geometric altitudes [m] (ISO 2533 Add. 2)
#: Distance past a bound of ALTITUDE_RANGE taken as round-off, [m]: 1 nm, some thousand ulps of
#: 20 km (3.6e-12 m each), far below any altitude difference that matters.
ALTITUDE_ROUND_OFF = 1e-9

_T11 = T0 - LAPSE_RATE * H_TROPOPAUSE
_EXPONENT = G0 / (GAS_CONSTANT * LAPSE_RATE)
_P11 = P0 * (_T11 / T0) ** _EXPONENT


def isa(altitude, derivatives=False):
    r"""Standard-atmosphere state at a geometric altitude.

    .. math::
        H = \frac{r_0 z}{r_0 + z},\quad
        T = T_0 - L H \;(H \le 11\,\mathrm{km}),\; T_{11} \text{ above},\quad
        p = p_0 (T/T_0)^{g_0/(R L)} \;\text{or}\; p_{11} e^{-g_0 (H - H_{11})/(R T_{11})},

    :math:`\rho = p/(R T)`, :math:`a = \sqrt{\gamma R T}`,
    :math:`\mu = C_1 T^{3/2}/(T + S)`.

    Parameters
    ----------
    altitude : array_like
        Geometric altitude, [m]. Valid range -5000 to 20 000 m (within
        :data:`ALTITUDE_ROUND_OFF` outside it: the bound).
    derivatives : bool
        Also return the derivative of every field with respect to geometric altitude.

    Returns
    -------
    state : Atmosphere
        temperature [K], pressure [Pa], density [kg/m**3], speed_of_sound [m/s],
        viscosity [Pa*s], each an ndarray of the altitude's shape.
    d_dz : Atmosphere
        The same fields differentiated by geometric altitude (per metre); only when
        ``derivatives`` is true.

    Raises
    ------
    ValueError
        If any altitude is outside -5000 to 20 000 m by more than round-off, or NaN.

    Notes
    -----
    The gas constant is ICAO's 287.05287 J/(kg K); the 1976 document's R*/M0 = 8314.32/28.9644
    differs by 7e-7 relative, which moves the pressure by about 1e-6 relative at 11 to 20 km.

    References
    ----------
    .. [1] ICAO, *Manual of the ICAO Standard Atmosphere*, Doc 7488/3, 1993 (= ISO 2533:1975,
       with ISO 2533:1975/Add 2:1997 for -5000 to -2000 m).
    .. [2] NOAA/NASA/USAF, *U.S. Standard Atmosphere, 1976*, NOAA-S/T 76-1562.

    Examples
    --------
    The U.S. Standard Atmosphere 1976 tabulates 216.774 K and 22 699.96 Pa at 11 km geometric;
    the 9e-7 relative difference in pressure is the gas constant's (see Notes).

    >>> s = isa(11000.0)
    >>> round(float(s.temperature), 3), round(float(s.pressure), 2)
    (216.774, 22699.94)
    """
    z = asarray(altitude)           # float, or complex under a complex step
    # the extremes first (a NaN among them fails both comparisons): one pass each
    if z.size and not (z.min() >= ALTITUDE_RANGE[0] and z.max() <= ALTITUDE_RANGE[1]):
        z = snap(z, *ALTITUDE_RANGE, tolerance=ALTITUDE_ROUND_OFF)   # round-off: the bound
        bad = ~((z >= ALTITUDE_RANGE[0]) & (z <= ALTITUDE_RANGE[1]))
        if bad.any():
            raise ValueError(f"altitude must be within {ALTITUDE_RANGE[0]:g} to "
                             f"{ALTITUDE_RANGE[1]:g} m (geometric); got "
                             f"{float(z[bad].ravel()[0])!r}")
    # Values without branches where they are not needed (this is the hot path of every study):
    # T0 - L H falls below T11 exactly where H passes the tropopause, the troposphere's power
    # law is exp(k log(T/T0)) (about a quarter cheaper than the general power), and the
    # stratosphere's exponential is evaluated only at the points that are there.
    shape = z.shape
    z = z.reshape(-1)                       # 1-D working arrays: the in-place steps need arrays
    h = EARTH_RADIUS + z
    np.divide(z, h, out=h)
    h *= EARTH_RADIUS
    temperature = np.multiply(h, -LAPSE_RATE)
    temperature += T0
    np.maximum(temperature, _T11, out=temperature)
    pressure = np.divide(temperature, T0)
    np.log(pressure, out=pressure)
    pressure *= _EXPONENT
    np.exp(pressure, out=pressure)
    pressure *= P0
    upper = np.flatnonzero(h > H_TROPOPAUSE)
    if upper.size:
        pressure[upper] = _P11 * np.exp(-G0 * (h[upper] - H_TROPOPAUSE)
                                        / (GAS_CONSTANT * _T11))
    density = np.multiply(temperature, GAS_CONSTANT)
    np.divide(pressure, density, out=density)
    root_t = np.sqrt(temperature)
    speed_of_sound = np.multiply(root_t, np.sqrt(GAMMA * GAS_CONSTANT))
    viscosity = np.add(temperature, SUTHERLAND_S)      # C1 T^(3/2) / (T + S)
    np.divide(root_t, viscosity, out=viscosity)
    viscosity *= temperature
    viscosity *= SUTHERLAND_C1
    state = Atmosphere(*(v.reshape(shape) for v in (temperature, pressure, density,
                                                    speed_of_sound, viscosity)))
    if not derivatives:
        return state

    temperature, pressure, density, speed_of_sound, viscosity = state
    h = h.reshape(shape)
    z = z.reshape(shape)
    dh_dz = (EARTH_RADIUS / (EARTH_RADIUS + z)) ** 2
    lower = h <= H_TROPOPAUSE
    dt = np.where(lower, -LAPSE_RATE, 0.0) * dh_dz
    dp = -G0 * density * dh_dz                      # hydrostatic balance, both layers
    drho = density * (dp / pressure - dt / temperature)
    da = 0.5 * speed_of_sound / temperature * dt
    dmu = viscosity * (1.5 / temperature - 1.0 / (temperature + SUTHERLAND_S)) * dt
    return state, Atmosphere(dt, dp, drho, da, dmu)
