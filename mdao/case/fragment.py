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

from mdao.case.errors import CaseError
from mdao.units import to_si


def _constant(value):
    """A constant of the fragment: a number, or a lift table (checked by the case reader)."""
    return dict(value) if isinstance(value, dict) else float(value)


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
    with open(path, "rb") as handle:
        try:
            data = tomllib.load(handle)
        except tomllib.TOMLDecodeError as exc:
            raise FragmentError(f"{path}: not valid TOML ({exc})") from None
    for section in ("duct", "airfoil", "validity", "uncertainty"):
        if not isinstance(data.get(section), dict):
            raise FragmentError(f"{path}: missing section [{section}]")
    airfoil = dict(data["airfoil"])
    validity = {}
    if "momentum_coefficient_range" not in airfoil:
        raise FragmentError(f"{path}: missing key airfoil.momentum_coefficient_range")
    validity["momentum_coefficient_range"] = [float(v) for v in
                                              airfoil.pop("momentum_coefficient_range")]
    constants = {f"duct.{k}": _constant(v) for k, v in data["duct"].items()}
    constants.update({f"airfoil.{k}": _constant(v) for k, v in airfoil.items()})
    for key in ("slot_ratio_range", "reynolds_range", "speed_range"):
        if key not in data["validity"]:
            raise FragmentError(f"{path}: missing key validity.{key}")
    validity["slot_ratio_range"] = [float(v) for v in data["validity"]["slot_ratio_range"]]
    validity["reynolds_range"] = [float(v) for v in data["validity"]["reynolds_range"]]
    try:
        validity["speed_range"] = [to_si(v, "speed")
                                   for v in data["validity"]["speed_range"]]
    except Exception as exc:
        raise FragmentError(f"{path}: validity.speed_range must be speeds like \"12.0 m/s\" "
                               f"({exc})") from None
    unc = data["uncertainty"]
    for key in ("parameters", "stderr", "covariance"):
        if key not in unc:
            raise FragmentError(f"{path}: missing key uncertainty.{key}")
    names = list(unc["parameters"])
    matrix = [[float(v) for v in row] for row in unc["covariance"]]
    scalars = sorted(k for k, v in constants.items() if not isinstance(v, dict))
    if sorted(names) != scalars:
        raise FragmentError(f"{path}: uncertainty.parameters {names} do not match the "
                               f"constants given as numbers {scalars}")
    if len(unc["stderr"]) != len(names) or len(matrix) != len(names) \
            or any(len(row) != len(names) for row in matrix):
        raise FragmentError(f"{path}: uncertainty.stderr and uncertainty.covariance must be "
                               f"of size {len(names)} (one per parameter)")
    tables = unc.get("lift_tables", {})
    if not isinstance(tables, dict) or sorted(tables) != sorted(
            k for k, v in constants.items() if isinstance(v, dict)):
        raise FragmentError(f"{path}: uncertainty.lift_tables must give the intervals of "
                            "every constant given as a lift table, and only those")
    return {"constants": constants, "lift_tables": tables,
            "stderr": {k: float(v) for k, v in zip(names, unc["stderr"])},
            "covariance": {"parameters": names, "matrix": matrix},
            "validity": validity}
