"""Calibration fragments: the constants, uncertainty and validity ranges that
``blownwing calibrate`` writes (``calibration.toml``) and a case includes with
``[calibration] file = "PATH"``.

Reading a fragment sits below case loading; writing one belongs to the calibration study
(:func:`mdao.studies.calibration.fragment_text`).
"""
try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

import math

from mdao.case.errors import CaseError
from mdao.units import MAX_CASE_BYTES, UnitError, read_text, shown, shown_path, to_si


def _number(path, key, value):
    """A finite number of the fragment, else FragmentError naming the key."""
    if isinstance(value, bool) or not isinstance(value, (int, float)) \
            or not math.isfinite(value):
        raise FragmentError(f"{path}: {key} = {shown(value)}: a finite number is allowed")
    return float(value)


def _numbers(path, key, value, length=None):
    """A list of finite numbers (of ``length`` when given), else FragmentError naming the key."""
    if not isinstance(value, list) or (length is not None and len(value) != length) \
            or len(value) > 1000:
        wanted = f"{length} numbers" if length is not None else "numbers"
        raise FragmentError(f"{path}: {key} = {shown(value)}: a list of {wanted} is allowed")
    return [_number(path, f"{key}[{i}]", v) for i, v in enumerate(value)]


def _range(path, key, value):
    """A ``[low, high]`` range with low < high."""
    low, high = _numbers(path, key, value, 2)
    if not low < high:
        raise FragmentError(f"{path}: {key} = {shown(value)}: the low end must be below the "
                            "high end")
    return [low, high]


def _constant(path, key, value):
    """A constant of the fragment: a number, or a lift table (checked by the case reader)."""
    return dict(value) if isinstance(value, dict) else _number(path, key, value)


class FragmentError(CaseError):
    """A calibration fragment that cannot be used; the message names the file and the key."""


def load_fragment(path):
    """Read a calibration fragment (``calibration.toml``) back.

    Parameters
    ----------
    path : str or path-like
        The fragment.

    Returns
    -------
    dict
        ``constants`` (case key path -> value: a number, or a lift table ``{"lift_coefficient":
        [...], "value": [...]}``), ``lift_tables`` (key -> ``stderr``, ``ci95_low``,
        ``ci95_high`` of a tabled constant, per breakpoint), ``stderr`` (key -> value), ``covariance``
        (``parameters``, ``matrix``), ``validity``: ``momentum_coefficient_range``,
        ``slot_ratio_range``, ``reynolds_range`` [-] and ``speed_range`` [m/s], each [low, high].

    Raises
    ------
    FragmentError
        Missing section or key, or an inconsistent uncertainty block (names the key).
    """
    text = read_text(path, MAX_CASE_BYTES, FragmentError, "calibration fragment")
    path = shown_path(path)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise FragmentError(f"{path}: not valid TOML ({exc})") from None
    except RecursionError:
        raise FragmentError(f"{path}: tables or arrays nested too deep to read") from None
    for section in ("duct", "airfoil", "validity", "uncertainty"):
        if section not in data:
            raise FragmentError(f"{path}: missing section [{section}]")
        if not isinstance(data[section], dict):
            raise FragmentError(f"{path}: [{section}] must be a table, got "
                                f"{shown(data[section])}")
    airfoil = dict(data["airfoil"])
    validity = {}
    if "momentum_coefficient_range" not in airfoil:
        raise FragmentError(f"{path}: missing key airfoil.momentum_coefficient_range")
    validity["momentum_coefficient_range"] = _range(
        path, "airfoil.momentum_coefficient_range", airfoil.pop("momentum_coefficient_range"))
    constants = {f"duct.{k}": _constant(path, f"duct.{k}", v) for k, v in data["duct"].items()}
    constants.update({f"airfoil.{k}": _constant(path, f"airfoil.{k}", v)
                      for k, v in airfoil.items()})
    for key in ("slot_ratio_range", "reynolds_range", "speed_range"):
        if key not in data["validity"]:
            raise FragmentError(f"{path}: missing key validity.{key}")
    validity["slot_ratio_range"] = _range(path, "validity.slot_ratio_range",
                                          data["validity"]["slot_ratio_range"])
    validity["reynolds_range"] = _range(path, "validity.reynolds_range",
                                        data["validity"]["reynolds_range"])
    speeds = data["validity"]["speed_range"]
    if not isinstance(speeds, list) or len(speeds) != 2:
        raise FragmentError(f"{path}: validity.speed_range = {shown(speeds)}: two speeds "
                            "[low, high] like \"12.0 m/s\" are allowed")
    try:
        validity["speed_range"] = [to_si(v, "speed") for v in speeds]
    except UnitError as exc:
        raise FragmentError(f"{path}: validity.speed_range must be speeds like \"12.0 m/s\" "
                            f"({exc})") from None
    if not validity["speed_range"][0] < validity["speed_range"][1]:
        raise FragmentError(f"{path}: validity.speed_range = {shown(speeds)}: the low end must "
                            "be below the high end")
    unc = data["uncertainty"]
    for key in ("parameters", "stderr", "covariance"):
        if key not in unc:
            raise FragmentError(f"{path}: missing key uncertainty.{key}")
    if not isinstance(unc["parameters"], list) or not all(
            isinstance(n, str) for n in unc["parameters"]):
        raise FragmentError(f"{path}: uncertainty.parameters = {shown(unc['parameters'])}: a "
                            "list of case key paths is allowed")
    names = list(unc["parameters"])
    if not isinstance(unc["covariance"], list):
        raise FragmentError(f"{path}: uncertainty.covariance = {shown(unc['covariance'])}: a "
                            "list of rows of numbers is allowed")
    matrix = [_numbers(path, f"uncertainty.covariance[{i}]", row)
              for i, row in enumerate(unc["covariance"])]
    stderr = _numbers(path, "uncertainty.stderr", unc["stderr"])
    scalars = sorted(k for k, v in constants.items() if not isinstance(v, dict))
    if sorted(names) != scalars:
        raise FragmentError(f"{path}: uncertainty.parameters {names} do not match the "
                               f"constants given as numbers {scalars}")
    if len(stderr) != len(names) or len(matrix) != len(names) \
            or any(len(row) != len(names) for row in matrix):
        raise FragmentError(f"{path}: uncertainty.stderr and uncertainty.covariance must be "
                               f"of size {len(names)} (one per parameter)")
    tables = unc.get("lift_tables", {})
    if not isinstance(tables, dict) or sorted(tables) != sorted(
            k for k, v in constants.items() if isinstance(v, dict)):
        raise FragmentError(f"{path}: uncertainty.lift_tables must give the intervals of "
                            "every constant given as a lift table, and only those")
    return {"constants": constants, "lift_tables": tables,
            "stderr": dict(zip(names, stderr)),
            "covariance": {"parameters": names, "matrix": matrix},
            "validity": validity}
