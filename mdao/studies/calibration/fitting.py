r"""Fitting the reduced-order constants to the designer's own CFD or wind-tunnel runs.

Three linear least-squares fits, each solved by a QR factorisation of the column-equilibrated
design matrix (never the normal equations) [1]_:

Duct relation (runs with the jet on), for the jet loss factor :math:`K_j` and the freestream
assist :math:`K_\infty`:

.. math::
    \Delta p_{fan} = K_j \tfrac12\rho V_j^2 - K_\infty q .

Dividing by :math:`q` shows what separates them: :math:`\Delta p/q = K_j (V_j/V)^2 - K_\infty`,
so the ratio :math:`(V_j/V)^2 = C_\mu / (2 r_s)` must vary across the runs, and so must the
freestream dynamic pressure itself (else :math:`K_\infty q` cannot be told from a constant
pressure offset).

Drag model (all runs, jet-off runs included):

.. math::
    C_D = C_{D,clean} + \Delta C_{D,slot} + \Delta C_{D,slot}' r_s + (\beta + \beta' r_s) C_\mu .

With ``drag_coefficient_clean`` given, :math:`C_D - C_{D,clean}` is fitted on :math:`[1, C_\mu]`
(one slot ratio) or :math:`[1, r_s, C_\mu, r_s C_\mu]` (several), and the clean drag reported is
the mean of the given column. Without it, several slot ratios are required: :math:`C_D` is fitted on
:math:`[1, r_s, C_\mu, r_s C_\mu]` with :math:`\Delta C_{D,slot} = 0`, i.e. the slot penalty is
taken as proportional to the slot ratio (the result says so).

Lift (when ``lift_coefficient`` is given): :math:`C_L = C_{L,0} + (dC_L/dC_\mu) C_\mu`.

Per constant: value, standard error, 95 % confidence interval (Student t, dof = runs - constants)
and covariance; per fit: :math:`R^2` (centred when the model has an intercept, about zero
otherwise, as statsmodels does), residual standard deviation, runs used, ranges covered, and
outliers: runs whose internally or externally studentized residual exceeds 3 in magnitude [2]_,
flagged by their 1-based data row and never dropped.

Plausibility warnings (:class:`CalibrationWarning`, also listed in the result), each a rule of
thumb, ``common practice, no source``: :math:`K_j` about 1.3 (warn outside 1.0-2.5; below 1 the duct
would recover more than the jet's own head), :math:`K_\infty` about 1 (warn outside 0.3-2.0), drag
slope :math:`dC_D/dC_\mu = \beta + \beta' r_s` about -1.5 (warn outside -4 to -0.3 anywhere in the
slot-ratio range covered), jet-off slotted drag about three times the clean drag (warn when the
ratio leaves 1-8 in the slot-ratio range covered).

Energy balance (first law, :mod:`mdao.studies.calibration.energy`): the jet-on runs whose drag and
air power break :math:`C_D + P_{air}/(q S V) \ge 0` are flagged by row and kept in the fit, and the
fitted model is checked on a grid over the calibrated range.

References
----------
.. [1] Golub, G. H. and Van Loan, C. F. *Matrix Computations*, 4th ed., Johns Hopkins, 2013,
   section 5.3 (least squares by Householder QR; why not the normal equations).
.. [2] Belsley, D. A., Kuh, E. and Welsch, R. E. *Regression Diagnostics*, Wiley, 1980, ch. 2
   (leverage, internally and externally studentized residuals).
.. [3] Seber, G. A. F. and Lee, A. J. *Linear Regression Analysis*, 2nd ed., Wiley, 2003, ch. 3
   and 5 (covariance, Student-t confidence intervals).
.. [4] NIST Statistical Reference Datasets, linear least squares, Longley (1967): the check of the
   least-squares core in the tests.
"""
import math
import warnings

import numpy as np
from scipy import linalg, stats

from mdao.parameters import CHAIN_PARAMETERS
from mdao.studies.calibration.energy import energy_balance
from mdao.studies.calibration.runs import CalibrationError, check_runs, derived, fit_plan

__all__ = ["CalibrationWarning", "CAUTION", "PLAUSIBLE", "CONSTANT_ORDER", "OUTLIER_LIMIT",
           "MIN_RELATIVE_SPREAD", "MAX_CONDITION", "least_squares", "calibrate"]

