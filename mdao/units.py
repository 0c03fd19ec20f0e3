"""Quantities with units for case files and data tables, read with pint and converted to SI."""
import functools

import pint


@functools.lru_cache(maxsize=1)
def registry():
    """The shared pint unit registry."""
    return pint.UnitRegistry()


#: SI unit each dimension kind is converted to. Shaft speeds go to revolutions per second, so
#: that "60000 rpm" reads as 1000 rev/s (pint counts a revolution as 2 pi radians).
SI_UNITS = {
    "length": "m", "speed": "m/s", "time": "s", "pressure": "Pa", "density": "kg/m**3",
    "angle": "rad", "rotational_speed": "revolution/s", "mass_flow": "kg/s",
    "volume_flow": "m**3/s", "power": "W", "area": "m**2", "mass": "kg",
    "specific_power": "W/kg", "areal_density": "kg/m**2", "dimensionless": "",
    "viscosity": "Pa*s", "energy": "J",
}


class UnitError(ValueError):
    """A quantity that cannot be read or has the wrong dimension."""


def to_si(text, kind):
    """Read ``text`` (e.g. ``"45 m/s"``) and return its magnitude in the SI unit of ``kind``.

    Examples
    --------
    >>> to_si("60000 rpm", "rotational_speed")
    1000.0
    >>> to_si("1.5 h", "time")
    5400.0
    """
    ureg = registry()
    target = SI_UNITS[kind]
    try:
        q = ureg.Quantity(text) if isinstance(text, str) else ureg.Quantity(text, "")
    except Exception as exc:  # pint raises several error types for bad text
        raise UnitError(f"cannot read {text!r} as a quantity ({exc})") from None
    if kind == "angle" and q.dimensionless and not str(q.units) in ("radian", "degree"):
        if isinstance(text, str) and q.units == ureg.dimensionless:
            raise UnitError(f"{text!r} has no angle unit; write e.g. \"3 deg\"")
    try:
        return float(q.to(target).magnitude) if target else float(q.to("").magnitude)
    except pint.DimensionalityError:
        raise UnitError(f"{text!r} is not a {kind.replace('_', ' ')} "
                        f"(expected a unit convertible to {target or 'a pure number'})") from None


def unit_of(text):
    """Parse a unit string alone (a table header's bracket); raise UnitError if unknown."""
    try:
        return registry().Unit(text)
    except Exception:
        raise UnitError(f"unknown unit {text!r}") from None
