r"""Sensitivities of the mission energy saving: fixed-design, post-optimal, elasticities, tornado.

The answer studied is the mission energy saved at the source, :math:`E` [J]. For every model
constant and operating input :math:`p` (a case key path such as ``"duct.jet_loss_factor"`` or
``"segment.cruise.speed"``):

* **fixed-design derivative** :math:`\partial E/\partial p`: slot ratio and momentum coefficients
  held at the optimum, the fan pressure rise following the duct requirement (so the pressure
  constraint stays satisfied); from OpenMDAO's total derivatives of
  :func:`mdao.system.build_problem` with ``follow_requirement=True``;
* **post-optimal derivative** :math:`dE^*/dp`: how the optimum itself moves, by central
  differences of warm-started re-optimizations (:func:`post_optimal_derivatives`), cross-checked
  by the Lagrange multipliers of the active constraints (:func:`multiplier_derivatives`,
  :math:`dE^*/dp = \partial E/\partial p - \lambda^T \partial g/\partial p` with
  :math:`\nabla_x E = J_x^T\lambda` solved by least squares over the active set);
* **elasticity** :math:`(\partial E/\partial p)\,p/E`;
* a **tornado**: :math:`E` at the fixed design re-evaluated (not linearized) with each input at the
  low and high end of its spread (:func:`input_spread`).

By the envelope theorem the two derivatives agree at an optimum where no binding constraint
depends on :math:`p` [1]_; they differ where one does (e.g. the jet Mach limit against speed).

References
----------
.. [1] Fiacco, A. V. *Introduction to Sensitivity and Stability Analysis in Nonlinear
   Programming*. Academic Press, 1983, ch. 3 (derivative of the optimal value: the envelope
   theorem and the multiplier formula).
.. [2] Saltelli, A. et al. *Global Sensitivity Analysis: The Primer*. Wiley, 2008, ch. 1
   (one-at-a-time ranges, the tornado chart's basis).
"""
import numpy as np

from mdao import constraints, parameters
from mdao.case.schema import dimension_of
from mdao.case.loading import lift_tables
from mdao.optimum.solve import feasibility, read_values, run_driver_quietly
from mdao.physics import chain, power
from mdao.units import SI_UNITS
from mdao.system import (POINTS_PER_EVALUATION, applicable_parameters, build_problem,
                         chain_options, chain_parameters, design_point, rows_per_evaluation)

#: Inputs the geometric duct takes as one value for the wing (cannot vary along samples).
WING_GEOMETRY = ("fan_diameter", "blown_span", "slot_ratio", "chord", "transition_length",
                 "slot_exponent", "roughness")
#: Order of each segment's inputs in the studies.
SEGMENT_ORDER = ("speed", "altitude", "duration")
#: Absolute step scale for inputs whose value is zero (post-optimal differences).
ZERO_SCALE = {"altitude": 1000.0, "roughness": 1e-5}
#: Relative step of the post-optimal central differences.
POST_OPTIMAL_STEP = 1e-3


# --- inputs: key paths, promoted names, ranges --------------------------------------------------
def sensitivity_keys(case):
    """Case key paths studied: the applicable model constants that may be uncertain and each
    segment's speed, altitude and duration (in that order). A constant tabulated over the lift
    coefficient is not one input (its effect reaches the studies through each segment's speed
    and altitude, which move the lift); nor is a design variable's start
    (:attr:`mdao.case.Case.design_keys`: a free fan diameter), which the optimum does not
    depend on."""
    tables = lift_tables(case)
    keys = [p.key for p in applicable_parameters(case) if not p.per_segment and p.uncertain
            and case.value(p.key) is not None and p.key not in tables
            and p.key not in case.design_keys]
    segment_inputs = [p for p in applicable_parameters(case) if p.per_segment and p.uncertain]
    for seg in case.segment_names:
        keys += [f"segment.{seg}.{p.field}" for p in sorted(
            segment_inputs, key=lambda p: SEGMENT_ORDER.index(p.field))]
    return keys


def promoted(case, key):
    """``(promoted input name, segment index or None)`` of a case key path."""
    try:
        p = parameters.parameter(key)
    except KeyError:
        raise ValueError(f"key = {key!r} is not a model input; allowed: "
                         + ", ".join(p.key for p in parameters.CHAIN_PARAMETERS)) from None
    if p.per_segment:
        return p.name, case.segment_names.index(key.split(".")[1])
    return p.name, None


