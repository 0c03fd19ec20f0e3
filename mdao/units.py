"""Quantities with units for case files and data tables, read with pint and converted to SI."""
import csv
import functools
import io
import math
import os
import re
import stat

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


#: Longest quantity string read (characters); "0.0015 mm" or "2.5 kg/m**2" need a few dozen.
MAX_QUANTITY_LENGTH = 200
#: Longest unit text (a table header's bracket).
MAX_UNIT_LENGTH = 60
#: Largest exponent in a unit (``m**3``, ``s**-2``): unit powers beyond this are no physical unit.
MAX_UNIT_POWER = 12

#: A leading number: sign, digits, optional fraction and decimal exponent (no ``**``).
_NUMBER = re.compile(r"\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d{1,3})?)(?![\d.eE])\s*(.*)\Z",
                     re.DOTALL)
#: A power in a unit: ``**2``, ``^3``, ``** -1``, ``^(0.5)``.
_POWER = re.compile(r"(?:\*\*|\^)\s*\(?\s*[+-]?(\d{1,3}(?:\.\d{1,3})?)\s*\)?")
#: What a unit may be made of once its powers are taken out: names, products and quotients.
_UNIT_TEXT = re.compile(r"[^\W\d]+(?:[\s*/()·.]+[^\W\d]+)*[\s)]*\Z|%\Z|\Z", re.UNICODE)
#: A power of a power (``m**2**9``): pint would evaluate it.
_CHAINED_POWER = re.compile(r"(?:\*\*|\^)\s*\(?\s*[+-]?[\d.]+\s*\)?\s*(?:\*\*|\^)")


def shown(value, limit=80):
    """``repr(value)`` cut to ``limit`` characters with "...": control characters escaped, never
    a long echo (for messages)."""
    text = repr(value)
    return text if len(text) <= limit else text[:limit - 3] + "..."


def _check_unit_text(unit, whole):
    """Refuse a unit string that is not names with ``*``, ``/``, parentheses and small powers
    (pint would evaluate any arithmetic in it, with integers of any size)."""
    if len(unit) > MAX_UNIT_LENGTH:
        raise UnitError(f"{shown(whole)}: the unit is longer than {MAX_UNIT_LENGTH} characters")
    bare = unit.strip().lstrip("/(")
    for match in _POWER.finditer(bare):
        if float(match.group(1)) > MAX_UNIT_POWER:
            raise UnitError(f"{shown(whole)}: unit powers up to {MAX_UNIT_POWER} are allowed")
    names = _POWER.sub(" ", bare)
    if (bare[:1] in ("*", "^") or _CHAINED_POWER.search(bare)
            or not _UNIT_TEXT.match(names.strip())):
        raise UnitError(f"{shown(whole)}: write one number and then a unit, e.g. \"0.5 m\" or "
                        "\"1.2 kg/m**3\" (no arithmetic, no numbers inside the unit)")


def to_si(text, dimension):
    """Read ``text`` (e.g. ``"45 m/s"``) and return its magnitude in the SI unit of ``dimension``.

    The text is one finite number followed by a unit (pint's names, ``*``, ``/``, parentheses and
    powers up to :data:`MAX_UNIT_POWER`), at most :data:`MAX_QUANTITY_LENGTH` characters; anything
    else (arithmetic such as ``"2**10 m"``, a unit without a number, ``inf``/``nan``, control
    characters) raises :class:`UnitError` before pint sees it, so that no input can build a huge
    integer or take long to read.

    Examples
    --------
    >>> to_si("60000 rpm", "rotational_speed")
    1000.0
    >>> to_si("1.5 h", "time")
    5400.0
    """
    ureg = registry()
    target = SI_UNITS[dimension]
    if isinstance(text, str):
        if len(text) > MAX_QUANTITY_LENGTH:
            raise UnitError(f"{shown(text)}: a quantity is at most {MAX_QUANTITY_LENGTH} "
                            f"characters (this one has {len(text)})")
        if not text.isprintable():
            raise UnitError(f"{shown(text)} contains control characters; write a number and a "
                            "unit, e.g. \"0.5 m\"")
        match = _NUMBER.match(text)
        if not match:
            raise UnitError(f"{shown(text)}: give a number and a unit, e.g. "
                            f"\"{_EXAMPLE.get(dimension, '1')}\" (a finite number first)")
        magnitude, unit = float(match.group(1)), match.group(2).strip()
        if not math.isfinite(magnitude):
            raise UnitError(f"{shown(text)}: the number is not finite")
        _check_unit_text(unit, text)
        try:
            q = ureg.Quantity(magnitude, unit) if unit else ureg.Quantity(magnitude, "")
        except Exception as exc:  # pint raises several error types for bad text
            raise UnitError(f"cannot read {shown(text)} as a quantity "
                            f"({shown(str(exc), 120)[1:-1]})") from None
    else:
        if isinstance(text, bool) or not isinstance(text, (int, float)):
            raise UnitError(f"{shown(text)}: a number is allowed")
        if not math.isfinite(float(text)):
            raise UnitError(f"{shown(text)}: the number is not finite")
        q = ureg.Quantity(float(text), "")
    if dimension == "angle" and q.dimensionless and not str(q.units) in ("radian", "degree"):
        if isinstance(text, str) and q.units == ureg.dimensionless:
            raise UnitError(f"{shown(text)} has no angle unit; write e.g. \"3 deg\"")
    try:
        value = float(q.to(target).magnitude) if target else float(q.to("").magnitude)
    except pint.DimensionalityError:
        raise UnitError(f"{shown(text)} is not a {dimension.replace('_', ' ')} "
                        f"(expected a unit convertible to {target or 'a pure number'})") from None
    except (OverflowError, ValueError, TypeError, ArithmeticError) as exc:
        raise UnitError(f"cannot read {shown(text)} as a quantity ({type(exc).__name__})") from None
    if not math.isfinite(value):
        raise UnitError(f"{shown(text)} is not finite in SI units")
    return value


