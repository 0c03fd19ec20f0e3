"""Writing the calibration fragment (``calibration.toml``) that a case includes with
``[calibration] file = "PATH"``.

Sections ``[duct]`` and ``[airfoil]`` (the constants, case key paths of :mod:`mdao.parameters`),
``[validity]`` (the ranges the runs cover) and ``[uncertainty]`` (standard errors and the full
covariance). Numbers are written with Python's ``repr``, so they read back bit for bit; TOML is the
open format of the TOML v1.0.0 specification (https://toml.io/en/v1.0.0). Reading a fragment back
sits below case loading: :func:`mdao.case.fragment.load_fragment`.
"""
import json
import math

from mdao.studies.calibration.runs import CalibrationError

__all__ = ["fragment_text"]


def _toml_value(value):
    if isinstance(value, str):
        return json.dumps(value)
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    value = float(value)
    if not math.isfinite(value):
        raise CalibrationError(f"cannot write the non-finite value {value} to TOML")
    return repr(value)


def fragment_text(result, source=None):
    """The calibration fragment a case file reads (TOML text, written by hand).

    Parameters
    ----------
    result : dict
        From :func:`mdao.studies.calibration.fitting.calibrate`.
    source : dict, optional
        ``{'csv': path, 'sha256': digest}``, written as comments.

    Returns
    -------
    str
        TOML with sections ``[duct]``, ``[airfoil]``, ``[validity]``, ``[uncertainty]``.
    """
    constants, validity = result["constants"], result["validity"]
    tables = result.get("lift_tables", {})
    lines = ["# blownwing calibration fragment (generated); preliminary design estimates"]
    if source:
        lines.append(f"# runs: {source['csv']} (sha256 {source['sha256']})")
    if tables:
        lines.append(f"# constants as tables over the section lift coefficient: fitted in "
                     f"{len(result['lift_bands'])} lift bands, each at its mean lift coefficient")
    for section in ("duct", "airfoil"):
        lines.append(f"[{section}]")
        for key, entry in constants.items():
            if key.startswith(section + "."):
                name = key.split(".", 1)[1]
                if key in tables:
                    t = tables[key]
                    lines.append(f"{name} = {{ lift_coefficient = "
                                 f"{_toml_value(t['lift_coefficient'])}, value = "
                                 f"{_toml_value(t['value'])} }}")
                    continue
                comment = "  # fixed: " + entry["source"] if entry.get("fixed") else ""
                lines.append(f"{name} = {_toml_value(entry['value'])}{comment}")
        if section == "airfoil":
            lines.append("momentum_coefficient_range = "
                         + _toml_value(validity["momentum_coefficient"]))
    lines += ["[validity]",
              "slot_ratio_range = " + _toml_value(validity["slot_ratio"]),
              "reynolds_range = " + _toml_value(validity["reynolds"]),
              "speed_range = " + _toml_value([f"{float(v)!r} m/s" for v in validity["speed"]]),
              "[uncertainty]"]
    names = result["covariance"]["parameters"]
    keep = [i for i, k in enumerate(names) if k not in tables]
    matrix = result["covariance"]["matrix"]
    lines += ["parameters = " + _toml_value([names[i] for i in keep]),
              "stderr = " + _toml_value([constants[names[i]]["stderr"] for i in keep]),
              "# covariance: full matrix over `parameters`, zero between separate fits",
              "covariance = ["]
    lines += ["  " + _toml_value([matrix[i][j] for j in keep]) + "," for i in keep]
    lines.append("]")
    if tables:
        lines.append("# per lift band: standard errors and 95 % intervals of the table values")
        lines.append("[uncertainty.lift_tables]")
        for key, t in tables.items():
            lines.append(f"{json.dumps(key)} = {{ stderr = {_toml_value(t['stderr'])}, "
                         f"ci95_low = {_toml_value([c[0] for c in t['ci95']])}, "
                         f"ci95_high = {_toml_value([c[1] for c in t['ci95']])} }}")
    return "\n".join(lines) + "\n"