def allowed_range(key):
    """``(low, high)`` the model allows for a key path (open ends included as closed)."""
    p = parameters.parameter(key)
    return p.low, p.high


def unit_label(key):
    """SI unit of any case key path for tables (``"-"`` for pure numbers)."""
    try:
        unit = parameters.parameter(key).unit
    except KeyError:
        unit = SI_UNITS[dimension_of(key)]
    return (unit or "-").replace("revolution/s", "rev/s")


def design_parameters(case, outcome):
    """Chain parameters at the optimal design, the fan following the requirement."""
    return chain_parameters(case, **design_point(outcome.values),
                            momentum_coefficient=np.asarray(
                                outcome.values["momentum_coefficient"], float))


def set_columns(case, params, columns):
    """Chain parameters with inputs replaced by sample columns.

    Parameters
    ----------
    case : mdao.case.Case
    params : dict
        Chain parameters (per-segment arrays), e.g. from :func:`design_parameters`.
    columns : dict
        ``{key path: ndarray (n,)}``: one value per sample.

    Returns
    -------
    dict
        Parameters whose varied entries carry a leading sample axis ``(n, segments)`` or
        ``(n, 1)``.
    """
    out = dict(params)
    for key, vals in columns.items():
        name, seg = promoted(case, key)
        vals = np.asarray(vals, float)
        if seg is None:
            out[name] = vals[:, None]
        else:
            base = np.asarray(out[name], float)
            arr = np.array(np.broadcast_to(base, vals.shape + base.shape[-1:]))
            arr[..., seg] = vals
            out[name] = arr
    return out


def chunk_rows(case, budget=POINTS_PER_EVALUATION):
    """Samples (or grid points) per vectorized call, each a row of the case's segments:
    :func:`mdao.system.rows_per_evaluation`."""
    return rows_per_evaluation(case, len(case.segments), budget)


def evaluate_design(case, outcome, columns):
    """Chain outputs at the optimal design with inputs replaced by sample columns.

    Vectorized over samples, in chunks of :func:`chunk_rows` samples per call (bounded memory);
    only when the geometric duct's wing geometry varies (it takes one geometry per evaluation)
    does it loop over the samples one by one.

    Returns
    -------
    dict
        The chain outputs with a leading sample axis, plus ``mission_energy_saving`` (n,) [J],
        and ``energy_saving_within_balance`` (n, segments) and
        ``mission_energy_saving_within_balance`` (n,) [J]: the same with the net thrust power
        credited no higher than the energy balance allows
        (:func:`mdao.physics.power.energy_within_balance`; the design is held fixed, so where a
        sample moves it past the balance the optimization's constraint no longer holds it).
    """
    params = design_parameters(case, outcome)
    opts = chain_options(case)
    nseg = len(case.segments)
    n = len(next(iter(columns.values()))) if columns else 1
    geo = [k for k in columns if case.duct["model"] == "geometric"
           and promoted(case, k)[0] in WING_GEOMETRY]
    # vectorized, in chunks of samples to bound the memory of the temporaries; one geometry per
    # evaluation (the geometric duct's wing geometry varying): sample by sample (slow path, said
    # in the docs)
    size = 1 if geo else chunk_rows(case)
    rows, sizes = [], []
    for a in range(0, n, size):
        p = set_columns(case, params, {k: np.asarray(v)[a:a + size] for k, v in columns.items()})
        r = chain.evaluate(p, opts, blowing=case.blowing)
        r["energy_saving_within_balance"] = power.energy_within_balance(
            r["energy_saving"], r["energy_margin"], p["duration"], p["chain_efficiency"])
        rows.append(r)
        sizes.append(min(size, n - a))
    out = {k: np.concatenate([np.broadcast_to(r[k], (m, nseg)) for r, m in zip(rows, sizes)])
           for k in rows[0] if k not in chain.ANGLE_OUTPUTS}
    out.update({k: rows[0].get(k) for k in chain.ANGLE_OUTPUTS})   # wing-level, per station
    out["mission_energy_saving"] = out["energy_saving"].sum(axis=-1)
    out["mission_energy_saving_within_balance"] = out["energy_saving_within_balance"].sum(axis=-1)
    return out


