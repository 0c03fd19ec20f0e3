"""Quantities with units for case files and data tables, read with pint and converted to SI."""
import csv
import functools
import math
import re

import numpy as np
import pint


@functools.lru_cache(maxsize=1)
def registry():
    """The shared pint unit registry."""
    return pint.UnitRegistry()


#: SI unit each dimension is converted to. Shaft speeds go to revolutions per second, so
#: that "60000 rpm" reads as 1000 rev/s (pint counts a revolution as 2 pi radians).
SI_UNITS = {
    "length": "m", "speed": "m/s", "time": "s", "pressure": "Pa", "density": "kg/m**3",
    "angle": "rad", "rotational_speed": "revolution/s", "mass_flow": "kg/s",
    "volume_flow": "m**3/s", "power": "W", "area": "m**2", "mass": "kg",
    "specific_power": "W/kg", "areal_density": "kg/m**2", "dimensionless": "",
    "viscosity": "Pa*s", "energy": "J", "force": "N",
}


class UnitError(ValueError):
    """A quantity that cannot be read or has the wrong dimension."""


def to_si(text, dimension):
    """Read ``text`` (e.g. ``"45 m/s"``) and return its magnitude in the SI unit of ``dimension``.

    Examples
    --------
    >>> to_si("60000 rpm", "rotational_speed")
    1000.0
    >>> to_si("1.5 h", "time")
    5400.0
    """
    ureg = registry()
    target = SI_UNITS[dimension]
    try:
        q = ureg.Quantity(text) if isinstance(text, str) else ureg.Quantity(text, "")
    except Exception as exc:  # pint raises several error types for bad text
        raise UnitError(f"cannot read {text!r} as a quantity ({exc})") from None
    if dimension == "angle" and q.dimensionless and not str(q.units) in ("radian", "degree"):
        if isinstance(text, str) and q.units == ureg.dimensionless:
            raise UnitError(f"{text!r} has no angle unit; write e.g. \"3 deg\"")
    try:
        return float(q.to(target).magnitude) if target else float(q.to("").magnitude)
    except pint.DimensionalityError:
        raise UnitError(f"{text!r} is not a {dimension.replace('_', ' ')} "
                        f"(expected a unit convertible to {target or 'a pure number'})") from None


def unit_of(text):
    """Parse a unit string alone (a table header's bracket); raise UnitError if unknown."""
    try:
        return registry().Unit(text)
    except Exception:
        raise UnitError(f"unknown unit {text!r}") from None


_HEADER = re.compile(r"^\s*([A-Za-z_][A-Za-z0-9_]*)\s*(?:\[(.*)\])?\s*$")


def _si_factor(name, unit, spec, error):
    """Multiplier from ``unit`` to the SI unit of column ``name`` (offset-free units only)."""
    si_unit, dimensionality, meaning = spec
    text = (unit or "").strip()
    ureg = registry()
    if text in ("", "-", "1"):
        quantity = ureg.Quantity(1.0, "dimensionless")
    else:
        try:
            quantity = ureg.Quantity(1.0, text)
        except Exception as exc:  # pint raises several types for an unreadable unit
            raise error(
                f"column '{name}': unit '{text}' is not a unit pint understands ({exc})") from None
    if str(quantity.dimensionality) != dimensionality:
        wanted = f"[{si_unit}]" if si_unit else "[-]"
        got = f"[{text}]" if unit is not None else "no unit"
        raise error(
            f"column '{name}' ({meaning}) has {got}, of dimension {quantity.dimensionality}; "
            f"it needs a unit of dimension {dimensionality}, e.g. '{name} {wanted}'")
    return float(quantity.to(si_unit or "dimensionless").magnitude)


def read_table(path, columns, error=UnitError):
    """Read a CSV table whose header names each column with its unit in brackets, into SI.

    Blank lines and lines starting with ``#`` are skipped. Row numbers in messages are 1-based
    data rows (the header and skipped lines not counted), with the file line beside them.

    Parameters
    ----------
    path : str or path-like
        CSV file; header cells ``name [unit]`` (pint unit) or ``name`` for a pure number.
    columns : dict
        Allowed column name -> (SI unit, dimensionality as pint prints it, meaning).
    error : type
        Exception class raised, with a message naming the column or the row.

    Returns
    -------
    dict of str to ndarray
        Column name -> values in SI units (the columns present; no check of which are needed).
    """
    with open(path, newline="", encoding="utf-8-sig") as handle:
        lines = [(number, row) for number, row in enumerate(csv.reader(handle), start=1)
                 if any(cell.strip() for cell in row) and not row[0].lstrip().startswith("#")]
    if not lines:
        raise error(f"{path}: no header row")
    header_line, header = lines[0]
    names, factors = [], []
    for cell in header:
        match = _HEADER.match(cell)
        if not match:
            raise error(f"header cell '{cell}' is not of the form 'name [unit]'")
        name, unit = match.group(1).lower(), match.group(2)
        if name not in columns:
            raise error(f"unknown column '{name}'; allowed columns: " + ", ".join(columns))
        if name in names:
            raise error(f"duplicate column '{name}' in the header")
        names.append(name)
        factors.append(_si_factor(name, unit, columns[name], error))
    data = np.empty((len(lines) - 1, len(names)))
    for index, (line, row) in enumerate(lines[1:]):
        where = f"row {index + 1} (line {line})"
        if len(row) != len(names):
            raise error(f"{where}: {len(row)} cells, the header has {len(names)}")
        for j, cell in enumerate(row):
            text = cell.strip()
            try:
                value = float(text)
            except ValueError:
                value = None
            if value is None or not math.isfinite(value):
                shown = f"'{text}'" if text else "blank"
                raise error(f"{where}, column '{names[j]}': {shown} is not a finite number")
            data[index, j] = value * factors[j]
    return {name: data[:, j] for j, name in enumerate(names)}