CAUTION = ("Preliminary design estimates: not airworthiness evidence; regulations, the certifying "
           "authority and licensed engineering practice govern.")

#: Rules of thumb (common practice, no source): (typical value, low, high) of the warning band.
PLAUSIBLE = {
    "duct.jet_loss_factor": (1.3, 1.0, 2.5),
    "duct.freestream_assist": (1.0, 0.3, 2.0),
    "airfoil.drag_per_momentum": (-1.5, -4.0, -0.3),
    "jet_off_to_clean": (3.0, 1.0, 8.0),
}

#: The case constants a calibration gives, in declaration order (:mod:`mdao.parameters`).
CONSTANT_ORDER = tuple(p.key for p in CHAIN_PARAMETERS if p.calibrated)

#: Outlier threshold on the studentized residuals.
OUTLIER_LIMIT = 3.0
#: Smallest relative spread (max - min) / mean of q and of (V_j/V)^2 that identifies K_inf.
MIN_RELATIVE_SPREAD = 0.01
#: Largest condition number of the column-equilibrated design matrix.
MAX_CONDITION = 1e10


class CalibrationWarning(UserWarning):
    """A fitted constant far from the usual values for such sections (not an error)."""


def least_squares(design, response, level=0.95):
    """Ordinary least squares by Householder QR of the column-equilibrated design matrix.

    Parameters
    ----------
    design : array_like, shape (n, p)
        Design matrix X (one row per run).
    response : array_like, shape (n,)
        Response y.
    level : float
        Confidence level of the intervals, [-].

    Returns
    -------
    dict
        ``params`` (p,), ``stderr`` (p,), ``covariance`` (p, p), ``ci`` (p, 2), ``fitted``,
        ``residuals``, ``leverage``, ``studentized_internal``, ``studentized_external`` (n,),
        ``dof``, ``residual_std``, ``r2``, ``r2_kind`` ('centred' with a constant column, else
        'uncentred'), ``condition`` of the equilibrated X.

    Raises
    ------
    CalibrationError
        Fewer than p + 1 rows, or X rank-deficient (condition above :data:`MAX_CONDITION`).

    Notes
    -----
    With :math:`X D = Q R` (D scales each column to unit norm): :math:`b = D R^{-1} Q^T y`,
    :math:`\\mathrm{Cov}\\,b = s^2 D R^{-1} R^{-T} D`, :math:`s^2 = \\|y - Xb\\|^2/(n-p)`,
    leverage :math:`h_i = \\|Q_{i,:}\\|^2`, internally studentized :math:`r_i/(s\\sqrt{1-h_i})`,
    externally :math:`r_i/(s_{(i)}\\sqrt{1-h_i})` with
    :math:`s_{(i)}^2 = (\\|r\\|^2 - r_i^2/(1-h_i))/(n-p-1)` [2]_.

    Examples
    --------
    >>> fit = least_squares([[1, 0], [1, 1], [1, 2], [1, 3]], [1.0, 3.0, 5.0, 7.5])
    >>> [round(float(v), 12) for v in fit['params']], round(float(fit['residual_std']), 12)
    ([0.9, 2.15], 0.19364916731)
    """
    x = np.asarray(design, dtype=float)
    y = np.asarray(response, dtype=float)
    n, p = x.shape
    if n <= p:
        raise CalibrationError(f"{n} runs cannot fit {p} constants")
    norms = np.linalg.norm(x, axis=0)
    if np.any(norms == 0):
        raise CalibrationError("a column of the design matrix is all zero")
    xs = x / norms
    singular = linalg.svdvals(xs)
    condition = singular[0] / singular[-1] if singular[-1] > 0 else math.inf
    if condition > MAX_CONDITION:
        raise CalibrationError(f"the design matrix is rank-deficient (condition {condition:.3g})")
    q, r = linalg.qr(xs, mode="economic")
    coef_scaled = linalg.solve_triangular(r, q.T @ y)
    params = coef_scaled / norms
    fitted = x @ params
    residuals = y - fitted
    dof = n - p
    sse = float(residuals @ residuals)
    variance = sse / dof
    r_inv = linalg.solve_triangular(r, np.eye(p))
    covariance = variance * (r_inv @ r_inv.T) / np.outer(norms, norms)
    stderr = np.sqrt(np.diag(covariance))
    t = stats.t.ppf(0.5 + level / 2, dof)
    has_constant = bool(np.any((np.ptp(x, axis=0) == 0) & (x[0] != 0)))
    total = float(np.sum((y - y.mean()) ** 2)) if has_constant else float(y @ y)
    leverage = np.sum(q ** 2, axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        spread = np.sqrt(1.0 - leverage)
        internal = residuals / (math.sqrt(variance) * spread)
        deleted = (sse - residuals ** 2 / (1.0 - leverage)) / (dof - 1) if dof > 1 else np.nan
        external = residuals / (np.sqrt(deleted) * spread)
    return {
        "params": params, "stderr": stderr, "covariance": covariance,
        "ci": np.column_stack([params - t * stderr, params + t * stderr]), "t": t,
        "fitted": fitted, "residuals": residuals, "leverage": leverage,
        "studentized_internal": internal, "studentized_external": external,
        "dof": dof, "residual_std": math.sqrt(variance),
        "r2": 1.0 - sse / total if total > 0 else math.nan,
        "r2_kind": "centred" if has_constant else "uncentred", "condition": condition,
    }


def _number(value):
    value = float(value)
    return value if math.isfinite(value) else None


def _ranges(d, rows):
    """Ranges covered. The momentum-coefficient range is that of the blown runs: jet-off runs
    inform the drag fit's intercept but do not make blowing at vanishing C_mu a calibrated
    operating point."""
    cmu = d["momentum_coefficient"][rows]
    blown = cmu[cmu > 0] if np.any(cmu > 0) else cmu
    return {
        "momentum_coefficient": [float(blown.min()), float(blown.max())],
        "slot_ratio": [float(d["slot_ratio"][rows].min()), float(d["slot_ratio"][rows].max())],
        "reynolds": [float(d["reynolds"][rows].min()), float(d["reynolds"][rows].max())],
        "speed": [float(d["speed"][rows].min()), float(d["speed"][rows].max())],
    }


def _fit_record(name, model, response, names, design, y, rows, d, hint):
    """Run one fit and package it JSON-ready."""
    try:
        fit = least_squares(design, y)
    except CalibrationError as exc:
        raise CalibrationError(f"{name} fit: {exc}; {hint}") from None
    row_numbers = np.flatnonzero(rows) + 1
    flagged = np.flatnonzero(np.fmax(np.abs(np.nan_to_num(fit["studentized_internal"])),
                                     np.abs(np.nan_to_num(fit["studentized_external"])))
                             > OUTLIER_LIMIT)
    outliers = [{"row": int(row_numbers[i]), "residual": float(fit["residuals"][i]),
                 "studentized_internal": _number(fit["studentized_internal"][i]),
                 "studentized_external": _number(fit["studentized_external"][i])}
                for i in flagged]
    return {
        "model": model, "response": response,
        "parameters": {n: {"value": float(fit["params"][i]), "stderr": float(fit["stderr"][i]),
                           "ci95": [float(fit["ci"][i, 0]), float(fit["ci"][i, 1])]}
                       for i, n in enumerate(names)},
        "covariance": {"parameters": list(names), "matrix": fit["covariance"].tolist()},
        "r2": _number(fit["r2"]), "r2_kind": fit["r2_kind"],
        "residual_std": float(fit["residual_std"]), "runs": int(rows.sum()), "dof": fit["dof"],
        "t95": float(fit["t"]), "condition": float(fit["condition"]),
        "ranges": _ranges(d, rows), "rows": row_numbers.tolist(),
        "fitted": fit["fitted"].tolist(), "residuals": fit["residuals"].tolist(),
        "studentized_external": [_number(v) for v in fit["studentized_external"]],
        "outliers": outliers, "warnings": [],
    }


def _spread(values):
    values = np.asarray(values, float)
    return float(np.ptp(values) / abs(values.mean()))


def _fit_duct(d, fan_rise):
    rows = d["jet_on"]
    q, jet_q = d["dynamic_pressure"][rows], d["jet_dynamic_pressure"][rows]
    if _spread(q) < MIN_RELATIVE_SPREAD:
        raise CalibrationError(
            "duct fit: the freestream dynamic pressure never varies across the jet-on runs, so "
            "duct.freestream_assist cannot be told from a constant offset; `speed` (or "
            "`density`/`altitude`) must vary independently of the jet")
    if _spread(jet_q / q) < MIN_RELATIVE_SPREAD:
        raise CalibrationError(
            "duct fit: the jet's dynamic pressure is proportional to the freestream's across the "
            "runs ((V_j/V)^2 constant), so duct.jet_loss_factor and duct.freestream_assist cannot "
            "be separated; `speed` (or `density`/`altitude`) must vary independently of the jet "
            "(`mass_flow`/`volume_flow`)")
    return _fit_record(
        "duct", "fan_pressure_rise = K_j rho V_j^2/2 - K_inf q", "fan_pressure_rise [Pa]",
        ["duct.jet_loss_factor", "duct.freestream_assist"],
        np.column_stack([jet_q, -q]), fan_rise[rows], rows, d,
        "`speed` (or `density`/`altitude`) must vary independently of the jet")


def _fit_drag(runs, d, several):
    cmu, ratio = d["momentum_coefficient"], d["slot_ratio"]
    rows = np.ones(cmu.shape, bool)
    notes, extra = [], {}
    if several:
        design = np.column_stack([np.ones_like(cmu), ratio, cmu, ratio * cmu])
        hint = ("vary `mass_flow`/`volume_flow` (the momentum coefficient) at two or more slot "
                "heights")
    else:
        design = np.column_stack([np.ones_like(cmu), cmu])
        hint = "vary `mass_flow`/`volume_flow` (the momentum coefficient)"
    drag = runs["drag_coefficient"]
    if "drag_coefficient_clean" in runs:
        clean = runs["drag_coefficient_clean"]
        y, response = drag - clean, "drag_coefficient - drag_coefficient_clean [-]"
        names = (["airfoil.slot_drag", "airfoil.slot_drag_per_ratio", "airfoil.drag_per_momentum",
                  "airfoil.drag_per_momentum_per_ratio"] if several
                 else ["airfoil.slot_drag", "airfoil.drag_per_momentum"])
        n = clean.size
        se = float(np.std(clean, ddof=1) / math.sqrt(n))
        t = float(stats.t.ppf(0.975, n - 1))
        mean = float(clean.mean())
        extra["airfoil.drag_clean"] = {"value": mean, "stderr": se,
                                       "ci95": [mean - t * se, mean + t * se],
                                       "source": "mean of drag_coefficient_clean"}
        model = ("drag_coefficient - drag_coefficient_clean = slot_drag + slot_drag_per_ratio r_s "
                 "+ (drag_per_momentum + drag_per_momentum_per_ratio r_s) C_mu" if several else
                 "drag_coefficient - drag_coefficient_clean = slot_drag + drag_per_momentum C_mu")
    else:
        if not several:
            raise CalibrationError(
                "drag fit: with one slot ratio, clean drag and slot penalty cannot be separated; "
                "give the column `drag_coefficient_clean` or vary `slot_height` (slot ratio)")
        y, response = drag, "drag_coefficient [-]"
        names = ["airfoil.drag_clean", "airfoil.slot_drag_per_ratio", "airfoil.drag_per_momentum",
                 "airfoil.drag_per_momentum_per_ratio"]
        extra["airfoil.slot_drag"] = {"value": 0.0, "stderr": 0.0, "ci95": [0.0, 0.0],
                                      "fixed": True,
                                      "source": "slot penalty taken proportional to slot "
                                                "ratio (no drag_coefficient_clean given)"}
        notes.append("no drag_coefficient_clean column: the slot penalty is taken proportional to "
                     "the slot ratio (airfoil.slot_drag fixed at 0) and airfoil.drag_clean is the "
                     "fit's intercept at zero slot ratio")
        model = ("drag_coefficient = drag_clean + slot_drag_per_ratio r_s + (drag_per_momentum + "
                 "drag_per_momentum_per_ratio r_s) C_mu")
    record = _fit_record("drag", model, response, names, design, y, rows, d, hint)
    record["derived_constants"] = extra
    return record, notes


def _fit_lift(runs, d):
    cmu = d["momentum_coefficient"]
    return _fit_record(
        "lift", "lift_coefficient = lift_coefficient_jet_off + lift_per_momentum C_mu",
        "lift_coefficient [-]", ["lift_coefficient_jet_off", "airfoil.lift_per_momentum"],
        np.column_stack([np.ones_like(cmu), cmu]), runs["lift_coefficient"],
        np.ones(cmu.shape, bool), d, "vary `mass_flow`/`volume_flow` (the momentum coefficient)")


def _plausibility(constants, ratio_range):
    """Warnings for constants far from the rules of thumb (common practice, no source)."""
    found = []

    def check(key, label, value, where=""):
        typical, low, high = PLAUSIBLE[key]
        if not low <= value <= high:
            found.append(("duct" if key.startswith("duct") else "drag",
                          f"{label} = {value:.4g}{where} is far from the usual ~{typical:g} "
                          f"(expected {low:g} to {high:g}; common practice, no source): check the "
                          "runs and units"))

    for key, label in (("duct.jet_loss_factor", "jet loss factor K_j"),
                       ("duct.freestream_assist", "freestream assist K_inf")):
        check(key, label, constants[key]["value"])
    value = {k: v["value"] for k, v in constants.items()}
    for r_s in sorted(set(ratio_range)):
        where = f" at slot ratio {r_s:.4g}"
        check("airfoil.drag_per_momentum", "drag per momentum coefficient dC_D/dC_mu",
              value["airfoil.drag_per_momentum"]
              + value.get("airfoil.drag_per_momentum_per_ratio", 0.0) * r_s, where)
        clean = value["airfoil.drag_clean"]
        jet_off = clean + value["airfoil.slot_drag"] + value.get("airfoil.slot_drag_per_ratio",
                                                                  0.0) * r_s
        if clean <= 0:
            found.append(("drag", f"clean drag {clean:.4g} is not positive: check the runs"))
            break
        check("jet_off_to_clean", "jet-off over clean drag", jet_off / clean, where)
    return found


def _calibrate_all(runs):
    """Fit the reduced-order constants to a table of runs, one value per constant: the result of
    :func:`calibrate` without lift bands (its parameters, return value, errors and warnings).
    """
    runs = check_runs(runs)
    plan = fit_plan(runs)
    d = derived(runs)
    d["speed"] = runs["speed"]
    notes = list(d["notes"])
    fits = {"duct": _fit_duct(d, runs["fan_pressure_rise"])}
    if not d["jet_on"].all():
        off = (np.flatnonzero(~d["jet_on"]) + 1).tolist()
        notes.append(f"jet-off runs (rows {off}) are left out of the duct fit and used in the "
                     "drag and lift fits")
    fits["drag"], drag_notes = _fit_drag(runs, d, plan["several_slot_ratios"])
    notes += drag_notes
    if "lift_coefficient" in runs:
        fits["lift"] = _fit_lift(runs, d)
    found = {}
    for fit in fits.values():
        for key, entry in fit["parameters"].items():
            if key in CONSTANT_ORDER:
                found[key] = dict(entry)
    for key, entry in fits["drag"].pop("derived_constants").items():
        found[key] = entry
        fits["drag"].setdefault("fixed_or_given", {})[key] = entry
    constants = {key: found[key] for key in CONSTANT_ORDER if key in found}
    parameters = list(constants)
    matrix = np.zeros((len(parameters), len(parameters)))
    for fit in fits.values():
        names = fit["covariance"]["parameters"]
        cov = np.asarray(fit["covariance"]["matrix"])
        for i, a in enumerate(names):
            for j, b in enumerate(names):
                if a in constants and b in constants:
                    matrix[parameters.index(a), parameters.index(b)] = cov[i, j]
    for key, entry in constants.items():
        if key not in fits["drag"]["parameters"] and key not in fits["duct"]["parameters"] \
                and key != "airfoil.lift_per_momentum":
            k = parameters.index(key)
            matrix[k, k] = entry["stderr"] ** 2
    all_rows = np.ones(runs["speed"].shape, bool)
    validity = _ranges(d, all_rows)
    warned = _plausibility(constants, validity["slot_ratio"])
    for fit_name, message in warned:
        fits[fit_name]["warnings"].append(message)
        warnings.warn(message, CalibrationWarning, stacklevel=2)
    balance = energy_balance(runs, d, constants, validity)
    return {
        "constants": constants,
        "covariance": {"parameters": parameters, "matrix": matrix.tolist()},
        "fits": fits, "validity": validity, "runs": int(all_rows.size),
        "warnings": [message for _, message in warned], "notes": notes,
        "energy_balance": balance,
        "rules_of_thumb": {k: {"typical": v[0], "warn_outside": [v[1], v[2]],
                               "source": "common practice, no source"}
                           for k, v in PLAUSIBLE.items()},
        "caution": CAUTION,
    }


#: Smallest spread of the runs' unblown lift coefficient that calls for lift bands (common
#: practice, no source: about a tenth of a typical cruise-to-loiter lift range).
MIN_LIFT_SPREAD = 0.1
#: Most lift bands tried.
MAX_LIFT_BANDS = 4
#: Smallest distance between two bands' mean lift coefficients.
MIN_BAND_GAP = 0.05


def calibrate(runs, lift_bands=None):
    """Fit the reduced-order constants to a table of runs, per lift band when the runs span a
    range of lift.

    Parameters
    ----------
    runs : dict of str to array_like
        Columns in SI (see :data:`mdao.studies.calibration.runs.COLUMNS`), e.g. from
        :func:`~mdao.studies.calibration.runs.read_runs`.
    lift_bands : int, optional
        Number of lift bands. None (default): decided from the runs (below); 1: one value per
        constant, whatever the lift; 2 or more: exactly that many (a
        :class:`CalibrationError` when the runs cannot identify the constants in each).

    Returns
    -------
    dict
        JSON-ready: ``constants`` (case key path -> ``value``, ``stderr``, ``ci95``; the fit to
        all runs), ``covariance`` (``parameters``, ``matrix``; zero between separate fits),
        ``fits`` (``duct``, ``drag``, ``lift``), ``validity`` (ranges over all runs),
        ``warnings`` (the plausibility warnings), ``notes``, ``energy_balance`` (the runs and
        the fitted model against the first law,
        :func:`mdao.studies.calibration.energy.energy_balance`; its ``warnings`` are listed
        there, not among the plausibility warnings), ``caution``. With lift bands also
        ``lift_tables`` (case key path -> ``lift_coefficient`` (the bands' mean lift
        coefficients), ``value``, ``stderr``, ``ci95``, one entry per band) and
        ``lift_bands`` (per band: its rows, runs, lift range, warnings and energy balance).

    Raises
    ------
    CalibrationError
        Unusable runs, or a constant the runs cannot identify (the message names the column
        that must vary).

    Warns
    -----
    CalibrationWarning
        A constant far from the usual values (see :data:`PLAUSIBLE`).

    Notes
    -----
    Lift bands group runs of similar *unblown* lift, :math:`C_L - (dC_L/dC_\mu) C_\mu` with
    the slope fitted to all runs: in effect runs at similar angles of attack, so that each band
    spans the blowing range and its drag and duct fits are as well posed as the whole set's.
    (Grouping by the measured lift itself would cut each blowing sweep into slices of momentum
    coefficient and bias the lift slope, which is the response.) Bands are cut at the largest
    gaps of the unblown lift; without ``lift_bands`` the most bands (up to
    :data:`MAX_LIFT_BANDS`) whose fits all succeed are used, when the unblown lift spreads
    over at least :data:`MIN_LIFT_SPREAD`. Each band's constants sit at the band's mean
    measured lift coefficient, the breakpoint of the table a case interpolates
    (:mod:`mdao.physics.lift_table`).
    """
    result = _calibrate_all(runs)
    if lift_bands is not None and (isinstance(lift_bands, bool) or not isinstance(
            lift_bands, int) or lift_bands < 1):
        raise CalibrationError(f"lift_bands = {lift_bands!r}: allowed is a whole number >= 1")
    if lift_bands == 1:
        return result
    checked = check_runs(runs)
    if "lift_coefficient" not in checked:
        if lift_bands is not None:
            raise CalibrationError("lift bands need the column lift_coefficient")
        return result
    slope = result["fits"]["lift"]["parameters"]["airfoil.lift_per_momentum"]["value"]
    cmu = derived(checked)["momentum_coefficient"]
    unblown = checked["lift_coefficient"] - slope * cmu
    spread = float(np.ptp(unblown))
    if lift_bands is None and spread < MIN_LIFT_SPREAD:
        result["notes"].append(
            f"the runs' unblown lift coefficient spreads over {spread:.3g} only (less than "
            f"{MIN_LIFT_SPREAD:g}): one value per constant, no lift tables")
        return result
    counts = [lift_bands] if lift_bands is not None else range(MAX_LIFT_BANDS, 1, -1)
    failures = []
    for count in counts:
        try:
            bands = _fit_bands(checked, unblown, count)
        except CalibrationError as exc:
            failures.append(f"{count} bands: {exc}")
            continue
        result.update(_tables(bands))
        result["notes"].append(
            f"constants fitted in {count} lift bands (unblown lift coefficient "
            f"{unblown.min():.3g} to {unblown.max():.3g}); the fragment gives them as lift "
            "tables, and the single values above (all runs) are for reference")
        return result
    if lift_bands is not None:
        raise CalibrationError(failures[0])
    result["notes"].append(
        f"the runs' unblown lift coefficient spreads over {spread:.3g}, but no split into lift "
        "bands identifies every constant in each band (" + "; ".join(failures)
        + "): one value per constant, no lift tables")
    return result


def _band_masks(unblown, count):
    """Masks of ``count`` bands cut at the largest gaps of the sorted unblown lift, in order."""
    order = np.argsort(unblown, kind="stable")
    gaps = np.diff(unblown[order])
    cuts = np.sort(np.argsort(gaps, kind="stable")[::-1][:count - 1]) + 1
    masks = []
    for chunk in np.split(order, cuts):
        mask = np.zeros(unblown.shape, bool)
        mask[chunk] = True
        masks.append(mask)
    return masks


def _fit_bands(runs, unblown, count):
    """The fits of each band, or CalibrationError naming the band that cannot be fitted."""
    bands = []
    for k, mask in enumerate(_band_masks(unblown, count)):
        sub = {name: np.asarray(col)[mask] for name, col in runs.items()}
        where = (f"lift band {k + 1} (unblown lift coefficient {unblown[mask].min():.3g} to "
                 f"{unblown[mask].max():.3g}, {int(mask.sum())} runs)")
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", CalibrationWarning)
            try:
                fit = _calibrate_all(sub)
            except CalibrationError as exc:
                raise CalibrationError(f"{where}: {exc}") from None
        rows = np.flatnonzero(mask) + 1
        bands.append({"where": where, "mask": mask, "rows": rows, "fit": fit,
                      "lift": float(np.mean(sub["lift_coefficient"])),
                      "lift_range": [float(np.min(sub["lift_coefficient"])),
                                     float(np.max(sub["lift_coefficient"]))],
                      "warnings": [str(w.message) for w in caught]})
    keys = [set(b["fit"]["constants"]) for b in bands]
    if any(k != keys[0] for k in keys):
        raise CalibrationError("the bands do not all identify the same constants (slot ratios "
                               "or clean-drag columns differ between them)")
    centres = [b["lift"] for b in bands]
    if any(b - a < MIN_BAND_GAP for a, b in zip(centres, centres[1:])):
        raise CalibrationError(f"band mean lift coefficients {[round(c, 3) for c in centres]} "
                               f"lie closer than {MIN_BAND_GAP:g}")
    for b in bands:
        for message in b["warnings"]:
            warnings.warn(f"{b['where']}: {message}", CalibrationWarning, stacklevel=3)
    return bands


def _tables(bands):
    """``lift_tables`` and ``lift_bands`` of the result from the bands' fits."""
    from mdao.parameters import BY_KEY

    centres = [b["lift"] for b in bands]
    tables = {}
    for key in bands[0]["fit"]["constants"]:
        if not BY_KEY[key].lift_table or bands[0]["fit"]["constants"][key].get("fixed"):
            continue   # a fixed constant (the slot penalty without a clean column) stays one
        entries = [b["fit"]["constants"][key] for b in bands]
        tables[key] = {"lift_coefficient": centres, "value": [e["value"] for e in entries],
                       "stderr": [e["stderr"] for e in entries],
                       "ci95": [list(e["ci95"]) for e in entries]}
    summary = []
    for b in bands:
        fit, rows = b["fit"], b["rows"]
        balance = fit["energy_balance"]
        summary.append({
            "lift_coefficient": b["lift"], "runs": int(b["mask"].sum()),
            "rows": rows.tolist(), "description": b["where"],
            "lift_coefficient_range": b["lift_range"],
            "r2": {name: f["r2"] for name, f in fit["fits"].items()},
            "outlier_rows": sorted({int(rows[o["row"] - 1]) for f in fit["fits"].values()
                                    for o in f["outliers"]}),
            "warnings": b["warnings"],
            "energy_balance_warnings": balance["warnings"],
            "energy_balance_broken_rows": [int(rows[r["row"] - 1])
                                           for r in balance["broken_runs"]],
            "fitted_model_worst_margin": balance["fitted_model"]["worst"]["margin"]})
    return {"lift_tables": tables, "lift_bands": summary}