# --- fixed-design derivatives (OpenMDAO totals) -------------------------------------------------
def fixed_design_derivatives(case, outcome, keys=None):
    """Derivatives of the mission energy saving at the fixed optimal design, [J per SI unit].

    Slot ratio and momentum coefficients held; the fan's pressure rise follows the duct
    requirement. From ``compute_totals`` of :func:`mdao.system.build_problem` with
    ``follow_requirement=True, driver=False``.

    Parameters
    ----------
    case : mdao.case.Case
    outcome : mdao.optimum.Outcome
        The optimum.
    keys : list of str, optional
        Key paths (default :func:`sensitivity_keys`).

    Returns
    -------
    dict
        ``{key path: derivative}``.
    """
    keys = sensitivity_keys(case) if keys is None else list(keys)
    prob = build_problem(case, follow_requirement=True, driver=False)
    for name, value in design_point(outcome.values).items():
        prob.set_val(name, value)
    prob.set_val("momentum_coefficient", outcome.values["momentum_coefficient"])
    prob.run_model()
    names = sorted({promoted(case, k)[0] for k in keys})
    totals = prob.compute_totals(of=["mission_energy_saving"], wrt=names)
    out = {}
    for key in keys:
        name, seg = promoted(case, key)
        row = np.asarray(totals["mission_energy_saving", name], float).ravel()
        out[key] = float(row[0 if seg is None else seg]) + 0.0  # no negative zero
    return out


# --- post-optimal derivatives -------------------------------------------------------------------
def _set_input(prob, case, key, value):
    name, seg = promoted(case, key)
    if seg is None:
        prob.set_val(name, value)
    else:
        arr = np.array([s[key.split(".")[2]] for s in case.segments], float)
        arr[seg] = value
        prob.set_val(name, arr)


def _reoptimize(prob, case, outcome, key, value):
    """Warm-started re-optimization with one input changed; (energy [J], converged, message)."""
    _set_input(prob, case, key, value)
    for name in ("slot_ratio", "momentum_coefficient", "fan_pressure_rise"):
        prob.set_val(name, outcome.values[name])
    result = run_driver_quietly(prob)
    changed = case.replace({key: value})
    vals = read_values(prob, changed)
    bad = feasibility(changed, vals)
    _set_input(prob, case, key, case.value(key))
    return vals["mission_energy_saving"], bool(result.success) and not bad, "; ".join(bad)


def step_for(case, key, step=POST_OPTIMAL_STEP):
    """Difference step of a key: ``step`` times its value (or a scale where the value is 0)."""
    value = float(case.value(key))
    scale = abs(value) if value != 0 else ZERO_SCALE.get(key.split(".")[-1], 1.0)
    return step * scale


def post_optimal_derivatives(case, outcome, keys=None, step=POST_OPTIMAL_STEP, progress=None):
    """Derivatives of the optimal mission energy saving, dE*/dp, by re-optimization.

    Central differences of warm-started re-optimizations (each input changed by ``step`` times
    its value, both signs); a one-sided second-order difference where the central one would
    leave the input's allowed range (e.g. an altitude of 0 m).

    Parameters
    ----------
    case, outcome
        The case and its optimum.
    keys : list of str, optional
        Key paths (default :func:`sensitivity_keys`).
    step : float
        Relative step, (0, 0.1].
    progress : callable, optional
        ``progress(done, total)`` after each input.

    Returns
    -------
    dict
        ``{key: {"derivative": float or None, "converged": bool, "scheme": "central" or
        "forward" or "backward", "step": float}}``; ``derivative`` is None when a
        re-optimization failed.
    """
    if not 0 < step <= 0.1:
        raise ValueError(f"step = {step!r}: allowed (0, 0.1]")
    keys = sensitivity_keys(case) if keys is None else list(keys)
    prob = build_problem(case)
    out = {}
    e0 = outcome.mission_energy_saving_J
    for i, key in enumerate(keys):
        v = float(case.value(key))
        h = step_for(case, key, step)
        lo, hi = allowed_range(key)
        if v - h >= lo and v + h <= hi:
            scheme, pts, coef = "central", (v - h, v + h), (-0.5, 0.5)
        elif v + 2 * h <= hi:
            scheme, pts, coef = "forward", (v + h, v + 2 * h), (2.0, -0.5)
        else:
            scheme, pts, coef = "backward", (v - h, v - 2 * h), (-2.0, 0.5)
        total, ok, why = 0.0, True, []
        for p, c in zip(pts, coef):
            e, conv, msg = _reoptimize(prob, case, outcome, key, p)
            ok &= conv
            if msg:
                why.append(msg)
            total += c * e
        if scheme == "forward":
            total -= 1.5 * e0
        elif scheme == "backward":
            total += 1.5 * e0
        out[key] = {"derivative": total / h if ok else None, "converged": ok, "scheme": scheme,
                    "step": h, "message": "; ".join(why)}
        if progress:
            progress(i + 1, len(keys))
    return out


