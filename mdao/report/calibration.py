"""The calibration's console text: constants with standard errors and 95 % intervals, the fit
statistics, warnings, outliers, the energy balance and notes of
:func:`mdao.studies.calibration.calibrate`.
"""
from mdao.parameters import parameter
from mdao.report.console import aligned_table
from mdao.studies.calibration.fitting import CAUTION

__all__ = ["format_summary"]


def format_summary(result):
    """Plain-text summary for the console.

    Parameters
    ----------
    result : dict
        From :func:`mdao.studies.calibration.calibrate` or
        :func:`mdao.studies.calibration.calibrate_file`.

    Returns
    -------
    str
        Constants with standard errors and 95 % intervals, fit statistics, warnings, outliers,
        the energy balance of the runs and of the fitted model, notes, and the closing caution
        line.
    """
    lines = []
    if "source" in result:
        lines.append(f"Calibration of {result['source']['csv']} ({result['runs']} runs)")
    rows = []
    for key, entry in result["constants"].items():
        low, high = entry["ci95"]
        tag = "fixed" if entry.get("fixed") else (
            "mean of given column" if "source" in entry else "")
        rows.append([key, f"{entry['value'] + 0.0:.5g}", f"{entry['stderr']:.3g}",
                     f"[{low + 0.0:.5g}, {high + 0.0:.5g}]", _unit(key), tag])
    lines += [line.rstrip() for line in aligned_table(
        ["constant", "value", "stderr", "95 % interval", "unit", ""], [""] * 6, rows,
        left=(0, 3, 4, 5)) if line.strip()]
    lines += _table_lines(result)
    lines.append("")
    rows = []
    for name, fit in result["fits"].items():
        r = fit["ranges"]
        r2 = "n/a" if fit["r2"] is None else f"{fit['r2']:.5f}"
        rows.append([name, str(fit["runs"]), str(fit["dof"]), r2,
                     f"{fit['residual_std']:.4g} {_response_unit(fit)}".rstrip(),
                     f"[{r['momentum_coefficient'][0]:.4g}, {r['momentum_coefficient'][1]:.4g}]",
                     f"[{r['slot_ratio'][0]:.4g}, {r['slot_ratio'][1]:.4g}]"])
    lines += [line.rstrip() for line in aligned_table(
        ["fit", "runs", "dof", "R^2", "resid std", "C_mu range", "slot ratio range"],
        [""] * 7, rows, left=(0, 5, 6)) if line.strip()]
    v = result["validity"]
    lines.append(f"validity: Reynolds {v['reynolds'][0]:.3g} to {v['reynolds'][1]:.3g}, "
                 f"speed {v['speed'][0]:.4g} to {v['speed'][1]:.4g} m/s")
    lines.append("")
    lines.append("Warnings: " + ("none" if not result["warnings"] else ""))
    lines += [f"  - {w}" for w in result["warnings"]]
    outliers = [(name, o) for name, fit in result["fits"].items() for o in fit["outliers"]]
    lines.append("Outliers (|studentized residual| > 3, kept in the fit): "
                 + ("none" if not outliers else ""))
    lines += [f"  - {name} fit, row {o['row']}: residual {o['residual']:.4g}, studentized "
              f"{o['studentized_external'] or o['studentized_internal']:.3g}"
              for name, o in outliers]
    lines += _energy_lines(result.get("energy_balance"))
    if result["notes"]:
        lines.append("Notes:")
        lines += [f"  - {n}" for n in result["notes"]]
    lines.append(CAUTION)
    return "\n".join(lines)


def _unit(key):
    """A constant's SI unit from its declaration (:mod:`mdao.parameters`), ``-`` for a pure
    number."""
    try:
        return parameter(key).unit or "-"
    except KeyError:
        return "-"


def _response_unit(fit):
    """The unit of a fit's response, from its ``"name [unit]"`` label."""
    response = fit.get("response", "")
    unit = response[response.rfind("[") + 1:-1] if response.endswith("]") else ""
    return "" if unit == "-" else unit


def _table_lines(result):
    """The lift tables of a banded calibration: per constant, value +/- stderr at each band's
    mean lift coefficient; per band, its runs and any warning."""
    tables, bands = result.get("lift_tables"), result.get("lift_bands")
    if not tables:
        return []
    lines = ["", f"Lift tables ({len(bands)} lift bands; the fragment gives these instead of "
                 "the single values above):"]
    rows = [[key] + [f"{v + 0.0:.4g} +/- {e:.2g}" for v, e in zip(t["value"], t["stderr"])]
            for key, t in tables.items()]
    lines += [line for line in aligned_table(
        ["constant"] + [f"C_L {b['lift_coefficient']:.3f}" for b in bands],
        [""] * (len(bands) + 1), rows) if line.strip()]
    for k, b in enumerate(bands, 1):
        lines.append(f"  band {k}: {b['runs']} runs, lift coefficient "
                     f"{b['lift_coefficient_range'][0]:.3f} to {b['lift_coefficient_range'][1]:.3f}")
        lines += [f"    - WARNING: {w}" for w in b["warnings"] + b["energy_balance_warnings"]]
    return lines


def _wrapped(items, indent="    ", width=100):
    """Items joined by ', ' in lines of at most ``width`` characters, never split inside one."""
    lines, line = [], indent
    for k, item in enumerate(items):
        piece = item + ("," if k < len(items) - 1 else "")
        if line.strip() and len(line) + 1 + len(piece) > width:
            lines.append(line)
            line = indent
        line += ("" if not line.strip() else " ") + piece
    return lines + [line]


def _energy_lines(balance):
    """The energy-balance section: a warning line per check that fails, the flagged rows."""
    if balance is None:
        return []
    broken, fitted = balance["broken_runs"], balance["fitted_model"]
    worst = fitted["worst"]
    lines = ["Energy balance, C_D + P_air/(q S V) >= 0 (first law, c = 1):"
             + ("" if balance["warnings"] else " kept by the runs and the fitted model")]
    if broken:
        lines.append(f"  - WARNING: {balance['warnings'][0]}")
        lines.append("    rows breaking it (margin):")
        lines += _wrapped([f"row {b['row']} ({b['margin']:.3g})" for b in broken], "      ")
    if worst["margin"] < 0:
        lines.append(f"  - WARNING: {balance['warnings'][-1]}")
    else:
        lines.append(f"  - fitted model: smallest margin {worst['margin']:.4g} over the calibrated "
                     f"range (at C_mu {worst['momentum_coefficient']:.4g}, slot ratio "
                     f"{worst['slot_ratio']:.4g})")
    return lines