#: An example of each dimension, for messages.
_EXAMPLE = {"length": "0.5 m", "speed": "40 m/s", "time": "1 h", "pressure": "500 Pa",
            "angle": "3 deg", "rotational_speed": "30000 rpm", "specific_power": "2 kW/kg",
            "areal_density": "1.5 kg/m**2", "mass": "25 kg", "area": "1.6 m**2",
            "force": "10 N", "power": "300 W", "density": "1.2 kg/m**3"}


#: Largest case file or calibration fragment read [bytes] (the bundled cases are a few kB).
MAX_CASE_BYTES = 1_000_000
#: Largest CSV table read (run tables, fan points files) [bytes].
MAX_TABLE_BYTES = 50_000_000
#: Longest path accepted (characters; Linux's PATH_MAX is 4096).
MAX_PATH_LENGTH = 4096
#: Longest CSV cell read (characters); a number needs a few dozen.
MAX_CELL_LENGTH = 100


def shown_path(path):
    """A path for messages: its text, control characters escaped, at most 120 characters."""
    text = str(path)
    if text.isprintable() and len(text) <= 120:
        return text
    return shown(text, 120)


def read_text(path, limit, error, what="file", encoding="utf-8"):
    """The text of a file the user points at, with its size checked before it is read.

    Parameters
    ----------
    path : str or path-like
        The file.
    limit : int
        Largest size [bytes].
    error : type
        Exception raised (its message names the file and what is wrong, never the contents).
    what : str
        What the file is, for messages ("case file").
    encoding : str
        ``"utf-8"`` or ``"utf-8-sig"`` (a CSV may start with a byte-order mark).

    Returns
    -------
    str
    """
    text = os.fspath(path)
    name = shown_path(text)
    if "\0" in str(text):
        raise error(f"{what} {name}: a path may not contain a NUL character")
    if len(str(text)) > MAX_PATH_LENGTH:
        raise error(f"{what} {name}: the path is longer than {MAX_PATH_LENGTH} characters")
    try:
        info = os.stat(text)
        if stat.S_ISDIR(info.st_mode):
            raise error(f"{what} {name} is a folder; give a file")
        if not stat.S_ISREG(info.st_mode):
            raise error(f"{what} {name} is not a regular file")
        if info.st_size > limit:
            raise error(f"{what} {name} has {info.st_size} bytes; at most {limit} are read")
        with open(text, "rb") as handle:
            data = handle.read(limit + 1)
    except OSError as exc:
        reason = exc.strerror or type(exc).__name__
        raise error(f"cannot read the {what} {name}: {reason}") from None
    if len(data) > limit:
        raise error(f"{what} {name} has more than {limit} bytes; at most {limit} are read")
    try:
        return data.decode(encoding)
    except UnicodeDecodeError as exc:
        raise error(f"{what} {name} is not UTF-8 text (byte {exc.start} cannot be decoded); "
                    "save it as UTF-8") from None


def unit_of(text):
    """Parse a unit string alone (a table header's bracket); raise UnitError if unknown."""
    if not isinstance(text, str):
        raise UnitError(f"unknown unit {shown(text)}")
    _check_unit_text(text, text)
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
            _check_unit_text(text, text)
            quantity = ureg.Quantity(1.0, text)
        except Exception as exc:  # pint raises several types for an unreadable unit
            raise error(f"column '{name}': unit {shown(text)} is not a unit pint understands "
                        f"({shown(str(exc), 120)[1:-1]})") from None
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
    text = read_text(path, MAX_TABLE_BYTES, error, "table", encoding="utf-8-sig")
    if "\0" in text:
        raise error(f"table {shown_path(path)} contains NUL characters: not a CSV text file")
    try:
        lines = [(number, row) for number, row in
                 enumerate(csv.reader(io.StringIO(text, newline="")), start=1)
                 if any(cell.strip() for cell in row) and not row[0].lstrip().startswith("#")]
    except csv.Error as exc:
        raise error(f"table {shown_path(path)} is not a readable CSV ({exc})") from None
    if not lines:
        raise error(f"{shown_path(path)}: no header row")
    header_line, header = lines[0]
    names, factors = [], []
    for number, cell in enumerate(header, start=1):
        match = _HEADER.match(cell) if len(cell) <= MAX_UNIT_LENGTH + 40 else None
        if not match:   # not echoed: the file may be anything the user pointed at
            raise error(f"{shown_path(path)}: header cell {number} (line {header_line}) is not "
                        "of the form 'name [unit]'; is it a CSV table with a header row?")
        name, unit = match.group(1).lower(), match.group(2)
        if name not in columns:
            raise error(f"unknown column {shown(name)}; allowed columns: " + ", ".join(columns))
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
            where_cell = f"{where}, column '{names[j]}'"
            if len(text) > MAX_CELL_LENGTH:
                raise error(f"{where_cell}: a cell of {len(text)} characters; a number of at "
                            f"most {MAX_CELL_LENGTH} is allowed")
            try:
                value = float(text)
            except ValueError:
                value = None
            if value is None or not math.isfinite(value):
                what = shown(text) if text else "blank"
                raise error(f"{where_cell}: {what} is not a finite number")
            value *= factors[j]
            if not math.isfinite(value):
                raise error(f"{where_cell}: {shown(text)} is not finite in SI units")
            data[index, j] = value
    return {name: data[:, j] for j, name in enumerate(names)}