# --- post-optimal derivatives from the multipliers ----------------------------------------------
def _active_rows(case, outcome):
    """Active constraints as (quantity, index, role) with role 'eq' (the pressure balance),
    'dv' (a design-variable bound) or 'out' (an output constraint)."""
    rows = []
    for con, i in constraints.active_rows(case, outcome.values):
        role = "eq" if con.equals is not None else ("dv" if con.design_variable else "out")
        rows.append((con.quantity, i, role))
    return rows


def multiplier_derivatives(case, outcome, keys=None):
    r"""Post-optimal derivatives from the Lagrange multipliers of the active constraints.

    At the optimum :math:`\nabla_x E = J_x^T \lambda` over the active constraints (pressure
    balance, active bounds and inequality constraints), :math:`x` every design variable the
    problem declares (:mod:`mdao.constraints`: a sized fan's rating and a free fan diameter
    too), at the optimum's values; :math:`\lambda` is solved by least squares and
    :math:`dE^*/dp = \partial E/\partial p - \lambda^T \partial g/\partial p`, the partials
    taken at fixed design variables (fan pressure rise included) from OpenMDAO totals.

    Returns
    -------
    dict
        ``{"derivatives": {key: float}, "residual": float, "active": [names]}``; ``residual``
        is the relative stationarity residual :math:`\|\nabla_x E - J_x^T\lambda\| /
        \|\nabla_x E\|` (small when the active set is right and the optimum is converged).
    """
    keys = sensitivity_keys(case) if keys is None else list(keys)
    prob = build_problem(case, driver=False)
    # the design variables the problem declares (mdao.constraints), at the optimum: the slot
    # ratio, a sized fan's rating and a free fan diameter (one column each), the momentum
    # coefficient and the fan pressure rise (a column per blowing segment)
    dvs = [c for c in constraints.applicable(case) if c.design_variable]
    for c in dvs:
        prob.set_val(c.quantity, outcome.values[c.quantity])
    prob.run_model()
    blow = list(np.flatnonzero(case.blowing))
    column, nx = {}, 0
    for c in dvs:
        column[c.quantity] = nx
        nx += len(blow) if c.per_segment else 1
    rows = _active_rows(case, outcome)
    outs = sorted({r[0] for r in rows if r[2] == "out"})
    pnames = sorted({promoted(case, k)[0] for k in keys})
    of = ["mission_energy_saving", "required_pressure_rise"] + outs
    tot = prob.compute_totals(of=of, wrt=[c.quantity for c in dvs] + pnames)

    def block(of_name, wrt_name):
        return np.atleast_2d(np.asarray(tot[of_name, wrt_name], float))

    def xrow(of_name, idx):
        return np.concatenate([block(of_name, c.quantity)[idx, blow if c.per_segment else
                                                         slice(None)] for c in dvs])

    per_segment = {c.quantity for c in dvs if c.per_segment}

    def at(name, i):    # the column of a design variable's element i (its segment, or 0)
        return column[name] + (blow.index(i) if name in per_segment else 0)

    grad = xrow("mission_energy_saving", 0)
    a_rows, p_rows = [], []
    for name, i, role in rows:
        if role == "eq":  # g = dp_fan - dp_required
            r = -xrow("required_pressure_rise", i)
            r[at("fan_pressure_rise", i)] += 1.0
            p_rows.append({n: -block("required_pressure_rise", n)[i] for n in pnames})
        elif role == "dv":
            r = np.zeros(nx)
            r[at(name, i)] = 1.0
            p_rows.append({n: np.zeros(block("mission_energy_saving", n).shape[1]) for n in pnames})
        else:
            r = xrow(name, i)
            p_rows.append({n: block(name, n)[i] for n in pnames})
        a_rows.append(r)
    a = np.array(a_rows)
    lam = np.linalg.lstsq(a.T, grad, rcond=None)[0]
    resid = float(np.linalg.norm(grad - a.T @ lam) / max(np.linalg.norm(grad), 1e-300))
    out = {}
    for key in keys:
        name, seg = promoted(case, key)
        j = 0 if seg is None else seg
        d = block("mission_energy_saving", name)[0, j]
        d -= sum(l * pr[name][j] for l, pr in zip(lam, p_rows))
        out[key] = float(d)
    return {"derivatives": out, "residual": resid,
            "active": [f"{n}[{i}]" for n, i, _ in rows]}


# --- elasticities and the tornado ---------------------------------------------------------------
def elasticity(derivative, value, answer):
    """Relative change of the answer per relative change of the input, ``d * value / answer``."""
    if derivative is None or answer == 0:
        return None
    return float(derivative) * float(value) / float(answer)


def input_spread(case, key):
    """Low and high ends of an input's uncertainty for the tornado, with the basis used.

    Priority: the case's ``[uncertainty]`` entry (normal: value -/+ one sd; uniform: its low and
    high), else the calibration's standard error (value -/+ one se), else the ``[review] band``
    (value times 1 -/+ band). Ends are clipped to the key's allowed range (the basis says so).

    Returns
    -------
    (low, high, basis) : (float, float, str)
    """
    v = float(case.value(key))
    unc = case.uncertainty.get(key)
    cal = (case.calibration or {}).get("stderr", {})
    if unc is not None and unc["distribution"] == "normal":
        low, high, basis = v - unc["sd"], v + unc["sd"], f"uncertainty table: normal, sd {unc['sd']:.4g}"
    elif unc is not None:
        low, high, basis = unc["low"], unc["high"], "uncertainty table: uniform range"
    elif key in cal:
        low, high, basis = v - cal[key], v + cal[key], f"calibrated standard error {cal[key]:.4g}"
    else:
        b = case.review["band"]
        low, high, basis = v * (1 - b), v * (1 + b), f"default band +/-{b:.0%}"
        low, high = min(low, high), max(low, high)
    lo, hi = allowed_range(key)
    if low < lo or high > hi:
        low, high = max(low, lo), min(high, hi)
        basis += ", clipped to the allowed range"
    return float(low), float(high), basis


def tornado(case, outcome, keys=None):
    """Mission energy at the fixed optimal design with each input at the ends of its spread.

    Re-evaluated through the NumPy chain (not linearized), the fan following the requirement;
    the saving held within the energy balance (:func:`evaluate_design`: at the fixed design an
    end may let the drag model credit more net thrust power than the fans put into the air).

    Returns
    -------
    list of dict
        ``parameter``, ``low``, ``high``, ``basis``, ``energy_low_J``, ``energy_high_J``
        (within the energy balance), ``energy_model_low_J``, ``energy_model_high_J`` (the
        fitted model's, without that limit), ``broken_low``, ``broken_high`` (the per-segment
        constraints some blowing segment breaks there, by name), ``swing_J`` (``|high - low|``
        of the energies), sorted by swing, largest first; inputs with no spread (value 0 and no
        stated uncertainty) are left out.
    """
    keys = sensitivity_keys(case) if keys is None else list(keys)
    rows = []
    for key in keys:
        low, high, basis = input_spread(case, key)
        if high <= low:
            continue
        ev = evaluate_design(case, outcome, {key: np.array([low, high])})
        e = ev["mission_energy_saving_within_balance"]
        model = ev["mission_energy_saving"]
        broken = constraints.broken_at_fixed_design(case, ev)
        ends = [[name for name, at in broken.items() if at[j]] for j in (0, 1)]
        rows.append({"parameter": key, "unit": unit_label(key), "value": float(case.value(key)),
                     "low": low, "high": high,
                     "basis": basis, "energy_low_J": float(e[0]), "energy_high_J": float(e[1]),
                     "energy_model_low_J": float(model[0]),
                     "energy_model_high_J": float(model[1]),
                     "broken_low": ends[0], "broken_high": ends[1],
                     "swing_J": float(abs(e[1] - e[0]))})
    rows.sort(key=lambda r: -r["swing_J"])
    return rows
